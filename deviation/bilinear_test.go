package deviation

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/spatial/r3"
)

var up = r3.Vec{Z: 1}

func TestSaddleFromCornersWorkedExample(t *testing.T) {
	// FIELD.md §4.3 (analytic-geometry identity): corners (0,0,0), (1,0,0),
	// (1,1,h), (0,1,0) give z = h·x·y = (h/2)(x′² − y′²) with
	// x′ = (x + y)/√2, y′ = (y − x)/√2: K1 = h/2, K2 = −h/2, saddle point at
	// the origin, principal axes at 45° to the edges.
	for _, h := range []float64{0.4, 1, -0.3, 1e-3} {
		c := [4]r3.Vec{{}, {X: 1}, {X: 1, Y: 1, Z: h}, {Y: 1}}
		s, err := SaddleFromCorners(c, up)
		if err != nil {
			t.Fatalf("h=%g: %v", h, err)
		}
		ah := math.Abs(h)
		if math.Abs(s.K1-ah/2) > tolExact || math.Abs(s.K2+ah/2) > tolExact {
			t.Errorf("h=%g: K1, K2 = %g, %g, want %g, %g", h, s.K1, s.K2, ah/2, -ah/2)
		}
		if r3.Norm(s.Origin) > tolExact {
			t.Errorf("h=%g: origin %v, want 0", h, s.Origin)
		}
		// The positive axis is along (1,1) for h > 0, along (1,−1) for h < 0.
		diag := r3.Vec{X: 1 / math.Sqrt2, Y: 1 / math.Sqrt2}
		if h < 0 {
			diag.Y = -diag.Y
		}
		if got := math.Abs(r3.Dot(s.Axes[0], diag)); math.Abs(got-1) > tolExact {
			t.Errorf("h=%g: x axis %v, want ±%v", h, s.Axes[0], diag)
		}
		if r3.Norm(r3.Sub(s.Axes[2], up)) > tolExact {
			t.Errorf("h=%g: z axis %v, want +Z", h, s.Axes[2])
		}
	}
}

// bilinearRef is the bilinear formula P(u,v) in site coordinates
// (FIELD.md §4.3), the reference the saddle must reproduce. The weights
// (1−u)(1−v), u(1−v), uv, (1−u)v are applied to the corners relative to
// c0 (an identity, as the weights sum to one) so that the reference keeps
// its digits at site offsets of 10^6 m, where one unit in the last place
// is already 2.3e-10 m.
func bilinearRef(c [4]r3.Vec, u, v float64) r3.Vec {
	w := [4]float64{(1 - u) * (1 - v), u * (1 - v), u * v, (1 - u) * v}
	var p r3.Vec
	for i := 1; i < 4; i++ {
		p = r3.Add(p, r3.Scale(w[i], r3.Sub(c[i], c[0])))
	}
	return r3.Add(c[0], p)
}

func randomCorners(rng *rand.Rand, off r3.Vec) [4]r3.Vec {
	base := [4]r3.Vec{{}, {X: 20}, {X: 22, Y: 18}, {X: -1, Y: 19}}
	var c [4]r3.Vec
	for i := range c {
		c[i] = r3.Add(off, r3.Add(base[i], r3.Vec{X: rng.NormFloat64(), Y: rng.NormFloat64(), Z: 4 * rng.NormFloat64()}))
	}
	return c
}

