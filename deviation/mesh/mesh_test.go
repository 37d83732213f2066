package mesh

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"sync"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

// Tolerances of the tests.
const (
	// roundTol covers float64 rounding in centred coordinates of a few
	// metres (≈ 1e-15 m per operation); far below any chord bound used.
	roundTol = 1e-12
	// siteTol is a few float64 spacings at the site offset's largest
	// coordinate (5.4e6 m · 2⁻⁵² ≈ 1.2e-9 m): a query point there is only
	// known to that resolution.
	siteTol = 4 * 5.4e6 / (1 << 52)
)

// siteOffset puts test meshes at realistic site coordinates so that the
// centring is exercised.
var siteOffset = r3.Vec{X: 512345.678, Y: 5412345.125, Z: 212.5}

// sphereSag is the largest distance between an inscribed triangle mesh of
// a sphere of radius r (vertices on the sphere) and the sphere: a face
// whose plane lies at distance h from the centre is within r − h of the
// sphere, and the union of the faces, radially projected, covers the
// sphere, so the Hausdorff distance between mesh and sphere is
// max(r − h) and the two distance functions differ by no more than that.
// h = |n·a| for the unit face normal n and any corner a (elementary
// geometry; for an edge subtending θ the same argument in a plane gives
// the sagitta r(1 − cos(θ/2))).
func sphereSag(v []r3.Vec, f [][3]int32, r float64, c r3.Vec) float64 {
	s := 0.0
	for _, t := range f {
		a, b, cc := r3.Sub(v[t[0]], c), r3.Sub(v[t[1]], c), r3.Sub(v[t[2]], c)
		n := r3.Unit(r3.Cross(r3.Sub(b, a), r3.Sub(cc, a)))
		s = math.Max(s, r-math.Abs(r3.Dot(n, a)))
	}
	return s
}

func TestSphereSignedDistance(t *testing.T) {
	const r = 2.0
	for _, level := range []int{1, 2, 3} {
		v, f := icosphere(level, r, siteOffset)
		m, rep := mustNew(t, v, f, Options{NormalUp: true})
		if rep.ClosedComponents != 1 || rep.BoundaryEdges != 0 {
			t.Fatalf("level %d: got %d closed components, %d boundary edges, want 1, 0", level, rep.ClosedComponents, rep.BoundaryEdges)
		}
		sag := sphereSag(v, f, r, siteOffset)
		g := lcg(level)
		for i := range 2000 {
			dir := g.unit()
			rho := g.in(0.3*r, 1.7*r)
			p := r3.Add(siteOffset, r3.Scale(rho, dir))
			pr := m.Project(p)
			want := rho - r // analytic signed distance, outward positive
			if math.Abs(pr.D-want) > sag+roundTol {
				t.Fatalf("level %d point %d: got D %v, want %v within sagitta %v", level, i, pr.D, want, sag)
			}
			if math.Abs(want) > sag && math.Signbit(pr.D) != math.Signbit(want) {
				t.Fatalf("level %d point %d: got sign of %v, want sign of %v", level, i, pr.D, want)
			}
			if !pr.Inside {
				t.Fatalf("level %d point %d: closed mesh reported a point outside its extent", level, i)
			}
			// p = Foot + D·Normal, |Normal| = 1.
			if back := r3.Add(pr.Foot, r3.Scale(pr.D, pr.Normal)); r3.Norm(r3.Sub(back, p)) > 1e-9 || math.Abs(r3.Norm(pr.Normal)-1) > 1e-12 {
				t.Fatalf("level %d point %d: Foot + D·Normal = %v, want %v", level, i, back, p)
			}
		}
	}
}

// TestSignNearVerticesAndEdges places points just outside and inside the
// icosphere along the radial directions of its vertices and edge
// midpoints, where the closest point is a vertex or an edge (a convex
// polyhedron's vertex and edge normal cones contain these directions).
func TestSignNearVerticesAndEdges(t *testing.T) {
	const r = 1.0
	v, f := icosphere(1, r, siteOffset)
	m, _ := mustNew(t, v, f, Options{})
	sag := sphereSag(v, f, r, siteOffset)
	var feats [7]int
	check := func(dir r3.Vec, what string) {
		for _, s := range []float64{+1, -1} {
			rho := r + s*(sag+1e-3)
			if s > 0 {
				rho = r + 1e-6 // just outside the vertex or edge point
			}
			p := r3.Add(siteOffset, r3.Scale(rho, dir))
			h := m.nearest(r3.Sub(p, m.centre))
			feats[h.feat]++
			if d := m.Project(p).D; math.Signbit(d) != (s < 0) {
				t.Errorf("%s at radius %v: got D %v, want sign %v", what, rho, d, s)
			}
		}
	}
	for _, p := range v {
		check(r3.Unit(r3.Sub(p, siteOffset)), "vertex")
	}
	for _, tr := range f {
		for k := range 3 {
			a, b := r3.Sub(v[tr[k]], siteOffset), r3.Sub(v[tr[(k+1)%3]], siteOffset)
			check(r3.Unit(r3.Add(a, b)), "edge")
		}
	}
	if feats[featVert]+feats[featVert+1]+feats[featVert+2] == 0 || feats[featEdge]+feats[featEdge+1]+feats[featEdge+2] == 0 {
		t.Fatalf("test did not reach vertex and edge features: %v", feats)
	}
}

