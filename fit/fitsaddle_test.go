package fit

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

var workloadPatch = [4]float64{3, 33, -9, 21}

// TestFitSaddleRecovery recovers the analytic saddle (the truth) at large
// site offsets from a patch far from the saddle point, with 2 mm noise and
// 30 % or 50 % outliers, from the quadric start and from a perturbed
// design start.
func TestFitSaddleRecovery(t *testing.T) {
	truth := synthSaddle()
	design := truth
	design.K1 *= 1.02
	design.K2 *= 0.98
	design.Origin = r3.Add(design.Origin, r3.Vec{X: 0.05, Y: -0.04, Z: 0.03})
	// A design start 10 cm off along z and turned 0.5° about the vertical.
	offset := truth
	offset.Origin = r3.Add(offset.Origin, r3.Scale(0.10, truth.Axes[2]))
	turn := rotZ(0.5 * math.Pi / 180)
	for i, a := range truth.Axes {
		offset.Axes[i] = r3.Vec{X: turn[0][0]*a.X + turn[0][1]*a.Y, Y: turn[1][0]*a.X + turn[1][1]*a.Y, Z: a.Z}
	}
	for _, tc := range []struct {
		name              string
		outliers, clutter float64
		start             *deviation.Saddle
		robust            string
		threshold         float64
	}{
		{"30% quadric start", 0.25, 0.05, nil, "", 0},
		{"50% quadric start", 0.42, 0.08, nil, "", 0},
		{"50% design start", 0.42, 0.08, &design, "", 0},
		{"30% design start huber", 0.25, 0.05, &design, "huber", 0},
		{"30% quadric start tukey", 0.25, 0.05, nil, "tukey", 0},
		{"30% design 10 cm off, 0.5° turned, threshold 1 cm", 0.25, 0.05, &offset, "", 0.01},
	} {
		t.Run(tc.name, func(t *testing.T) {
			pts, out := synthPoints(&truth, workloadOptions(8000, tc.outliers, tc.clutter, 11))
			res, err := FitSaddle(pts, &SaddleSettings{Start: tc.start, Robust: tc.robust, Threshold: tc.threshold})
			if err != nil {
				t.Fatal(err)
			}
			wrong := 0
			for i := range pts {
				if res.Inliers[i] == out[i] {
					wrong++
				}
			}
			t.Logf("K1 %.6g±%.2g K2 %.6g±%.2g rms %.3f mm σ %.3f mm T %.2f mm, %d rounds, %v after %d evaluations, class %v, misclassified %d",
				res.K1.Value, res.K1.U, res.K2.Value, res.K2.U, 1e3*res.RMS, 1e3*res.Sigma, 1e3*res.Threshold, res.Rounds,
				res.Solver.Status, res.Solver.Evaluations, res.Class.Kind, wrong)
			if wrong > len(pts)/100 {
				t.Errorf("misclassified %d of %d points, want ≤ 1 %%", wrong, len(pts))
			}
			if math.Abs(res.Sigma-0.002) > 0.0002 && tc.threshold == 0 {
				t.Errorf("σ̂: got %.4g m, want 0.002 ± 0.0002", res.Sigma)
			}
			if res.Class.Kind != KindHyperbolicParaboloid {
				t.Errorf("class: got %v, want hyperbolic paraboloid", res.Class.Kind)
			}
			// With ~10⁴ inliers at 2 mm, K is determined to about 1e-6/m
			// (the reported u); 5u bounds the error, plus the pose.
			if math.Abs(res.K1.Value-truth.K1) > 5*res.K1.U || math.Abs(res.K2.Value-truth.K2) > 5*res.K2.U {
				t.Errorf("K: got (%g, %g) ± (%g, %g), want (%g, %g)", res.K1.Value, res.K2.Value, res.K1.U, res.K2.U, truth.K1, truth.K2)
			}
			saddleClose(t, &res.Saddle, &truth, 1e-3, 1e-3, 0.001, workloadPatch)
			for i := 0; i < 200; i++ {
				_, d := res.Saddle.ClosestLocal(res.Saddle.ToLocal(pts[i]))
				if math.Abs(d-res.Residuals[i]) > 1e-8 {
					t.Fatalf("residual %d (inlier %v): got %v, want %v", i, res.Inliers[i], res.Residuals[i], d)
				}
			}
		})
	}
}

