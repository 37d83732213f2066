package deviation

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

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
// The limiting cases K1 = 0 or K2 = 0 (a parabolic cylinder) and
// K1 = K2 = 0 (a plane) are accepted by Validate and handled exactly by
// ClosestLocal; K1 < 0 or K2 > 0 (axes in the wrong order or z on the wrong
// side) are rejected by Validate.
//
// A point p in the site frame has local coordinates
//
//	q = (Axes[0]·(p − Origin), Axes[1]·(p − Origin), Axes[2]·(p − Origin)).
type Saddle struct {
	K1, K2 float64 // principal coefficients, 1/m (the principal curvatures at the saddle point are 2·K1 and 2·K2)
	Origin r3.Vec
	Axes   [3]r3.Vec
}

var _ Surface = (*Saddle)(nil)

// Errors returned by Saddle.Validate (wrapped with details).
var (
	// ErrNotFinite reports a NaN or infinite parameter.
	ErrNotFinite = errors.New("not finite")
	// ErrAxes reports axes that are not unit length, not orthogonal or not
	// right-handed within AxesTol.
	ErrAxes = errors.New("axes not orthonormal and right-handed")
	// ErrCurvatureSign reports K1 < 0 or K2 > 0.
	ErrCurvatureSign = errors.New("saddle needs k1 >= 0 >= k2")
)

// AxesTol is the tolerance on |Axes[i]·Axes[j] − δij| and on
// |det[Axes] − 1| accepted by Validate. An axis typed with 10 significant
// digits has a relative rounding error of 5e-11, so 1e-9 accepts hand-typed
// unit vectors and rejects anything that would tilt the frame by more than
// about 1e-9 rad (1 µm at 1 km).
const AxesTol = 1e-9

// Validate reports whether s is a usable saddle: finite coefficients and
// origin, K1 >= 0 >= K2, and axes orthonormal and right-handed within
// AxesTol.
func (s *Saddle) Validate() error {
	vals := [...]float64{s.K1, s.K2, s.Origin.X, s.Origin.Y, s.Origin.Z,
		s.Axes[0].X, s.Axes[0].Y, s.Axes[0].Z, s.Axes[1].X, s.Axes[1].Y, s.Axes[1].Z,
		s.Axes[2].X, s.Axes[2].Y, s.Axes[2].Z}
	for _, v := range vals {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("saddle: %w", ErrNotFinite)
		}
	}
	if s.K1 < 0 || s.K2 > 0 {
		return fmt.Errorf("saddle: k1 = %g, k2 = %g: %w (swap the x and y axes, or turn z to the normal side)", s.K1, s.K2, ErrCurvatureSign)
	}
	for i := 0; i < 3; i++ {
		for j := i; j < 3; j++ {
			want := 0.0
			if i == j {
				want = 1
			}
			if got := r3.Dot(s.Axes[i], s.Axes[j]); math.Abs(got-want) > AxesTol {
				if i == j {
					return fmt.Errorf("saddle: axis %d has length² %.12g: %w", i, got, ErrAxes)
				}
				return fmt.Errorf("saddle: axes %d and %d have dot product %.3g: %w", i, j, got, ErrAxes)
			}
		}
	}
	if det := r3.Dot(r3.Cross(s.Axes[0], s.Axes[1]), s.Axes[2]); math.Abs(det-1) > AxesTol {
		return fmt.Errorf("saddle: det[axes] = %.12g (left-handed frame?): %w", det, ErrAxes)
	}
	return nil
}

// ToLocal returns the local coordinates of the site point p.
func (s *Saddle) ToLocal(p r3.Vec) r3.Vec {
	d := r3.Sub(p, s.Origin)
	return r3.Vec{X: r3.Dot(s.Axes[0], d), Y: r3.Dot(s.Axes[1], d), Z: r3.Dot(s.Axes[2], d)}
}

// ToSite returns the site coordinates of the local point q.
func (s *Saddle) ToSite(q r3.Vec) r3.Vec {
	return r3.Vec{
		X: s.Origin.X + q.X*s.Axes[0].X + q.Y*s.Axes[1].X + q.Z*s.Axes[2].X,
		Y: s.Origin.Y + q.X*s.Axes[0].Y + q.Y*s.Axes[1].Y + q.Z*s.Axes[2].Y,
		Z: s.Origin.Z + q.X*s.Axes[0].Z + q.Y*s.Axes[1].Z + q.Z*s.Axes[2].Z,
	}
}

