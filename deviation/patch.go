package deviation

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// DefaultMarginM is the containment margin, in metres, used when a design
// file gives no `margin_m`: a point whose foot lies up to 5 cm beyond a
// patch edge still belongs to the patch, so that edge shots taken on the
// arris are not lost to rounding of the corner coordinates (common
// practice).
const DefaultMarginM = 0.05

// quad is a quadrilateral in a plane (2-D coordinates), the plan extent of
// a patch.
type quad [4][2]float64

// area returns the signed area (shoelace formula).
func (q *quad) area() float64 {
	var s float64
	for i := range q {
		j := (i + 1) % 4
		s += q[i][0]*q[j][1] - q[j][0]*q[i][1]
	}
	return s / 2
}

// contains reports whether (x, y) lies inside q (even-odd rule, so a
// non-convex or reversed quadrilateral works too) or within margin of one
// of its edges.
func (q *quad) contains(x, y, margin float64) bool {
	in := false
	for i := range q {
		j := (i + 3) % 4
		xi, yi, xj, yj := q[i][0], q[i][1], q[j][0], q[j][1]
		if (yi > y) != (yj > y) && x < (xj-xi)*(y-yi)/(yj-yi)+xi {
			in = !in
		}
	}
	if in || margin <= 0 {
		return in
	}
	m2 := margin * margin
	for i := range q {
		j := (i + 1) % 4
		if segDist2(x, y, q[i][0], q[i][1], q[j][0], q[j][1]) <= m2 {
			return true
		}
	}
	return false
}

// segDist2 is the squared distance from (x, y) to the segment (ax,ay)–(bx,by).
func segDist2(x, y, ax, ay, bx, by float64) float64 {
	dx, dy := bx-ax, by-ay
	t := 0.0
	if l2 := dx*dx + dy*dy; l2 > 0 {
		t = math.Max(0, math.Min(1, ((x-ax)*dx+(y-ay)*dy)/l2))
	}
	ex, ey := x-ax-t*dx, y-ay-t*dy
	return ex*ex + ey*ey
}

// bilinear2 maps (u, v) ∈ [0,1]² onto q bilinearly, q[0] at (0,0), q[1] at
// (1,0), q[2] at (1,1), q[3] at (0,1).
func (q *quad) bilinear2(u, v float64) (x, y float64) {
	w0, w1, w2, w3 := (1-u)*(1-v), u*(1-v), u*v, (1-u)*v
	return w0*q[0][0] + w1*q[1][0] + w2*q[2][0] + w3*q[3][0],
		w0*q[0][1] + w1*q[1][1] + w2*q[2][1] + w3*q[3][1]
}

// ErrExtent reports patch corners whose plan extent is degenerate (zero
// area).
var ErrExtent = errors.New("patch extent has no area")

// ErrCornerOrder reports corners that are not in order around the edge:
// two opposite edges of their quadrilateral cross (a "bow tie").
var ErrCornerOrder = errors.New("corners are not in order around the edge")

// crossing reports whether two opposite edges of q cross (0–1 with 2–3,
// or 1–2 with 3–0), by the orientation test of computational geometry
// (segments ab and cd cross when c, d lie on opposite sides of ab and a, b
// on opposite sides of cd; touching counts as crossing).
func (q *quad) crossing() bool {
	orient := func(a, b, c [2]float64) float64 {
		return (b[0]-a[0])*(c[1]-a[1]) - (b[1]-a[1])*(c[0]-a[0])
	}
	cross := func(a, b, c, d [2]float64) bool {
		d1, d2 := orient(a, b, c), orient(a, b, d)
		d3, d4 := orient(c, d, a), orient(c, d, b)
		return d1*d2 <= 0 && d3*d4 <= 0 && !(d1 == 0 && d2 == 0)
	}
	return cross(q[0], q[1], q[2], q[3]) || cross(q[1], q[2], q[3], q[0])
}

// planQuad projects the corners on the plane perpendicular to up.
func planQuad(c [4]r3.Vec, up r3.Vec) quad {
	n := r3.Unit(up)
	e1 := r3.Cross(n, r3.Vec{X: 1})
	if r3.Norm(e1) < 0.5 {
		e1 = r3.Cross(n, r3.Vec{Y: 1})
	}
	e1 = r3.Unit(e1)
	e2 := r3.Cross(n, e1)
	var q quad
	for i, p := range c {
		w := r3.Sub(p, c[0])
		q[i] = [2]float64{r3.Dot(w, e1), r3.Dot(w, e2)}
	}
	return q
}

