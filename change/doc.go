// Package change decides whether a surveyed shell has moved between epochs,
// where, by how much, and whether that is real or survey noise. It holds the
// statistics only and does no I/O.
//
// Three levels are offered:
//
//   - Parameter level: the global congruency test of geodetic deformation
//     analysis on the difference of two epochs' fitted parameters
//     (Congruency, Difference), followed by per-parameter localisation.
//   - Point level: the M3C2 distance of Lague, Brodu & Leroux (2013) along
//     the design normal at core points on a regular grid over each patch,
//     with its 95 % level of detection (Grid, Compare).
//   - Trend over three or more epochs: a weighted least-squares rate per year
//     with its standard uncertainty and a t test (FitTrend).
//
// Units: metres for coordinates, distances, levels of detection and
// registration errors; years for epoch times (rates are per year). Parameter
// vectors carry whatever units their producer uses (1/m for saddle
// coefficients), consistently between the value and its covariance.
//
// Sign convention: a change is later minus earlier (θ2 − θ1, mean2 − mean1).
// At a core point it is measured along the design's unit normal, so a
// positive M3C2 distance means the surface moved to the design's positive
// (normal) side.
//
// Datum: two epochs are comparable only in a common datum. An epoch
// registered by best fit to the shell itself carries no information about
// rigid motion, so Difference drops translation and rotation parameters
// whenever either epoch is of kind DatumBestFit and states so in its Note;
// only the shape is then tested.
//
// References:
//
//   - Pelzer, H. (1971) Zur Analyse geodätischer Deformationsmessungen.
//     Deutsche Geodätische Kommission, Reihe C, Heft 164.
//   - Niemeier, W. Ausgleichungsrechnung. Statistische Auswertemethoden.
//     de Gruyter (chapter on deformation analysis).
//   - Lague, D., Brodu, N. & Leroux, J. (2013) Accurate 3D comparison of
//     complex topography with terrestrial laser scanner: application to the
//     Rangitikei canyon (N-Z). ISPRS J. Photogramm. Remote Sens. 82:10–26.
package change
