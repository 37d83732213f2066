package deviation

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// ErrCoplanar reports four corners that lie in one plane (within
// CoplanarRel): they define a plane patch, not a saddle. Callers build a
// PlanePatch instead and warn.
var ErrCoplanar = errors.New("corners are coplanar")

// ErrOrientation reports a saddle whose axis (the twist direction) is
// perpendicular to the requested up direction, so that no side of it is
// "up".
var ErrOrientation = errors.New("saddle axis is perpendicular to the up direction")

// CoplanarRel is the relative tolerance of the coplanarity test of
// SaddleFromCorners: the corners count as coplanar when the distance
// between the two diagonals (c0c2 and c1c3), which is zero exactly when
// the corners are coplanar, is at most CoplanarRel·L, L the longest edge.
//
// Derivation: the bilinear patch departs from the plane of its corners by
// at most a quarter of the twist (the diagonal distance is half of
// |D·n̂|, D the twist vector), so below 1e-7·L the saddle and the plane
// differ by under 2.5e-8·L (2.5 µm on a 100 m shell), far below any
// survey resolution; and the principal form of so flat a patch puts its
// saddle point up to ~1/CoplanarRel patch lengths away, where float64
// would start to lose the 1e-9 m the conversion otherwise keeps
// (rounding of order ε·L·slope²/twist). A second, absolute floor of
// 64·ε·max|c| covers corners whose centred coordinates carry only the
// rounding of large site offsets.
const CoplanarRel = 1e-7

// SaddleFromCorners returns the hyperbolic paraboloid through the bilinear
// patch spanned by the corners c (in order around the edge, site frame,
// metres), in principal form with local z on the side of up
// (Axes[2]·up > 0).
//
// Derivation. With P00 = c0, P10 = c1, P11 = c2, P01 = c3 the patch is
//
//	P(u,v) = (1−u)(1−v)c0 + u(1−v)c1 + uv·c2 + (1−u)v·c3
//	       = c0 + u·A + v·B + uv·D,
//	A = c1 − c0,  B = c3 − c0,  D = c0 − c1 + c2 − c3 (the twist),
//
// (FIELD.md §4.3). For non-coplanar corners M = [A B D] is invertible; its
// inverse has rows a* = (B×D)/det, b* = (D×A)/det, d* = (A×B)/det,
// det = D·(A×B), and M⁻¹(X − c0) = (u, v, uv) for every point X of the
// patch, so the surface is exactly the quadric
//
//	Q(Y) = (a*·Y)(b*·Y) − d*·Y = 0,   Y = X − c0.
//
// Its quadratic part S = ½(a*b*ᵀ + b*a*ᵀ) has rank 2: a* and b* are both
// orthogonal to D, which is the null direction. With â = a*/|a*|,
// b̂ = b*/|b*| and γ = â·b̂ the eigenpairs are (½|a*||b*|(1 + γ), â + b̂)
// and (½|a*||b*|(γ − 1), â − b̂): one positive and one negative eigenvalue,
// as a hyperbolic paraboloid requires (FIELD.md §4.2). In the orthonormal
// frame e1 ∥ â + b̂, e3 = ±D/|D| (signed towards up), e2 = e3 × e1, with
// coordinates (ξ, η, ζ) of W = X − m (m the corner centroid, so that site
// offsets of 10^6 m cancel before any product is formed),
//
//	λ1ξ² + λ2η² − g1ξ − g2η − g3ζ + κ = 0,
//	ℓ = d* + (b*·C)a* + (a*·C)b*,  g = (ℓ·e1, ℓ·e2, ℓ·e3),
//	κ = (a*·C)(b*·C) + d*·C,       C = c0 − m,
//
// and completing the squares gives the saddle point ξ0 = g1/(2λ1),
// η0 = g2/(2λ2), ζ0 = (κ − λ1ξ0² − λ2η0²)/g3 and
//
//	z = (λ1/g3)·x² + (λ2/g3)·y²,   x = ξ − ξ0, y = η − η0, z = ζ − ζ0.
//
// g3 = d*·e3 = ±1/|D| is never zero. When g3 < 0 the positive coefficient
// belongs to e2, and the frame becomes (e2, −e1, e3), still right-handed.
// Every step is closed-form: no iteration, no eigen-solver.
//
// Errors: ErrCoplanar (see CoplanarRel) and ErrOrientation when the twist
// direction D is perpendicular to up within 1e-9 rad; non-finite input is
// reported too.
func SaddleFromCorners(c [4]r3.Vec, up r3.Vec) (Saddle, error) {
	f, err := newBilinearFrame(c, up)
	if err != nil {
		return Saddle{}, err
	}
	return f.saddle, nil
}

