package deviation

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/gonum/spatial/r3"
)

// Tolerances shared by the tests of this package.
const (
	tolDist  = 1e-9 // distance agreement with an independent minimiser, m
	tolFoot  = 1e-7 // foot agreement where the foot is well-conditioned, m
	tolExact = 1e-12
)

// bruteClosest minimises φ(x, y) = |q − (x, y, K1x² + K2y²)|² by dense
// nested grid refinement in x of g(x) = min_y φ(x, y), where the inner
// minimum is exact: ∂φ/∂y = 0 is the cubic 2K2²y³ + (1 − 2K2c)y − qy = 0,
// c = qz − K1x², solved in closed form (Cardano / trigonometric, Abramowitz
// & Stegun 3.8.2) and polished by two Newton steps, and φ is compared at
// its real roots. Each level samples 401 points over the current intervals
// and keeps ±2 steps around the best few, down to 1e-14 m; the search
// starts within the vertical distance |qz − f(qx, qy)| of qx, which bounds
// the true distance. It is the independent reference for ClosestLocal.
func bruteClosest(k1, k2 float64, q r3.Vec) (x, y, dist float64) {
	phi := func(x, y float64) float64 {
		z := k1*x*x + k2*y*y
		dx, dy, dz := q.X-x, q.Y-y, q.Z-z
		return dx*dx + dy*dy + dz*dz
	}
	inner := func(x float64) (float64, float64) {
		if k2 == 0 {
			return q.Y, phi(x, q.Y)
		}
		c := q.Z - k1*x*x
		p := (1 - 2*k2*c) / (2 * k2 * k2)
		r := -q.Y / (2 * k2 * k2)
		var roots [3]float64
		nr := 0
		if disc := r*r/4 + p*p*p/27; disc >= 0 {
			sq := math.Sqrt(disc)
			roots[0] = math.Cbrt(-r/2+sq) + math.Cbrt(-r/2-sq)
			nr = 1
		} else {
			m := 2 * math.Sqrt(-p/3)
			th := math.Acos(math.Max(-1, math.Min(1, 3*r/(p*m)))) / 3
			for k := 0; k < 3; k++ {
				roots[k] = m * math.Cos(th-2*math.Pi*float64(k)/3)
			}
			nr = 3
		}
		by, bv := 0.0, math.Inf(1)
		for _, yy := range roots[:nr] {
			for it := 0; it < 2; it++ {
				fp := 3*yy*yy + p
				if fp != 0 {
					yy -= (yy*yy*yy + p*yy + r) / fp
				}
			}
			if v := phi(x, yy); v < bv {
				by, bv = yy, v
			}
		}
		return by, bv
	}
	// Upper bound on the distance: the vertical distance, and the
	// horizontal distances to the surface points at height qz on the lines
	// through q parallel to x and to y.
	rho := math.Abs(q.Z - k1*q.X*q.X - k2*q.Y*q.Y)
	if k1 != 0 {
		if x2 := (q.Z - k2*q.Y*q.Y) / k1; x2 >= 0 {
			rho = math.Min(rho, math.Abs(math.Abs(q.X)-math.Sqrt(x2)))
		}
	}
	if k2 != 0 {
		if y2 := (q.Z - k1*q.X*q.X) / k2; y2 >= 0 {
			rho = math.Min(rho, math.Abs(math.Abs(q.Y)-math.Sqrt(y2)))
		}
	}
	if rho == 0 {
		return q.X, q.Y, 0
	}
	type cand struct{ x, h, v float64 }
	cands := []cand{{q.X, rho, math.Inf(1)}}
	const n, keep = 200, 3
	for cands[0].h > 1e-14*(1+math.Abs(cands[0].x)) {
		var best [keep]cand
		for k := range best {
			best[k].v = math.Inf(1)
		}
		for _, c := range cands {
			step := c.h / n
			for i := -n; i <= n; i++ {
				px := c.x + float64(i)*step
				_, v := inner(px)
				for k := range best {
					if v < best[k].v {
						copy(best[k+1:], best[k:keep-1])
						best[k] = cand{px, 2 * step, v}
						break
					}
				}
			}
		}
		cands = cands[:0]
		for _, b := range best {
			if !math.IsInf(b.v, 1) {
				cands = append(cands, b)
			}
		}
	}
	by, bv := inner(cands[0].x)
	return cands[0].x, by, math.Sqrt(bv)
}

