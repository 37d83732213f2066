package deviation

import (
	"errors"
	"math"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

func TestQuadContains(t *testing.T) {
	sq := quad{{0, 0}, {10, 0}, {10, 10}, {0, 10}}
	rev := quad{{0, 0}, {0, 10}, {10, 10}, {10, 0}}
	dart := quad{{0, 0}, {10, 5}, {0, 10}, {3, 5}} // non-convex at (3,5)
	tests := []struct {
		name   string
		q      quad
		x, y   float64
		margin float64
		want   bool
	}{
		{"inside", sq, 5, 5, 0, true},
		{"outside", sq, 11, 5, 0, false},
		{"within margin", sq, 10.04, 5, 0.05, true},
		{"beyond margin", sq, 10.06, 5, 0.05, false},
		{"corner margin", sq, 10.03, 10.03, 0.05, true}, // 0.042 from the corner
		{"corner diagonal beyond", sq, 10.04, 10.04, 0.05, false},
		{"reversed", rev, 5, 5, 0, true},
		{"dart notch", dart, 2, 5, 0, false},
		{"dart body", dart, 5, 5, 0, true},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := tt.q.contains(tt.x, tt.y, tt.margin); got != tt.want {
				t.Errorf("contains(%g, %g) = %v, want %v", tt.x, tt.y, got, tt.want)
			}
		})
	}
}

func TestCornerOrder(t *testing.T) {
	// The unit square with its corners in edge order, and with two
	// swapped (a bow tie: edges c1–c2 and c3–c4 cross).
	good := [4]r3.Vec{{}, {X: 10}, {X: 10, Y: 10, Z: 2}, {Y: 10}}
	bow := [4]r3.Vec{{}, {X: 10, Y: 10, Z: 2}, {X: 10}, {Y: 10}}
	flatBow := [4]r3.Vec{{}, {X: 10, Y: 10}, {X: 10}, {Y: 10}}
	if _, err := NewBilinearPatch(good, up, 0); err != nil {
		t.Errorf("good order: %v", err)
	}
	if _, err := NewBilinearPatch(bow, up, 0); !errors.Is(err, ErrCornerOrder) {
		t.Errorf("bow tie: got %v, want ErrCornerOrder", err)
	}
	if _, err := NewPlanePatch(flatBow, up, 0); !errors.Is(err, ErrCornerOrder) {
		t.Errorf("flat bow tie: got %v, want ErrCornerOrder", err)
	}
	s := Saddle{K1: 0.01, K2: -0.01, Axes: [3]r3.Vec{{X: 1}, {Y: 1}, {Z: 1}}}
	if _, err := NewSaddlePatch(s, flatBow, 0); !errors.Is(err, ErrCornerOrder) {
		t.Errorf("saddle bow tie: got %v, want ErrCornerOrder", err)
	}
	// A steep patch (a twisted wall) is not checked in plan.
	wall := [4]r3.Vec{{}, {X: 10}, {X: 10, Z: 10, Y: 2}, {Z: 10}}
	if _, err := NewBilinearPatch(wall, r3.Vec{Y: -1}, 0); err != nil {
		t.Errorf("wall: %v", err)
	}
}