func TestSaddleFromCornersReproducesBilinear(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	off := r3.Vec{X: 1.234567e6, Y: 2.345678e6, Z: 312.5}
	for k := 0; k < 20; k++ {
		c := randomCorners(rng, off)
		p, err := NewBilinearPatch(c, up, 0.05)
		if err != nil {
			t.Fatal(err)
		}
		s := &p.Saddle
		if err := s.Validate(); err != nil || s.Axes[2].Z <= 0 {
			t.Fatalf("saddle %+v: %v", s, err)
		}
		for i := 0; i < 50; i++ {
			u, v := rng.Float64(), rng.Float64()
			x := bilinearRef(c, u, v)
			q := s.ToLocal(x)
			// vertical residual over |∇f|: the orthogonal residual to first order
			gx, gy := 2*s.K1*q.X, 2*s.K2*q.Y
			if res := (q.Z - s.Height(q.X, q.Y)) / math.Sqrt(1+gx*gx+gy*gy); math.Abs(res) > 1e-9 {
				t.Errorf("patch %d (u,v)=(%.3f,%.3f): z − f(x,y) = %g", k, u, v, res)
			}
			pr := p.Project(x)
			if math.Abs(pr.D) > 1e-9 || !pr.Inside {
				t.Errorf("patch %d: corner-formula point off the saddle by %g (inside %v)", k, pr.D, pr.Inside)
			}
			if gu, gv := p.UV(x); math.Abs(gu-u) > 1e-9 || math.Abs(gv-v) > 1e-9 {
				t.Errorf("UV = (%g,%g), want (%g,%g)", gu, gv, u, v)
			}
			if d := r3.Norm(r3.Sub(p.Param(u, v), x)); d > 1e-9 {
				t.Errorf("Param off the formula by %g", d)
			}
		}
	}
}

// polyfit2 fits y = c0 + c1·x + c2·x² by least squares on the Vandermonde
// matrix (the method numpy.polyfit uses), solved by QR in gonum/mat.
func polyfit2(t *testing.T, xs, ys []float64) [3]float64 {
	t.Helper()
	v := mat.NewDense(len(xs), 3, nil)
	for i, x := range xs {
		v.Set(i, 0, 1)
		v.Set(i, 1, x)
		v.Set(i, 2, x*x)
	}
	var c mat.VecDense
	if err := c.SolveVec(v, mat.NewVecDense(len(ys), ys)); err != nil {
		t.Fatal(err)
	}
	return [3]float64{c.AtVec(0), c.AtVec(1), c.AtVec(2)}
}

func TestPrincipalSectionsAreParabolas(t *testing.T) {
	// The vertical sections of z = K1x² + K2y² through the saddle point
	// along the principal axes are the parabolas z = K1x² and z = K2y²
	// (analytic). Sample the section of the bilinear patch itself (points
	// from the corner formula where (P − O)·e_other = 0, linear in v) and
	// fit a parabola: its leading coefficient must be K1 (resp. K2) and the
	// others zero.
	rng := rand.New(rand.NewPCG(13, 14))
	c := randomCorners(rng, r3.Vec{X: 5e5, Y: 4e6, Z: 50})
	s, err := SaddleFromCorners(c, up)
	if err != nil {
		t.Fatal(err)
	}
	a := r3.Sub(c[1], c[0])
	b := r3.Sub(c[3], c[0])
	d := r3.Add(r3.Sub(c[0], c[1]), r3.Sub(c[2], c[3]))
	c0 := r3.Sub(c[0], s.Origin)
	for axis, want := range []float64{s.K1, s.K2} {
		along, other := s.Axes[axis], s.Axes[1-axis]
		var xs, zs []float64
		for i := 0; i <= 40; i++ {
			u := -1 + 3*float64(i)/40
			den := r3.Dot(r3.Add(b, r3.Scale(u, d)), other)
			if math.Abs(den) < 1e-6 {
				continue
			}
			v := -r3.Dot(r3.Add(c0, r3.Scale(u, a)), other) / den
			w := r3.Sub(bilinearRef(c, u, v), s.Origin)
			xs = append(xs, r3.Dot(w, along))
			zs = append(zs, r3.Dot(w, s.Axes[2]))
		}
		got := polyfit2(t, xs, zs)
		if math.Abs(got[2]-want) > 1e-9 || math.Abs(got[1]) > 1e-8 || math.Abs(got[0]) > 1e-8 {
			t.Errorf("axis %d: fit %v, want [0 0 %g]", axis, got, want)
		}
	}
}

