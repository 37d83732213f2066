// Package report writes what a check found, for people and for programs:
// deviations.csv (one row per input record, in input order), patches.csv,
// summary.json (schema in README.md) and a self-contained report.html.
//
// Units: the report boundary is where metres become millimetres; every
// field named …_mm is in millimetres, coordinates stay in metres.
//
// Sign convention: as in package deviation, a deviation is positive on the
// design's declared normal side, measured along the orthogonal from the
// point to its closest point on the design surface.
//
// Every file is written under a temporary name in its destination folder and
// renamed when complete, so a crash never leaves a half-written report.
package report