// newton2Closest minimises the same squared distance over (x, y) by a
// damped Newton iteration on its gradient (analytic Hessian, backtracking
// on the objective) from the start (x0, y0): a method independent of the
// one-variable equation ClosestLocal solves. It finds a local minimum.
// (gonum/optimize would serve too, but it pulls golang.org/x/tools, which
// this module's go.sum does not record.)
func newton2Closest(k1, k2 float64, q r3.Vec, x, y float64) (float64, float64, float64) {
	f := func(x, y float64) float64 {
		z := k1*x*x + k2*y*y
		dx, dy, dz := q.X-x, q.Y-y, q.Z-z
		return dx*dx + dy*dy + dz*dz
	}
	for it := 0; it < 200; it++ {
		z := k1*x*x + k2*y*y
		r := z - q.Z
		gx := 2*(x-q.X) + 4*r*k1*x
		gy := 2*(y-q.Y) + 4*r*k2*y
		hxx := 2 + 8*k1*k1*x*x + 4*r*k1
		hyy := 2 + 8*k2*k2*y*y + 4*r*k2
		hxy := 8 * k1 * k2 * x * y
		det := hxx*hyy - hxy*hxy
		var px, py float64
		if hxx > 0 && det > 0 {
			px, py = -(hyy*gx-hxy*gy)/det, -(hxx*gy-hxy*gx)/det
		} else { // not convex here: steepest descent
			px, py = -gx, -gy
		}
		f0, step := f(x, y), 1.0
		for f(x+step*px, y+step*py) > f0 && step > 1e-20 {
			step /= 2
		}
		x, y = x+step*px, y+step*py
		if math.Hypot(step*px, step*py) < 1e-15*(1+math.Hypot(x, y)) {
			break
		}
	}
	return x, y, math.Sqrt(f(x, y))
}

func TestClosestLocalBruteForce(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	type tc struct {
		name   string
		k1, k2 float64
		q      r3.Vec
	}
	var cases []tc
	shapes := [][2]float64{{0.021, -0.018}, {0.5, -0.5}, {2, -0.05}, {1e-4, -3e-4}, {0.02, 0}, {0, -0.03}}
	for _, k := range shapes {
		for i := 0; i < 6; i++ {
			x, y := rng.Float64()*40-20, rng.Float64()*40-20
			z := k[0]*x*x + k[1]*y*y
			off := rng.NormFloat64() * 0.05
			cases = append(cases,
				tc{"near", k[0], k[1], r3.Vec{X: x, Y: y, Z: z + off}},
				tc{"on", k[0], k[1], r3.Vec{X: x, Y: y, Z: z}},
				tc{"far100", k[0], k[1], r3.Vec{X: x, Y: y, Z: z + 100*math.Copysign(1, off)}},
				tc{"far1000", k[0], k[1], r3.Vec{X: 1000 * rng.NormFloat64(), Y: 1000 * rng.NormFloat64(), Z: 1000 * rng.NormFloat64()}},
				tc{"onXaxis", k[0], k[1], r3.Vec{X: x, Y: 0, Z: rng.Float64()*200 - 100}},
				tc{"onYaxis", k[0], k[1], r3.Vec{X: 0, Y: y, Z: rng.Float64()*200 - 100}},
				tc{"nearYaxis", k[0], k[1], r3.Vec{X: 1e-9 * off, Y: y, Z: 60}},
				tc{"zaxis", k[0], k[1], r3.Vec{Z: rng.Float64()*200 - 100}},
			)
		}
	}
	for _, c := range cases {
		s := Saddle{K1: c.k1, K2: c.k2, Axes: [3]r3.Vec{{X: 1}, {Y: 1}, {Z: 1}}}
		foot, d := s.ClosestLocal(c.q)
		bx, by, bd := bruteClosest(c.k1, c.k2, c.q)
		if math.Abs(math.Abs(d)-bd) > tolDist*(1+bd) {
			t.Errorf("%s k=(%g,%g) q=%v: |d| = %.12g, brute force %.12g", c.name, c.k1, c.k2, c.q, math.Abs(d), bd)
			continue
		}
		// On the surface
		if z := s.Height(foot.X, foot.Y); math.Abs(z-foot.Z) > tolExact*(1+math.Abs(z)) {
			t.Errorf("%s: foot %v off the surface by %g", c.name, foot, z-foot.Z)
		}
		// |q − foot| agrees with |d|
		if got := r3.Norm(r3.Sub(c.q, foot)); math.Abs(got-math.Abs(d)) > tolDist*(1+bd) {
			t.Errorf("%s: |q−foot| = %.12g, |d| = %.12g", c.name, got, math.Abs(d))
		}
		// First-order optimality: q − foot is parallel to the normal at
		// the foot (the Lagrange condition, independent of the solver).
		n := s.normalLocal(foot.X, foot.Y)
		if cr := r3.Norm(r3.Cross(r3.Sub(c.q, foot), n)); cr > tolDist*(1+bd) {
			t.Errorf("%s k=(%g,%g) q=%v: q − foot not along the normal (|cross| = %g)", c.name, c.k1, c.k2, c.q, cr)
		}
		// Sign: positive on the +z side of the normal at the foot.
		if side := r3.Dot(r3.Sub(c.q, foot), n); bd > 1e-9 && math.Signbit(side) != math.Signbit(d) {
			t.Errorf("%s: d = %g but (q−foot)·n = %g", c.name, d, side)
		}
		// Foot agrees with the brute-force foot up to the mirror symmetry of
		// axis-aligned points, where that foot is well-conditioned.
		if !strings.HasPrefix(c.name, "near") || c.name == "near" {
			fx, fy := foot.X, foot.Y
			if c.q.X == 0 {
				fx, bx = math.Abs(fx), math.Abs(bx)
			}
			if c.q.Y == 0 {
				fy, by = math.Abs(fy), math.Abs(by)
			}
			if math.Hypot(fx-bx, fy-by) > 1e-5*(1+bd) {
				t.Errorf("%s k=(%g,%g) q=%v: foot (%g,%g), brute force (%g,%g)", c.name, c.k1, c.k2, c.q, fx, fy, bx, by)
			}
		}
	}
}