// TestSharpEdgeSign uses a thin closed wedge (triangular prism with a 20°
// edge): outside it, next to the sharp edge, the two faces' normals are
// 160° apart, so a sign taken from one face's normal is wrong for points
// off the other face; the edge pseudonormal is right for both. Truth: the
// prism is the intersection of five half-spaces (elementary geometry).
func TestSharpEdgeSign(t *testing.T) {
	const half = 10 * math.Pi / 180
	// Cross-section in (y, z): sharp edge at the origin, opening towards +y.
	a := r3.Vec{}
	b := r3.Vec{Y: 1, Z: math.Tan(half)}
	c := r3.Vec{Y: 1, Z: -math.Tan(half)}
	var v []r3.Vec
	for _, x := range []float64{0, 2} {
		for _, p := range []r3.Vec{a, b, c} {
			v = append(v, r3.Add(siteOffset, r3.Add(p, r3.Vec{X: x})))
		}
	}
	f := [][3]int32{{0, 2, 1}, {3, 4, 5}, {0, 1, 4}, {0, 4, 3}, {1, 2, 5}, {1, 5, 4}, {2, 0, 3}, {2, 3, 5}}
	m, rep := mustNew(t, v, f, Options{})
	if rep.ClosedComponents != 1 {
		t.Fatalf("got %d closed components, want 1", rep.ClosedComponents)
	}
	nUp := r3.Vec{Y: -math.Sin(half), Z: math.Cos(half)}    // outward normal of the upper face
	nDown := r3.Vec{Y: -math.Sin(half), Z: -math.Cos(half)} // of the lower face
	for _, x := range []float64{0.3, 1, 1.7} {
		for _, n := range []r3.Vec{nUp, nDown} {
			for _, s := range []float64{1e-4, 1e-2} {
				// Off the sharp edge along one face's normal: outside.
				p := r3.Add(siteOffset, r3.Vec{X: x, Y: s * n.Y, Z: s * n.Z})
				pr := m.Project(p)
				if pr.D <= 0 || math.Abs(pr.D-s) > siteTol {
					t.Errorf("x %v normal %v offset %v: got D %v, want +%v", x, n, s, pr.D, s)
				}
			}
		}
		// Just inside the wedge near the edge: negative.
		p := r3.Add(siteOffset, r3.Vec{X: x, Y: 0.05})
		if pr := m.Project(p); pr.D >= 0 {
			t.Errorf("x %v inside: got D %v, want negative", x, pr.D)
		}
	}
}

// TestVaultDistance checks a faceted half cylinder (open, oriented up):
// where the analytic foot is inside the extent the mesh distance agrees
// with ρ − r within the facet sagitta r(1 − cos(θ/2)), θ = π/n the angle
// each facet subtends; beyond the ends the foot is on the boundary and
// Inside is false.
func TestVaultDistance(t *testing.T) {
	const r, l = 3.0, 4.0
	for _, n := range []int{12, 48} {
		v, f := vault(r, l, n, 8, siteOffset)
		m, rep := mustNew(t, v, f, Options{NormalUp: true})
		if rep.BoundaryEdges != 2*n+2*8 || rep.ClosedComponents != 0 {
			t.Fatalf("n %d: got %d boundary edges, %d closed, want %d, 0", n, rep.BoundaryEdges, rep.ClosedComponents, 2*n+16)
		}
		sag := r * (1 - math.Cos(math.Pi/float64(n)/2))
		g := lcg(n)
		for i := range 2000 {
			x := g.in(0.5, l-0.5)
			a := g.in(0.2, math.Pi-0.2)
			rho := g.in(r-0.5, r+0.5)
			p := r3.Add(siteOffset, r3.Vec{X: x, Y: rho * math.Cos(a), Z: rho * math.Sin(a)})
			pr := m.Project(p)
			if want := rho - r; math.Abs(pr.D-want) > sag+roundTol {
				t.Fatalf("n %d point %d: got D %v, want %v within %v", n, i, pr.D, want, sag)
			}
			if !pr.Inside {
				t.Fatalf("n %d point %d: got Inside false for a foot within the extent", n, i)
			}
		}
		for _, x := range []float64{-0.3, l + 0.3} {
			p := r3.Add(siteOffset, r3.Vec{X: x, Z: r + 0.01})
			if pr := m.Project(p); pr.Inside {
				t.Errorf("n %d: point beyond the end x=%v: got Inside true, want false", n, x)
			}
			m2, _ := mustNew(t, v, f, Options{NormalUp: true, MarginM: 0.5})
			if pr := m2.Project(p); !pr.Inside {
				t.Errorf("n %d: point 0.3 m beyond the end with margin 0.5 m: got Inside false, want true", n)
			}
		}
	}
}