// dirToSite rotates the local direction v into the site frame.
func (s *Saddle) dirToSite(v r3.Vec) r3.Vec {
	return r3.Vec{
		X: v.X*s.Axes[0].X + v.Y*s.Axes[1].X + v.Z*s.Axes[2].X,
		Y: v.X*s.Axes[0].Y + v.Y*s.Axes[1].Y + v.Z*s.Axes[2].Y,
		Z: v.X*s.Axes[0].Z + v.Y*s.Axes[1].Z + v.Z*s.Axes[2].Z,
	}
}

// FootTol is the position tolerance, in metres, of the closest-point
// solver: ClosestLocal stops once a Newton step moves the foot by less than
// FootTol (quadratic convergence then leaves an error of order FootTol²/R,
// R the radius of curvature), or once the parameter t is resolved to a few
// units in the last place.
const FootTol = 1e-10

// ClosestLocal returns the closest point foot on the saddle to the local
// point q, and the signed orthogonal distance d = ±|q − foot|, positive
// where q lies on the local +z side (the side of the normal
// (−2K1x, −2K2y, 1) at foot).
//
// Method. With g(X) = K1x² + K2y² − z, the foot X satisfies q − X = t·∇g(X)
// for a scalar t, hence
//
//	X(t) = (qx/(1 + 2K1t), qy/(1 + 2K2t), qz + t),
//	F(t) = K1qx²/(1 + 2K1t)² + K2qy²/(1 + 2K2t)² − qz − t = 0.
//
// Reflection symmetry gives sign(x) = sign(qx) and sign(y) = sign(qy) at
// the foot, so t lies in (−1/(2K1), −1/(2K2)) (an infinite end where a
// coefficient is zero), where F′(t) ≤ −1: F has exactly one root there
// (FIELD.md §4.4). It is found by Newton's method from t = 0 (whose first
// step is the classical first-order distance g/|∇g|²), kept inside a
// shrinking bracket and replaced by bisection whenever a step would leave
// it, so it always converges; points within a few centimetres of a shell
// need two or three steps.
//
// Degenerate branch. When qx = 0 the x term of F vanishes and F is finite
// at t = −1/(2K1); if F ≤ 0 there, the root lies on the interval end, x is
// not fixed by X(t) and the two mirror candidates x = ±√((z − K2y²)/K1)
// (equal distance; the + one is returned) replace the x = 0 candidate,
// which is then not a minimum (the analysis Eberly gives for axis-aligned
// query points to an ellipse). Likewise for qy = 0 at t = −1/(2K2).
// Near an end (|qx| tiny) the same constraint formula gives x more
// accurately than qx/(1+2K1t), and the better of the two is used.
//
// Accuracy: distance to about 1e-10 m (relative 1e-13 for far points)
// for |q| up to 10^4 m, checked against independent minimisations. The
// foot has the same accuracy except near the centres of curvature of the
// surface (its evolute, e.g. an axis point at the focal distance), where
// the distance is stationary along the surface, the foot is
// ill-conditioned and only d keeps that accuracy. The distance is
// d = −t·|∇g(X)|, which carries its sign and avoids cancellation for
// points on the surface (from the foot, where t is at a bracket end).
// ClosestLocal does not allocate; a point within centimetres of a shell
// costs two Newton evaluations and four divisions.
//
// References: D. Eberly, "Distance from a Point to an Ellipse, an
// Ellipsoid, or a Hyperellipsoid", Geometric Tools (the bracketing and the
// treatment of axis-aligned query points); FIELD.md §4.4 (the equation).
func (s *Saddle) ClosestLocal(q r3.Vec) (foot r3.Vec, d float64) {
	foot, d, _ = s.closest(q)
	return foot, d
}