func TestSaddleFromCornersDown(t *testing.T) {
	// normal: down. The same worked example seen from below: z′ = −z and a
	// right-handed frame give again K1 = −K2 = h/2 (the surface z = h·x·y
	// is congruent to its mirror image), with local z along −Z; a point
	// above the surface has a negative deviation.
	h := 0.4
	c := [4]r3.Vec{{}, {X: 1}, {X: 1, Y: 1, Z: h}, {Y: 1}}
	p, err := NewBilinearPatch(c, r3.Vec{Z: -1}, 0)
	if err != nil {
		t.Fatal(err)
	}
	s := p.Saddle
	if math.Abs(s.K1-h/2) > tolExact || math.Abs(s.K2+h/2) > tolExact || r3.Norm(r3.Sub(s.Axes[2], r3.Vec{Z: -1})) > tolExact {
		t.Errorf("saddle %+v", s)
	}
	pr := p.Project(r3.Vec{X: 0.5, Y: 0.5, Z: h/4 + 0.01})
	if pr.D >= 0 || math.Abs(pr.D+0.01) > 1e-3 || pr.Normal.Z >= 0 || !pr.Inside {
		t.Errorf("point above: %+v", pr)
	}
}

func TestSaddleFromCornersErrors(t *testing.T) {
	tests := []struct {
		name string
		c    [4]r3.Vec
		want error
	}{
		{"plane", [4]r3.Vec{{Z: 1}, {X: 10, Z: 2}, {X: 10, Y: 10, Z: 3}, {Y: 10, Z: 2}}, ErrCoplanar},
		{"plane at 1e6", [4]r3.Vec{{X: 1e6, Y: 1e6}, {X: 1e6 + 10, Y: 1e6, Z: 1}, {X: 1e6 + 10, Y: 1e6 + 10, Z: 2}, {X: 1e6, Y: 1e6 + 10, Z: 1}}, ErrCoplanar},
		{"twist below tolerance", [4]r3.Vec{{}, {X: 10}, {X: 10, Y: 10, Z: 1e-7}, {Y: 10}}, ErrCoplanar},
		{"degenerate", [4]r3.Vec{{}, {X: 1}, {X: 2}, {X: 3}}, ErrCoplanar},
		{"horizontal twist axis", [4]r3.Vec{{}, {X: 1}, {X: 1, Z: 1, Y: 1}, {Z: 1}}, ErrOrientation},
		{"nan", [4]r3.Vec{{X: math.NaN()}, {X: 1}, {X: 1, Y: 1, Z: 1}, {Y: 1}}, ErrNotFinite},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := SaddleFromCorners(tt.c, up)
			if tt.want == nil {
				if err != nil {
					t.Errorf("got %v, want nil", err)
				}
				return
			}
			if !errors.Is(err, tt.want) {
				t.Errorf("got %v, want %v", err, tt.want)
			}
		})
	}
	// A twist just above the tolerance is a saddle.
	if _, err := SaddleFromCorners([4]r3.Vec{{}, {X: 10}, {X: 10, Y: 10, Z: 1e-5}, {Y: 10}}, up); err != nil {
		t.Errorf("small twist: %v", err)
	}
}

func TestBilinearPatchContains(t *testing.T) {
	// Unit-square worked example scaled to 10 m: edges at u, v = 0, 1.
	c := [4]r3.Vec{{}, {X: 10}, {X: 10, Y: 10, Z: 2}, {Y: 10}}
	p, err := NewBilinearPatch(c, up, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name string
		at   r3.Vec // a point on the surface z = 0.02·x·y near the edge y = 0
		want bool
	}{
		{"centre", r3.Vec{X: 5, Y: 5, Z: 0.5}, true},
		{"within margin", r3.Vec{X: 5, Y: -0.04, Z: 0.02 * 5 * -0.04}, true},
		{"beyond margin", r3.Vec{X: 5, Y: -0.06, Z: 0.02 * 5 * -0.06}, false},
		{"beyond corner", r3.Vec{X: 10.2, Y: 10.2, Z: 0.02 * 10.2 * 10.2}, false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := p.Project(tt.at).Inside; got != tt.want {
				t.Errorf("Inside = %v, want %v", got, tt.want)
			}
		})
	}
}