// checkOrder returns ErrCornerOrder when the corners, seen along up, form
// a self-crossing quadrilateral. Patches steeper than 60° are not checked
// (their plan view may fold over without any error in the order); the
// slope is that of the largest of the four corner triangles, which does
// not depend on the order of the corners.
func checkOrder(c [4]r3.Vec, up r3.Vec) error {
	var n r3.Vec
	for _, t := range [4][3]int{{0, 1, 2}, {0, 1, 3}, {0, 2, 3}, {1, 2, 3}} {
		m := r3.Cross(r3.Sub(c[t[1]], c[t[0]]), r3.Sub(c[t[2]], c[t[0]]))
		if r3.Norm(m) > r3.Norm(n) {
			n = m
		}
	}
	if nn := r3.Norm(n); nn > 0 && math.Abs(r3.Dot(n, up)) < 0.5*nn*r3.Norm(up) {
		return nil
	}
	if q := planQuad(c, up); q.crossing() {
		return fmt.Errorf("%w: in plan, edges c1–c2 and c3–c4 or c2–c3 and c4–c1 cross", ErrCornerOrder)
	}
	return nil
}

// checkMargin validates a containment margin.
func checkMargin(m float64) error {
	if !(m >= 0) || math.IsInf(m, 0) {
		return fmt.Errorf("margin %g m: must be finite and >= 0", m)
	}
	return nil
}

// SaddlePatch is an analytic saddle bounded by a plan extent: the
// quadrilateral of its corners projected into the local x–y plane of the
// saddle. A point belongs to the patch where the local (x, y) of its foot
// lies inside that quadrilateral or within MarginM of its edges (the
// margin is measured in plan, in the local x–y plane).
type SaddlePatch struct {
	Saddle  Saddle
	MarginM float64
	corners [4]r3.Vec
	extent  quad
}

var _ Surface = (*SaddlePatch)(nil)

// NewSaddlePatch returns the patch of s bounded by the corners c (site
// frame, in order around the edge; they need not lie on s, only their plan
// position counts). It validates s.
func NewSaddlePatch(s Saddle, c [4]r3.Vec, marginM float64) (*SaddlePatch, error) {
	if err := s.Validate(); err != nil {
		return nil, err
	}
	if err := checkMargin(marginM); err != nil {
		return nil, err
	}
	p := &SaddlePatch{Saddle: s, MarginM: marginM, corners: c}
	for i, ci := range c {
		q := s.ToLocal(ci)
		p.extent[i] = [2]float64{q.X, q.Y}
	}
	if p.extent.crossing() {
		return nil, fmt.Errorf("saddle patch: %w: in the local x–y plane two opposite edges cross", ErrCornerOrder)
	}
	if a := p.extent.area(); !(math.Abs(a) > 0) {
		return nil, fmt.Errorf("saddle patch: %w", ErrExtent)
	}
	return p, nil
}

// Corners returns the four corners in the order given.
func (p *SaddlePatch) Corners() [4]r3.Vec { return p.corners }

// Param maps (u, v) ∈ [0,1]² bilinearly onto the plan extent and lifts
// the point onto the saddle (site frame).
func (p *SaddlePatch) Param(u, v float64) r3.Vec {
	x, y := p.extent.bilinear2(u, v)
	return p.Saddle.ToSite(r3.Vec{X: x, Y: y, Z: p.Saddle.Height(x, y)})
}

// Project projects x onto the saddle and reports whether the foot lies in
// the plan extent (with the margin). It does not allocate.
func (p *SaddlePatch) Project(x r3.Vec) Projection {
	pr, foot := p.Saddle.project(x)
	pr.Inside = p.extent.contains(foot.X, foot.Y, p.MarginM)
	return pr
}

// bounds returns a site-frame box containing every foot the patch counts
// as inside: the local box of the plan extent grown by the margin, with
// the range of K1x² + K2y² over it, mapped through the frame.
func (p *SaddlePatch) bounds() (lo, hi r3.Vec, ok bool) {
	e := &p.extent
	x0, x1, y0, y1 := e[0][0], e[0][0], e[0][1], e[0][1]
	for _, c := range e {
		x0, x1 = math.Min(x0, c[0]), math.Max(x1, c[0])
		y0, y1 = math.Min(y0, c[1]), math.Max(y1, c[1])
	}
	m := p.MarginM
	x0, x1, y0, y1 = x0-m, x1+m, y0-m, y1+m
	sq := func(a, b float64) (lo, hi float64) {
		lo, hi = math.Min(a*a, b*b), math.Max(a*a, b*b)
		if a <= 0 && b >= 0 {
			lo = 0
		}
		return lo, hi
	}
	xl, xh := sq(x0, x1)
	yl, yh := sq(y0, y1)
	s := &p.Saddle
	z0 := s.K1*xl + s.K2*yh
	z1 := s.K1*xh + s.K2*yl
	return localBoxToSite(s, [2]float64{x0, x1}, [2]float64{y0, y1}, [2]float64{z0, z1})
}

// localBoxToSite returns the site bounding box of a box in s's frame.
func localBoxToSite(s *Saddle, xs, ys, zs [2]float64) (lo, hi r3.Vec, ok bool) {
	lo = r3.Vec{X: math.Inf(1), Y: math.Inf(1), Z: math.Inf(1)}
	hi = r3.Scale(-1, lo)
	for _, x := range xs {
		for _, y := range ys {
			for _, z := range zs {
				v := s.ToSite(r3.Vec{X: x, Y: y, Z: z})
				lo, hi = boxUnion(lo, hi, v, v)
			}
		}
	}
	return lo, hi, true
}
