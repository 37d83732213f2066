package fit

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

// saddleClose compares two saddles: K within relK relative, the surfaces'
// axes within angTol radians (x and y up to sign), and the surface of got
// passing within posTol of want's points over the probe patch.
func saddleClose(t *testing.T, got, want *deviation.Saddle, relK, angTol, posTol float64, patch [4]float64) {
	t.Helper()
	if math.Abs(got.K1-want.K1) > relK*math.Abs(want.K1) {
		t.Errorf("K1: got %.9g, want %.9g", got.K1, want.K1)
	}
	if math.Abs(got.K2-want.K2) > relK*math.Abs(want.K2) {
		t.Errorf("K2: got %.9g, want %.9g", got.K2, want.K2)
	}
	for i := 0; i < 3; i++ {
		c := math.Abs(r3.Dot(got.Axes[i], want.Axes[i]))
		if i == 2 {
			c = r3.Dot(got.Axes[i], want.Axes[i])
		}
		if ang := math.Acos(math.Min(1, c)); ang > angTol {
			t.Errorf("axis %d: angle %.3g rad to the truth, want ≤ %.3g", i, ang, angTol)
		}
	}
	worst := 0.0
	for i := 0; i <= 4; i++ {
		for j := 0; j <= 4; j++ {
			x := patch[0] + (patch[1]-patch[0])*float64(i)/4
			y := patch[2] + (patch[3]-patch[2])*float64(j)/4
			p := want.ToSite(r3.Vec{X: x, Y: y, Z: want.K1*x*x + want.K2*y*y})
			_, d := got.ClosestLocal(got.ToLocal(p))
			worst = math.Max(worst, math.Abs(d))
		}
	}
	if worst > posTol {
		t.Errorf("surface: worst distance %.3g m over the patch, want ≤ %.3g", worst, posTol)
	}
}

// TestQuadricExactSaddle: a general quadric fitted to exact points of an
// analytic saddle (the truth) is classified as a hyperbolic paraboloid,
// has det A > 0 (FIELD.md §4.2) and projects back to the same saddle.
func TestQuadricExactSaddle(t *testing.T) {
	truth := synthSaddle()
	o := workloadOptions(500, 0, 0, 1)
	o.noise = 0
	pts, _ := synthPoints(&truth, o)
	q, err := FitQuadric(pts)
	if err != nil {
		t.Fatal(err)
	}
	cl := Classify(&q)
	if cl.Kind != KindHyperbolicParaboloid || cl.DetA <= 0 {
		t.Fatalf("got %v (rank E %d, det A %g), want hyperbolic paraboloid with det A > 0", cl.Kind, cl.RankE, cl.DetA)
	}
	s, err := NearestSaddle(&q, r3.Vec{Z: 1})
	if err != nil {
		t.Fatal(err)
	}
	saddleClose(t, &s, &truth, 1e-7, 1e-7, 1e-6, [4]float64{3, 33, -9, 21})
	for _, p := range pts[:20] {
		if e := q.SampsonDistance(p); e > 1e-7 {
			t.Fatalf("Sampson distance of an exact point: got %g m, want 0", e)
		}
	}
}