// bilinearFrame is the algebra shared by SaddleFromCorners and
// BilinearPatch.
type bilinearFrame struct {
	m          r3.Vec // corner centroid
	cc, a, b   r3.Vec // c0 − m, A, B
	d          r3.Vec // twist D
	as, bs     r3.Vec // dual rows a*, b*: u = a*·(X − c0), v = b*·(X − c0)
	saddle     Saddle
	edgeLength float64 // longest edge
}

func newBilinearFrame(c [4]r3.Vec, up r3.Vec) (*bilinearFrame, error) {
	rmax := 0.0
	for _, p := range c {
		for _, v := range [3]float64{p.X, p.Y, p.Z} {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("corners: %w", ErrNotFinite)
			}
			rmax = math.Max(rmax, math.Abs(v))
		}
	}
	if r3.Norm(up) == 0 || math.IsNaN(r3.Norm(up)) {
		return nil, errors.New("corners: up direction is zero or not finite")
	}
	f := &bilinearFrame{}
	f.m = r3.Scale(0.25, r3.Add(r3.Add(c[0], c[1]), r3.Add(c[2], c[3])))
	var w [4]r3.Vec
	for i := range c {
		w[i] = r3.Sub(c[i], f.m)
	}
	f.cc = w[0]
	f.a = r3.Sub(w[1], w[0])
	f.b = r3.Sub(w[3], w[0])
	f.d = r3.Add(r3.Sub(w[0], w[1]), r3.Sub(w[2], w[3]))
	for i := range w {
		f.edgeLength = math.Max(f.edgeLength, r3.Norm(r3.Sub(w[(i+1)%4], w[i])))
	}
	// Coplanarity: distance between the diagonals = |(D/2)·n̂|.
	n := r3.Cross(r3.Sub(w[2], w[0]), r3.Sub(w[3], w[1]))
	floor := math.Max(CoplanarRel*f.edgeLength, 64*epsilon*rmax)
	if nn := r3.Norm(n); nn == 0 || math.Abs(r3.Dot(f.d, n))/(2*nn) <= floor {
		return nil, fmt.Errorf("corners: diagonals %.3g m apart over a %.3g m patch: %w",
			diagonalGap(f.d, n), f.edgeLength, ErrCoplanar)
	}
	det := r3.Dot(f.d, r3.Cross(f.a, f.b))
	f.as = r3.Scale(1/det, r3.Cross(f.b, f.d))
	f.bs = r3.Scale(1/det, r3.Cross(f.d, f.a))
	ds := r3.Scale(1/det, r3.Cross(f.a, f.b))

	e3 := r3.Unit(f.d)
	upU := r3.Unit(up)
	cosUp := r3.Dot(e3, upU)
	if math.Abs(cosUp) < 1e-9 {
		return nil, fmt.Errorf("corners: %w", ErrOrientation)
	}
	if cosUp < 0 {
		e3 = r3.Scale(-1, e3)
	}
	e1 := r3.Add(r3.Unit(f.as), r3.Unit(f.bs))
	e1 = r3.Unit(r3.Sub(e1, r3.Scale(r3.Dot(e1, e3), e3))) // exact orthogonality
	e2 := r3.Cross(e3, e1)

	ac, bc := r3.Dot(f.as, f.cc), r3.Dot(f.bs, f.cc)
	l := r3.Add(ds, r3.Add(r3.Scale(bc, f.as), r3.Scale(ac, f.bs)))
	kappa := ac*bc + r3.Dot(ds, f.cc)
	lam1 := r3.Dot(f.as, e1) * r3.Dot(f.bs, e1)
	lam2 := r3.Dot(f.as, e2) * r3.Dot(f.bs, e2)
	g1, g2, g3 := r3.Dot(l, e1), r3.Dot(l, e2), r3.Dot(l, e3)
	xi0 := g1 / (2 * lam1)
	eta0 := g2 / (2 * lam2)
	zeta0 := (kappa - lam1*xi0*xi0 - lam2*eta0*eta0) / g3
	origin := r3.Add(r3.Add(r3.Scale(xi0, e1), r3.Scale(eta0, e2)), r3.Scale(zeta0, e3))
	s := Saddle{K1: lam1 / g3, K2: lam2 / g3, Origin: r3.Add(f.m, origin), Axes: [3]r3.Vec{e1, e2, e3}}
	if s.K1 < 0 {
		s = Saddle{K1: s.K2, K2: s.K1, Origin: s.Origin, Axes: [3]r3.Vec{e2, r3.Scale(-1, e1), e3}}
	}
	if err := s.Validate(); err != nil {
		return nil, fmt.Errorf("corners: %w", err)
	}
	f.saddle = s
	return f, nil
}

