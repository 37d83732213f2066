package change

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

// TestEstimateNormals checks the plane-fit normals against a tilted plane
// whose normal is known (the truth), and that Compare with them recovers a
// known offset along that normal.
func TestEstimateNormals(t *testing.T) {
	th := 25 * math.Pi / 180
	e2 := r3.Vec{Y: math.Cos(th), Z: math.Sin(th)}
	nrm := r3.Vec{Y: -math.Sin(th), Z: math.Cos(th)}
	rng := rand.New(rand.NewPCG(17, 18))
	a := planeEpoch(rng, 30000, 12, siteOrigin, ex, e2, nrm, 0, 0.001)
	b := planeEpoch(rng, 30000, 12, siteOrigin, ex, e2, nrm, 0.006, 0.001)
	set := &Settings{CoreSpacing: 1, Radius: 0.45, HalfLength: 0.3, NormalScale: 1}
	cores, err := Grid(nil, nil, 0, a, b, set)
	if err != nil {
		t.Fatal(err)
	}
	if failed := EstimateNormals(cores, a, set); failed != 0 {
		t.Errorf("normal estimation failed at %d cores", failed)
	}
	worst := 0.0
	for _, c := range cores {
		worst = math.Max(worst, math.Acos(math.Min(1, r3.Dot(c.N, nrm))))
	}
	if worst > 0.5*math.Pi/180 {
		t.Errorf("largest normal error %.3f°, want < 0.5°", worst*180/math.Pi)
	}
	sum := Compare(cores, a, b, set)
	near(t, "mean distance along the estimated normal", sum.MeanDistance, 0.006, 1e-4)

	line := []r3.Vec{{X: 0}, {X: 0.1}, {X: 0.2}, {X: 0.3}}
	c := []Core{{P: r3.Vec{X: 0.1}, N: ez}}
	if EstimateNormals(c, line, nil) != 1 || c[0].N != ez {
		t.Errorf("collinear neighbourhood: got normal %v, want it kept and reported", c[0].N)
	}
}