// closest is ClosestLocal that also returns |∇g| = √(1 + 4K1²x² + 4K2²y²)
// at the foot, which Project needs for the normal.
func (s *Saddle) closest(q r3.Vec) (foot r3.Vec, d, gn float64) {
	a, b := s.K1, -s.K2 // a >= 0, b >= 0
	qx, qy, qz := q.X, q.Y, q.Z
	if a == 0 && b == 0 {
		return r3.Vec{X: qx, Y: qy}, qz, 1
	}
	var t, x, y float64
	switch {
	case qx == 0 && a > 0 && farX(a, b, qy, qz, -0.5/a):
		t = -0.5 / a
		y = qy / (1 - 2*b*t)
		x = math.Sqrt(math.Max(0, (qz+t+b*y*y)/a))
	case qy == 0 && b > 0 && farY(a, b, qx, qz, 0.5/b):
		t = 0.5 / b
		x = qx / (1 + 2*a*t)
		y = math.Sqrt(math.Max(0, (a*x*x-qz-t)/b))
	default:
		var r1, r2 float64
		var ok bool
		if t, r1, r2, ok = fastT(a, b, qx, qy, qz); !ok {
			lo, hi := math.Inf(-1), math.Inf(1)
			if a > 0 {
				lo = -0.5 / a
			}
			if b > 0 {
				hi = 0.5 / b
			}
			t = solveT(a, b, qx, qy, qz, lo, hi)
			s1, s2 := 1+2*a*t, 1-2*b*t
			r := 1 / (s1 * s2)
			r1, r2 = s2*r, s1*r
		}
		x = qx * r1
		y = qy * r2
		s1, s2 := 1+2*a*t, 1-2*b*t
		z := qz + t
		// Near an interval end x = qx/s1 is ill-conditioned: s1 carries an
		// absolute error of a few ε, so x is uncertain by about
		// 4ε·|x|/s1, without bound once s1 is at rounding level (the root
		// can even sit closer to the end than float64 resolves, when
		// |qx| is below about 1e-15·|x|, and then t stops short of it).
		// The surface equation gives the other candidate
		// x = sign(qx)·√((z − K2y²)/K1), uncertain by about
		// 4ε(|z| + b·y² + |t|)/(a|x|). Both candidate feet lie on the
		// surface. If their distances to q differ beyond rounding, the
		// nearer is the closest point; if not, keep the more accurate.
		if (a > 0 && qx != 0 && s1 < 0.5) || (b > 0 && qy != 0 && s2 < 0.5) {
			if a > 0 && qx != 0 && s1 < 0.5 {
				xc := math.Copysign(math.Sqrt(math.Max(0, (z+b*y*y)/a)), qx)
				errQ := math.Abs(x) / s1
				errC := (math.Abs(z) + b*y*y + math.Abs(t)) / (a * math.Abs(xc))
				if better(dist2(q, xc, y, a, b), dist2(q, x, y, a, b), errC, errQ) {
					x = xc
				}
			}
			if b > 0 && qy != 0 && s2 < 0.5 {
				yc := math.Copysign(math.Sqrt(math.Max(0, (a*x*x-z)/b)), qy)
				errQ := math.Abs(y) / s2
				errC := (math.Abs(z) + a*x*x + math.Abs(t)) / (b * math.Abs(yc))
				if better(dist2(q, x, yc, a, b), dist2(q, x, y, a, b), errC, errQ) {
					y = yc
				}
			}
			foot = r3.Vec{X: x, Y: y, Z: a*x*x - b*y*y}
			gn = math.Sqrt(1 + 4*(a*a*x*x+b*b*y*y))
			// t may stop short of an unresolvable root: d from the foot.
			return foot, math.Copysign(math.Sqrt(dist2(q, x, y, a, b)), -t), gn
		}
	}
	foot = r3.Vec{X: x, Y: y, Z: a*x*x - b*y*y}
	// d = −t·|∇g(X)|: q − X = t·∇g and the +z normal is −∇g.
	gn = math.Sqrt(1 + 4*(a*a*x*x+b*b*y*y))
	return foot, -t * gn, gn
}

// better reports whether the constraint candidate (squared distance dc,
// error scale errC) should replace the quotient candidate (dq, errQ): when
// it is nearer beyond rounding (relative 1e-9 on the squared distance), or
// when both are equally near and it is the more accurate.
func better(dc, dq, errC, errQ float64) bool {
	if math.Abs(dc-dq) > 1e-9*(dc+dq) {
		return dc < dq
	}
	return errC < errQ
}

// dist2 is |q − (x, y, a·x² − b·y²)|².
func dist2(q r3.Vec, x, y, a, b float64) float64 {
	dx, dy, dz := q.X-x, q.Y-y, q.Z-(a*x*x-b*y*y)
	return dx*dx + dy*dy + dz*dz
}

// farX reports, for qx = 0, whether the root of F lies at or beyond the
// end t = lo = −1/(2a): F(lo) ≤ 0 (F without its vanished x term).
func farX(a, b, qy, qz, lo float64) bool {
	s2 := 1 - 2*b*lo
	return -b*qy*qy/(s2*s2)-qz-lo <= 0
}

// farY reports, for qy = 0, whether the root of F lies at or beyond the
// end t = hi = 1/(2b): F(hi) ≥ 0.
func farY(a, b, qx, qz, hi float64) bool {
	s1 := 1 + 2*a*hi
	return a*qx*qx/(s1*s1)-qz-hi >= 0
}