// epsilon is the float64 machine epsilon 2⁻⁵².
const epsilon = 0x1p-52

func diagonalGap(d, n r3.Vec) float64 {
	nn := r3.Norm(n)
	if nn == 0 {
		return 0
	}
	return math.Abs(r3.Dot(d, n)) / (2 * nn)
}

// BilinearPatch is a design patch given by its four corners: the part of
// the hyperbolic paraboloid through them whose bilinear parameters (u, v)
// lie in [0, 1]², extended beyond every edge by MarginM metres.
//
// Membership: a point belongs to the patch where its closest point on the
// saddle has parameters (u, v) with, for u < 0, −u·|∂P/∂u| ≤ MarginM (the
// metric overshoot beyond the edge u = 0 to first order, ∂P/∂u = A + vD at
// the clamped v), likewise beyond u = 1 and for v. The parameters of the
// foot are exact: u = a*·(X − c0), v = b*·(X − c0) (see SaddleFromCorners).
type BilinearPatch struct {
	Saddle  Saddle
	MarginM float64
	corners [4]r3.Vec
	f       *bilinearFrame
	// u = uL·f + u0 and v = vL·f + v0 for a foot f in the saddle's local
	// frame: the dual rows a*, b* expressed in that frame, which spares
	// Project the site-frame round trip.
	uL, vL r3.Vec
	u0, v0 float64
}

var _ Surface = (*BilinearPatch)(nil)

// NewBilinearPatch returns the patch of the corners c (in order around the
// edge), its positive side towards up, with containment margin marginM
// metres (≥ 0). It returns ErrCoplanar for coplanar corners (build a
// PlanePatch then) and ErrCornerOrder when the corners, seen along up,
// are not in order around the edge.
func NewBilinearPatch(c [4]r3.Vec, up r3.Vec, marginM float64) (*BilinearPatch, error) {
	if err := checkMargin(marginM); err != nil {
		return nil, err
	}
	if r3.Norm(up) > 0 {
		if err := checkOrder(c, up); err != nil {
			return nil, err
		}
	}
	f, err := newBilinearFrame(c, up)
	if err != nil {
		return nil, err
	}
	p := &BilinearPatch{Saddle: f.saddle, MarginM: marginM, corners: c, f: f}
	ax := &p.Saddle.Axes
	p.uL = r3.Vec{X: r3.Dot(f.as, ax[0]), Y: r3.Dot(f.as, ax[1]), Z: r3.Dot(f.as, ax[2])}
	p.vL = r3.Vec{X: r3.Dot(f.bs, ax[0]), Y: r3.Dot(f.bs, ax[1]), Z: r3.Dot(f.bs, ax[2])}
	o := r3.Sub(r3.Sub(p.Saddle.Origin, f.m), f.cc) // saddle point − c0, centred
	p.u0, p.v0 = r3.Dot(f.as, o), r3.Dot(f.bs, o)
	return p, nil
}

