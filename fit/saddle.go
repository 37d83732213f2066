package fit

import (
	"math"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

// Parameter indices of the saddle problem.
const (
	ParK1 = iota // K1, 1/m
	ParK2        // K2, 1/m
	ParW1        // small rotation about local x, rad
	ParW2        // small rotation about local y, rad
	ParW3        // small rotation about local z, rad
	ParT1        // translation along local x, m
	ParT2        // translation along local y, m
	ParT3        // translation along local z, m
	NumSaddlePar
)

// SaddleParamNames names the parameters of SaddleProblem in order.
var SaddleParamNames = [NumSaddlePar]string{"k1", "k2", "rot_x", "rot_y", "rot_z", "t_x", "t_y", "t_z"}

// SaddleProblem is the orthogonal-distance fit of a saddle
// z = K1x² + K2y² to points, with the 8 parameters
//
//	θ = (K1, K2, ω, t),
//
// ω a small rotation vector and t a translation, both in the current local
// frame and about the pivot c (the centroid of the points, so rotation and
// translation are nearly uncorrelated). For parameters θ the local
// coordinates of a point with current-frame coordinates q₀ are
//
//	q = Exp(ω)ᵀ·(q₀ − c − t) + c,
//
// and the residual is the signed orthogonal distance of q to
// z = K1x² + K2y² from (*deviation.Saddle).ClosestLocal (positive on the
// local +z side), times √wᵢ when weights are set.
//
// Jacobian: for an implicit surface G(q; θ) = 0 the derivative of the
// orthogonal distance at the foot Y is (∂G/∂θ)/|∇G|. With
// G = z − K1x² − K2y² and n = ∇G(Y) = (−2K1Y_x, −2K2Y_y, 1), at ω = t = 0:
//
//	∂d/∂K1 = −Y_x²/|n|,  ∂d/∂K2 = −Y_y²/|n|,
//	∂d/∂ω = n × (Y − c)/|n|,  ∂d/∂t = −n/|n|.
//
// Accept re-linearises after every accepted step: it composes Exp(ω) into
// the axes, moves the origin, and resets ω = t = 0, which leaves every
// residual unchanged; the Jacobian is therefore only ever needed (and is
// exact) at ω = t = 0.
//
// Coordinates are centred on a local origin by the caller: Points are
// site points minus that origin, so the frame's origin is small.
//
// Normal equations: with many points (m ≫ 8) the problem offers
// Problem.Normal, accumulating JᵀJ and Jᵀf per block in parallel, without
// storing J. The accuracy argument: the solver's step then carries a
// relative error of about κ²·ε, κ the condition number of the column-scaled
// J (Cholesky is invariant to column scaling, van der Sluis 1969). Centring
// the rotation on the data centroid keeps κ to about 10³–10⁴ for a patch
// tens of metres from the saddle point, so κ²ε ≤ 10⁻⁸: the step is then
// accurate to 8 digits, which only affects the convergence rate, not the
// fixed point, since the residuals themselves are evaluated exactly;
// (JᵀJ)⁻¹ for the covariance is needed to 2–3 digits only.
type SaddleProblem struct {
	Points  []r3.Vec  // centred points
	Weights []float64 // optional weights wᵢ ≥ 0 (nil: all 1)

	// Current frame (centred coordinates): the saddle's axes and origin.
	Axes   [3]r3.Vec
	Origin r3.Vec
	pivot  r3.Vec // rotation pivot, centred coordinates

	feet []r3.Vec  // local feet of the last Func call
	dist []float64 // unweighted signed distances of the last Func call
	key  [NumSaddlePar]float64
	ok   bool
}

// NewSaddleProblem returns the problem for the centred points pts with the
// starting frame of s (in centred coordinates); the pivot is the centroid.
func NewSaddleProblem(pts []r3.Vec, w []float64, s *deviation.Saddle) *SaddleProblem {
	var c r3.Vec
	for _, p := range pts {
		c = r3.Add(c, p)
	}
	c = r3.Scale(1/float64(len(pts)), c)
	return &SaddleProblem{
		Points: pts, Weights: w, Axes: s.Axes, Origin: s.Origin, pivot: c,
		feet: make([]r3.Vec, len(pts)), dist: make([]float64, len(pts)),
	}
}

// X0 returns the starting parameters (K1, K2 of s, ω = t = 0).
func (sp *SaddleProblem) X0(s *deviation.Saddle) []float64 {
	x := make([]float64, NumSaddlePar)
	x[ParK1], x[ParK2] = s.K1, s.K2
	return x
}

// Saddle returns the saddle (centred coordinates) for parameters x.
func (sp *SaddleProblem) Saddle(x []float64) deviation.Saddle {
	axes, origin := sp.fold(x)
	return deviation.Saddle{K1: x[ParK1], K2: x[ParK2], Origin: origin, Axes: axes}
}

// localPivot returns the pivot in the current local frame.
func (sp *SaddleProblem) localPivot() r3.Vec {
	d := r3.Sub(sp.pivot, sp.Origin)
	return r3.Vec{X: r3.Dot(sp.Axes[0], d), Y: r3.Dot(sp.Axes[1], d), Z: r3.Dot(sp.Axes[2], d)}
}

// fold returns the axes and origin of the frame for parameters x:
// axes R = R₀·Exp(ω), origin o = o₀ + R₀(c + t) − R·c.
func (sp *SaddleProblem) fold(x []float64) ([3]r3.Vec, r3.Vec) {
	e := expRot(r3.Vec{X: x[ParW1], Y: x[ParW2], Z: x[ParW3]})
	var axes [3]r3.Vec
	for j := 0; j < 3; j++ {
		axes[j] = r3.Add(r3.Add(r3.Scale(e[0][j], sp.Axes[0]), r3.Scale(e[1][j], sp.Axes[1])), r3.Scale(e[2][j], sp.Axes[2]))
	}
	axes = orthonormalise(axes)
	c := sp.localPivot()
	ct := r3.Add(c, r3.Vec{X: x[ParT1], Y: x[ParT2], Z: x[ParT3]})
	o := sp.Origin
	o = r3.Add(o, r3.Add(r3.Add(r3.Scale(ct.X, sp.Axes[0]), r3.Scale(ct.Y, sp.Axes[1])), r3.Scale(ct.Z, sp.Axes[2])))
	o = r3.Sub(o, r3.Add(r3.Add(r3.Scale(c.X, axes[0]), r3.Scale(c.Y, axes[1])), r3.Scale(c.Z, axes[2])))
	return axes, o
}

// Accept folds ω and t into the frame and resets them to zero.
func (sp *SaddleProblem) Accept(x []float64) {
	sp.Axes, sp.Origin = sp.fold(x)
	for i := ParW1; i <= ParT3; i++ {
		x[i] = 0
	}
	if sp.ok {
		copy(sp.key[:], x)
	}
}

// Func writes the (weighted) signed orthogonal distances for x into dst.
// K1 < 0 or K2 > 0 give +Inf residuals (outside the saddle family), which
// the solver rejects as a failed step.
func (sp *SaddleProblem) Func(dst, x []float64) {
	k1, k2 := x[ParK1], x[ParK2]
	if !(k1 >= 0 && k2 <= 0) {
		for i := range dst {
			dst[i] = math.Inf(1)
		}
		sp.ok = false
		return
	}
	axes, origin := sp.fold(x)
	s := deviation.Saddle{K1: k1, K2: k2, Origin: origin, Axes: axes}
	parallelBlocks(len(sp.Points), func(lo, hi int) {
		for i := lo; i < hi; i++ {
			q := s.ToLocal(sp.Points[i])
			foot, d := s.ClosestLocal(q)
			sp.feet[i] = foot
			sp.dist[i] = d
			if sp.Weights != nil {
				d *= math.Sqrt(sp.Weights[i])
			}
			dst[i] = d
		}
	})
	copy(sp.key[:], x)
	sp.ok = true
}

// ensure re-evaluates the feet when the cache does not hold x.
func (sp *SaddleProblem) ensure(x []float64) {
	if sp.ok {
		same := true
		for i, v := range x {
			same = same && sp.key[i] == v
		}
		if same {
			return
		}
	}
	sp.Func(make([]float64, len(sp.Points)), x)
}

// row writes the Jacobian row of point i (unweighted) into r.
func (sp *SaddleProblem) row(r []float64, i int, k1, k2 float64, c r3.Vec) {
	y := sp.feet[i]
	n := r3.Vec{X: -2 * k1 * y.X, Y: -2 * k2 * y.Y, Z: 1}
	inv := 1 / math.Sqrt(n.X*n.X+n.Y*n.Y+1)
	w := r3.Scale(inv, r3.Cross(n, r3.Sub(y, c)))
	r[ParK1] = -y.X * y.X * inv
	r[ParK2] = -y.Y * y.Y * inv
	r[ParW1], r[ParW2], r[ParW3] = w.X, w.Y, w.Z
	r[ParT1], r[ParT2], r[ParT3] = -n.X*inv, -n.Y*inv, -n.Z*inv
}

// Jac writes the m×8 Jacobian at x (exact at ω = t = 0; see the type).
func (sp *SaddleProblem) Jac(dst *mat.Dense, x []float64) {
	sp.ensure(x)
	c := sp.localPivot()
	raw := dst.RawMatrix()
	parallelBlocks(len(sp.Points), func(lo, hi int) {
		for i := lo; i < hi; i++ {
			r := raw.Data[i*raw.Stride : i*raw.Stride+NumSaddlePar]
			sp.row(r, i, x[ParK1], x[ParK2], c)
			if sp.Weights != nil {
				sw := math.Sqrt(sp.Weights[i])
				for j := range r {
					r[j] *= sw
				}
			}
		}
	})
}

// Normal accumulates JᵀJ and Jᵀf at x in parallel blocks.
func (sp *SaddleProblem) Normal(jtj *mat.SymDense, jtf []float64, x []float64) {
	sp.ensure(x)
	c := sp.localPivot()
	const p = NumSaddlePar
	workers := workersFor(len(sp.Points))
	type acc struct {
		a [p * p]float64
		b [p]float64
	}
	accs := make([]acc, workers)
	parallelBlocksN(len(sp.Points), workers, func(w, lo, hi int) {
		ac := &accs[w]
		var r [p]float64
		for i := lo; i < hi; i++ {
			sp.row(r[:], i, x[ParK1], x[ParK2], c)
			wi, d := 1.0, sp.dist[i]
			if sp.Weights != nil {
				wi = sp.Weights[i]
			}
			for j := 0; j < p; j++ {
				rj := wi * r[j]
				ac.b[j] += rj * d
				for k := j; k < p; k++ {
					ac.a[j*p+k] += rj * r[k]
				}
			}
		}
	})
	for j := 0; j < p; j++ {
		jtf[j] = 0
		for k := j; k < p; k++ {
			s := 0.0
			for w := range accs {
				s += accs[w].a[j*p+k]
			}
			jtj.SetSym(j, k, s)
		}
		for w := range accs {
			jtf[j] += accs[w].b[j]
		}
	}
}

// Problem returns the least-squares Problem; normal selects the normal
// equations path (Problem.Normal) instead of the QR path (Problem.Jac).
func (sp *SaddleProblem) Problem(normal bool) *Problem {
	p := &Problem{M: len(sp.Points), Func: sp.Func, Accept: sp.Accept}
	if normal {
		p.Normal = sp.Normal
	} else {
		p.Jac = sp.Jac
	}
	return p
}

// expRot returns the rotation matrix Exp(ω) (Rodrigues' formula).
func expRot(w r3.Vec) [3][3]float64 {
	th := r3.Norm(w)
	var a, b float64 // sin θ/θ, (1 − cos θ)/θ²
	if th < 1e-4 {
		a = 1 - th*th/6
		b = 0.5 - th*th/24
	} else {
		a = math.Sin(th) / th
		b = (1 - math.Cos(th)) / (th * th)
	}
	k := [3][3]float64{{0, -w.Z, w.Y}, {w.Z, 0, -w.X}, {-w.Y, w.X, 0}}
	var r [3][3]float64
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			kk := 0.0
			for l := 0; l < 3; l++ {
				kk += k[i][l] * k[l][j]
			}
			r[i][j] = a*k[i][j] + b*kk
			if i == j {
				r[i][j]++
			}
		}
	}
	return r
}

// orthonormalise re-orthonormalises a nearly orthonormal right-handed frame
// (Gram–Schmidt on x, then y, z = x × y).
func orthonormalise(a [3]r3.Vec) [3]r3.Vec {
	x := r3.Unit(a[0])
	y := r3.Unit(r3.Sub(a[1], r3.Scale(r3.Dot(a[1], x), x)))
	return [3]r3.Vec{x, y, r3.Cross(x, y)}
}
