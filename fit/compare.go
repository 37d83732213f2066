package fit

import (
	"math"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

// Split separates the difference between the as-built and the design
// saddle into placement (where the surface is) and shape (how it is
// curved), so a report can explain a verdict. Lengths in metres, angles in
// radians, K in 1/m.
type Split struct {
	// Offset is the distance from the design surface to the as-built
	// surface along the design normal at DesignFoot, the foot of the patch
	// centroid on the design; positive when the as-built surface lies on
	// the design's positive (normal) side.
	Offset  float64 `json:"offset_m"`
	OffsetU float64 `json:"offset_u_m"` // standard uncertainty from the fit covariance
	// Tilt is the angle between the design normal at DesignFoot and the
	// as-built normal where that normal line meets the as-built surface.
	Tilt         float64 `json:"tilt_rad"`
	DesignFoot   r3.Vec  `json:"-"`
	AsBuiltPoint r3.Vec  `json:"-"`
	// LocalRMS and LocalMax are what is left after placement and shape:
	// the RMS and the largest absolute residual of the inliers to the
	// as-built surface (per-point values in SaddleResult.Residuals).
	LocalRMS float64 `json:"local_rms_m"`
	LocalMax float64 `json:"local_max_m"`

	K1 ShapeDelta `json:"k1_delta"`
	K2 ShapeDelta `json:"k2_delta"`
}

// ShapeDelta is an as-built minus design coefficient with the as-built
// standard uncertainty (the design is exact). Significant reports
// |Delta| > 1.96·U, a difference at the 95 % level.
type ShapeDelta struct {
	Delta       float64 `json:"delta"`
	U           float64 `json:"u"`
	Significant bool    `json:"significant"`
}

// CompareToDesign splits the difference of asBuilt from design at the
// patch centroid (site coordinates):
//
//	placement: the offset along the design normal n_d at the foot F of
//	           the centroid on the design, found by Newton's method on
//	           s ↦ d_as-built(F + s·n_d) (3–5 steps), and the tilt between
//	           the normals there;
//	shape:     ΔK1, ΔK2 with the fit's standard uncertainties;
//	local:     the inlier residuals to the as-built surface.
//
// The offset's uncertainty is √(g·C·gᵀ)/|n_a·n_d|, g the derivative of the
// orthogonal distance of the as-built point with respect to the fit
// parameters (the SaddleProblem Jacobian row) and C their covariance.
func CompareToDesign(design *deviation.Saddle, asBuilt *SaddleResult, centroid r3.Vec) Split {
	var sp Split
	fd, _ := design.ClosestLocal(design.ToLocal(centroid))
	foot := design.ToSite(fd)
	nd := design.Normal(foot)
	ab := &asBuilt.Saddle
	s := 0.0
	p := foot
	for it := 0; it < 8; it++ {
		p = r3.Add(foot, r3.Scale(s, nd))
		_, d := ab.ClosestLocal(ab.ToLocal(p))
		na := ab.Normal(p)
		den := r3.Dot(na, nd)
		if den == 0 {
			break
		}
		step := -d / den
		s += step
		if math.Abs(step) < 1e-12 {
			break
		}
	}
	p = r3.Add(foot, r3.Scale(s, nd))
	fa, _ := ab.ClosestLocal(ab.ToLocal(p))
	pa := ab.ToSite(fa)
	na := ab.Normal(pa)
	sp.Offset = s
	sp.DesignFoot = foot
	sp.AsBuiltPoint = pa
	sp.Tilt = math.Acos(math.Max(-1, math.Min(1, r3.Dot(na, nd))))
	if asBuilt.ParCov != nil {
		// Jacobian row of the as-built point, frame and pivot of the fit.
		prob := &SaddleProblem{
			Points: []r3.Vec{pa}, Axes: ab.Axes, Origin: ab.Origin, pivot: asBuilt.Pivot,
			feet: make([]r3.Vec, 1), dist: make([]float64, 1),
		}
		x := prob.X0(ab)
		prob.Func(make([]float64, 1), x)
		g := make([]float64, NumSaddlePar)
		prob.row(g, 0, ab.K1, ab.K2, prob.localPivot())
		gv := mat.NewVecDense(NumSaddlePar, g)
		v := mat.Inner(gv, asBuilt.ParCov, gv)
		if den := math.Abs(r3.Dot(na, nd)); den > 0 && v >= 0 {
			sp.OffsetU = math.Sqrt(v) / den
		}
	}
	sp.LocalRMS = asBuilt.RMS
	for i, d := range asBuilt.Residuals {
		if i < len(asBuilt.Inliers) && asBuilt.Inliers[i] {
			sp.LocalMax = math.Max(sp.LocalMax, math.Abs(d))
		}
	}
	sp.K1 = shapeDelta(asBuilt.K1, design.K1)
	sp.K2 = shapeDelta(asBuilt.K2, design.K2)
	return sp
}

func shapeDelta(e Estimate, design float64) ShapeDelta {
	d := e.Value - design
	return ShapeDelta{Delta: d, U: e.U, Significant: math.Abs(d) > 1.96*e.U}
}