func TestClosestLocalNewton2D(t *testing.T) {
	// A 2-D Newton minimisation of |q − (x, y, f(x,y))|² finds a local
	// minimum; the global closest point can only be nearer, and from the
	// vertical projection of a near-surface point it finds the same one.
	rng := rand.New(rand.NewPCG(3, 4))
	s := Saddle{K1: 0.03, K2: -0.02, Axes: [3]r3.Vec{{X: 1}, {Y: 1}, {Z: 1}}}
	for i := 0; i < 200; i++ {
		x, y := rng.Float64()*30-15, rng.Float64()*30-15
		var q r3.Vec
		switch i % 4 {
		case 0: // near
			q = r3.Vec{X: x, Y: y, Z: s.Height(x, y) + rng.NormFloat64()*0.1}
		case 1: // 100 m away
			q = r3.Vec{X: x, Y: y, Z: s.Height(x, y) + 100*(2*float64(i%8/4)-1)}
		case 2: // near an axis
			q = r3.Vec{X: x * 1e-6, Y: y, Z: s.Height(0, y) + rng.NormFloat64()}
		case 3: // far in all directions
			q = r3.Vec{X: rng.NormFloat64() * 1000, Y: rng.NormFloat64() * 1000, Z: rng.NormFloat64() * 1000}
		}
		foot, d := s.ClosestLocal(q)
		_, _, od := newton2Closest(s.K1, s.K2, q, q.X, q.Y)
		if math.Abs(d) > od+tolDist*(1+od) {
			t.Errorf("q=%v: |d| = %.12g exceeds a local minimum %.12g", q, math.Abs(d), od)
		}
		if i%4 == 0 {
			ox, oy, od := newton2Closest(s.K1, s.K2, q, q.X, q.Y)
			if math.Abs(math.Abs(d)-od) > tolDist || math.Hypot(ox-foot.X, oy-foot.Y) > tolFoot {
				t.Errorf("q=%v: foot (%g,%g) d %.12g; Newton-2D (%g,%g) %.12g", q, foot.X, foot.Y, d, ox, oy, od)
			}
		}
	}
}

