package fit

import (
	"errors"
	"fmt"
	"math"
	"runtime"

	"gonum.org/v1/gonum/mat"
)

// Problem is a nonlinear least-squares problem
//
//	minimise S(x) = Σᵢ fᵢ(x)²,   f: ℝⁿ → ℝᵐ,   m ≥ n,
//
// given by function fields in the manner of gonum's optimize.Problem.
//
// Func and exactly one of Jac or Normal are required.
type Problem struct {
	// M is the number of residuals m (m ≥ n).
	M int

	// Func writes the m residuals f(x) into dst.
	Func func(dst, x []float64)

	// Jac writes the m×n Jacobian Jᵢⱼ = ∂fᵢ/∂xⱼ at x into dst. The solver
	// reduces it to triangular form with orthogonal (Givens) row updates,
	// which keeps full accuracy on ill-conditioned problems; rows are
	// folded in parallel blocks when m is large.
	Jac func(dst *mat.Dense, x []float64)

	// Normal, used when Jac is nil, accumulates the normal equations at x:
	// it writes JᵀJ (n×n) into jtj and Jᵀf into jtf. The solver takes the
	// Cholesky factor R of JᵀJ in place of the QR factor of J. The relative
	// accuracy of the step is then about cond(J)²·ε instead of cond(J)·ε, so
	// use it only for well-conditioned problems with m ≫ n, where it avoids
	// storing J (see SaddleProblem for the accuracy argument).
	Normal func(jtj *mat.SymDense, jtf []float64, x []float64)

	// Accept, if not nil, is called after each accepted step with the new x.
	// It may re-parameterise x in place, provided f(x) does not change (the
	// saddle fit folds its small rotation into its axes here).
	Accept func(x []float64)
}

// Settings control Levenberg–Marquardt. A nil *Settings means all defaults.
type Settings struct {
	// FTol ends the iteration when both the actual and the predicted relative
	// reductions of S are at most FTol. Zero means 1e-10.
	FTol float64
	// XTol ends the iteration when the trust-region radius Δ satisfies
	// Δ ≤ XTol·‖D·x‖. Zero means 1e-10.
	XTol float64
	// GTol ends the iteration when the cosine of the angle between f and any
	// column of J is at most GTol. Zero disables this test (as MINPACK's
	// default gtol = 0).
	GTol float64
	// MaxEvaluations bounds the number of calls of Func. Zero means 200·(n+1).
	MaxEvaluations int
	// InitialStepBound is MINPACK's factor: the first trust radius is
	// Δ₀ = factor·‖D·x₀‖ (or factor when that is zero). Zero means 100.
	InitialStepBound float64
	// ScaleDiag, if not nil, holds n fixed positive scale factors D
	// (MINPACK mode 2). Nil means automatic scaling from the Jacobian's
	// column norms, Dⱼ = max over iterations of ‖J·eⱼ‖ (mode 1).
	ScaleDiag []float64
}

// Status says why Levenberg–Marquardt stopped.
type Status int

// Status values. The first five are convergence (Err returns nil).
const (
	NotTerminated  Status = iota
	ZeroResidual          // S(x) = 0 exactly
	FTolConverged         // relative reduction of S at most FTol
	XTolConverged         // relative step at most XTol
	FXTolConverged        // both FTol and XTol
	GTolConverged         // f orthogonal to the columns of J within GTol
	MaxEvaluations        // MaxEvaluations calls of Func
	FTolTooSmall          // no further reduction of S is possible
	XTolTooSmall          // no further improvement of x is possible
	GTolTooSmall          // f is orthogonal to J to machine precision
	NonFinite             // Func or the Jacobian produced NaN or Inf
)

var statusNames = [...]string{
	NotTerminated:  "NotTerminated",
	ZeroResidual:   "ZeroResidual",
	FTolConverged:  "FTolConverged",
	XTolConverged:  "XTolConverged",
	FXTolConverged: "FXTolConverged",
	GTolConverged:  "GTolConverged",
	MaxEvaluations: "MaxEvaluations",
	FTolTooSmall:   "FTolTooSmall",
	XTolTooSmall:   "XTolTooSmall",
	GTolTooSmall:   "GTolTooSmall",
	NonFinite:      "NonFinite",
}

