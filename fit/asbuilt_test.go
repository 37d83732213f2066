package fit

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

// TestPointUMatchesSpread: the fit's pointwise uncertainty u_fit from
// PointU agrees with the actual spread of the fitted surface over repeated
// synthetic surveys of a known saddle (the Monte Carlo method of JCGM
// 101:2008 applied to the whole fit; the truth generated in the test is the
// reference): at query points inside and outside the sampled patch, the
// standard deviation over 200 seeded trials of the fitted surface's signed
// distance from the point lies within 20 % of the mean reported u_fit.
func TestPointUMatchesSpread(t *testing.T) {
	truth := deviation.Saddle{K1: 1.0 / 144, K2: -1.0 / 81, Origin: r3.Vec{X: 500000, Y: 5000000, Z: 50},
		Axes: [3]r3.Vec{{X: 1}, {Y: 1}, {Z: 1}}}
	queries := []r3.Vec{{X: 10, Y: 5}, {X: 18, Y: 12}, {X: 4, Y: 0}, {X: 30, Y: 20}}
	const trials, n, sigma = 200, 300, 0.002
	sum := make([]float64, len(queries))
	sum2 := make([]float64, len(queries))
	uSum := make([]float64, len(queries))
	rng := rand.New(rand.NewPCG(2026, 12))
	pts := make([]r3.Vec, n)
	for k := 0; k < trials; k++ {
		for i := range pts {
			x, y := 5+15*rng.Float64(), -2+15*rng.Float64()
			q := r3.Vec{X: x, Y: y, Z: truth.K1*x*x + truth.K2*y*y}
			nrm := r3.Unit(r3.Vec{X: -2 * truth.K1 * x, Y: -2 * truth.K2 * y, Z: 1})
			pts[i] = truth.ToSite(r3.Add(q, r3.Scale(sigma*rng.NormFloat64(), nrm)))
		}
		res, err := FitSaddle(pts, &SaddleSettings{Start: &truth, Threshold: 10 * sigma})
		if err != nil {
			t.Fatal(err)
		}
		for j, q := range queries {
			p := truth.ToSite(r3.Vec{X: q.X, Y: q.Y, Z: truth.K1*q.X*q.X + truth.K2*q.Y*q.Y})
			_, d := res.Saddle.ClosestLocal(res.Saddle.ToLocal(p))
			sum[j] += d
			sum2[j] += d * d
			uSum[j] += res.PointU(p)
		}
	}
	for j, q := range queries {
		mean := sum[j] / trials
		sd := math.Sqrt((sum2[j] - trials*mean*mean) / (trials - 1))
		u := uSum[j] / trials
		if r := sd / u; r < 0.8 || r > 1.2 {
			t.Errorf("query %v: spread of the fitted surface %.4f mm, mean u_fit %.4f mm (ratio %.2f)", q, sd*1000, u*1000, r)
		}
	}
}

// TestPoseSpreadAndOffset: over repeated seeded surveys of a known saddle
// (the generated truth is the reference; Monte Carlo as in JCGM 101:2008),
// the spread of each Pose quantity matches its propagated standard
// uncertainty within 20 %, and a survey of the same shell raised by a known
// 7 mm along the design normal gives that offset.
func TestPoseSpreadAndOffset(t *testing.T) {
	design := deviation.Saddle{K1: 1.0 / 144, K2: -1.0 / 81, Origin: r3.Vec{X: 500000, Y: 5000000, Z: 50},
		Axes: [3]r3.Vec{{X: 1}, {Y: 1}, {Z: 1}}}
	// the design reference point: the foot of the patch centre, and its normal
	ref := design.Project(design.ToSite(r3.Vec{X: 12, Y: 5, Z: 1.0}))
	p0, n0 := ref.Foot, ref.Normal
	const trials, n, sigma, lift = 200, 300, 0.002, 0.007
	var sum, sum2, uu [5]float64
	rng := rand.New(rand.NewPCG(7, 77))
	pts := make([]r3.Vec, n)
	for k := 0; k < trials; k++ {
		for i := range pts {
			x, y := 5+15*rng.Float64(), -2+15*rng.Float64()
			q := r3.Vec{X: x, Y: y, Z: design.K1*x*x + design.K2*y*y}
			nrm := r3.Unit(r3.Vec{X: -2 * design.K1 * x, Y: -2 * design.K2 * y, Z: 1})
			pts[i] = r3.Add(design.ToSite(r3.Add(q, r3.Scale(sigma*rng.NormFloat64(), nrm))), r3.Scale(lift, n0))
		}
		res, err := FitSaddle(pts, &SaddleSettings{Start: &design, Threshold: 10 * sigma})
		if err != nil {
			t.Fatal(err)
		}
		pe, ok := res.Pose(p0, n0)
		if !ok {
			t.Fatal("no pose")
		}
		for i := 0; i < 5; i++ {
			sum[i] += pe.Value[i]
			sum2[i] += pe.Value[i] * pe.Value[i]
			uu[i] += math.Sqrt(pe.Cov[i][i])
		}
	}
	for i, name := range PoseParams {
		mean := sum[i] / trials
		sd := math.Sqrt((sum2[i] - trials*mean*mean) / (trials - 1))
		u := uu[i] / trials
		if r := sd / u; r < 0.8 || r > 1.2 {
			t.Errorf("%s: spread %.3g, mean propagated u %.3g (ratio %.2f)", name, sd, u, r)
		}
		if name == "offset" && math.Abs(mean-lift) > 4*u/math.Sqrt(trials) {
			t.Errorf("offset: mean %.4f mm, the survey was raised by %.1f mm", mean*1000, lift*1000)
		}
	}
}
