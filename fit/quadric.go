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
	q := Quadric{Centre: centre, Scale: scale}
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
// zero in Classify. An eigenvalue λᵢ (eigenvector vᵢ) is zero when
//
//	|λᵢ| ≤ RankTol·max(‖E‖₂, |bᵢ|),   bᵢ = ½·(c₆, c₇, c₈)·vᵢ,
//
// in normalised coordinates, where the data lie within a few units of the
// origin. The second term is the relevant one for a near-hypar: along vᵢ
// the quadric is λᵢw² + 2bᵢw, and for |w| ≤ 1 the quadratic term moves the
// surface by at most |λᵢ|/(2|bᵢ|) of a normalised unit relative to the
// linear one, so 0.05 accepts a one-sheet hyperboloid whose third
// eigenvalue bends the surface by under 2.5 % of the data radius across the
// data (common practice: a noisy fit is never exactly rank 2, FIELD.md §4.2).
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
}

// Classify classifies q from the rank and signs of the eigenvalues of E and
// A, with the rank tolerance RankTol relative to the norm:
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
// reported as a check.
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
	enorm := math.Abs(vals[idx[2]])
	for k, i := range idx {
		cl.EigE[k] = vals[i]
		cl.vecE[k] = r3.Vec{X: vec.At(0, i), Y: vec.At(1, i), Z: vec.At(2, i)}
		cl.lin[k] = 0.5 * (q.C[6]*cl.vecE[k].X + q.C[7]*cl.vecE[k].Y + q.C[8]*cl.vecE[k].Z)
	}
	var zero [3]bool
	for k := 0; k < 3; k++ {
		zero[k] = math.Abs(cl.EigE[k]) <= RankTol*math.Max(enorm, math.Abs(cl.lin[k]))
		if !zero[k] {
			cl.RankE++
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
		// Zero directions are k = 0, 1; the linear term must not vanish
		// along both.
		if math.Hypot(cl.lin[0], cl.lin[1]) > RankTol*linNorm && zero[0] && zero[1] {
			cl.Kind = KindParabolicCylinder
		}
	case 2:
		if zero[0] && math.Abs(cl.lin[0]) > RankTol*math.Max(linNorm, enorm) {
			if cl.EigE[1]*cl.EigE[2] < 0 {
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
// centroid. It returns ErrDegenerate when the quadric has no usable linear
// term along the null direction (a cylinder or a closed surface).
func NearestSaddle(q *Quadric, up r3.Vec) (deviation.Saddle, error) {
	cl := Classify(q)
	if r3.Norm(up) == 0 {
		up = r3.Vec{Z: 1}
	}
	up = r3.Unit(up)
	v3 := cl.vecE[0]
	b3 := cl.lin[0]
	c := q.C[9]
	if cl.Kind == KindPlane {
		// Plane: n·u + c = 0 with n = (c₆, c₇, c₈).
		n := r3.Vec{X: q.C[6], Y: q.C[7], Z: q.C[8]}
		nn := r3.Norm(n)
		if nn == 0 {
			return deviation.Saddle{}, fmt.Errorf("%w: no linear term", ErrDegenerate)
		}
		z := r3.Scale(1/nn, n)
		foot := r3.Scale(-c/nn, z) // normalised coordinates
		if r3.Dot(z, up) < 0 {
			z = r3.Scale(-1, z)
		}
		x := perpendicular(z)
		return deviation.Saddle{Origin: r3.Add(q.Centre, r3.Scale(q.Scale, foot)), Axes: [3]r3.Vec{x, r3.Cross(z, x), z}}, nil
	}
	if math.Abs(b3) <= 1e-12 {
		return deviation.Saddle{}, fmt.Errorf("%w: no linear term along the null direction of E", ErrDegenerate)
	}
	// F(w) = λ₁w₁² + λ₂w₂² + 2b₁w₁ + 2b₂w₂ + 2b₃w₃ + c, w = Vᵀu.
	var w0 [3]float64
	cc := c
	var lam [2]float64
	for k := 1; k < 3; k++ {
		l := cl.EigE[k]
		if l == 0 {
			continue
		}
		lam[k-1] = l
		w0[k] = -cl.lin[k] / l
		cc -= cl.lin[k] * cl.lin[k] / l
	}
	// λ₁X² + λ₂Y² + 2b₃(w₃ − w₃⁰) = 0 with w₃⁰ = −cc/(2b₃).
	w0[0] = -cc / (2 * b3)
	// Local z = σ(w₃ − w₃⁰) with σ = ±1 (z towards up), so
	// z = −σ(λ₁X² + λ₂Y²)/(2b₃) in normalised units; K = k/Scale.
	sigma := 1.0
	if r3.Dot(v3, up) < 0 {
		sigma = -1
	}
	zAxis := r3.Scale(sigma, v3)
	k1 := -sigma * lam[0] / (2 * b3) / q.Scale
	k2 := -sigma * lam[1] / (2 * b3) / q.Scale
	ax, ay := cl.vecE[1], cl.vecE[2]
	if k1 < k2 {
		k1, k2 = k2, k1
		ax, ay = ay, ax
	}
	k1 = math.Max(k1, 0)
	k2 = math.Min(k2, 0)
	// Right-handed: y = z × x (ay is ±that; the sign of an axis does not
	// change x² or y²).
	_ = ay
	originN := r3.Add(r3.Add(r3.Scale(w0[0], v3), r3.Scale(w0[1], cl.vecE[1])), r3.Scale(w0[2], cl.vecE[2]))
	s := deviation.Saddle{
		K1: k1, K2: k2,
		Origin: r3.Add(q.Centre, r3.Scale(q.Scale, originN)),
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
