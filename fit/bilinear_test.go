package fit

import (
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

// TestQuadricOfBilinearPatch: points sampled from the bilinear patch of
// four corners lie exactly on a hyperbolic paraboloid (FIELD.md §4.3), so
// the Taubin quadric through them, projected to the nearest saddle, must
// equal the exact closed-form conversion deviation.SaddleFromCorners; the
// orthogonal-distance fit from that start must stay there.
func TestQuadricOfBilinearPatch(t *testing.T) {
	off := r3.Vec{X: 5e5, Y: 5e6, Z: 80}
	for _, tc := range []struct {
		name    string
		corners [4]r3.Vec
	}{
		{"square, saddle point inside", [4]r3.Vec{{X: 0, Y: 0, Z: 0}, {X: 20, Y: 0, Z: 3}, {X: 20, Y: 20, Z: 0}, {X: 0, Y: 20, Z: 3}}},
		{"skew quadrilateral", [4]r3.Vec{{X: 0, Y: 0, Z: 1}, {X: 24, Y: 2, Z: 6}, {X: 27, Y: 19, Z: 0.5}, {X: -2, Y: 17, Z: 4}}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var c [4]r3.Vec
			for i, p := range tc.corners {
				c[i] = r3.Add(p, off)
			}
			want, err := deviation.SaddleFromCorners(c, r3.Vec{Z: 1})
			if err != nil {
				t.Fatal(err)
			}
			rng := rand.New(rand.NewPCG(1, 2))
			pts := make([]r3.Vec, 400)
			for i := range pts {
				u, v := rng.Float64(), rng.Float64()
				p := r3.Scale((1-u)*(1-v), c[0])
				p = r3.Add(p, r3.Scale(u*(1-v), c[1]))
				p = r3.Add(p, r3.Scale(u*v, c[2]))
				pts[i] = r3.Add(p, r3.Scale((1-u)*v, c[3]))
			}
			q, err := FitQuadric(pts)
			if err != nil {
				t.Fatal(err)
			}
			if cl := Classify(&q); cl.Kind != KindHyperbolicParaboloid {
				t.Fatalf("class: got %v, want hyperbolic paraboloid", cl.Kind)
			}
			got, err := NearestSaddle(&q, r3.Vec{Z: 1})
			if err != nil {
				t.Fatal(err)
			}
			patch := [4]float64{-10, 10, -10, 10}
			saddleClose(t, &got, &want, 1e-7, 1e-7, 1e-7, patch)
			if d := r3.Norm(r3.Sub(got.Origin, want.Origin)); d > 1e-6 {
				t.Errorf("origin: %.3g m from the exact conversion", d)
			}
			res, err := FitSaddle(pts, &SaddleSettings{Start: &want, Threshold: 0.01})
			if err != nil {
				t.Fatal(err)
			}
			saddleClose(t, &res.Saddle, &want, 1e-7, 1e-7, 1e-7, patch)
		})
	}
}