// TestFitSaddleErrors maps invalid inputs to their errors.
func TestFitSaddleErrors(t *testing.T) {
	truth := synthSaddle()
	good, _ := synthPoints(&truth, workloadOptions(200, 0, 0, 9))
	nan := append([]r3.Vec(nil), good...)
	nan[7].Y = math.NaN()
	bad := truth
	bad.K1 = -1
	tests := []struct {
		name string
		pts  []r3.Vec
		set  *SaddleSettings
		want error
		sub  string
	}{
		{"too few points", good[:5], nil, ErrTooFewPoints, "5 points"},
		{"NaN coordinate", nan, nil, ErrNotFinitePoint, "point 7"},
		{"unknown robust", good, &SaddleSettings{Robust: "cauchy"}, ErrRobust, "cauchy"},
		{"invalid start", good, &SaddleSettings{Start: &bad}, deviation.ErrCurvatureSign, "start"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := FitSaddle(tc.pts, tc.set)
			if !errors.Is(err, tc.want) || !strings.Contains(err.Error(), tc.sub) {
				t.Errorf("got %v, want %v containing %q", err, tc.want, tc.sub)
			}
		})
	}
}

// TestIRLSWeights checks the Huber and Tukey biweight functions at known
// points (Huber 1981: w = 1 for |u| ≤ k, k/|u| beyond; Tukey: (1 − (u/c)²)²
// inside c, 0 outside), with the residuals scaled so that the robust scale
// 1.4826·median|d| is 1.
func TestIRLSWeights(t *testing.T) {
	// median|d| = 1/1.4826 makes σ = 1; the probe residuals follow.
	m := 1 / madScale
	d := []float64{m, -m, m, 0.5, 2, -3, 5}
	tests := []struct {
		kind string
		want []float64
	}{
		{"huber", []float64{1, 1, 1, 1, HuberK / 2, HuberK / 3, HuberK / 5}},
		{"tukey", []float64{sq(1 - sq(m/TukeyC)), sq(1 - sq(m/TukeyC)), sq(1 - sq(m/TukeyC)), sq(1 - sq(0.5/TukeyC)), sq(1 - sq(2/TukeyC)), sq(1 - sq(3/TukeyC)), 0}},
	}
	for _, tc := range tests {
		w := make([]float64, len(d))
		irlsWeights(w, d, tc.kind)
		for i := range w {
			if math.Abs(w[i]-tc.want[i]) > 1e-12 {
				t.Errorf("%s weight of %v: got %v, want %v", tc.kind, d[i], w[i], tc.want[i])
			}
		}
	}
}

func sq(x float64) float64 { return x * x }

// TestFitSaddleGround: 40 % of the points are a ground plane 6 m below the
// saddle point and wider than the patch, 10 % more are outliers 5–50 cm
// off; the quadric start must still find the saddle (truth: the analytic
// surface), not the plane.
func TestFitSaddleGround(t *testing.T) {
	truth := synthSaddle()
	pts, _ := synthPoints(&truth, workloadOptions(10000, 0.1, 0, 5))
	rng := rand.New(rand.NewPCG(3, 4))
	ground := make([]bool, len(pts))
	for i := 0; i < 4000; i++ {
		x, y := -5+45*rng.Float64(), -15+45*rng.Float64()
		p := truth.ToSite(r3.Vec{X: x, Y: y})
		p.Z = truth.Origin.Z - 6 + 0.01*rng.NormFloat64()
		pts[i] = p
		ground[i] = true
	}
	res, err := FitSaddle(pts, nil)
	if err != nil {
		t.Fatal(err)
	}
	for i, g := range ground {
		if g && res.Inliers[i] {
			t.Fatalf("ground point %d taken as an inlier", i)
		}
	}
	saddleClose(t, &res.Saddle, &truth, 1e-3, 1e-3, 0.001, workloadPatch)
}
