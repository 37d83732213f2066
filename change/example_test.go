package change_test

import (
	"fmt"

	"gonum.org/v1/gonum/mat"

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