// String returns the status name.
func (s Status) String() string {
	if s >= 0 && int(s) < len(statusNames) {
		return statusNames[s]
	}
	return fmt.Sprintf("Status(%d)", int(s))
}

// ErrNotConverged is wrapped by Status.Err for every non-converged status.
var ErrNotConverged = errors.New("fit: least squares did not converge")

// Err returns nil for a converged status and an error wrapping
// ErrNotConverged otherwise. The "too small" statuses mean the tolerances
// could not be met in floating point; x is then usually at the minimum, so
// callers that only need a good x may accept them.
func (s Status) Err() error {
	switch s {
	case ZeroResidual, FTolConverged, XTolConverged, FXTolConverged, GTolConverged:
		return nil
	}
	return fmt.Errorf("%w: %v", ErrNotConverged, s)
}

// Result is the outcome of Levenberg–Marquardt.
type Result struct {
	X           []float64 // final parameters
	Cost        float64   // S(X) = Σ fᵢ², sum of squared residuals
	Status      Status
	Iterations  int // Jacobian evaluations (outer iterations)
	Evaluations int // calls of Func
}

// LevenbergMarquardt minimises Σ fᵢ(x)² from x0 (not modified) with the
// trust-region Levenberg–Marquardt method as implemented in MINPACK's
// lmder (Moré 1978):
//
//   - scaled damping: the step p solves min ‖J·p + f‖ subject to
//     ‖D·p‖ ≤ Δ, which equals the damped system
//     [J; √λ·D]·p ≈ [−f; 0] for the λ ≥ 0 found by a safeguarded Newton
//     iteration on ‖D·p(λ)‖ − Δ (MINPACK lmpar);
//   - the damped system is solved by orthogonal factorisation, never by
//     normal equations: J = Q·R once per iteration, then the 2n×n system
//     [R; √λ·D] is reduced by Givens rotations (MINPACK qrsolv), which is
//     the QR of the augmented [J; √λ·D] up to the orthogonal factor Q;
//   - Δ is updated from the ratio ρ of actual to predicted reduction
//     (shrunk for ρ ≤ ¼, doubled for ρ ≥ ¾), the step is taken when
//     ρ ≥ 10⁻⁴;
//   - the ftol, xtol and gtol tests of lmder.
//
// The QR factorisation is computed without column pivoting; a rank-deficient
// R is handled by never taking an undamped step (λ > 0 always), which keeps
// the damped system nonsingular.
//
// It returns an error only when the residuals at x0 are not finite;
// convergence is reported in Result.Status. Misuse (no Func, no Jacobian,
// M < n, a ScaleDiag of the wrong length) panics. Residuals that become
// non-finite at a trial point count as a failed step (the trust region
// shrinks), so a Func may return +Inf outside its domain.
//
// References:
//
//	Moré, J.J. (1978). The Levenberg–Marquardt algorithm: implementation and
//	theory. In: Numerical Analysis, Lecture Notes in Mathematics 630,
//	pp. 105–116. Springer.
func LevenbergMarquardt(p *Problem, x0 []float64, s *Settings) (*Result, error) {
	n := len(x0)
	m := p.M
	if p.Func == nil || (p.Jac == nil && p.Normal == nil) {
		panic("fit: Problem needs Func and Jac or Normal")
	}
	if n == 0 || m < n {
		panic("fit: Problem needs 0 < n ≤ M")
	}
	set := Settings{}
	if s != nil {
		set = *s
	}
	if set.FTol == 0 {
		set.FTol = 1e-10
	}
	if set.XTol == 0 {
		set.XTol = 1e-10
	}
	if set.MaxEvaluations == 0 {
		set.MaxEvaluations = 200 * (n + 1)
	}
	if set.InitialStepBound == 0 {
		set.InitialStepBound = 100
	}
	if set.ScaleDiag != nil && len(set.ScaleDiag) != n {
		panic("fit: len(ScaleDiag) != n")
	}
	const epsmch = 0x1p-52

	x := append([]float64(nil), x0...)
	f := make([]float64, m)
	ftrial := make([]float64, m)
	xtrial := make([]float64, n)
	res := &Result{X: x}

	p.Func(f, x)
	res.Evaluations = 1
	fnorm := enorm(f)
	if !isFinite(fnorm) {
		return res, errors.New("fit: residuals are not finite at the starting point")
	}
	res.Cost = fnorm * fnorm
	if fnorm == 0 {
		res.Status = ZeroResidual
		return res, nil
	}

	var jac *mat.Dense
	var jtj *mat.SymDense
	var jtf []float64
	if p.Jac != nil {
		jac = mat.NewDense(m, n, nil)
	} else {
		jtj = mat.NewSymDense(n, nil)
		jtf = make([]float64, n)
	}
	r := make([]float64, n*n) // upper triangular R, row-major
	qtf := make([]float64, n)
	acnorm := make([]float64, n)
	diag := make([]float64, n)
	step := make([]float64, n)
	wa := make([]float64, n)
	lp := newLMPar(n)

	var par, delta, xnorm float64
	for iter := 1; ; iter++ {
		res.Iterations = iter
		// Reduce J to R and Qᵀf.
		var ok bool
		if jac != nil {
			p.Jac(jac, x)
			ok = reduceQR(r, qtf, acnorm, jac, f)
		} else {
			p.Normal(jtj, jtf, x)
			ok = reduceNormal(r, qtf, acnorm, jtj, jtf)
		}
		if !ok {
			res.Status = NonFinite
			return res, nil
		}
		if iter == 1 {
			if set.ScaleDiag != nil {
				copy(diag, set.ScaleDiag)
			} else {
				for j := range diag {
					diag[j] = acnorm[j]
					if diag[j] == 0 {
						diag[j] = 1
					}
				}
			}
			xnorm = scaledNorm(diag, x)
			delta = set.InitialStepBound * xnorm
			if delta == 0 {
				delta = set.InitialStepBound
			}
		}
		// Scaled gradient norm: max_j |cos(f, J·eⱼ)|.
		gnorm := 0.0
		for j := 0; j < n; j++ {
			if acnorm[j] == 0 {
				continue
			}
			sum := 0.0
			for i := 0; i <= j; i++ {
				sum += r[i*n+j] * (qtf[i] / fnorm)
			}
			gnorm = math.Max(gnorm, math.Abs(sum/acnorm[j]))
		}
		if gnorm <= set.GTol {
			res.Status = GTolConverged
			return res, nil
		}
		if set.ScaleDiag == nil {
			for j := range diag {
				diag[j] = math.Max(diag[j], acnorm[j])
			}
		}

		for {
			par = lp.solve(step, r, diag, qtf, delta, par)
			for j := range xtrial {
				xtrial[j] = x[j] + step[j]
			}
			pnorm := scaledNorm(diag, step)
			if iter == 1 {
				delta = math.Min(delta, pnorm)
			}
			p.Func(ftrial, xtrial)
			res.Evaluations++
			fnorm1 := enorm(ftrial)
			if !isFinite(fnorm1) {
				fnorm1 = math.Inf(1)
			}
			actred := -1.0
			if 0.1*fnorm1 < fnorm {
				t := fnorm1 / fnorm
				actred = 1 - t*t
			}
			// Predicted reduction from the linear model.
			for i := 0; i < n; i++ {
				sum := 0.0
				for j := i; j < n; j++ {
					sum += r[i*n+j] * step[j]
				}
				wa[i] = sum
			}
			temp1 := enorm(wa) / fnorm
			temp2 := math.Sqrt(par) * pnorm / fnorm
			prered := temp1*temp1 + temp2*temp2/0.5
			dirder := -(temp1*temp1 + temp2*temp2)
			ratio := 0.0
			if prered != 0 {
				ratio = actred / prered
			}
			switch {
			case ratio <= 0.25:
				var t float64
				if actred >= 0 {
					t = 0.5
				} else {
					t = 0.5 * dirder / (dirder + 0.5*actred)
				}
				if 0.1*fnorm1 >= fnorm || t < 0.1 {
					t = 0.1
				}
				delta = t * math.Min(delta, pnorm/0.1)
				par /= t
			case par == 0 || ratio >= 0.75:
				delta = pnorm / 0.5
				par *= 0.5
			}
			if ratio >= 1e-4 {
				copy(x, xtrial)
				copy(f, ftrial)
				fnorm = fnorm1
				res.Cost = fnorm * fnorm
				if p.Accept != nil {
					p.Accept(x)
				}
				xnorm = scaledNorm(diag, x)
			}
			st := NotTerminated
			if math.Abs(actred) <= set.FTol && prered <= set.FTol && 0.5*ratio <= 1 {
				st = FTolConverged
			}
			if delta <= set.XTol*xnorm {
				if st == FTolConverged {
					st = FXTolConverged
				} else {
					st = XTolConverged
				}
			}
			if fnorm == 0 {
				st = ZeroResidual
			}
			if st == NotTerminated {
				switch {
				case res.Evaluations >= set.MaxEvaluations:
					st = MaxEvaluations
				case math.Abs(actred) <= epsmch && prered <= epsmch && 0.5*ratio <= 1:
					st = FTolTooSmall
				case delta <= epsmch*xnorm:
					st = XTolTooSmall
				case gnorm <= epsmch:
					st = GTolTooSmall
				}
			}
			if st != NotTerminated {
				res.Status = st
				return res, nil
			}
			if ratio >= 1e-4 {
				break
			}
		}
	}
}