// TestBVHMatchesBruteForce compares the hierarchy with a scan of all
// triangles on random points: the same triangle, feature and foot, and
// the same squared distance to the last bit.
func TestBVHMatchesBruteForce(t *testing.T) {
	sv, sf := icosphere(3, 1.5, siteOffset)
	gv, gf := grid(40, 30, func(x, y float64) float64 { return (x-15)*(x-15)/144 - (y-12)*(y-12)/81 }, siteOffset)
	// An integer-coordinate grid: box faces then coincide exactly with
	// triangle coordinates (the padding case of node).
	iv, ifc := grid(10, 10, func(x, y float64) float64 { return 0 }, r3.Vec{})
	for _, tc := range []struct {
		name string
		v    []r3.Vec
		f    [][3]int32
		c    r3.Vec
		span float64
	}{
		{"icosphere", sv, sf, siteOffset, 4},
		{"saddle grid", gv, gf, r3.Add(siteOffset, r3.Vec{X: 15, Y: 15}), 40},
		{"integer grid", iv, ifc, r3.Vec{X: 5, Y: 5}, 14},
	} {
		t.Run(tc.name, func(t *testing.T) {
			m, _ := mustNew(t, tc.v, tc.f, Options{NormalUp: true})
			g := lcg(7)
			for i := range 1000 {
				s := tc.span
				if i%3 == 0 {
					s = tc.span / 20
				}
				p := r3.Add(tc.c, r3.Vec{X: g.in(-s, s), Y: g.in(-s, s), Z: g.in(-s, s) / 4})
				if i%10 == 0 { // exactly on grid coordinates
					p = r3.Vec{X: math.Round(p.X), Y: math.Round(p.Y), Z: math.Round(p.Z)}
				}
				if i%50 == 1 { // far away, 10 km to 100 km
					p = r3.Add(tc.c, r3.Scale(g.in(1e4, 1e5), g.unit()))
				}
				q := r3.Sub(p, m.centre)
				got, want := m.nearest(q), m.nearestBrute(q)
				if got != want {
					t.Fatalf("point %d: got %+v, want %+v", i, got, want)
				}
			}
		})
	}
}

func TestNewValidation(t *testing.T) {
	sq := []r3.Vec{{}, {X: 1}, {X: 1, Y: 1}, {Y: 1}, {X: 2}}
	for _, tc := range []struct {
		name    string
		v       []r3.Vec
		f       [][3]int32
		err     error
		warning string
		check   func(*Report) bool
	}{
		{name: "empty", v: sq, err: ErrEmpty},
		{name: "index", v: sq, f: [][3]int32{{0, 1, 9}}, err: ErrIndex},
		{name: "nan", v: []r3.Vec{{X: math.NaN()}, {X: 1}, {Y: 1}}, f: [][3]int32{{0, 1, 2}}, err: ErrNonFinite},
		{name: "all degenerate", v: sq, f: [][3]int32{{0, 1, 4}, {0, 0, 2}}, err: ErrEmpty},
		{name: "degenerate dropped", v: sq, f: [][3]int32{{0, 1, 2}, {0, 2, 3}, {0, 1, 4}}, warning: "1 degenerate",
			check: func(r *Report) bool { return r.Degenerate == 1 && r.Triangles == 2 }},
		{name: "duplicate dropped", v: sq, f: [][3]int32{{0, 1, 2}, {0, 2, 3}, {2, 1, 0}}, warning: "1 duplicate",
			check: func(r *Report) bool { return r.Duplicate == 1 && r.Triangles == 2 && r.BoundaryEdges == 4 }},
		{name: "non-manifold", v: []r3.Vec{{}, {X: 1}, {Y: 1}, {Y: -1}, {Z: 1}}, f: [][3]int32{{0, 1, 2}, {1, 0, 3}, {0, 1, 4}}, warning: "non-manifold",
			check: func(r *Report) bool { return r.NonManifoldEdges == 1 }},
		{name: "inconsistent winding repaired", v: sq, f: [][3]int32{{0, 1, 2}, {0, 3, 2}},
			check: func(r *Report) bool { return r.Reoriented == 1 && r.Components == 1 }},
		{name: "down-facing flipped", v: sq, f: [][3]int32{{0, 2, 1}, {0, 3, 2}},
			check: func(r *Report) bool { return r.Reoriented == 2 }},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, rep, err := New(tc.v, tc.f, Options{NormalUp: true})
			if tc.err != nil {
				if !errors.Is(err, tc.err) {
					t.Fatalf("got error %v, want %v", err, tc.err)
				}
				return
			}
			if err != nil {
				t.Fatalf("got error %v, want none", err)
			}
			if tc.warning != "" && !strings.Contains(strings.Join(rep.Warnings, "\n"), tc.warning) {
				t.Errorf("got warnings %q, want one containing %q", rep.Warnings, tc.warning)
			}
			if tc.check != nil && !tc.check(rep) {
				t.Errorf("got report %+v", rep)
			}
		})
	}
}

