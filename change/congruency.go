package change

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// RankTol is the relative singular-value threshold of the pseudo-inverse in
// Congruency: a singular value s of Q counts towards its rank when
//
//	s > RankTol · s_max.
//
// Derivation: a covariance matrix formed in float64 as (JᵀWJ)⁻¹ carries a
// relative rounding error of about κ·ε (ε = 2.2·10⁻¹⁶, κ the condition
// number of JᵀWJ); the saddle fits of this project are centred on a local
// origin and scaled so that κ stays below about 10⁶, giving about 2·10⁻¹⁰.
// A datum defect, by contrast, leaves singular values at rounding level
// relative to s_max. 10⁻⁹ separates the two with margin on both sides
// (common practice; the LAPACK/NumPy default max(m,n)·ε·s_max is too strict
// for covariances that went through an inversion).
const RankTol = 1e-9

// Status says how a congruency test ended.
type Status int

const (
	// Tested means the test ran; read Reject.
	Tested Status = iota
	// NothingTestable means Q has rank zero (or d is empty): no parameter
	// difference is determinable and nothing was tested.
	NothingTestable
)

func (s Status) String() string {
	switch s {
	case Tested:
		return "tested"
	case NothingTestable:
		return "nothing testable"
	}
	return fmt.Sprintf("Status(%d)", int(s))
}

// CongruencyResult is the outcome of the global congruency test and its
// per-parameter localisation.
type CongruencyResult struct {
	Status Status
	// T is the test statistic Δθᵀ Q⁺ Δθ / (h·σ̂0²).
	T float64
	// Rank is h = rank Q (the numerator degrees of freedom).
	Rank int
	// Dof is f, the denominator degrees of freedom; 0 means infinite (the
	// variance factor is known), when h·T ~ χ²(h).
	Dof int
	// S0sq is the variance factor σ̂0² used.
	S0sq float64
	// Alpha is the significance level (type I error probability).
	Alpha float64
	// Critical is the upper α quantile F_{1−α}(h, f) (χ²_{1−α}(h)/h when f is
	// infinite).
	Critical float64
	// P is the probability of a statistic at least as large as T when
	// nothing changed.
	P float64
	// Reject reports T > Critical: the epochs are not congruent, a change is
	// detected at level Alpha.
	Reject bool
	// Params holds the localisation, one entry per element of d.
	Params []ParamTest
}

// ParamTest is the marginal test of one parameter difference:
//
//	t_i = Δθ_i / sqrt(σ̂0² · q_ii),   compared with t_{1−α/2}(f).
type ParamTest struct {
	Delta float64 // Δθ_i
	U     float64 // standard uncertainty sqrt(σ̂0²·q_ii); 0 if q_ii ≤ 0
	T     float64 // Δθ_i / U; NaN when U is 0
	// Critical is the two-sided t quantile t_{1−α/2}(f) (normal quantile for
	// infinite f).
	Critical float64
	// Significant reports |T| > Critical on its own (marginal test).
	Significant bool
	// Changed reports that the global test rejected and this parameter is
	// marginally significant: it is where the change is localised.
	Changed bool
}

