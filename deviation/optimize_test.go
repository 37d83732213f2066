package deviation

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/optimize"
	"gonum.org/v1/gonum/spatial/r3"
)

// TestClosestAgainstGonumOptimize checks the closest-point solver against
// an independent general-purpose minimiser: gonum/optimize (Nelder–Mead,
// then BFGS from its result) minimising |q − (x, y, K1x² + K2y²)|² over
// (x, y), started from the query point's own (x, y). The optimiser finds a
// local minimum, so the solver's distance must be no larger than the
// optimiser's, and equal to it to 1e-7 m where the optimiser converged.
func TestClosestAgainstGonumOptimize(t *testing.T) {
	rng := rand.New(rand.NewPCG(31, 41))
	shapes := []Saddle{
		{K1: 1.0 / 144, K2: -1.0 / 81},
		{K1: 0.05, K2: -0.02},
		{K1: 0.5, K2: -0.5},
	}
	agree, total := 0, 0
	for si := range shapes {
		s := &shapes[si]
		s.Axes = [3]r3.Vec{{X: 1}, {Y: 1}, {Z: 1}}
		for i := 0; i < 60; i++ {
			q := r3.Vec{X: 40 * (rng.Float64() - 0.5), Y: 40 * (rng.Float64() - 0.5)}
			q.Z = s.K1*q.X*q.X + s.K2*q.Y*q.Y + 2*(rng.Float64()-0.5)*math.Pow(10, -3+4*rng.Float64())
			if i%10 == 0 {
				q.X = 0 // on an axis
			}
			_, d := s.ClosestLocal(q)
			f := func(x []float64) float64 {
				z := s.K1*x[0]*x[0] + s.K2*x[1]*x[1]
				return (q.X-x[0])*(q.X-x[0]) + (q.Y-x[1])*(q.Y-x[1]) + (q.Z-z)*(q.Z-z)
			}
			grad := func(g, x []float64) {
				z := s.K1*x[0]*x[0] + s.K2*x[1]*x[1]
				g[0] = -2*(q.X-x[0]) - 2*(q.Z-z)*2*s.K1*x[0]
				g[1] = -2*(q.Y-x[1]) - 2*(q.Z-z)*2*s.K2*x[1]
			}
			best := math.Inf(1)
			for _, x0 := range [][]float64{{q.X, q.Y}, {q.X * 0.5, q.Y * 0.5}} {
				r, err := optimize.Minimize(optimize.Problem{Func: f}, x0, &optimize.Settings{Converger: &optimize.FunctionConverge{Absolute: 1e-24, Iterations: 200}}, &optimize.NelderMead{})
				if err != nil && r == nil {
					continue
				}
				r2, err := optimize.Minimize(optimize.Problem{Func: f, Grad: grad}, r.X, nil, &optimize.BFGS{})
				if err == nil || r2 != nil {
					if r2.F < r.F {
						r = r2
					}
				}
				best = math.Min(best, math.Sqrt(math.Max(r.F, 0)))
			}
			total++
			if math.Abs(math.Abs(d)-best) <= 1e-7 {
				agree++
			}
			if math.Abs(d) > best+1e-9 {
				t.Errorf("shape %d, q %v: solver |d| = %.12g m, gonum/optimize found %.12g m (a closer point)", si, q, math.Abs(d), best)
			} else if best-math.Abs(d) > 1e-7 {
				t.Logf("shape %d, q %v: optimiser stopped at a farther local minimum (%.3g m above the solver)", si, q, best-math.Abs(d))
			}
		}
	}
	if agree < total*9/10 {
		t.Errorf("solver and gonum/optimize agree to 0.1 µm on only %d of %d points", agree, total)
	}
}