// fastT is the branch-free common case of the solver: one Newton step
// from t = 0 (whose values need no division), one full Newton step, and
// the stopping rule of solveT. It reports ok = false, and the caller runs
// solveT, whenever that rule is not met or a step leaves the bracket. On
// success it also returns r1 = 1/(1 + 2at) and r2 = 1/(1 − 2bt) at the
// returned t, updated from the last evaluation by the series
// 1/(1 + ε) = 1 − ε + ε², whose error ε³ is below 1e-15 for |ε| ≤ 1e-5
// (checked), which saves a division. Points within a few centimetres of
// a shell take this path; keeping it free of data-dependent branches lets
// the processor overlap consecutive points.
func fastT(a, b, qx, qy, qz float64) (t, r1, r2 float64, ok bool) {
	const tol2 = FootTol * FootTol
	ax2, by2 := a*qx*qx, b*qy*qy
	f0 := ax2 - by2 - qz
	fp0 := -4*(ax2*a+by2*b) - 1
	t1 := -f0 / fp0
	// 1 + 2a·t1 = n1/fp0 and 1 − 2b·t1 = n2/fp0: the reciprocals need not
	// wait for t1, and one division serves both.
	n1, n2 := fp0-2*a*f0, fp0+2*b*f0
	r := fp0 / (n1 * n2)
	r1, r2 = n2*r, n1*r
	x, y := qx*r1, qy*r2
	ax2, by2 = a*x*x, b*y*y
	f := ax2 - by2 - qz - t1
	c1, c2 := a*r1, b*r2
	fp := -4*(ax2*c1+by2*c2) - 1
	dt := -f / fp
	ux, uy := c1*x, c2*y
	speed2 := 1 + 4*(ux*ux+uy*uy)
	e := 12 * (ax2*c1*c1 + by2*c2*c2) * dt * dt // error·|F′| after the step
	e1, e2 := 2*c1*dt, -2*c2*dt                 // s_new = s·(1 + e)
	ok = n1 < 0 && n2 < 0 &&                    // 1 + 2a·t1 > 0, 1 − 2b·t1 > 0 (fp0 < 0): t1 in the bracket
		math.Abs(dt)*(c1+c2) <= 1e-3 && e*e*speed2 <= tol2*fp*fp &&
		math.Abs(e1) <= 1e-5 && math.Abs(e2) <= 1e-5
	r1 *= 1 - e1 + e1*e1
	r2 *= 1 - e2 + e2*e2
	return t1 + dt, r1, r2, ok
}

// maxIter bounds the solver loop; bisection alone halves a finite bracket
// to adjacent floats in well under 1100 steps, and Newton needs 2–6.
const maxIter = 200

// solveT returns the root of F in (lo, hi) by safeguarded Newton from t = 0.
//
// Stopping rule: after a Newton step dt the error left in t is, to leading
// order, e = |F″/(2F′)|·dt² (the quadratic convergence constant); the loop
// stops once e·|dX/dt| ≤ FootTol, or when a step moves X by less than
// FootTol, or when t is resolved to a few units in the last place. For a
// point within centimetres of a shell of radius ≥ 1 m this ends after the
// cheap evaluation at t = 0 and one full Newton evaluation.
func solveT(a, b, qx, qy, qz, lo, hi float64) float64 {
	const tol2 = FootTol * FootTol
	t := 0.0
	for i := 0; i < maxIter; i++ {
		r1, r2 := 1.0, 1.0
		if i > 0 {
			// one division for both: 1/s1 = s2/(s1·s2), 1/s2 = s1/(s1·s2)
			// (s1, s2 ≥ 2⁻⁵³ inside the bracket, so s1·s2 cannot underflow)
			s1, s2 := 1+2*a*t, 1-2*b*t
			r := 1 / (s1 * s2)
			r1, r2 = s2*r, s1*r
		}
		x := qx * r1
		y := qy * r2
		ax2, by2 := a*x*x, b*y*y
		f := ax2 - by2 - qz - t
		switch {
		case f > 0:
			lo = t
		case f < 0:
			hi = t
		default:
			return t
		}
		c1, c2 := a*r1, b*r2
		fp := -4*(ax2*c1+by2*c2) - 1 // F′(t) ≤ −1
		dt := -f / fp
		tn := t + dt
		newton := tn > lo && tn < hi
		if !newton {
			switch {
			case math.IsInf(lo, -1):
				tn = hi - 1 - 2*math.Abs(hi)
			case math.IsInf(hi, 1):
				tn = lo + 1 + 2*math.Abs(lo)
			default:
				tn = 0.5 * (lo + hi)
			}
			if !(tn > lo && tn < hi) { // bracket down to adjacent floats
				return t
			}
			dt = tn - t
		}
		t = tn
		ux, uy := c1*x, c2*y          // −½dx/dt, ½dy/dt
		speed2 := 1 + 4*(ux*ux+uy*uy) // |dX/dt|²
		if dt*dt*speed2 <= tol2 || math.Abs(dt) <= 4e-16*math.Abs(t) {
			return t
		}
		// Within the quadratic regime (|dt|·(c1 + c2) ≤ 1e-3 keeps the
		// Taylor series of F dominated by its first terms), bound the error
		// left after this step with |F″| ≤ 24(a³x²r1² + b³y²r2²).
		if newton && math.Abs(dt)*(c1+c2) <= 1e-3 {
			e := 12 * (ax2*c1*c1 + by2*c2*c2) * dt * dt // error·|F′|
			if e*e*speed2 <= tol2*fp*fp {
				return t
			}
		}
	}
	return t
}

