// Package uncert gives every deviation its own standard uncertainty and
// every verdict a named decision rule.
//
// It has two halves. The instrument half (model.go, propagate.go,
// budget.go) turns a stated measurement model (a total station, a laser
// scanner, or a plain per-file standard uncertainty, plus the control,
// design-model and surface components) into the standard uncertainty of a
// point's deviation along the design normal,
//
//	u² = n̂ᵀ Σ_p n̂ + u²_control + u²_design + u²_surface (+ u²_fit),
//
// where Σ_p is the 3×3 covariance of the point propagated from its polar
// observation by the law of propagation of uncertainty (JCGM 100:2008
// §5.1.2, confirmed). The decision half (decide.go,
// needed.go) classifies a deviation d with uncertainty u against a
// tolerance under a guarded-acceptance rule (ISO 14253-1) or simple
// acceptance (ILAC G8:09/2019 §4.2.1), counts zones, derives patch
// verdicts, and says what uncertainty would decide the inconclusive points.
//
// Units: metres and radians inside the package (coordinates, deviations,
// uncertainties, variances in m², angle variances in rad²). The
// configuration types (Model and its parts) carry the units a surveyor
// writes on a spec sheet, named in each field: millimetres (…MM),
// arc seconds (…Arcsec), parts per million (…PPM), degrees (…Deg). The
// Budget type reports millimetres. Conversions happen once, in
// Model.Setups.
//
// Sign convention: a deviation d is positive on the design's declared
// normal side. Uncertainties are non-negative and do not depend on the
// sign of n̂. Angles follow the surveying convention: horizontal direction
// t clockwise from grid north (+N towards +E), zenith angle z from the
// upward vertical (+H), so that a point seen from station (E₀, N₀, H₀) is
//
//	E = E₀ + s·sin z·sin t,  N = N₀ + s·sin z·cos t,  H = H₀ + s·cos z.
//
// Hot path: Setup.NormalU neither allocates nor takes a lock; a Setup is
// safe for concurrent use once built.
package uncert
