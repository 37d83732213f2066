package fit

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

// Quadric is a general quadric surface F(p) = 0 in site coordinates,
// stored in normalised coordinates u = (p − Centre)/Scale:
//
//	F = c₀u_x² + c₁u_y² + c₂u_z² + c₃u_xu_y + c₄u_xu_z + c₅u_yu_z
//	    + c₆u_x + c₇u_y + c₈u_z + c₉,
//
// with ‖c‖ = 1. Working in centred, scaled coordinates keeps the ten
// monomials of order one, so the algebra is well conditioned even at site
// coordinates of 10⁶ m.
type Quadric struct {
	C      [10]float64
	Centre r3.Vec  // site coordinates, metres
	Scale  float64 // metres per normalised unit, > 0
	// Spread is the covariance matrix of the fitted points in normalised
	// coordinates (zero when unknown). Classify uses it to judge each
	// quadratic term over the extent of the data.
	Spread [3][3]float64
}

// ErrDegenerate reports a point set that does not determine a quadric
// (fewer than 9 points, or points on a curve or a degenerate configuration).
var ErrDegenerate = errors.New("fit: degenerate point configuration")

// norm returns u = (p − Centre)/Scale.
func (q *Quadric) norm(p r3.Vec) r3.Vec {
	return r3.Scale(1/q.Scale, r3.Sub(p, q.Centre))
}

// evalGrad returns F and ∇_u F at the normalised point u.
func (q *Quadric) evalGrad(u r3.Vec) (float64, r3.Vec) {
	c := &q.C
	x, y, z := u.X, u.Y, u.Z
	f := c[0]*x*x + c[1]*y*y + c[2]*z*z + c[3]*x*y + c[4]*x*z + c[5]*y*z + c[6]*x + c[7]*y + c[8]*z + c[9]
	g := r3.Vec{
		X: 2*c[0]*x + c[3]*y + c[4]*z + c[6],
		Y: 2*c[1]*y + c[3]*x + c[5]*z + c[7],
		Z: 2*c[2]*z + c[4]*x + c[5]*y + c[8],
	}
	return f, g
}

// Value returns F(p) (dimensionless, in the normalised scaling).
func (q *Quadric) Value(p r3.Vec) float64 {
	f, _ := q.evalGrad(q.norm(p))
	return f
}

// SampsonDistance returns the first-order approximation of the orthogonal
// distance from p to the surface, in metres,
//
//	e = Scale·|F(u)| / |∇F(u)|,
//
// exact for a plane and accurate to first order in e/R for a surface of
// radius of curvature R (Sampson 1982; Taubin 1991, §3). A point where
// ∇F = 0 gets +Inf.
func (q *Quadric) SampsonDistance(p r3.Vec) float64 {
	f, g := q.evalGrad(q.norm(p))
	gn := r3.Norm(g)
	if gn == 0 {
		return math.Inf(1)
	}
	return q.Scale * math.Abs(f) / gn
}

// SampsonDistances writes SampsonDistance(pts[i]) into dst[i].
func (q *Quadric) SampsonDistances(dst []float64, pts []r3.Vec) {
	if len(dst) != len(pts) {
		panic("fit: len(dst) != len(pts)")
	}
	inv := 1 / q.Scale
	for i, p := range pts {
		u := r3.Vec{X: (p.X - q.Centre.X) * inv, Y: (p.Y - q.Centre.Y) * inv, Z: (p.Z - q.Centre.Z) * inv}
		f, g := q.evalGrad(u)
		gn := math.Sqrt(g.X*g.X + g.Y*g.Y + g.Z*g.Z)
		if gn == 0 {
			dst[i] = math.Inf(1)
			continue
		}
		dst[i] = q.Scale * math.Abs(f) / gn
	}
}

// Matrices returns the symmetric 4×4 matrix A of the homogeneous form
// [u 1]·A·[u 1]ᵀ = F(u), whose upper-left 3×3 block is E.
func (q *Quadric) Matrices() (a *mat.SymDense, e *mat.SymDense) {
	c := &q.C
	a = mat.NewSymDense(4, []float64{
		c[0], c[3] / 2, c[4] / 2, c[6] / 2,
		c[3] / 2, c[1], c[5] / 2, c[7] / 2,
		c[4] / 2, c[5] / 2, c[2], c[8] / 2,
		c[6] / 2, c[7] / 2, c[8] / 2, c[9],
	})
	e = mat.NewSymDense(3, []float64{
		c[0], c[3] / 2, c[4] / 2,
		c[3] / 2, c[1], c[5] / 2,
		c[4] / 2, c[5] / 2, c[2],
	})
	return a, e
}

