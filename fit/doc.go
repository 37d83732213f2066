// Package fit estimates surfaces from measured points: a reusable
// Levenberg–Marquardt solver (MINPACK style), general quadric algebraic fits
// with Taubin's normalisation, robust RANSAC/MSAC/LO-RANSAC estimation, and
// the orthogonal-distance fit of a hyperbolic paraboloid (saddle) with its
// parameter covariance.
//
// Units: metres and 1/m; site coordinates are centred on a local origin
// before any algebra.
//
// Sign convention: a residual is the signed orthogonal distance from a point
// to the fitted saddle, positive on the saddle's local +z side (the side of
// the normal (−2K1x, −2K2y, 1)); FitSaddle turns local z towards
// SaddleSettings.Up (site +Z by default) when it starts from the quadric, or
// keeps the design's side when it starts from a design saddle.
//
// The pieces, each usable alone:
//
//   - LevenbergMarquardt: Problem (residuals, Jacobian or normal
//     equations), *Settings (nil = defaults), Result with Status.
//   - FitQuadric, Classify, NearestSaddle: the Taubin quadric, its class
//     from the invariants of E and A, and the saddle that starts the
//     orthogonal fit.
//   - RANSAC with a SampleModel (QuadricModel is the general quadric):
//     MSAC cost, adaptive sample count, LO step, subsample scoring, seeded
//     and deterministic.
//   - SaddleProblem: the 8-parameter orthogonal-distance problem with its
//     analytic Jacobian.
//   - FitSaddle: the whole chain, returning a SaddleResult (with its JSON
//     form for fit.json), and CompareToDesign, which splits the as-built
//     minus design difference into placement and shape.
//
// Outliers are never removed from the caller's data: they are marked in
// SaddleResult.Inliers.
package fit