// Congruency runs the global congruency test of geodetic deformation analysis
// on the parameter difference d = θ2 − θ1 with cofactor (or covariance)
// matrix q = Q1 + Q2 of two independent epochs:
//
//	T = Δθᵀ Q⁺ Δθ / (h · σ̂0²)  ~  F(h, f)   under H0: θ1 = θ2,
//
// where Q⁺ is the Moore–Penrose pseudo-inverse of q (by SVD, ranks counted
// with RankTol), h = rank q and f = f1 + f2 the summed residual degrees of
// freedom of both fits. H0 is rejected when T > F_{1−α}(h, f).
//
// Scaling: pass q as the sum of cofactor matrices and s0sq as the pooled
// a-posteriori variance factor σ̂0² = (f1·s1² + f2·s2²)/(f1 + f2); or pass q
// as the sum of covariance matrices already scaled by each fit's own
// variance factor and s0sq = 1, in which case the F distribution is an
// approximation (Difference builds either form). dof ≤ 0 means the variance
// factor is known a priori (f = ∞): then h·T ~ χ²(h).
//
// Localisation follows with per-parameter tests (ParamTest). The marginal
// tests are run at the same α each, without multiplicity correction; a
// parameter counts as Changed only when the global test rejects.
//
// Congruency panics if len(d) differs from the order of q, if s0sq is not
// positive and finite, or if alpha is not in (0, 1).
//
// References: Pelzer (1971), DGK C 164; Niemeier, Ausgleichungsrechnung,
// deformation analysis chapter (global test, then localisation).
func Congruency(d []float64, q *mat.SymDense, s0sq float64, dof int, alpha float64) CongruencyResult {
	n := len(d)
	if q == nil || q.SymmetricDim() != n {
		panic("change: Congruency: len(d) differs from the order of q")
	}
	if !(s0sq > 0) || math.IsInf(s0sq, 0) {
		panic("change: Congruency: s0sq must be positive and finite")
	}
	if !(alpha > 0 && alpha < 1) {
		panic("change: Congruency: alpha must be in (0, 1)")
	}
	if dof < 0 {
		dof = 0
	}
	res := CongruencyResult{S0sq: s0sq, Dof: dof, Alpha: alpha, Params: make([]ParamTest, n)}
	tcrit := tQuantile(1-alpha/2, dof)
	for i := range res.Params {
		p := &res.Params[i]
		p.Delta = d[i]
		p.Critical = tcrit
		p.T = math.NaN()
		if qi := q.At(i, i); qi > 0 {
			p.U = math.Sqrt(s0sq * qi)
			p.T = d[i] / p.U
			p.Significant = math.Abs(p.T) > tcrit
		}
	}
	if n == 0 {
		res.Status = NothingTestable
		return res
	}
	quad, h := pinvQuad(d, q)
	res.Rank = h
	if h == 0 {
		res.Status = NothingTestable
		return res
	}
	res.T = quad / (float64(h) * s0sq)
	if dof == 0 {
		chi := distuv.ChiSquared{K: float64(h)}
		res.Critical = chi.Quantile(1-alpha) / float64(h)
		res.P = chi.Survival(res.T * float64(h))
	} else {
		f := distuv.F{D1: float64(h), D2: float64(dof)}
		res.Critical = f.Quantile(1 - alpha)
		res.P = f.Survival(res.T)
	}
	res.Reject = res.T > res.Critical
	for i := range res.Params {
		res.Params[i].Changed = res.Reject && res.Params[i].Significant
	}
	return res
}

// pinvQuad returns dᵀ Q⁺ d and rank Q, from the eigen-decomposition
// (= SVD of a symmetric positive semi-definite matrix) Q = V S Vᵀ:
// dᵀ Q⁺ d = Σ_{s_k > tol} (v_kᵀ d)² / s_k.
func pinvQuad(d []float64, q *mat.SymDense) (float64, int) {
	var svd mat.SVD
	if !svd.Factorize(q, mat.SVDThin) {
		return 0, 0
	}
	s := svd.Values(nil)
	var v mat.Dense
	svd.VTo(&v)
	tol := RankTol * s[0]
	var sum float64
	h := 0
	for k, sk := range s {
		if !(sk > tol) || sk <= 0 {
			continue
		}
		h++
		var dot float64
		for i := range d {
			dot += v.At(i, k) * d[i]
		}
		sum += dot * dot / sk
	}
	return sum, h
}

// tQuantile returns the p quantile of Student's t with dof degrees of
// freedom, or of the standard normal for dof ≤ 0 (infinite).
func tQuantile(p float64, dof int) float64 {
	if dof <= 0 {
		return distuv.UnitNormal.Quantile(p)
	}
	return distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(dof)}.Quantile(p)
}
