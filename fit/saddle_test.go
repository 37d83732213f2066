package fit

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

// centredTruth returns the synthetic points and the truth saddle both
// shifted by the points' first element (a local origin).
func centredTruth(o synthOptions) ([]r3.Vec, deviation.Saddle, []bool) {
	truth := synthSaddle()
	pts, out := synthPoints(&truth, o)
	origin := pts[0]
	for i := range pts {
		pts[i] = r3.Sub(pts[i], origin)
	}
	truth.Origin = r3.Sub(truth.Origin, origin)
	return pts, truth, out
}

// TestSaddleJacobian checks the analytic Jacobian of the orthogonal
// distance, (∂G/∂θ)/|∇G| at the foot, against central finite differences
// (gonum diff/fd), at a perturbed start so the points are off the surface.
func TestSaddleJacobian(t *testing.T) {
	o := workloadOptions(200, 0.1, 0, 3)
	o.noise = 0.05
	pts, truth, _ := centredTruth(o)
	start := truth
	start.K1 *= 1.1
	start.K2 *= 0.9
	start.Origin = r3.Add(start.Origin, r3.Vec{X: 0.3, Y: -0.2, Z: 0.1})
	for _, w := range [][]float64{nil, weightsFor(len(pts))} {
		sp := NewSaddleProblem(pts, w, &start)
		x := sp.X0(&start)
		m := len(pts)
		want := mat.NewDense(m, NumSaddlePar, nil)
		fd.Jacobian(want, sp.Func, x, &fd.JacobianSettings{Formula: fd.Central, Step: 1e-7})
		got := mat.NewDense(m, NumSaddlePar, nil)
		sp.Jac(got, x)
		for j := 0; j < NumSaddlePar; j++ {
			col := mat.Norm(want.ColView(j), math.Inf(1))
			for i := 0; i < m; i++ {
				if math.Abs(got.At(i, j)-want.At(i, j)) > 1e-5*col {
					t.Fatalf("weights %v: J[%d,%s]: got %v, want %v", w != nil, i, SaddleParamNames[j], got.At(i, j), want.At(i, j))
				}
			}
		}
		// The normal-equation path gives the same JᵀJ and Jᵀf.
		jtj := mat.NewSymDense(NumSaddlePar, nil)
		jtf := make([]float64, NumSaddlePar)
		sp.Normal(jtj, jtf, x)
		var ata mat.Dense
		ata.Mul(got.T(), got)
		if !mat.EqualApprox(&ata, jtj, 1e-9*mat.Norm(&ata, math.Inf(1))) {
			t.Errorf("JᵀJ from Normal differs from the Jacobian's")
		}
	}
}

func weightsFor(n int) []float64 {
	w := make([]float64, n)
	for i := range w {
		w[i] = 0.2 + float64(i%5)/5
	}
	return w
}

// TestSaddleAcceptKeepsResiduals: folding ω and t into the frame leaves
// the residuals unchanged (re-linearisation is exact).
func TestSaddleAcceptKeepsResiduals(t *testing.T) {
	pts, truth, _ := centredTruth(workloadOptions(100, 0, 0, 4))
	sp := NewSaddleProblem(pts, nil, &truth)
	x := []float64{truth.K1, truth.K2, 0.01, -0.02, 0.03, 0.1, -0.2, 0.05}
	before := make([]float64, len(pts))
	sp.Func(before, x)
	sp.Accept(x)
	after := make([]float64, len(pts))
	sp.Func(after, x)
	for i := range before {
		if math.Abs(before[i]-after[i]) > 1e-12 {
			t.Fatalf("residual %d: got %v after Accept, want %v", i, after[i], before[i])
		}
	}
	for _, v := range x[ParW1:] {
		if v != 0 {
			t.Fatalf("Accept left x = %v, want ω = t = 0", x)
		}
	}
}

// TestSaddleNoPerPointAlloc: evaluating residuals and normal equations
// allocates the same for 1000 and 8000 points (nothing per point).
func TestSaddleNoPerPointAlloc(t *testing.T) {
	allocs := func(n int) float64 {
		pts, truth, _ := centredTruth(workloadOptions(n, 0, 0, 6))
		sp := NewSaddleProblem(pts, nil, &truth)
		x := sp.X0(&truth)
		f := make([]float64, n)
		jtj := mat.NewSymDense(NumSaddlePar, nil)
		jtf := make([]float64, NumSaddlePar)
		return testing.AllocsPerRun(5, func() {
			x[ParT3] += 1e-6 // defeat the cache
			sp.Func(f, x)
			sp.Normal(jtj, jtf, x)
		})
	}
	if a, b := allocs(1000), allocs(8000); a != b {
		t.Errorf("allocations: %v for 1000 points, %v for 8000", a, b)
	}
}
