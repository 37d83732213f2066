package deviation

import "gonum.org/v1/gonum/spatial/r3"

// Saddle is the principal form of a hyperbolic paraboloid,
//
//	z = K1·x² + K2·y²,   K1 > 0 > K2,
//
// in a local right-handed orthonormal frame with origin Origin (the saddle
// point, site coordinates in metres) and axes Axes[0] (local x), Axes[1]
// (local y), Axes[2] (local z) given as unit vectors in the site frame.
// Axes[2] points to the positive (normal) side, which makes (K1, K2) unique:
// flipping z would turn (K1, K2) into (−K2, −K1).
//
// A point p in the site frame has local coordinates
//
//	q = (Axes[0]·(p − Origin), Axes[1]·(p − Origin), Axes[2]·(p − Origin)).
type Saddle struct {
	K1, K2 float64 // principal coefficients, 1/m (the principal curvatures at the saddle point are 2·K1 and 2·K2)
	Origin r3.Vec
	Axes   [3]r3.Vec
}

// ToLocal returns the local coordinates of the site point p.
func (s *Saddle) ToLocal(p r3.Vec) r3.Vec {
	d := r3.Sub(p, s.Origin)
	return r3.Vec{X: r3.Dot(s.Axes[0], d), Y: r3.Dot(s.Axes[1], d), Z: r3.Dot(s.Axes[2], d)}
}

// ToSite returns the site coordinates of the local point q.
func (s *Saddle) ToSite(q r3.Vec) r3.Vec {
	v := s.Origin
	v = r3.Add(v, r3.Scale(q.X, s.Axes[0]))
	v = r3.Add(v, r3.Scale(q.Y, s.Axes[1]))
	v = r3.Add(v, r3.Scale(q.Z, s.Axes[2]))
	return v
}

// ClosestLocal returns the closest point foot on the saddle to the local
// point q, and the signed orthogonal distance d = ±|q − foot|, positive
// where q lies on the local +z side (the side of the normal
// (−2K1x, −2K2y, 1) at foot).
//
// (Contract stub: the solver lands in the measurement-chain work.)
func (s *Saddle) ClosestLocal(q r3.Vec) (foot r3.Vec, d float64) {
	panic("deviation: ClosestLocal not implemented yet")
}
