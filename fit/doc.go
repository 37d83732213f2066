// Package fit estimates surfaces from measured points: a reusable
// Levenberg–Marquardt solver (MINPACK style), general quadric algebraic fits
// with Taubin's normalisation, robust RANSAC/MSAC/LO-RANSAC estimation, and
// the orthogonal-distance fit of a hyperbolic paraboloid (saddle) with its
// parameter covariance.
//
// Units: metres and 1/m; site coordinates are centred on a local origin
// before any algebra.
package fit