// Corners returns the four corners in the order given.
func (p *BilinearPatch) Corners() [4]r3.Vec { return p.corners }

// Param returns the patch point P(u, v) (site frame) by the bilinear
// formula; (0,0), (1,0), (1,1), (0,1) are the corners.
func (p *BilinearPatch) Param(u, v float64) r3.Vec {
	f := p.f
	w := r3.Add(r3.Add(f.cc, r3.Scale(u, f.a)), r3.Add(r3.Scale(v, f.b), r3.Scale(u*v, f.d)))
	return r3.Add(f.m, w)
}

// UV returns the bilinear parameters of the point X of the saddle.
func (p *BilinearPatch) UV(x r3.Vec) (u, v float64) {
	y := r3.Sub(r3.Sub(x, p.f.m), p.f.cc)
	return r3.Dot(p.f.as, y), r3.Dot(p.f.bs, y)
}

// Project projects p onto the saddle and reports whether the foot lies on
// the patch (see BilinearPatch). It does not allocate.
func (p *BilinearPatch) Project(x r3.Vec) Projection {
	pr, f := p.Saddle.project(x)
	u := p.uL.X*f.X + p.uL.Y*f.Y + p.uL.Z*f.Z + p.u0
	v := p.vL.X*f.X + p.vL.Y*f.Y + p.vL.Z*f.Z + p.v0
	pr.Inside = p.contains(u, v)
	return pr
}

func (p *BilinearPatch) contains(u, v float64) bool {
	if u >= 0 && u <= 1 && v >= 0 && v <= 1 {
		return true
	}
	f := p.f
	cu, cv := clamp01(u), clamp01(v)
	if ou := math.Max(-u, u-1); ou > 0 {
		if ou*r3.Norm(r3.Add(f.a, r3.Scale(cv, f.d))) > p.MarginM {
			return false
		}
	}
	if ov := math.Max(-v, v-1); ov > 0 {
		if ov*r3.Norm(r3.Add(f.b, r3.Scale(cu, f.d))) > p.MarginM {
			return false
		}
	}
	return true
}

func clamp01(v float64) float64 { return math.Max(0, math.Min(1, v)) }

// bounds returns a site-frame box containing every inside foot. The patch
// itself lies in the convex hull of its corners (P(u,v) is a convex
// combination of them on [0,1]²). A foot beyond the edges is
// P(cu,cv) + δu(A + cv·D) + δv(B + cu·D) + δu·δv·D with (cu, cv) the
// clamped parameters, |δu|·|A + cv·D| ≤ margin and |δv|·|B + cu·D| ≤
// margin, so it lies within 2·margin + margin²·|D|/(minA·minB) of the
// hull, minA and minB the least |A + vD| and |B + uD| over [0, 1].
func (p *BilinearPatch) bounds() (lo, hi r3.Vec, ok bool) {
	f := p.f
	minA := segDistOrigin(f.a, r3.Add(f.a, f.d))
	minB := segDistOrigin(f.b, r3.Add(f.b, f.d))
	if !(minA > 0 && minB > 0) {
		return lo, hi, false
	}
	m := p.MarginM
	pad := 2*m + m*m*r3.Norm(f.d)/(minA*minB)
	lo = r3.Vec{X: math.Inf(1), Y: math.Inf(1), Z: math.Inf(1)}
	hi = r3.Scale(-1, lo)
	for _, c := range p.corners {
		lo, hi = boxUnion(lo, hi, c, c)
	}
	padV := r3.Vec{X: pad, Y: pad, Z: pad}
	return r3.Sub(lo, padV), r3.Add(hi, padV), true
}

// segDistOrigin is the distance from the origin to the segment a–b.
func segDistOrigin(a, b r3.Vec) float64 {
	d := r3.Sub(b, a)
	t := 0.0
	if l2 := r3.Dot(d, d); l2 > 0 {
		t = math.Max(0, math.Min(1, -r3.Dot(a, d)/l2))
	}
	return r3.Norm(r3.Add(a, r3.Scale(t, d)))
}