// reduceQR computes the upper triangular R (row-major n×n) and qtf = first n
// components of Qᵀf for J = Q·R, and the column norms of J. Rows are folded
// into R by Givens rotations (MINPACK rwupdt), in parallel blocks for large
// m with the partial factors merged the same way. It reports false when J or
// f is not finite.
func reduceQR(r, qtf, acnorm []float64, jac *mat.Dense, f []float64) bool {
	m, n := jac.Dims()
	raw := jac.RawMatrix()
	workers := 1
	if m >= 1<<15 {
		workers = runtime.GOMAXPROCS(0)
	}
	// Part 0 accumulates into the outputs; the others into their own.
	type part struct{ r, qtf, sq, row []float64 }
	parts := make([]part, workers)
	for w := range parts {
		if w == 0 {
			clear(r)
			clear(qtf)
			clear(acnorm)
			parts[0] = part{r, qtf, acnorm, make([]float64, n)}
			continue
		}
		parts[w] = part{make([]float64, n*n), make([]float64, n), make([]float64, n), make([]float64, n)}
	}
	parallelBlocksN(m, workers, func(w, lo, hi int) {
		pt := parts[w]
		for i := lo; i < hi; i++ {
			copy(pt.row, raw.Data[i*raw.Stride:i*raw.Stride+n])
			for j, v := range pt.row {
				pt.sq[j] += v * v
			}
			foldRow(pt.r, pt.qtf, n, pt.row, f[i])
		}
	})
	row := parts[0].row
	for _, pt := range parts[1:] {
		for i := 0; i < n; i++ {
			copy(row, pt.r[i*n:i*n+n])
			foldRow(r, qtf, n, row, pt.qtf[i])
		}
		for j := range acnorm {
			acnorm[j] += pt.sq[j]
		}
	}
	ok := true
	for j := range acnorm {
		acnorm[j] = math.Sqrt(acnorm[j])
		ok = ok && isFinite(acnorm[j]) && isFinite(qtf[j])
	}
	return ok
}

