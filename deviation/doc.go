// Package deviation knows the design surface of a shell and measures points
// against it: signed orthogonal deviations, patch membership, tolerance
// bands, statistics and conformity verdicts.
//
// Units: metres inside the package (coordinates, distances, curvatures in
// 1/m); millimetres only at the report boundary (fields named …MM).
//
// Sign convention: a deviation is positive on the design's declared normal
// side (`normal: up` means towards +Z of the site frame), negative on the
// other, measured along the true orthogonal from the point to its closest
// point on the design surface, never as a vertical difference.
//
// Site coordinates (eastings of 10^5–10^7 m) are kept in float64 and every
// surface subtracts its own local origin before any algebra.
package deviation
