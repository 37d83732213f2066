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

// PoseParams names the quantities of Pose, in order: the two shape
// coefficients (1/m), the offset of the as-built surface from the design
// reference point along the design normal (m), and the tilt of the as-built
// normal there against the design normal, as its components along two
// fixed horizontal-ish directions e1, e2 ⟂ n0 (rad).
var PoseParams = [5]string{"k1", "k2", "offset", "tilt_1", "tilt_2"}

// PoseEstimate is the as-built saddle described by quantities that mean
// the same thing in every epoch of a structure (they refer to a fixed
// design point and normal, not to the fit's own frame), with their
// covariance: what a comparison of epochs needs.
type PoseEstimate struct {
	Value [5]float64
	Cov   [5][5]float64
}

// Pose returns the PoseEstimate of r at the design reference point p0 with
// unit design normal n0 (site frame). The covariance is propagated from
// ParCov through the Jacobian of the quantities with respect to the 8 fit
// parameters (JCGM 100:2008 §5.1.2), taken by central differences with
// steps of 10⁻³ standard uncertainties, which are exact to first order for
// these smooth functions. ok is false when the line p0 + δ·n0 does not
// meet the fitted surface or r has no covariance.
func (r *SaddleResult) Pose(p0, n0 r3.Vec) (PoseEstimate, bool) {
	var pe PoseEstimate
	if r.ParCov == nil {
		return pe, false
	}
	n0 = r3.Unit(n0)
	e1 := r3.Cross(n0, r3.Vec{Z: 1})
	if r3.Norm(e1) < 1e-6 {
		e1 = r3.Vec{X: 1}
	}
	e1 = r3.Unit(r3.Sub(e1, r3.Scale(r3.Dot(e1, n0), n0)))
	e2 := r3.Cross(n0, e1)
	v, ok := poseOf(&r.Saddle, p0, n0, e1, e2)
	if !ok {
		return pe, false
	}
	pe.Value = v
	c := r.Saddle.ToLocal(r.Pivot)
	var g [5][NumSaddlePar]float64
	for k := 0; k < NumSaddlePar; k++ {
		h := 1e-3 * math.Sqrt(math.Max(r.ParCov.At(k, k), 0))
		if h == 0 {
			continue
		}
		var th [NumSaddlePar]float64
		th[k] = h
		vp, ok1 := poseOf(perturb(&r.Saddle, c, th), p0, n0, e1, e2)
		th[k] = -h
		vm, ok2 := poseOf(perturb(&r.Saddle, c, th), p0, n0, e1, e2)
		if !ok1 || !ok2 {
			return pe, false
		}
		for i := range g {
			g[i][k] = (vp[i] - vm[i]) / (2 * h)
		}
	}
	for i := 0; i < 5; i++ {
		for j := 0; j < 5; j++ {
			var s float64
			for a := 0; a < NumSaddlePar; a++ {
				for b := 0; b < NumSaddlePar; b++ {
					s += g[i][a] * r.ParCov.At(a, b) * g[j][b]
				}
			}
			pe.Cov[i][j] = s
		}
	}
	return pe, true
}

// perturb returns the saddle for the fit parameters th about the pivot c
// (local coordinates), in the convention of SaddleProblem: axes
// R = R₀·Exp(ω), origin o = o₀ + R₀(c + t) − R·c.
func perturb(s *deviation.Saddle, c r3.Vec, th [NumSaddlePar]float64) *deviation.Saddle {
	e := expRot(r3.Vec{X: th[ParW1], Y: th[ParW2], Z: th[ParW3]})
	out := *s
	out.K1 += th[ParK1]
	out.K2 += th[ParK2]
	for i := 0; i < 3; i++ {
		var col r3.Vec
		for j := 0; j < 3; j++ {
			col = r3.Add(col, r3.Scale(e[j][i], s.Axes[j]))
		}
		out.Axes[i] = col
	}
	ct := r3.Vec{X: c.X + th[ParT1], Y: c.Y + th[ParT2], Z: c.Z + th[ParT3]}
	o := r3.Add(s.Origin, r3.Add(r3.Add(r3.Scale(ct.X, s.Axes[0]), r3.Scale(ct.Y, s.Axes[1])), r3.Scale(ct.Z, s.Axes[2])))
	rc := r3.Add(r3.Add(r3.Scale(c.X, out.Axes[0]), r3.Scale(c.Y, out.Axes[1])), r3.Scale(c.Z, out.Axes[2]))
	out.Origin = r3.Sub(o, rc)
	return &out
}

// poseOf computes the PoseParams quantities of the saddle s.
func poseOf(s *deviation.Saddle, p0, n0, e1, e2 r3.Vec) ([5]float64, bool) {
	q0 := s.ToLocal(p0)
	m := r3.Vec{X: r3.Dot(s.Axes[0], n0), Y: r3.Dot(s.Axes[1], n0), Z: r3.Dot(s.Axes[2], n0)}
	// q0 + δ·m on z = K1x² + K2y²: a·δ² + b·δ + c = 0
	a := -(s.K1*m.X*m.X + s.K2*m.Y*m.Y)
	b := m.Z - 2*s.K1*q0.X*m.X - 2*s.K2*q0.Y*m.Y
	cc := q0.Z - s.K1*q0.X*q0.X - s.K2*q0.Y*q0.Y
	var delta float64
	switch disc := b*b - 4*a*cc; {
	case disc < 0:
		return [5]float64{}, false
	case a == 0:
		if b == 0 {
			return [5]float64{}, false
		}
		delta = -cc / b
	default:
		// the root nearer zero, by the cancellation-free form
		qq := -0.5 * (b + math.Copysign(math.Sqrt(disc), b))
		r1, r2 := qq/a, cc/qq
		delta = r1
		if math.Abs(r2) < math.Abs(r1) {
			delta = r2
		}
	}
	x := r3.Add(q0, r3.Scale(delta, m))
	nl := r3.Unit(r3.Vec{X: -2 * s.K1 * x.X, Y: -2 * s.K2 * x.Y, Z: 1})
	na := r3.Add(r3.Add(r3.Scale(nl.X, s.Axes[0]), r3.Scale(nl.Y, s.Axes[1])), r3.Scale(nl.Z, s.Axes[2]))
	return [5]float64{s.K1, s.K2, delta, r3.Dot(na, e1), r3.Dot(na, e2)}, true
}