// Normal returns the unit normal, on the local +z side, in the site frame,
// of the saddle at the surface point above or below the site point p (the
// point of the surface with the same local x and y as p; pass a foot from
// Project to get the normal there).
func (s *Saddle) Normal(p r3.Vec) r3.Vec {
	q := s.ToLocal(p)
	return s.dirToSite(s.normalLocal(q.X, q.Y))
}

// normalLocal is the unit normal (−2K1x, −2K2y, 1)/|…| in local coordinates.
func (s *Saddle) normalLocal(x, y float64) r3.Vec {
	nx, ny := -2*s.K1*x, -2*s.K2*y
	inv := 1 / math.Sqrt(1+nx*nx+ny*ny)
	return r3.Vec{X: nx * inv, Y: ny * inv, Z: inv}
}

// Project projects the site point p onto the (unbounded) saddle: D is the
// signed orthogonal distance (positive on the local +z side), Foot the
// closest point and Normal the unit normal there, both in the site frame.
// Inside is always true. Project does not allocate.
func (s *Saddle) Project(p r3.Vec) Projection {
	pr, _ := s.project(p)
	return pr
}

// project is Project that also returns the foot in local coordinates.
// The frame transforms are written out (the helpers are too large for the
// inliner), which keeps the whole chain in registers.
func (s *Saddle) project(p r3.Vec) (Projection, r3.Vec) {
	a0, a1, a2 := &s.Axes[0], &s.Axes[1], &s.Axes[2]
	dx, dy, dz := p.X-s.Origin.X, p.Y-s.Origin.Y, p.Z-s.Origin.Z
	q := r3.Vec{
		X: a0.X*dx + a0.Y*dy + a0.Z*dz,
		Y: a1.X*dx + a1.Y*dy + a1.Z*dz,
		Z: a2.X*dx + a2.Y*dy + a2.Z*dz,
	}
	f, d, gn := s.closest(q)
	inv := 1 / gn
	nx, ny := -2*s.K1*f.X*inv, -2*s.K2*f.Y*inv
	return Projection{
		D: d,
		Foot: r3.Vec{
			X: s.Origin.X + f.X*a0.X + f.Y*a1.X + f.Z*a2.X,
			Y: s.Origin.Y + f.X*a0.Y + f.Y*a1.Y + f.Z*a2.Y,
			Z: s.Origin.Z + f.X*a0.Z + f.Y*a1.Z + f.Z*a2.Z,
		},
		Normal: r3.Vec{
			X: nx*a0.X + ny*a1.X + inv*a2.X,
			Y: nx*a0.Y + ny*a1.Y + inv*a2.Y,
			Z: nx*a0.Z + ny*a1.Z + inv*a2.Z,
		},
		Inside: true,
	}, f
}

// Distances stores in dst the signed orthogonal distances of the site
// points pts from the saddle (as Project's D) and returns dst, grown to
// len(pts) if needed; dst may be nil. It allocates only to grow dst.
func (s *Saddle) Distances(dst []float64, pts []r3.Vec) []float64 {
	if cap(dst) < len(pts) {
		dst = make([]float64, len(pts))
	}
	dst = dst[:len(pts)]
	o, a0, a1, a2 := s.Origin, s.Axes[0], s.Axes[1], s.Axes[2]
	for i, p := range pts {
		dx, dy, dz := p.X-o.X, p.Y-o.Y, p.Z-o.Z
		_, d, _ := s.closest(r3.Vec{
			X: a0.X*dx + a0.Y*dy + a0.Z*dz,
			Y: a1.X*dx + a1.Y*dy + a1.Z*dz,
			Z: a2.X*dx + a2.Y*dy + a2.Z*dz,
		})
		dst[i] = d
	}
	return dst
}

// Height returns z = K1·x² + K2·y² at local (x, y).
func (s *Saddle) Height(x, y float64) float64 { return s.K1*x*x + s.K2*y*y }