// TestNonOrientable builds a Möbius strip (a band of quads whose ends are
// joined with a half twist), which has no consistent winding.
func TestNonOrientable(t *testing.T) {
	const n = 12
	var v []r3.Vec
	for i := range n {
		a := 2 * math.Pi * float64(i) / n
		for _, s := range []float64{-0.3, 0.3} {
			w := s * math.Cos(a/2)
			v = append(v, r3.Vec{X: (1 + w) * math.Cos(a), Y: (1 + w) * math.Sin(a), Z: s * math.Sin(a/2)})
		}
	}
	var f [][3]int32
	for i := range n {
		a0, a1 := int32(2*i), int32(2*i+1)
		b0, b1 := int32(2*((i+1)%n)), int32(2*((i+1)%n)+1)
		if i == n-1 { // the half twist swaps the two rims
			b0, b1 = b1, b0
		}
		f = append(f, [3]int32{a0, b0, b1}, [3]int32{a0, b1, a1})
	}
	if _, _, err := New(v, f, Options{NormalUp: true}); !errors.Is(err, ErrNonOrientable) {
		t.Fatalf("got error %v, want %v", err, ErrNonOrientable)
	}
}

func TestProjectDoesNotAllocate(t *testing.T) {
	v, f := icosphere(2, 1, siteOffset)
	m, _ := mustNew(t, v, f, Options{})
	p := r3.Add(siteOffset, r3.Vec{X: 0.3, Y: 1.2, Z: -0.4})
	if n := testing.AllocsPerRun(100, func() { m.Project(p) }); n != 0 {
		t.Fatalf("got %v allocations per Project, want 0", n)
	}
	if pr := m.Project(r3.Vec{X: math.NaN()}); !math.IsNaN(pr.D) || pr.Inside {
		t.Errorf("NaN point: got %+v, want D NaN, Inside false", pr)
	}
	if pr := m.Project(r3.Add(siteOffset, r3.Vec{Z: 1e7})); math.Abs(pr.D-(1e7-1)) > 1e-6 {
		t.Errorf("far point: got D %v, want %v", pr.D, 1e7-1)
	}
}

// TestProjectConcurrent compares Project from several goroutines with
// serial results (run with -race to check for data races).
func TestProjectConcurrent(t *testing.T) {
	v, f := icosphere(3, 1, siteOffset)
	m, _ := mustNew(t, v, f, Options{})
	g := lcg(3)
	pts := make([]r3.Vec, 2000)
	for i := range pts {
		pts[i] = r3.Add(siteOffset, r3.Scale(g.in(0.5, 1.5), g.unit()))
	}
	want := make([]float64, len(pts))
	for i, p := range pts {
		want[i] = m.Project(p).D
	}
	var wg sync.WaitGroup
	errs := make(chan string, 4)
	for w := range 4 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := w; i < len(pts); i += 4 {
				if d := m.Project(pts[i]).D; d != want[i] {
					errs <- fmt.Sprintf("point %d: got %v concurrently, %v serially", i, d, want[i])
					return
				}
			}
		}()
	}
	wg.Wait()
	close(errs)
	for e := range errs {
		t.Error(e)
	}
}

func TestProjectAllMatchesProject(t *testing.T) {
	v, f := grid(30, 30, func(x, y float64) float64 { return x*x/144 - y*y/81 }, siteOffset)
	m, _ := mustNew(t, v, f, Options{NormalUp: true})
	g := lcg(11)
	pts := make([]r3.Vec, 5000)
	for i := range pts {
		pts[i] = r3.Add(siteOffset, r3.Vec{X: g.in(-5, 35), Y: g.in(-5, 35), Z: g.in(-10, 15)})
	}
	pts[17].X = math.NaN()
	dst := make([]deviation.Projection, len(pts))
	m.ProjectAll(dst, pts)
	for i, p := range pts {
		want := m.Project(p)
		if dst[i] != want && !(math.IsNaN(want.D) && math.IsNaN(dst[i].D)) {
			t.Fatalf("point %d: got %+v, want %+v", i, dst[i], want)
		}
	}
}