// reduceNormal takes R as the Cholesky factor of JᵀJ (so RᵀR = JᵀJ, as for
// the QR factor of J) and qtf = R⁻ᵀ·Jᵀf. A singular JᵀJ gets a ridge of
// n·ε·max diag added before factorising.
func reduceNormal(r, qtf, acnorm []float64, jtj *mat.SymDense, jtf []float64) bool {
	n := len(qtf)
	maxd := 0.0
	for j := 0; j < n; j++ {
		d := jtj.At(j, j)
		if !isFinite(d) || !isFinite(jtf[j]) {
			return false
		}
		acnorm[j] = math.Sqrt(d)
		maxd = math.Max(maxd, d)
	}
	var ch mat.Cholesky
	if !ch.Factorize(jtj) {
		a := mat.NewSymDense(n, nil)
		a.CopySym(jtj)
		ridge := float64(n) * 0x1p-52 * maxd
		for ridge > 0 {
			for j := 0; j < n; j++ {
				a.SetSym(j, j, jtj.At(j, j)+ridge)
			}
			if ch.Factorize(a) {
				break
			}
			ridge *= 16
		}
		if ridge == 0 {
			return false
		}
	}
	var u mat.TriDense
	ch.UTo(&u)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			r[i*n+j] = u.At(i, j)
		}
	}
	// Solve Rᵀ·qtf = Jᵀf by forward substitution.
	for i := 0; i < n; i++ {
		s := jtf[i]
		for k := 0; k < i; k++ {
			s -= r[k*n+i] * qtf[k]
		}
		qtf[i] = s / r[i*n+i]
	}
	return true
}