// normalisation returns the centroid and the RMS distance from it.
func normalisation(pts []r3.Vec) (r3.Vec, float64) {
	var c r3.Vec
	for _, p := range pts {
		c = r3.Add(c, p)
	}
	c = r3.Scale(1/float64(len(pts)), c)
	ss := 0.0
	for _, p := range pts {
		d := r3.Sub(p, c)
		ss += r3.Dot(d, d)
	}
	s := math.Sqrt(ss / float64(len(pts)))
	if s == 0 {
		s = 1
	}
	return c, s
}

// FitQuadric fits a general quadric to pts (at least 9) with Taubin's
// gradient-weighted normalisation: it minimises
//
//	Σ F(uᵢ)² / Σ |∇F(uᵢ)|²
//
// over the ten coefficients, a generalised symmetric eigenproblem
// M·c = λ·N·c. The constant term is eliminated first (it has no gradient):
// with centred monomials z̃ = z − z̄ the 9×9 problem M̃·c' = λ·N'·c' is
// solved through the Cholesky factor of N' (N' = L·Lᵀ,
// eigenvectors of L⁻¹·M̃·L⁻ᵀ), and c₉ = −z̄·c'. The data are centred on
// their centroid and scaled by their RMS radius first (Taubin 1991, §5;
// Hartley's normalisation argument).
//
// With exactly 9 points in general position the fit interpolates them
// (the minimal sample of RANSAC). ErrDegenerate is returned when N' is
// not positive definite.
//
// References:
//
//	Taubin, G. (1991). Estimation of planar curves, surfaces and nonplanar
//	space curves defined by implicit equations, with applications to edge
//	and range image segmentation. IEEE TPAMI 13(11):1115–1138.
func FitQuadric(pts []r3.Vec) (Quadric, error) {
	if len(pts) < 9 {
		return Quadric{}, fmt.Errorf("%w: %d points, need 9", ErrDegenerate, len(pts))
	}
	c, s := normalisation(pts)
	return fitQuadricNorm(pts, c, s)
}

// fitQuadricNorm is FitQuadric with a given normalisation (centre, scale).
func fitQuadricNorm(pts []r3.Vec, centre r3.Vec, scale float64) (Quadric, error) {
	var acc taubinAcc
	inv := 1 / scale
	for _, p := range pts {
		acc.add(r3.Vec{X: (p.X - centre.X) * inv, Y: (p.Y - centre.Y) * inv, Z: (p.Z - centre.Z) * inv})
	}
	q := Quadric{Centre: centre, Scale: scale, Spread: acc.spread()}
	if err := acc.solve(&q.C); err != nil {
		return Quadric{}, err
	}
	return q, nil
}

// taubinAcc accumulates the moment sums of Taubin's fit: Σz, Σzzᵀ over the
// nine non-constant monomials and the gradient matrix N.
type taubinAcc struct {
	n   float64
	sz  [9]float64
	szz [9][9]float64
	nn  [9][9]float64
}

func (t *taubinAcc) add(u r3.Vec) {
	x, y, z := u.X, u.Y, u.Z
	m := [9]float64{x * x, y * y, z * z, x * y, x * z, y * z, x, y, z}
	t.n++
	for i := 0; i < 9; i++ {
		t.sz[i] += m[i]
		for j := i; j < 9; j++ {
			t.szz[i][j] += m[i] * m[j]
		}
	}
	// Gradients of the monomials along x, y, z.
	gx := [9]float64{2 * x, 0, 0, y, z, 0, 1, 0, 0}
	gy := [9]float64{0, 2 * y, 0, x, 0, z, 0, 1, 0}
	gz := [9]float64{0, 0, 2 * z, 0, x, y, 0, 0, 1}
	for i := 0; i < 9; i++ {
		for j := i; j < 9; j++ {
			t.nn[i][j] += gx[i]*gx[j] + gy[i]*gy[j] + gz[i]*gz[j]
		}
	}
}

func (t *taubinAcc) merge(o *taubinAcc) {
	t.n += o.n
	for i := 0; i < 9; i++ {
		t.sz[i] += o.sz[i]
		for j := i; j < 9; j++ {
			t.szz[i][j] += o.szz[i][j]
			t.nn[i][j] += o.nn[i][j]
		}
	}
}