func TestClosestLocalSigns(t *testing.T) {
	s := Saddle{K1: 0.05, K2: -0.04, Axes: [3]r3.Vec{{X: 1}, {Y: 1}, {Z: 1}}}
	tests := []struct {
		name string
		q    r3.Vec
		want float64
	}{
		// On the z axis below the focal points the foot is the saddle point
		// (analytic: the tangent plane there is z = 0).
		{"above origin", r3.Vec{Z: 0.25}, 0.25},
		{"below origin", r3.Vec{Z: -0.25}, -0.25},
		{"on surface", r3.Vec{X: 3, Y: 2, Z: 0.05*9 - 0.04*4}, 0},
		{"plane-like", r3.Vec{X: 0, Y: 0, Z: 0}, 0},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, d := s.ClosestLocal(tt.q)
			if math.Abs(d-tt.want) > tolExact {
				t.Errorf("d = %.15g, want %.15g", d, tt.want)
			}
		})
	}
}

func TestClosestLocalFocal(t *testing.T) {
	// On the x axis of z = K1x² (section y = 0) the closest point to (0,0,h)
	// with h > 1/(2K1) is at x² = (h − 1/(2K1))/K1 (analytic: the evolute
	// of the parabola z = K1x² starts at its focal radius 1/(2K1)).
	s := Saddle{K1: 0.5, K2: -0.25, Axes: [3]r3.Vec{{X: 1}, {Y: 1}, {Z: 1}}}
	for _, h := range []float64{0.5, 1, 2, 10, 1000} {
		foot, d := s.ClosestLocal(r3.Vec{Z: h})
		wantX := math.Sqrt((h - 1) / 0.5)
		wantZ := 0.5 * wantX * wantX
		wantD := math.Hypot(wantX, h-wantZ)
		if math.Abs(foot.X-wantX) > tolFoot || math.Abs(d-wantD) > tolDist*(1+wantD) || foot.Y != 0 {
			t.Errorf("h=%g: foot %v d %.12g, want x %.12g d %.12g", h, foot, d, wantX, wantD)
		}
		// and the mirror case along y below the saddle
		foot, d = s.ClosestLocal(r3.Vec{Z: -h})
		wantY := math.Sqrt((h - 2) / 0.25)
		if h <= 2 {
			wantY = 0
		}
		wantZ = -0.25 * wantY * wantY
		wantD = -math.Hypot(wantY, -h-wantZ)
		if math.Abs(foot.Y-wantY) > tolFoot || math.Abs(d-wantD) > tolDist*(1+math.Abs(wantD)) {
			t.Errorf("h=-%g: foot %v d %.12g, want y %.12g d %.12g", h, foot, d, wantY, wantD)
		}
	}
}

func TestClosestLocalExtremeCurvature(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, k := range [][2]float64{{1e-9, -2e-9}, {1e3, -1e3}, {1e6, -1e-6}, {0, 0}} {
		s := Saddle{K1: k[0], K2: k[1], Axes: [3]r3.Vec{{X: 1}, {Y: 1}, {Z: 1}}}
		for i := 0; i < 10; i++ {
			q := r3.Vec{X: rng.NormFloat64(), Y: rng.NormFloat64(), Z: rng.NormFloat64()}
			foot, d := s.ClosestLocal(q)
			_, _, bd := bruteClosest(k[0], k[1], q)
			if math.IsNaN(d) || math.Abs(math.Abs(d)-bd) > tolDist*(1+bd) {
				t.Errorf("k=%v q=%v: d %.12g foot %v, brute force %.12g", k, q, d, foot, bd)
			}
		}
	}
}

func TestSaddleProject(t *testing.T) {
	// A rotated, offset saddle: Project must equal ClosestLocal in the
	// local frame mapped back (frame transform identity).
	c, sn := math.Cos(0.3), math.Sin(0.3)
	s := Saddle{K1: 0.02, K2: -0.03, Origin: r3.Vec{X: 5e5, Y: 4e6, Z: 120},
		Axes: [3]r3.Vec{{X: c, Y: sn}, {X: -sn, Y: c}, {Z: 1}}}
	if err := s.Validate(); err != nil {
		t.Fatal(err)
	}
	p := r3.Vec{X: 5e5 + 3, Y: 4e6 - 7, Z: 121.5}
	pr := s.Project(p)
	foot, d := s.ClosestLocal(s.ToLocal(p))
	if pr.D != d || r3.Norm(r3.Sub(pr.Foot, s.ToSite(foot))) > tolExact || !pr.Inside {
		t.Errorf("Project = %+v, ClosestLocal = %v %g", pr, foot, d)
	}
	// p = foot + D·normal (the orthogonal projection identity).
	back := r3.Add(pr.Foot, r3.Scale(pr.D, pr.Normal))
	if r3.Norm(r3.Sub(back, p)) > 1e-9 {
		t.Errorf("foot + D·n = %v, want %v", back, p)
	}
	if n := s.Normal(pr.Foot); r3.Norm(r3.Sub(n, pr.Normal)) > 1e-9 || pr.Normal.Z <= 0 {
		t.Errorf("Normal = %v, Project normal %v", n, pr.Normal)
	}
}

