package fit_test

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
	"saddlecheck/fit"
)

// Fit y = b₁·(1 − exp(−b₂x)) to exact data generated with b = (2, 0.5).
func ExampleLevenbergMarquardt() {
	xs := []float64{1, 2, 3, 4, 5, 6, 7, 8}
	ys := make([]float64, len(xs))
	for i, x := range xs {
		ys[i] = 2 * (1 - math.Exp(-0.5*x))
	}
	p := &fit.Problem{
		M: len(xs),
		Func: func(dst, b []float64) {
			for i, x := range xs {
				dst[i] = b[0]*(1-math.Exp(-b[1]*x)) - ys[i]
			}
		},
		Jac: func(j *mat.Dense, b []float64) {
			for i, x := range xs {
				e := math.Exp(-b[1] * x)
				j.Set(i, 0, 1-e)
				j.Set(i, 1, b[0]*x*e)
			}
		},
	}
	res, err := fit.LevenbergMarquardt(p, []float64{1, 1}, nil)
	if err != nil || res.Status.Err() != nil {
		fmt.Println(err, res.Status)
		return
	}
	fmt.Printf("b = (%.6f, %.6f)\n", res.X[0], res.X[1])
	// Output:
	// b = (2.000000, 0.500000)
}

// Fit a saddle to points on z = x²/144 − y²/81 in a shifted site frame.
func ExampleFitSaddle() {
	truth := deviation.Saddle{
		K1: 1.0 / 144, K2: -1.0 / 81,
		Origin: r3.Vec{X: 500000, Y: 5000000, Z: 100},
		Axes:   [3]r3.Vec{{X: 1}, {Y: 1}, {Z: 1}},
	}
	var pts []r3.Vec
	for i := 0; i < 30; i++ {
		for j := 0; j < 30; j++ {
			x, y := 3+float64(i), -9+float64(j)
			// ±1 mm alternating "noise" along z keeps σ̂ away from zero.
			z := truth.K1*x*x + truth.K2*y*y + 0.001*float64((i+j)%2*2-1)
			pts = append(pts, truth.ToSite(r3.Vec{X: x, Y: y, Z: z}))
		}
	}
	res, err := fit.FitSaddle(pts, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("1/K1 = %.2f, 1/K2 = %.2f, %v, %d inliers\n", 1/res.K1.Value, 1/res.K2.Value, res.Class.Kind, res.NumInliers)
	// Output:
	// 1/K1 = 144.00, 1/K2 = -81.00, hyperbolic paraboloid, 900 inliers
}

// Split the difference between a design and the fitted as-built saddle
// into placement and shape.
func ExampleCompareToDesign() {
	design := deviation.Saddle{
		K1: 1.0 / 144, K2: -1.0 / 81,
		Origin: r3.Vec{X: 500000, Y: 5000000, Z: 100},
		Axes:   [3]r3.Vec{{X: 1}, {Y: 1}, {Z: 1}},
	}
	built := design
	// The whole shell sits 15 mm high: 15 mm·cos(slope) = 14.5 mm along the
	// normal at the centroid, where the slope is 15.5°.
	built.Origin.Z += 0.015
	var pts []r3.Vec
	var centroid r3.Vec
	for i := 0; i < 30; i++ {
		for j := 0; j < 30; j++ {
			x, y := 3+float64(i), -9+float64(j)
			z := built.K1*x*x + built.K2*y*y + 0.001*float64((i+j)%2*2-1)
			p := built.ToSite(r3.Vec{X: x, Y: y, Z: z})
			pts = append(pts, p)
			centroid = r3.Add(centroid, r3.Scale(1.0/900, p))
		}
	}
	res, err := fit.FitSaddle(pts, &fit.SaddleSettings{Start: &design})
	if err != nil {
		fmt.Println(err)
		return
	}
	sp := fit.CompareToDesign(&design, res, centroid)
	fmt.Printf("offset along the design normal %.1f mm, K1 change significant: %v\n", 1e3*sp.Offset, sp.K1.Significant)
	// Output:
	// offset along the design normal 14.5 mm, K1 change significant: false
}