func TestPlanePatch(t *testing.T) {
	// Plane z = 0.1x + 0.2y + 5 at site offsets; unit normal
	// (−0.1, −0.2, 1)/√1.05 (analytic).
	off := r3.Vec{X: 7e5, Y: 3e6}
	h := func(x, y float64) r3.Vec { return r3.Add(off, r3.Vec{X: x, Y: y, Z: 0.1*x + 0.2*y + 5}) }
	c := [4]r3.Vec{h(0, 0), h(10, 0), h(10, 8), h(0, 8)}
	p, err := NewPlanePatch(c, up, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	n := r3.Scale(1/math.Sqrt(1.05), r3.Vec{X: -0.1, Y: -0.2, Z: 1})
	if r3.Norm(r3.Sub(p.Normal, n)) > tolExact || p.Flatness() > 1e-9 {
		t.Errorf("normal %v flat %g, want %v 0", p.Normal, p.Flatness(), n)
	}
	for _, d := range []float64{0.012, -0.3, 0} {
		x := r3.Add(h(4, 3), r3.Scale(d, n))
		pr := p.Project(x)
		if math.Abs(pr.D-d) > 1e-9 || r3.Norm(r3.Sub(pr.Foot, h(4, 3))) > 1e-9 || !pr.Inside {
			t.Errorf("d=%g: got %+v", d, pr)
		}
	}
	if pr := p.Project(h(10.2, 3)); pr.Inside {
		t.Errorf("point 0.2 m beyond the edge is inside")
	}
	for i, uv := range [4][2]float64{{0, 0}, {1, 0}, {1, 1}, {0, 1}} {
		if d := r3.Norm(r3.Sub(p.Param(uv[0], uv[1]), c[i])); d > 1e-9 {
			t.Errorf("Param%v off corner %d by %g", uv, i, d)
		}
	}
	// Downward normal.
	pd, err := NewPlanePatch(c, r3.Vec{Z: -1}, 0.05)
	if err != nil || math.Abs(pd.Project(h(1, 1)).D) > 1e-9 || pd.Normal.Z >= 0 {
		t.Errorf("down: %v %v", err, pd)
	}
	// A vertical plane has no up side.
	if _, err := NewPlanePatch([4]r3.Vec{{}, {X: 1}, {X: 1, Z: 1}, {Z: 1}}, up, 0); !errors.Is(err, ErrOrientation) {
		t.Errorf("vertical plane: got %v, want ErrOrientation", err)
	}
}

func TestSaddlePatch(t *testing.T) {
	s := *benchSaddle()
	// Plan extent: a 30 m square around the saddle point, corners lifted
	// onto the surface.
	var c [4]r3.Vec
	for i, xy := range [4][2]float64{{-15, -15}, {15, -15}, {15, 15}, {-15, 15}} {
		c[i] = s.ToSite(r3.Vec{X: xy[0], Y: xy[1], Z: s.Height(xy[0], xy[1])})
	}
	p, err := NewSaddlePatch(s, c, DefaultMarginM)
	if err != nil {
		t.Fatal(err)
	}
	at := func(x, y, dz float64) r3.Vec { return s.ToSite(r3.Vec{X: x, Y: y, Z: s.Height(x, y) + dz}) }
	tests := []struct {
		name string
		p    r3.Vec
		want bool
	}{
		{"centre", at(0, 0, 0.01), true},
		{"edge", at(15.03, 2, 0), true},
		{"beyond", at(15.2, 2, 0), false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			pr := p.Project(tt.p)
			if pr.Inside != tt.want || pr.D != s.Project(tt.p).D {
				t.Errorf("got %+v, want inside %v", pr, tt.want)
			}
		})
	}
	for i, uv := range [4][2]float64{{0, 0}, {1, 0}, {1, 1}, {0, 1}} {
		if d := r3.Norm(r3.Sub(p.Param(uv[0], uv[1]), c[i])); d > 1e-9 {
			t.Errorf("Param%v off corner %d by %g", uv, i, d)
		}
	}
	if pr := s.Project(p.Param(0.3, 0.7)); math.Abs(pr.D) > 1e-9 {
		t.Errorf("Param point off the saddle by %g", pr.D)
	}
	bad := s
	bad.K1 = -1
	if _, err := NewSaddlePatch(bad, c, 0); !errors.Is(err, ErrCurvatureSign) {
		t.Errorf("got %v, want ErrCurvatureSign", err)
	}
	if _, err := NewSaddlePatch(s, [4]r3.Vec{c[0], c[0], c[0], c[0]}, 0); !errors.Is(err, ErrExtent) {
		t.Errorf("got %v, want ErrExtent", err)
	}
}
