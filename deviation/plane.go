package deviation

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// PlanePatch is a flat design patch: the plane of four (nearly) coplanar
// corners, bounded by their quadrilateral. It is what a `corners` patch
// becomes when SaddleFromCorners reports ErrCoplanar.
//
// The plane passes through the corner centroid with normal along the
// cross product of the diagonals, (c2 − c0) × (c3 − c1), turned to the up
// side: for a planar quadrilateral that is its exact normal, and for a
// slightly twisted one it is the plane from which the two diagonals are
// equally far (their midpoints differ by D/2 along the normal).
// A point belongs where its foot lies in the corners' quadrilateral (in
// the plane) or within MarginM of its edges.
type PlanePatch struct {
	Origin  r3.Vec // corner centroid, site frame
	Normal  r3.Vec // unit normal on the positive side
	MarginM float64
	axes    [2]r3.Vec // in-plane orthonormal axes
	corners [4]r3.Vec
	extent  quad
	flat    float64
}

var _ Surface = (*PlanePatch)(nil)

// NewPlanePatch returns the plane patch of the corners c (in order around
// the edge, site frame), its positive side towards up.
func NewPlanePatch(c [4]r3.Vec, up r3.Vec, marginM float64) (*PlanePatch, error) {
	if err := checkMargin(marginM); err != nil {
		return nil, err
	}
	for _, p := range c {
		if v := p.X + p.Y + p.Z; math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("corners: %w", ErrNotFinite)
		}
	}
	m := r3.Scale(0.25, r3.Add(r3.Add(c[0], c[1]), r3.Add(c[2], c[3])))
	var w [4]r3.Vec
	for i := range c {
		w[i] = r3.Sub(c[i], m)
	}
	if err := checkOrder(c, up); err != nil {
		return nil, fmt.Errorf("plane patch: %w", err)
	}
	n := r3.Cross(r3.Sub(w[2], w[0]), r3.Sub(w[3], w[1]))
	if r3.Norm(n) == 0 {
		return nil, fmt.Errorf("plane patch: %w", ErrExtent)
	}
	n = r3.Unit(n)
	cosUp := r3.Dot(n, up)
	if math.Abs(cosUp) < 1e-9*r3.Norm(up) || math.IsNaN(cosUp) {
		return nil, fmt.Errorf("plane patch: normal perpendicular to up: %w", ErrOrientation)
	}
	if cosUp < 0 {
		n = r3.Scale(-1, n)
	}
	e1 := r3.Sub(w[1], w[0])
	e1 = r3.Unit(r3.Sub(e1, r3.Scale(r3.Dot(e1, n), n)))
	e2 := r3.Cross(n, e1)
	p := &PlanePatch{Origin: m, Normal: n, MarginM: marginM, axes: [2]r3.Vec{e1, e2}, corners: c}
	for i := range w {
		p.extent[i] = [2]float64{r3.Dot(w[i], e1), r3.Dot(w[i], e2)}
		p.flat = math.Max(p.flat, math.Abs(r3.Dot(w[i], n)))
	}
	if !(math.Abs(p.extent.area()) > 0) {
		return nil, fmt.Errorf("plane patch: %w", ErrExtent)
	}
	return p, nil
}

// Flatness returns the largest distance, in metres, of a corner from the
// plane (zero for exactly coplanar corners).
func (p *PlanePatch) Flatness() float64 { return p.flat }

// Corners returns the four corners in the order given.
func (p *PlanePatch) Corners() [4]r3.Vec { return p.corners }

// Param maps (u, v) ∈ [0,1]² bilinearly onto the corners projected into
// the plane (site frame).
func (p *PlanePatch) Param(u, v float64) r3.Vec {
	x, y := p.extent.bilinear2(u, v)
	return r3.Add(p.Origin, r3.Add(r3.Scale(x, p.axes[0]), r3.Scale(y, p.axes[1])))
}

// Project returns the signed distance of x from the plane, its foot and
// whether the foot lies in the patch. It does not allocate.
func (p *PlanePatch) Project(x r3.Vec) Projection {
	w := r3.Sub(x, p.Origin)
	d := r3.Dot(w, p.Normal)
	fx, fy := r3.Dot(w, p.axes[0]), r3.Dot(w, p.axes[1])
	return Projection{
		D:      d,
		Foot:   r3.Sub(x, r3.Scale(d, p.Normal)),
		Normal: p.Normal,
		Inside: p.extent.contains(fx, fy, p.MarginM),
	}
}

// bounds returns a site-frame box containing every inside foot: the plan
// box of the extent grown by the margin, in the plane.
func (p *PlanePatch) bounds() (lo, hi r3.Vec, ok bool) {
	e := &p.extent
	x0, x1, y0, y1 := e[0][0], e[0][0], e[0][1], e[0][1]
	for _, c := range e {
		x0, x1 = math.Min(x0, c[0]), math.Max(x1, c[0])
		y0, y1 = math.Min(y0, c[1]), math.Max(y1, c[1])
	}
	m := p.MarginM
	lo = r3.Vec{X: math.Inf(1), Y: math.Inf(1), Z: math.Inf(1)}
	hi = r3.Scale(-1, lo)
	for _, x := range [2]float64{x0 - m, x1 + m} {
		for _, y := range [2]float64{y0 - m, y1 + m} {
			v := r3.Add(p.Origin, r3.Add(r3.Scale(x, p.axes[0]), r3.Scale(y, p.axes[1])))
			lo, hi = boxUnion(lo, hi, v, v)
		}
	}
	return lo, hi, true
}
