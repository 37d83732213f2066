// Package history writes the reports of the survey archive: the comparison
// of two epochs of a structure (a plan-view change map of M3C2 core points,
// the table of parameter changes with their congruency tests, a CSV of the
// core points and a JSON summary) and the history of a structure over all
// its epochs (time-series plots of key figures with ±2u bars and fitted
// rates).
//
// Every file is written to a temporary name and renamed when complete
// (report.Create). HTML is self-contained: html/template embedded with
// go:embed, inline CSS and SVG, no external URL of any kind. Numbers are
// formatted in Go before they reach the template.
//
// Units: metres inside the view models' inputs (change.Core), millimetres
// in the reports (columns and fields named …_mm), 1/m for saddle
// coefficients, years for rates.
//
// Sign convention: a change is later minus earlier, along the design normal;
// positive means the surface moved to the design's positive (normal) side.
// On the map positive changes are orange and negative purple (ColorBrewer
// PuOr, colour-blind safe), changes not detected at the level of detection
// are grey, and core points with too few points in either epoch are
// hatched.
package history