// spread returns the covariance matrix of the accumulated points.
func (t *taubinAcc) spread() [3][3]float64 {
	if t.n == 0 {
		return [3][3]float64{}
	}
	m := [3]float64{t.sz[6] / t.n, t.sz[7] / t.n, t.sz[8] / t.n}
	// Second moments: x², y², z² are sz[0..2]; xy, xz, yz are sz[3..5].
	sec := [3][3]float64{
		{t.sz[0], t.sz[3], t.sz[4]},
		{t.sz[3], t.sz[1], t.sz[5]},
		{t.sz[4], t.sz[5], t.sz[2]},
	}
	var c [3][3]float64
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			c[i][j] = sec[i][j]/t.n - m[i]*m[j]
		}
	}
	return c
}

func (t *taubinAcc) solve(c *[10]float64) error {
	if t.n < 9 {
		return fmt.Errorf("%w: %v points, need 9", ErrDegenerate, t.n)
	}
	mt := mat.NewSymDense(9, nil)
	nt := mat.NewSymDense(9, nil)
	var mean [9]float64
	for i := range mean {
		mean[i] = t.sz[i] / t.n
	}
	for i := 0; i < 9; i++ {
		for j := i; j < 9; j++ {
			mt.SetSym(i, j, (t.szz[i][j]-t.n*mean[i]*mean[j])/t.n)
			nt.SetSym(i, j, t.nn[i][j]/t.n)
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(nt) {
		return fmt.Errorf("%w: gradient matrix not positive definite", ErrDegenerate)
	}
	var l, linv mat.TriDense
	ch.LTo(&l)
	if err := linv.InverseTri(&l); err != nil {
		return fmt.Errorf("%w: %v", ErrDegenerate, err)
	}
	var tmp, cm mat.Dense
	tmp.Mul(&linv, mt)
	cm.Mul(&tmp, linv.T())
	cs := mat.NewSymDense(9, nil)
	for i := 0; i < 9; i++ {
		for j := i; j < 9; j++ {
			cs.SetSym(i, j, 0.5*(cm.At(i, j)+cm.At(j, i)))
		}
	}
	var es mat.EigenSym
	if !es.Factorize(cs, true) {
		return fmt.Errorf("%w: eigen decomposition failed", ErrDegenerate)
	}
	var ev mat.Dense
	es.VectorsTo(&ev)
	// EigenSym returns ascending eigenvalues: column 0 is the smallest.
	y := mat.NewVecDense(9, nil)
	for i := 0; i < 9; i++ {
		y.SetVec(i, ev.At(i, 0))
	}
	var a mat.VecDense
	a.MulVec(linv.T(), y)
	k := 0.0
	for i := 0; i < 9; i++ {
		c[i] = a.AtVec(i)
		k -= mean[i] * c[i]
	}
	c[9] = k
	nrm := 0.0
	for _, v := range c {
		nrm += v * v
	}
	nrm = math.Sqrt(nrm)
	if nrm == 0 || math.IsNaN(nrm) {
		return fmt.Errorf("%w: zero coefficient vector", ErrDegenerate)
	}
	for i := range c {
		c[i] /= nrm
	}
	return nil
}

// QuadricKind names what a fitted quadric looks like over its data.
type QuadricKind int

// Quadric kinds.
const (
	KindOther QuadricKind = iota
	KindHyperbolicParaboloid
	KindEllipticParaboloid
	KindParabolicCylinder
	KindPlane
)

var kindNames = [...]string{"other", "hyperbolic paraboloid", "elliptic paraboloid", "parabolic cylinder", "plane"}

// String returns the plain name, e.g. "hyperbolic paraboloid".
func (k QuadricKind) String() string {
	if k >= 0 && int(k) < len(kindNames) {
		return kindNames[k]
	}
	return fmt.Sprintf("QuadricKind(%d)", int(k))
}

// MarshalText writes the plain name.
func (k QuadricKind) MarshalText() ([]byte, error) { return []byte(k.String()), nil }

// RankTol is the relative tolerance below which an eigenvalue of E counts as
// zero in Classify. An eigenvalue λᵢ (unit eigenvector vᵢ, half linear
// coefficient bᵢ = ½·(c₆, c₇, c₈)·vᵢ, data extent hᵢ = 2·√(vᵢᵀΣvᵢ) along vᵢ
// from the Spread Σ, or 1 when unknown) is zero when
//
//	|λᵢ|·hᵢ ≤ RankTol·|bᵢ|     (the quadratic term is negligible
//	                             against the linear one over the data), or
//	|λᵢ| ≤ RankTol·‖E′‖         (relative rank; ‖E′‖ the largest |λ| not
//	                             already zero by the first test).
//
// Along vᵢ the quadric is λᵢw² + 2bᵢw + …; over |w| ≤ hᵢ the quadratic term
// changes F by |λᵢ|hᵢ² against the linear term's 2|bᵢ|hᵢ, so the first
// test bounds the bending it adds across the data to RankTol/2 of the
// linear change (2.5 %). It is what recognises a noisy near-hypar: a real
// fit is never exactly rank 2 (FIELD.md §4.2), and the coefficient of the
// squared normal coordinate is poorly determined by data that are thin
// along the normal (common practice: judge rank with a tolerance relative
// to the norm, here of E and of the linear part).
const RankTol = 0.05

// Classification holds the invariants of a quadric (FIELD.md §4.2).
type Classification struct {
	Kind  QuadricKind
	RankE int        // numerical rank of E with RankTol
	RankA int        // numerical rank of A (relative 1e-9·‖A‖₂)
	EigE  [3]float64 // eigenvalues of E, ascending by |λ|
	EigA  [4]float64 // eigenvalues of A, ascending
	DetA  float64    // det A (normalised coordinates, ‖c‖ = 1)
	vecE  [3]r3.Vec  // eigenvectors of E, same order as EigE
	lin   [3]float64 // bᵢ, the half linear coefficients along vecE
	zero  [3]bool    // eigenvalue counted as zero
	axis  int        // index of the null direction with the largest |bᵢ|
}

// Classify classifies q from the rank and signs of the eigenvalues of E and
// A, with the rank tolerance RankTol (relative to the norms of E and of the
// linear part):
//
//	rank E = 2, opposite signs, linear term along the null direction
//	                                      → hyperbolic paraboloid
//	rank E = 2, same signs, same          → elliptic paraboloid
//	rank E = 1, linear term off the axis  → parabolic cylinder
//	rank E = 0                            → plane
//	anything else (ellipsoid, hyperboloid with a significant third
//	eigenvalue, cones, cylinders, plane pairs) → other.
//
// For a hyperbolic paraboloid det A > 0 (FIELD.md §4.2); the value is
// reported as a check, not used, because a near-hypar fitted to noisy data
// can have either sign.
func Classify(q *Quadric) Classification {
	a, e := q.Matrices()
	var cl Classification
	var es mat.EigenSym
	if !es.Factorize(e, true) {
		return cl
	}
	vals := es.Values(nil)
	var vec mat.Dense
	es.VectorsTo(&vec)
	idx := []int{0, 1, 2}
	sort.Slice(idx, func(i, j int) bool { return math.Abs(vals[idx[i]]) < math.Abs(vals[idx[j]]) })
	var h [3]float64
	for k, i := range idx {
		v := r3.Vec{X: vec.At(0, i), Y: vec.At(1, i), Z: vec.At(2, i)}
		cl.EigE[k] = vals[i]
		cl.vecE[k] = v
		cl.lin[k] = 0.5 * (q.C[6]*v.X + q.C[7]*v.Y + q.C[8]*v.Z)
		h[k] = 1
		if q.Spread != ([3][3]float64{}) {
			sv := 0.0
			vv := [3]float64{v.X, v.Y, v.Z}
			for r := 0; r < 3; r++ {
				for c := 0; c < 3; c++ {
					sv += vv[r] * q.Spread[r][c] * vv[c]
				}
			}
			h[k] = 2 * math.Sqrt(math.Max(sv, 0))
		}
	}
	enorm := 0.0
	for k := 0; k < 3; k++ {
		cl.zero[k] = math.Abs(cl.EigE[k])*h[k] <= RankTol*math.Abs(cl.lin[k])
		if !cl.zero[k] {
			enorm = math.Max(enorm, math.Abs(cl.EigE[k]))
		}
	}
	cl.axis = -1
	for k := 0; k < 3; k++ {
		cl.zero[k] = cl.zero[k] || math.Abs(cl.EigE[k]) <= RankTol*enorm
		if !cl.zero[k] {
			cl.RankE++
		} else if cl.axis < 0 || math.Abs(cl.lin[k]) > math.Abs(cl.lin[cl.axis]) {
			cl.axis = k
		}
	}
	var ea mat.EigenSym
	if ea.Factorize(a, false) {
		av := ea.Values(nil)
		copy(cl.EigA[:], av)
		amax := math.Max(math.Abs(av[0]), math.Abs(av[3]))
		cl.DetA = 1
		for _, v := range av {
			cl.DetA *= v
			if math.Abs(v) > 1e-9*amax {
				cl.RankA++
			}
		}
	}
	linNorm := math.Sqrt(q.C[6]*q.C[6]+q.C[7]*q.C[7]+q.C[8]*q.C[8]) / 2
	switch cl.RankE {
	case 0:
		if linNorm > 0 {
			cl.Kind = KindPlane
		}
	case 1:
		// The linear term must not vanish along both zero directions.
		lz := 0.0
		for k := 0; k < 3; k++ {
			if cl.zero[k] {
				lz = math.Hypot(lz, cl.lin[k])
			}
		}
		if lz > RankTol*linNorm {
			cl.Kind = KindParabolicCylinder
			break
		}
		// λw² + 2bw + c = 0 along the nonzero direction: two parallel
		// planes when b² ≥ λc (Taubin's fit of planar data degenerates to
		// this pair, one plane through the data and one beside it).
		for k := 0; k < 3; k++ {
			if !cl.zero[k] && cl.lin[k]*cl.lin[k] >= cl.EigE[k]*q.C[9] {
				cl.Kind = KindPlane
			}
		}
	case 2:
		var l [2]float64
		j := 0
		for k := 0; k < 3; k++ {
			if !cl.zero[k] {
				l[j] = cl.EigE[k]
				j++
			}
		}
		if math.Abs(cl.lin[cl.axis]) > RankTol*math.Max(linNorm, enorm) {
			if l[0]*l[1] < 0 {
				cl.Kind = KindHyperbolicParaboloid
			} else {
				cl.Kind = KindEllipticParaboloid
			}
		}
	}
	return cl
}

// NearestSaddle returns the saddle z = K1x² + K2y² (K1 ≥ 0 ≥ K2) closest to
// the quadric, for use as a starting point: the smallest-|λ| eigenvalue of E
// is set to zero, the remaining quadric λ₁w₁² + λ₂w₂² + 2(b·w) + c is
// brought to principal form by completing the squares, and the local z axis
// is the null direction turned to the side of up (so that (K1, K2) is
// unique). An eigenvalue of the wrong sign (an elliptic paraboloid) is
// clamped to zero, which gives the nearest saddle-family member, a parabolic
// cylinder; a plane gives K1 = K2 = 0 with the origin at the foot of the
// centroid. It returns ErrDegenerate for the other kinds (a cylinder or a
// closed surface) and when the result is not a valid saddle.
func NearestSaddle(q *Quadric, up r3.Vec) (deviation.Saddle, error) {
	cl := Classify(q)
	if r3.Norm(up) == 0 {
		up = r3.Vec{Z: 1}
	}
	up = r3.Unit(up)
	if cl.axis < 0 {
		return deviation.Saddle{}, fmt.Errorf("%w: E has no null direction (%v)", ErrDegenerate, cl.Kind)
	}
	c := q.C[9]
	switch cl.Kind {
	case KindHyperbolicParaboloid, KindEllipticParaboloid, KindParabolicCylinder:
	case KindPlane:
		// Plane: n·u + c = 0 with n = (c₆, c₇, c₈); or, for a plane pair
		// λw² + 2bw + c = 0 along the eigenvector v, the root nearer the
		// data centroid (w = 0).
		var z, foot r3.Vec
		if cl.RankE == 0 {
			n := r3.Vec{X: q.C[6], Y: q.C[7], Z: q.C[8]}
			nn := r3.Norm(n)
			if nn == 0 {
				return deviation.Saddle{}, fmt.Errorf("%w: no linear term", ErrDegenerate)
			}
			z = r3.Scale(1/nn, n)
			foot = r3.Scale(-c/nn, z) // normalised coordinates
		} else {
			k := 0
			for cl.zero[k] {
				k++
			}
			l, b := cl.EigE[k], cl.lin[k]
			disc := math.Sqrt(math.Max(0, b*b-l*c))
			w := (-b + disc) / l
			if w2 := (-b - disc) / l; math.Abs(w2) < math.Abs(w) {
				w = w2
			}
			z = cl.vecE[k]
			foot = r3.Scale(w, z)
		}
		if r3.Dot(z, up) < 0 {
			z = r3.Scale(-1, z)
		}
		x := perpendicular(z)
		return deviation.Saddle{Origin: r3.Add(q.Centre, r3.Scale(q.Scale, foot)), Axes: [3]r3.Vec{x, r3.Cross(z, x), z}}, nil
	default:
		return deviation.Saddle{}, fmt.Errorf("%w: the quadric is %v (rank E %d), not in the saddle family", ErrDegenerate, cl.Kind, cl.RankE)
	}
	// With the zero eigenvalues set to 0, F(w) = Σ λᵢwᵢ² + 2Σ bᵢwᵢ + c over
	// the eigenbasis. The linear terms of all zero directions combine into
	// one: the null axis is v₃ ∝ Σ_zero bᵢvᵢ with b₃ = |Σ_zero bᵢvᵢ|, and a
	// second zero direction (parabolic cylinder) is replaced by the unit
	// vector orthogonal to v₃ and to the remaining eigenvector.
	var u r3.Vec
	type dir struct {
		v      r3.Vec
		lam, b float64
	}
	var plane []dir
	for k := 0; k < 3; k++ {
		if cl.zero[k] {
			u = r3.Add(u, r3.Scale(cl.lin[k], cl.vecE[k]))
		} else {
			plane = append(plane, dir{cl.vecE[k], cl.EigE[k], cl.lin[k]})
		}
	}
	b3 := r3.Norm(u)
	if b3 <= 1e-12 || len(plane) == 0 {
		return deviation.Saddle{}, fmt.Errorf("%w: no linear term along the null direction of E", ErrDegenerate)
	}
	v3 := r3.Scale(1/b3, u)
	if len(plane) == 1 {
		plane = append(plane, dir{v: r3.Unit(r3.Cross(v3, plane[0].v))})
	}
	// Complete the squares: wᵢ⁰ = −bᵢ/λᵢ, then
	// λ₁X² + λ₂Y² + 2b₃(w₃ − w₃⁰) = 0 with w₃⁰ = −c′/(2b₃).
	cc := c
	origin := r3.Vec{}
	for _, d := range plane {
		if d.lam != 0 {
			origin = r3.Add(origin, r3.Scale(-d.b/d.lam, d.v))
			cc -= d.b * d.b / d.lam
		}
	}
	origin = r3.Add(origin, r3.Scale(-cc/(2*b3), v3))
	// Local z = σ(w₃ − w₃⁰) with σ = ±1 (z towards up), so
	// z = −σ(λ₁X² + λ₂Y²)/(2b₃) in normalised units; K = k/Scale.
	sigma := 1.0
	if r3.Dot(v3, up) < 0 {
		sigma = -1
	}
	zAxis := r3.Scale(sigma, v3)
	k1 := -sigma * plane[0].lam / (2 * b3) / q.Scale
	k2 := -sigma * plane[1].lam / (2 * b3) / q.Scale
	ax := plane[0].v
	if k1 < k2 {
		k1, k2 = k2, k1
		ax = plane[1].v
	}
	// An eigenvalue of the wrong sign (elliptic paraboloid) is clamped.
	k1 = math.Max(k1, 0)
	k2 = math.Min(k2, 0)
	// Right-handed: y = z × x (the sign of an axis does not change x², y²).
	s := deviation.Saddle{
		K1: k1, K2: k2,
		Origin: r3.Add(q.Centre, r3.Scale(q.Scale, origin)),
		Axes:   [3]r3.Vec{ax, r3.Cross(zAxis, ax), zAxis},
	}
	if err := s.Validate(); err != nil {
		return deviation.Saddle{}, fmt.Errorf("%w: %v", ErrDegenerate, err)
	}
	return s, nil
}

// perpendicular returns a unit vector perpendicular to the unit vector n.
func perpendicular(n r3.Vec) r3.Vec {
	a := r3.Vec{X: 1}
	if math.Abs(n.X) > 0.9 {
		a = r3.Vec{Y: 1}
	}
	return r3.Unit(r3.Sub(a, r3.Scale(r3.Dot(a, n), n)))
}