func ExampleSaddleFromCorners() {
	// The worked example of a twisted square: z = 0.4·x·y.
	c := [4]r3.Vec{{X: 0, Y: 0, Z: 0}, {X: 1, Y: 0, Z: 0}, {X: 1, Y: 1, Z: 0.4}, {X: 0, Y: 1, Z: 0}}
	s, err := SaddleFromCorners(c, r3.Vec{Z: 1})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("z = %.4f x² %+.4f y²\n", s.K1, s.K2)
	fmt.Printf("saddle point (%.3f, %.3f, %.3f)\n", s.Origin.X+0, s.Origin.Y+0, s.Origin.Z+0)
	fmt.Printf("x axis at %.1f° to the first edge\n", math.Abs(math.Atan2(s.Axes[0].Y, s.Axes[0].X)*180/math.Pi))
	// Output:
	// z = 0.2000 x² -0.2000 y²
	// saddle point (0.000, 0.000, 0.000)
	// x axis at 45.0° to the first edge
}

func TestSaddleFromCornersEigen(t *testing.T) {
	// Independent route to the principal frame: invert M = [A B D] with
	// gonum/mat, form the quadratic part S = ½(a*b*ᵀ + b*a*ᵀ) of the
	// quadric (a*·Y)(b*·Y) − d*·Y = 0 from its rows, and diagonalise S with
	// mat.EigenSym (a symmetric QL/QR eigen-solver). The closed-form frame
	// must match: the eigenvector of the zero eigenvalue along Axes[2], the
	// others along Axes[0] and Axes[1], and K1/K2 the eigenvalue ratio.
	rng := rand.New(rand.NewPCG(81, 82))
	for k := 0; k < 10; k++ {
		c := randomCorners(rng, r3.Vec{X: 3e5, Y: 6e6, Z: 40})
		s, err := SaddleFromCorners(c, up)
		if err != nil {
			t.Fatal(err)
		}
		a := r3.Sub(c[1], c[0])
		b := r3.Sub(c[3], c[0])
		d := r3.Add(r3.Sub(c[0], c[1]), r3.Sub(c[2], c[3]))
		m := mat.NewDense(3, 3, []float64{a.X, b.X, d.X, a.Y, b.Y, d.Y, a.Z, b.Z, d.Z})
		var inv mat.Dense
		if err := inv.Inverse(m); err != nil {
			t.Fatal(err)
		}
		as := mat.Row(nil, 0, &inv)
		bs := mat.Row(nil, 1, &inv)
		sym := mat.NewSymDense(3, nil)
		for i := 0; i < 3; i++ {
			for j := i; j < 3; j++ {
				sym.SetSym(i, j, 0.5*(as[i]*bs[j]+bs[i]*as[j]))
			}
		}
		var eig mat.EigenSym
		if !eig.Factorize(sym, true) {
			t.Fatal("eigen-decomposition failed")
		}
		vals := eig.Values(nil) // ascending: λ−, 0, λ+
		var vecs mat.Dense
		eig.VectorsTo(&vecs)
		col := func(j int) r3.Vec { return r3.Vec{X: vecs.At(0, j), Y: vecs.At(1, j), Z: vecs.At(2, j)} }
		scale := math.Max(math.Abs(vals[0]), math.Abs(vals[2]))
		if math.Abs(vals[1]) > 1e-12*scale || vals[0] >= 0 || vals[2] <= 0 {
			t.Fatalf("eigenvalues %v: want one negative, one zero, one positive", vals)
		}
		// The quadric's overall sign is arbitrary (Q and −Q), so the
		// positive coefficient K1 belongs to λ+ or to λ−: Axes[0] is along
		// one of them, Axes[1] along the other, Axes[2] along the null one.
		order := [3]int{2, 0, 1}
		want := vals[2] / vals[0]
		if math.Abs(r3.Dot(s.Axes[0], col(2))) < 0.5 {
			order, want = [3]int{0, 2, 1}, vals[0]/vals[2]
		}
		if got := s.K1 / s.K2; math.Abs(got-want) > 1e-9*math.Abs(want) {
			t.Errorf("patch %d: K1/K2 = %g, eigenvalue ratio %g", k, got, want)
		}
		for i, j := range order {
			if dot := math.Abs(r3.Dot(s.Axes[i], col(j))); math.Abs(dot-1) > 1e-9 {
				t.Errorf("patch %d: axis %d · eigenvector = %g, want ±1", k, i, dot)
			}
		}
	}
}
