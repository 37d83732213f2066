package fit

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

// AsBuilt holds the as-built fits of a design's patches (nil where a patch
// has no fit) and is the deviation.Enricher that adds to every point its
// residual from its patch's as-built surface and the fit's outlier flag.
//
// The outlier rule is the fit's own: a point is an outlier where its
// |orthogonal residual| from the fitted saddle exceeds the fit's inlier
// threshold (SaddleResult.Threshold). A fit made on a sample of a patch's
// points thereby classifies every point of the patch, sampled or not.
type AsBuilt struct {
	Fits []*SaddleResult
}

var _ deviation.Enricher = (*AsBuilt)(nil)

// Prepare makes r carry residuals and outlier flags.
func (a *AsBuilt) Prepare(r *deviation.Result, n int) {
	if r.Resid == nil {
		r.Resid = make([]float64, 0, n)
	}
	if r.Outlier == nil {
		r.Outlier = make([]bool, 0, n)
	}
}

// Enrich fills r.Resid and r.Outlier. It does not allocate.
func (a *AsBuilt) Enrich(r *deviation.Result) {
	c := r.Chunk
	nan := math.NaN()
	for i, n := 0, c.Len(); i < n; i++ {
		k := r.Patch[i]
		if k < 0 || int(k) >= len(a.Fits) || a.Fits[k] == nil || r.Status[i] == deviation.StatusRejected {
			r.Resid[i] = nan
			r.Outlier[i] = false
			continue
		}
		f := a.Fits[k]
		_, d := f.Saddle.ClosestLocal(f.Saddle.ToLocal(c.P[i]))
		r.Resid[i] = d
		r.Outlier[i] = math.Abs(d) > f.Threshold
	}
}

// PointU returns the standard uncertainty, in metres, of the fitted
// surface's position along its normal at the closest point of the site
// point p: the fit's own contribution to the uncertainty of a deviation
// measured from the fitted surface,
//
//	u_fit² = gᵀ·C·g,   g = ∂d/∂θ at the foot,
//
// with C the parameter covariance (ParCov) and g the orthogonal-distance
// gradient of the saddle problem (SaddleProblem's doc: for the foot Y and
// n = (−2K1Y_x, −2K2Y_y, 1), ∂d/∂K1 = −Y_x²/|n|, ∂d/∂K2 = −Y_y²/|n|,
// ∂d/∂ω = n × (Y − c)/|n|, ∂d/∂t = −n/|n|, c the pivot). This is the law
// of propagation of uncertainty (JCGM 100:2008 §5.1.2) applied to the
// linearised fit. NaN when the fit has no covariance.
func (r *SaddleResult) PointU(p r3.Vec) float64 {
	if r.ParCov == nil {
		return math.NaN()
	}
	s := &r.Saddle
	foot, _ := s.ClosestLocal(s.ToLocal(p))
	n := r3.Vec{X: -2 * s.K1 * foot.X, Y: -2 * s.K2 * foot.Y, Z: 1}
	nn := r3.Norm(n)
	w := r3.Cross(n, r3.Sub(foot, s.ToLocal(r.Pivot)))
	g := [NumSaddlePar]float64{-foot.X * foot.X / nn, -foot.Y * foot.Y / nn, w.X / nn, w.Y / nn, w.Z / nn, -n.X / nn, -n.Y / nn, -n.Z / nn}
	var q float64
	for i := 0; i < NumSaddlePar; i++ {
		for j := 0; j < NumSaddlePar; j++ {
			q += g[i] * r.ParCov.At(i, j) * g[j]
		}
	}
	return math.Sqrt(math.Max(q, 0))
}