func TestSaddleValidate(t *testing.T) {
	id := [3]r3.Vec{{X: 1}, {Y: 1}, {Z: 1}}
	tests := []struct {
		name string
		s    Saddle
		want string // "" = valid
	}{
		{"ok", Saddle{K1: 1, K2: -1, Axes: id}, ""},
		{"cylinder", Saddle{K1: 1, K2: 0, Axes: id}, ""},
		{"k1 negative", Saddle{K1: -1, K2: -1, Axes: id}, "k1 >= 0 >= k2"},
		{"nan", Saddle{K1: math.NaN(), K2: -1, Axes: id}, "not finite"},
		{"left-handed", Saddle{K1: 1, K2: -1, Axes: [3]r3.Vec{{X: 1}, {Y: 1}, {Z: -1}}}, "det"},
		{"not unit", Saddle{K1: 1, K2: -1, Axes: [3]r3.Vec{{X: 1.001}, {Y: 1}, {Z: 1}}}, "length"},
		{"not orthogonal", Saddle{K1: 1, K2: -1, Axes: [3]r3.Vec{{X: 1}, {X: 1e-6, Y: 1}, {Z: 1}}}, "dot product"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			err := tt.s.Validate()
			switch {
			case tt.want == "" && err != nil:
				t.Errorf("got %v, want nil", err)
			case tt.want != "" && (err == nil || !strings.Contains(err.Error(), tt.want)):
				t.Errorf("got %v, want error containing %q", err, tt.want)
			}
		})
	}
}

func TestClosestLocalNoAlloc(t *testing.T) {
	s := Saddle{K1: 0.02, K2: -0.03, Axes: [3]r3.Vec{{X: 1}, {Y: 1}, {Z: 1}}}
	p := r3.Vec{X: 3, Y: 4, Z: 1}
	if n := testing.AllocsPerRun(100, func() { _ = s.Project(p) }); n != 0 {
		t.Errorf("Project allocates %v times", n)
	}
}

func TestSaddleDistances(t *testing.T) {
	s := benchSaddle()
	pts := benchPoints(s, 100)
	got := s.Distances(make([]float64, 3), pts)
	for i, p := range pts {
		if want := s.Project(p).D; got[i] != want {
			t.Fatalf("Distances[%d] = %g, Project %g", i, got[i], want)
		}
	}
	if n := testing.AllocsPerRun(10, func() { got = s.Distances(got, pts) }); n != 0 {
		t.Errorf("Distances into a large enough dst allocates %v times", n)
	}
}

// BenchmarkSaddleDistances measures the batch form (distances only).
func BenchmarkSaddleDistances(b *testing.B) {
	s := benchSaddle()
	pts := benchPoints(s, 1<<14)
	dst := make([]float64, len(pts))
	b.ReportAllocs()
	b.ResetTimer()
	c0, ok := processCPU()
	for i := 0; i < b.N; i++ {
		s.Distances(dst, pts)
	}
	reportRates(b, c0, ok, b.N*len(pts))
}

// benchPoints returns n survey-like points within ±5 cm of a 40 m × 40 m
// rotated saddle at site offsets of 10^6 m.
func benchPoints(s *Saddle, n int) []r3.Vec {
	rng := rand.New(rand.NewPCG(7, 8))
	pts := make([]r3.Vec, n)
	for i := range pts {
		x, y := rng.Float64()*40-20, rng.Float64()*40-20
		pts[i] = s.ToSite(r3.Vec{X: x, Y: y, Z: s.Height(x, y) + rng.NormFloat64()*0.02})
	}
	return pts
}

func benchSaddle() *Saddle {
	c, sn := math.Cos(0.7), math.Sin(0.7)
	return &Saddle{K1: 0.021, K2: -0.018, Origin: r3.Vec{X: 512345.678, Y: 5412345.678, Z: 87.5},
		Axes: [3]r3.Vec{{X: c, Y: sn}, {X: -sn, Y: c}, {Z: 1}}}
}