// foldRow adds the row w (length n, destroyed) with right-hand side b to the
// triangular system (r, qtf) by Givens rotations, so that the new
// RᵀR = old RᵀR + wwᵀ and the residual norm is preserved.
func foldRow(r, qtf []float64, n int, w []float64, b float64) {
	for j := 0; j < n; j++ {
		wj := w[j]
		if wj == 0 {
			continue
		}
		rjj := r[j*n+j]
		var c, s float64
		if math.Abs(rjj) < math.Abs(wj) {
			cot := rjj / wj
			s = 0.5 / math.Sqrt(0.25+0.25*cot*cot)
			c = s * cot
		} else {
			tan := wj / rjj
			c = 0.5 / math.Sqrt(0.25+0.25*tan*tan)
			s = c * tan
		}
		row := r[j*n : j*n+n]
		for k := j; k < n; k++ {
			rk, wk := row[k], w[k]
			row[k] = c*rk + s*wk
			w[k] = -s*rk + c*wk
		}
		q := qtf[j]
		qtf[j] = c*q + s*b
		b = -s*q + c*b
	}
}

// lmPar holds the workspace of the Levenberg–Marquardt parameter search.
type lmPar struct {
	n       int
	s, z, w []float64
	y       []float64
}

func newLMPar(n int) *lmPar {
	return &lmPar{n: n, s: make([]float64, n*n), z: make([]float64, n), w: make([]float64, n), y: make([]float64, n)}
}

// solve finds λ ≥ 0 and the step p (written to dst) with
// [R; √λ·D]·p ≈ [−qtf; 0] and ‖D·p‖ within 10 % of Δ, or λ = 0 when the
// Gauss–Newton step already lies inside the trust region (Moré 1978, §5,
// MINPACK lmpar). par is the previous λ, used as the first guess.
func (lp *lmPar) solve(dst, r, diag, qtf []float64, delta, par float64) float64 {
	n := lp.n
	const dwarf = 0x1p-1022
	// Rank test: a diagonal element below n·ε·max|Rⱼⱼ| counts as zero
	// (the usual rank tolerance of a triangular factor, relative to its norm).
	maxr := 0.0
	for j := 0; j < n; j++ {
		maxr = math.Max(maxr, math.Abs(r[j*n+j]))
	}
	full := maxr > 0
	for j := 0; j < n; j++ {
		if math.Abs(r[j*n+j]) <= float64(n)*0x1p-52*maxr {
			full = false
		}
	}
	x := lp.z
	parl := 0.0
	var fp, dxnorm float64
	if full {
		backSolve(x, r, qtf, n)
		dxnorm = scaledNorm(diag, x)
		fp = dxnorm - delta
		if fp <= 0.1*delta {
			for j := range dst {
				dst[j] = -x[j]
			}
			return 0
		}
		for j := 0; j < n; j++ {
			lp.w[j] = diag[j] * (diag[j] * x[j] / dxnorm)
		}
		forwardSolveT(lp.y, r, lp.w, n)
		yn := enorm(lp.y)
		parl = fp / delta / (yn * yn)
	}
	// Upper bound from the scaled gradient Rᵀ·qtf.
	for j := 0; j < n; j++ {
		sum := 0.0
		for i := 0; i <= j; i++ {
			sum += r[i*n+j] * qtf[i]
		}
		lp.w[j] = sum / diag[j]
	}
	gnorm := enorm(lp.w)
	paru := gnorm / delta
	if paru == 0 {
		paru = dwarf / math.Min(delta, 0.1)
	}
	par = math.Max(par, parl)
	par = math.Min(par, paru)
	if par == 0 {
		if full {
			par = gnorm / dxnorm
		} else {
			par = 0.001 * paru
		}
	}
	for it := 1; ; it++ {
		if par == 0 {
			par = math.Max(dwarf, 0.001*paru)
		}
		lp.damped(x, r, diag, qtf, math.Sqrt(par))
		dxnorm = scaledNorm(diag, x)
		temp := fp
		fp = dxnorm - delta
		if !full && it == 1 {
			temp = 0 // no Gauss–Newton value to compare with
		}
		if math.Abs(fp) <= 0.1*delta || (parl == 0 && fp <= temp && temp < 0) || it == 10 {
			break
		}
		for j := 0; j < n; j++ {
			lp.w[j] = diag[j] * (diag[j] * x[j] / dxnorm)
		}
		forwardSolveT(lp.y, lp.s, lp.w, n)
		yn := enorm(lp.y)
		parc := fp / delta / (yn * yn)
		if fp > 0 {
			parl = math.Max(parl, par)
		}
		if fp < 0 {
			paru = math.Min(paru, par)
		}
		par = math.Max(parl, par+parc)
	}
	for j := range dst {
		dst[j] = -x[j]
	}
	return par
}

