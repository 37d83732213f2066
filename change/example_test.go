package change_test

import (
	"fmt"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/change"
)

func ExampleCongruency() {
	// Shape coefficients k1, k2 (1/m) of two epochs, difference and summed
	// cofactors; σ̂0² pooled from 40 residual degrees of freedom.
	d := []float64{0.0009, -0.0002}
	q := mat.NewSymDense(2, []float64{4e-8, 0, 0, 4e-8})
	res := change.Congruency(d, q, 1.1, 40, 0.05)
	fmt.Printf("T = %.2f, F crit = %.2f, reject = %v\n", res.T, res.Critical, res.Reject)
	fmt.Printf("k1 changed: %v, k2 changed: %v\n", res.Params[0].Changed, res.Params[1].Changed)
	// Output:
	// T = 9.66, F crit = 3.23, reject = true
	// k1 changed: true, k2 changed: false
}

func ExampleFitTrend() {
	years := []float64{2012, 2016, 2020, 2024}
	offsetMM := []float64{0.0, -1.1, -1.9, -3.2}
	u := []float64{0.8, 0.8, 0.5, 0.5}
	tr, _ := change.FitTrend(years, offsetMM, u, 0.05)
	fmt.Printf("rate %.3f ± %.3f mm/yr, significant: %v\n", tr.Rate, tr.U, tr.Significant)
	// Output:
	// rate -0.264 ± 0.020 mm/yr, significant: true
}

func ExampleCompare() {
	// Two epochs of a flat 4 m × 4 m slab on a 5 cm lattice, the later one
	// 3 mm higher, both with a ±1 mm alternating texture (no randomness).
	lattice := func(shift float64) []r3.Vec {
		var pts []r3.Vec
		for i := 0; i < 80; i++ {
			for j := 0; j < 80; j++ {
				tex := 0.001 * float64(1-2*((i+j)%2))
				pts = append(pts, r3.Vec{X: 0.05 * float64(i), Y: 0.05 * float64(j), Z: 12 + shift + tex})
			}
		}
		return pts
	}
	earlier, later := lattice(0), lattice(0.003)
	set := &change.Settings{CoreSpacing: 1, Radius: 0.3, HalfLength: 0.1, Registration: 0.0005}
	cores, _ := change.Grid(nil, nil, 0, earlier, later, set)
	sum := change.Compare(cores, earlier, later, set)
	fmt.Printf("%d cores, %d significant, mean change %.1f mm, LoD95 %.2f mm\n",
		sum.Cores, sum.Significant, sum.MeanDistance*1e3, cores[5].LoD*1e3)
	// Output:
	// 16 cores, 16 significant, mean change 3.0 mm, LoD95 1.24 mm
}