var sinkD float64

// BenchmarkSaddleProject measures Project (frame transform, solver, normal)
// on survey-like points; points/s is the figure to compare, and
// cpu-ns/op (process CPU time per point, all threads) the one that stays
// meaningful on a machine shared with other work.
func BenchmarkSaddleProject(b *testing.B) {
	s := benchSaddle()
	pts := benchPoints(s, 1<<14)
	b.Run("serial", func(b *testing.B) {
		b.ReportAllocs()
		c0, ok := processCPU()
		var sum float64
		for i := 0; i < b.N; i++ {
			sum += s.Project(pts[i&(len(pts)-1)]).D
		}
		sinkD = sum
		reportRates(b, c0, ok, b.N)
	})
	b.Run("parallel", func(b *testing.B) {
		b.ReportAllocs()
		c0, ok := processCPU()
		b.RunParallel(func(pb *testing.PB) {
			var sum float64
			i := 0
			for pb.Next() {
				sum += s.Project(pts[i&(len(pts)-1)]).D
				i++
			}
			_ = sum
		})
		reportRates(b, c0, ok, b.N)
	})
}

// reportRates adds points/s (wall clock) and cpu-ns/op (process CPU time
// since c0 over n points) to a benchmark.
func reportRates(b *testing.B, c0 time.Duration, ok bool, n int) {
	b.ReportMetric(float64(n)/b.Elapsed().Seconds(), "points/s")
	if c1, ok1 := processCPU(); ok && ok1 && n > 0 {
		b.ReportMetric(float64(c1-c0)/float64(n), "cpu-ns/op")
	}
}

// Sweep size and seed (raised locally for longer searches).
var seedSweep, sweepN uint64 = 51, 20000

func TestClosestLocalSweep(t *testing.T) {
	// Many points over extreme shapes and positions: the result must be
	// finite, on the surface, satisfy the Lagrange condition (q − foot
	// along the normal) and be no farther than the vertical distance, an
	// upper bound on the true distance (analytic).
	rng := rand.New(rand.NewPCG(seedSweep, 52))
	shapes := [][2]float64{{0.02, -0.02}, {1e-8, -1e-8}, {50, -0.001}, {0.3, 0}, {0, -0.3}}
	scales := []float64{1e-6, 1, 30, 1e3, 1e4}
	small := []float64{0, 1e-300, 1e-12, 1e-6}
	for i := 0; i < int(sweepN); i++ {
		k := shapes[i%len(shapes)]
		sc := scales[(i/5)%len(scales)]
		s := Saddle{K1: k[0], K2: k[1], Axes: [3]r3.Vec{{X: 1}, {Y: 1}, {Z: 1}}}
		q := r3.Vec{X: sc * rng.NormFloat64(), Y: sc * rng.NormFloat64(), Z: sc * rng.NormFloat64()}
		switch i % 7 {
		case 1:
			q.X = small[rng.IntN(len(small))] * rng.NormFloat64()
		case 2:
			q.Y = small[rng.IntN(len(small))] * rng.NormFloat64()
		case 3:
			q.Z = s.Height(q.X, q.Y) // on the surface
		}
		foot, d := s.ClosestLocal(q)
		scale := 1 + r3.Norm(q)
		vert := math.Abs(q.Z - s.Height(q.X, q.Y))
		n := s.normalLocal(foot.X, foot.Y)
		switch {
		case math.IsNaN(d) || math.IsInf(d, 0) || math.IsNaN(foot.X+foot.Y+foot.Z):
			t.Fatalf("k=%v q=%v: foot %v d %g", k, q, foot, d)
		case math.Abs(foot.Z-s.Height(foot.X, foot.Y)) > 1e-12*(1+math.Abs(foot.Z)):
			t.Fatalf("k=%v q=%v: foot %v off the surface", k, q, foot)
		case math.Abs(d) > vert*(1+1e-12)+1e-12*scale:
			t.Fatalf("k=%v q=%v: |d| %g exceeds the vertical distance %g", k, q, d, vert)
		case r3.Norm(r3.Cross(r3.Sub(q, foot), n)) > 1e-9*scale:
			t.Fatalf("k=%v q=%v: q − foot not along the normal (%g)", k, q, r3.Norm(r3.Cross(r3.Sub(q, foot), n)))
		}
	}
}