// damped solves the least-squares system [R; a·D]·x ≈ [qtf; 0] by folding
// the rows a·Dⱼ·eⱼ into a copy S of R with Givens rotations (MINPACK
// qrsolv), leaving the triangular factor S in lp.s.
func (lp *lmPar) damped(x, r, diag, qtf []float64, a float64) {
	n := lp.n
	copy(lp.s, r)
	copy(x, qtf)
	row := lp.w
	for j := 0; j < n; j++ {
		for k := range row {
			row[k] = 0
		}
		row[j] = a * diag[j]
		foldRow(lp.s, x, n, row, 0)
	}
	backSolve(x, lp.s, x, n)
}

// backSolve solves the upper triangular U·x = b (row-major U); zero
// diagonal elements give zero components (least-squares convention).
func backSolve(x, u, b []float64, n int) {
	for i := n - 1; i >= 0; i-- {
		s := b[i]
		for k := i + 1; k < n; k++ {
			s -= u[i*n+k] * x[k]
		}
		if u[i*n+i] == 0 {
			x[i] = 0
			continue
		}
		x[i] = s / u[i*n+i]
	}
}

// forwardSolveT solves Uᵀ·y = b for upper triangular U (row-major).
func forwardSolveT(y, u, b []float64, n int) {
	for i := 0; i < n; i++ {
		s := b[i]
		for k := 0; k < i; k++ {
			s -= u[k*n+i] * y[k]
		}
		if u[i*n+i] == 0 {
			y[i] = 0
			continue
		}
		y[i] = s / u[i*n+i]
	}
}

// enorm returns the Euclidean norm of v. The plain sum of squares is used
// when it neither overflows nor underflows; otherwise a scaled sum.
func enorm(v []float64) float64 {
	ss := 0.0
	for _, x := range v {
		ss += x * x
	}
	if ss > 0x1p-900 && ss < 0x1p900 {
		return math.Sqrt(ss)
	}
	if math.IsNaN(ss) {
		return ss
	}
	scale, ssq := 0.0, 1.0
	for _, x := range v {
		if x == 0 {
			continue
		}
		a := math.Abs(x)
		if scale < a {
			ssq = 1 + ssq*(scale/a)*(scale/a)
			scale = a
		} else {
			ssq += (a / scale) * (a / scale)
		}
	}
	return scale * math.Sqrt(ssq)
}

func scaledNorm(d, x []float64) float64 {
	s := 0.0
	for j := range x {
		v := d[j] * x[j]
		s += v * v
	}
	return math.Sqrt(s)
}

func isFinite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
