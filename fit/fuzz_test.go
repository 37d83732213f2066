package fit

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

// FuzzNearestSaddle feeds arbitrary quadric coefficients to Classify and
// NearestSaddle: they must not panic, and a returned saddle must satisfy
// K1 ≥ 0 ≥ K2 with orthonormal right-handed axes. Seeds: the canonical
// forms of TestClassifyCanonical.
func FuzzNearestSaddle(f *testing.F) {
	f.Add(1.0, -1.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, -1.0, 0.0)
	f.Add(0.0, 0.0, 0.0, 1.0, 0.0, 0.0, 0.0, 0.0, -1.0, 0.0)
	f.Add(1.0, 1.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, -1.0, 0.0)
	f.Add(0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 1.0, 1.0, 1.0, -1.0)
	f.Add(1.0, 1.0, 1.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, -1.0)
	f.Fuzz(func(t *testing.T, c0, c1, c2, c3, c4, c5, c6, c7, c8, c9 float64) {
		q := Quadric{C: [10]float64{c0, c1, c2, c3, c4, c5, c6, c7, c8, c9}, Scale: 1}
		for _, v := range q.C {
			if math.IsNaN(v) || math.IsInf(v, 0) || math.Abs(v) > 1e100 {
				t.Skip()
			}
		}
		Classify(&q)
		s, err := NearestSaddle(&q, r3.Vec{Z: 1})
		if err != nil {
			return
		}
		if !(s.K1 >= 0 && s.K2 <= 0) {
			t.Fatalf("got K1 = %v, K2 = %v, want K1 ≥ 0 ≥ K2", s.K1, s.K2)
		}
		if d := r3.Dot(r3.Cross(s.Axes[0], s.Axes[1]), s.Axes[2]); math.Abs(d-1) > 1e-6 {
			t.Fatalf("axes not right-handed orthonormal: det %v", d)
		}
	})
}