// TestClassifyCanonical checks Classify on canonical forms, whose classes
// are textbook facts (FIELD.md §4.2 table; computed signs of det A).
func TestClassifyCanonical(t *testing.T) {
	tests := []struct {
		name string
		c    [10]float64
		want QuadricKind
	}{
		{"hypar x²−y²−z", [10]float64{1, -1, 0, 0, 0, 0, 0, 0, -1, 0}, KindHyperbolicParaboloid},
		{"hypar xy−z (rotated 45°)", [10]float64{0, 0, 0, 1, 0, 0, 0, 0, -1, 0}, KindHyperbolicParaboloid},
		{"near-hypar one-sheet hyperboloid x²−y²+0.01z²−z", [10]float64{1, -1, 0.01, 0, 0, 0, 0, 0, -1, 0}, KindHyperbolicParaboloid},
		{"elliptic paraboloid x²+y²−z", [10]float64{1, 1, 0, 0, 0, 0, 0, 0, -1, 0}, KindEllipticParaboloid},
		{"parabolic cylinder x²−z", [10]float64{1, 0, 0, 0, 0, 0, 0, 0, -1, 0}, KindParabolicCylinder},
		{"plane x+y+z−1", [10]float64{0, 0, 0, 0, 0, 0, 1, 1, 1, -1}, KindPlane},
		{"sphere", [10]float64{1, 1, 1, 0, 0, 0, 0, 0, 0, -1}, KindOther},
		{"one-sheet hyperboloid x²+y²−z²−1", [10]float64{1, 1, -1, 0, 0, 0, 0, 0, 0, -1}, KindOther},
		{"elliptic cylinder x²+y²−1", [10]float64{1, 1, 0, 0, 0, 0, 0, 0, 0, -1}, KindOther},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			q := Quadric{C: tc.c, Scale: 1}
			if got := Classify(&q).Kind; got != tc.want {
				t.Errorf("got %v, want %v", got, tc.want)
			}
		})
	}
}

// TestClassifyNoisy classifies Taubin fits of synthetic patches (truth:
// the analytic surface the points are drawn from) with noise along the
// normal: gentle and strong hypars, thin small patches whose squared normal
// coordinate the fit cannot determine, a parabolic cylinder and a plane;
// NearestSaddle must then give back the coefficients.
func TestClassifyNoisy(t *testing.T) {
	tests := []struct {
		name        string
		k1, k2      float64
		noise, size float64
		want        QuadricKind
		relK        float64
	}{
		{"workload hypar", 1.0 / 144, -1.0 / 81, 0.002, 30, KindHyperbolicParaboloid, 0.01},
		{"noisy hypar 2 cm", 1.0 / 144, -1.0 / 81, 0.02, 30, KindHyperbolicParaboloid, 0.01},
		{"small gentle patch", 1.0 / 400, -1.0 / 400, 0.005, 10, KindHyperbolicParaboloid, 0.05},
		{"small flatter patch", 1.0 / 1000, -1.0 / 1000, 0.005, 10, KindHyperbolicParaboloid, 0.1},
		{"very flat large patch", 1e-4, -1e-4, 0.002, 30, KindHyperbolicParaboloid, 0.05},
		{"parabolic cylinder", 1.0 / 144, 0, 0.002, 30, KindParabolicCylinder, 0.01},
		{"plane", 0, 0, 0.002, 30, KindPlane, 0},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			s := synthSaddle()
			s.K1, s.K2 = tc.k1, tc.k2
			pts, _ := synthPoints(&s, synthOptions{n: 5000, x0: 3, x1: 3 + tc.size, y0: -9, y1: -9 + tc.size, noise: tc.noise, seed: 3})
			q, err := FitQuadric(pts)
			if err != nil {
				t.Fatal(err)
			}
			cl := Classify(&q)
			if cl.Kind != tc.want {
				t.Fatalf("got %v (rank E %d, eigenvalues %.3g), want %v", cl.Kind, cl.RankE, cl.EigE, tc.want)
			}
			got, err := NearestSaddle(&q, r3.Vec{Z: 1})
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(got.K1-tc.k1) > tc.relK*math.Abs(tc.k1)+1e-6 || math.Abs(got.K2-tc.k2) > tc.relK*math.Abs(tc.k2)+1e-6 {
				t.Errorf("K: got (%.4g, %.4g), want (%.4g, %.4g)", got.K1, got.K2, tc.k1, tc.k2)
			}
			if c := r3.Dot(got.Axes[2], s.Axes[2]); c < 0.999 {
				t.Errorf("local z: cos %.4f to the truth", c)
			}
		})
	}
}
