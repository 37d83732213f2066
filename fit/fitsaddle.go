package fit

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/spatial/r3"
	"gonum.org/v1/gonum/stat/distuv"

	"saddlecheck/deviation"
)

// SaddleSettings control FitSaddle. A nil *SaddleSettings means all
// defaults.
type SaddleSettings struct {
	// Start, if not nil, is the starting saddle (the design pose, site
	// coordinates). The general-quadric RANSAC is then skipped: the robust
	// step only separates the outliers by their distance to Start, first
	// about the median distance (so a placement offset of the whole
	// surface does not empty the inlier set), then to each refit.
	Start *deviation.Saddle
	// Up is the side the local z axis is turned to when the start comes
	// from the quadric fit. Zero means site +Z.
	Up r3.Vec
	// Threshold is the inlier threshold in metres (applied to |d| from the
	// current fit; in the first round from a Start to |d − median d|).
	// Zero means estimated:
	// ThresholdFactor times the robust noise estimate 1.4826·median|d| of
	// the current model's inliers, iterated to a fixed point.
	Threshold float64
	// ThresholdFactor; zero means 3.
	ThresholdFactor float64
	// Seed of the RANSAC random source. Zero means DefaultSeed.
	Seed uint64
	// Rand, if not nil, replaces the seeded source.
	Rand *rand.Rand
	// Confidence of RANSAC's adaptive sample count. Zero means 0.999.
	Confidence float64
	// ScoreSample is RANSAC's scoring subsample size (see RANSACSettings).
	ScoreSample int
	// Robust selects reweighting after the inlier selection: "" or "none"
	// (plain least squares on the inliers), "huber" or "tukey" (IRLS).
	Robust string
	// LM are the solver settings. Nil means FTol = XTol = 1e-10.
	LM *Settings
	// CoarseSample is the number of inliers, drawn at random, on which the
	// intermediate re-gating rounds are solved before the final solve on
	// all inliers. Zero means 65536; negative means always use all.
	CoarseSample int
}

// Estimate is a fitted quantity with its standard uncertainty and 95 %
// interval Value ± t₀.₉₇₅(ν)·U.
type Estimate struct {
	Value float64 `json:"value"`
	U     float64 `json:"u"`
	Lo95  float64 `json:"lo95"`
	Hi95  float64 `json:"hi95"`
}

// SaddleResult is the outcome of FitSaddle. Lengths are metres, K in 1/m,
// angles in radians.
type SaddleResult struct {
	Saddle deviation.Saddle // as-built saddle, site coordinates

	K1, K2  Estimate
	Origin  [3]Estimate // the saddle point, site X, Y, Z
	AxesU   [3]float64  // standard angular uncertainty of each axis direction
	Pivot   r3.Vec      // site point about which ω and t are defined (inlier centroid)
	ParCov  *mat.SymDense
	ParCorr *mat.SymDense // correlation matrix of the 8 parameters
	// OriginCov is the 3×3 covariance of Origin (site frame).
	OriginCov *mat.SymDense

	Sigma     float64 // σ̂ = √(SSR/(n − 8)), metres
	RMS       float64 // RMS of the inlier residuals, metres
	DOF       int     // n − 8
	TQuantile float64 // t₀.₉₇₅(DOF)

	Residuals   []float64 // signed orthogonal distance of every point
	Inliers     []bool    // parallel to the input points
	NumInliers  int
	NumOutliers int
	Threshold   float64

	Class            Classification // of the Taubin quadric of the inliers
	Solver           Result         // final Levenberg–Marquardt run
	Seed             uint64
	RANSACIterations int // 0 when Start was given
	Rounds           int // re-gating rounds
	Robust           string
	IRLSIterations   int
}

// Errors of FitSaddle.
var (
	ErrNotFinitePoint = errors.New("fit: point coordinates not finite")
	ErrRobust         = errors.New("fit: unknown robust reweighting")
)

// FitSaddle fits a hyperbolic paraboloid to survey points that may contain
// outliers (scaffolding, people, props, the ground). pts (site
// coordinates) are not modified; outliers are marked in Inliers, never
// removed.
//
// Steps:
//  1. Centre the points on a local origin (their centroid).
//  2. Start: s.Start if given (the design pose); otherwise RANSAC on the
//     general quadric (QuadricModel, hypotheses restricted to the saddle
//     family by SaddleFamily) and NearestSaddle of the winner.
//  3. Robust inlier selection by the distance to the current saddle, then
//     up to five rounds of: Levenberg–Marquardt on the inliers (on a random
//     CoarseSample of them until the inlier set settles, then on all),
//     re-estimation of the threshold, re-selection.
//  4. Optional IRLS with Huber or Tukey weights.
//  5. Covariance σ̂²(JᵀWJ)⁻¹ with σ̂² = SSR/(n − 8), standard
//     uncertainties and 95 % intervals with the Student t quantile
//     (ν = n − 8).
func FitSaddle(pts []r3.Vec, s *SaddleSettings) (*SaddleResult, error) {
	set := SaddleSettings{}
	if s != nil {
		set = *s
	}
	if set.ThresholdFactor == 0 {
		set.ThresholdFactor = 3
	}
	if set.Seed == 0 {
		set.Seed = DefaultSeed
	}
	if set.CoarseSample == 0 {
		set.CoarseSample = 1 << 16
	}
	lm := Settings{FTol: 1e-10, XTol: 1e-10}
	if set.LM != nil {
		lm = *set.LM
	}
	switch set.Robust {
	case "", "none", "huber", "tukey":
	default:
		return nil, fmt.Errorf("%w %q (want none, huber or tukey)", ErrRobust, set.Robust)
	}
	n := len(pts)
	if n < 2*NumSaddlePar {
		return nil, fmt.Errorf("%w: %d points, need at least %d", ErrTooFewPoints, n, 2*NumSaddlePar)
	}
	for i, p := range pts {
		if !isFinite(p.X) || !isFinite(p.Y) || !isFinite(p.Z) {
			return nil, fmt.Errorf("%w: point %d", ErrNotFinitePoint, i)
		}
	}
	// 1. Local origin: the centroid, summed relative to the first point.
	var sum r3.Vec
	for _, p := range pts {
		sum = r3.Add(sum, r3.Sub(p, pts[0]))
	}
	local := r3.Add(pts[0], r3.Scale(1/float64(n), sum))
	loc := make([]r3.Vec, n)
	for i, p := range pts {
		loc[i] = r3.Sub(p, local)
	}
	res := &SaddleResult{Seed: set.Seed, Robust: set.Robust}
	if res.Robust == "" {
		res.Robust = "none"
	}

	// 2. Start.
	var cur deviation.Saddle
	T := set.Threshold
	resid := make([]float64, n)
	absd := make([]float64, n)
	if set.Start != nil {
		if err := set.Start.Validate(); err != nil {
			return nil, fmt.Errorf("fit: start: %w", err)
		}
		cur = *set.Start
		cur.Origin = r3.Sub(cur.Origin, local)
	} else {
		model := QuadricModel{Centre: r3.Vec{}, Scale: 1, Accept: SaddleFamily}
		_, model.Scale = normalisation(loc)
		rr, err := RANSAC[Quadric](model, loc, &RANSACSettings{
			Threshold: set.Threshold, ThresholdFactor: set.ThresholdFactor, Confidence: set.Confidence,
			ScoreSample: set.ScoreSample, Seed: set.Seed, Rand: set.Rand,
		})
		if err != nil {
			return nil, err
		}
		res.RANSACIterations = rr.Iterations
		cur, err = NearestSaddle(&rr.Model, set.Up)
		if err != nil {
			return nil, fmt.Errorf("fit: start from the quadric: %w", err)
		}
		if T == 0 {
			T = rr.Threshold
		}
	}

	// 3. Robust selection and re-gating rounds.
	signedDistances(resid, loc, &cur)
	if set.Start != nil {
		// The design may be offset from the as-built surface: the first
		// gate is about the median distance, |d − med| < T.
		med := medianOf(resid, absd)
		for i, d := range resid {
			absd[i] = math.Abs(d - med)
			resid[i] = d - med
		}
		if set.Threshold == 0 {
			t0 := set.ThresholdFactor * madScale * medianOf(absd, nil)
			T, _ = robustThreshold(absd, t0, set.ThresholdFactor)
		}
	}
	mask := make([]bool, n)
	for i, d := range resid {
		mask[i] = math.Abs(d) < T
	}
	sub := make([]r3.Vec, 0, n)
	rng := rand.New(rand.NewPCG(set.Seed, 0x5ad)) // coarse subsampling only
	var sol *Result
	var prob *SaddleProblem
	final := false
	for round := 1; round <= 5; round++ {
		res.Rounds = round
		sub = sub[:0]
		cnt := 0
		for i, in := range mask {
			if in {
				cnt++
				sub = append(sub, loc[i])
			}
		}
		if cnt < 2*NumSaddlePar {
			return nil, fmt.Errorf("%w: %d inliers", ErrTooFewPoints, cnt)
		}
		fitPts := sub
		if !final && set.CoarseSample > 0 && cnt > set.CoarseSample {
			fitPts = make([]r3.Vec, set.CoarseSample)
			for i := range fitPts {
				fitPts[i] = sub[rng.IntN(cnt)]
			}
		}
		var err error
		cur, sol, prob, err = solveSaddle(fitPts, nil, &cur, &lm)
		if err != nil {
			return nil, err
		}
		if final {
			// The mask and threshold stay those of the points just solved;
			// the residuals are set after the optional IRLS.
			break
		}
		signedDistances(resid, loc, &cur)
		if set.Threshold == 0 {
			for i, d := range resid {
				absd[i] = math.Abs(d)
			}
			T, _ = robustThreshold(absd, T, set.ThresholdFactor)
		}
		changed := 0
		for i, d := range resid {
			in := math.Abs(d) < T
			if in != mask[i] {
				changed++
				mask[i] = in
			}
		}
		// Settled when under 0.1 % of the inliers change: one last solve
		// on all inliers.
		if changed*1000 <= cnt || round == 4 {
			final = true
		}
	}

	// 4. Optional IRLS.
	var weights []float64
	if res.Robust != "none" {
		weights = make([]float64, len(sub))
		dsub := make([]float64, len(sub))
		prev := cur
		for it := 1; it <= 20; it++ {
			res.IRLSIterations = it
			signedDistances(dsub, sub, &cur)
			irlsWeights(weights, dsub, res.Robust)
			var err error
			cur, sol, prob, err = solveSaddle(sub, weights, &cur, &lm)
			if err != nil {
				return nil, err
			}
			if math.Abs(cur.K1-prev.K1) <= 1e-9*math.Abs(cur.K1) && math.Abs(cur.K2-prev.K2) <= 1e-9*math.Abs(cur.K2) &&
				r3.Norm(r3.Sub(cur.Origin, prev.Origin)) <= 1e-7 {
				break
			}
			prev = cur
		}
	}
	// Residuals of all points: the inliers' come from the last solve (the
	// problem's points are the inliers in order), the others are computed.
	prob.ensure(sol.X)
	j := 0
	for i, in := range mask {
		if in {
			resid[i] = prob.dist[j]
			j++
		}
	}
	parallelBlocks(n, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			if !mask[i] {
				_, resid[i] = cur.ClosestLocal(cur.ToLocal(loc[i]))
			}
		}
	})
	res.Solver = *sol
	res.Threshold = T
	res.Residuals = resid
	res.Inliers = mask
	ss := 0.0
	for i, in := range mask {
		if in {
			res.NumInliers++
			ss += resid[i] * resid[i]
		}
	}
	res.NumOutliers = n - res.NumInliers
	res.RMS = math.Sqrt(ss / float64(res.NumInliers))
	if q, err := FitQuadric(strided(sub, 1<<16)); err == nil {
		res.Class = Classify(&q)
	}

	// 5. Uncertainty at the solution.
	if err := res.uncertainty(prob, sol.X); err != nil {
		return nil, err
	}
	cur.Origin = r3.Add(cur.Origin, local)
	res.Saddle = cur
	res.Pivot = r3.Add(res.Pivot, local)
	for i := 0; i < 3; i++ {
		res.Origin[i].Value = [3]float64{cur.Origin.X, cur.Origin.Y, cur.Origin.Z}[i]
		res.Origin[i].Lo95 += res.Origin[i].Value
		res.Origin[i].Hi95 += res.Origin[i].Value
	}
	return res, nil
}

// solveSaddle runs Levenberg–Marquardt on the centred points from s, using
// the normal-equation path for large sets. It returns the solution, the
// solver result and the problem (whose frame holds the solution).
func solveSaddle(pts []r3.Vec, w []float64, s *deviation.Saddle, set *Settings) (deviation.Saddle, *Result, *SaddleProblem, error) {
	sp := NewSaddleProblem(pts, w, s)
	r, err := LevenbergMarquardt(sp.Problem(len(pts) > normalThreshold), sp.X0(s), set)
	if err != nil {
		return *s, nil, nil, err
	}
	if r.Status == MaxEvaluations || r.Status == NonFinite {
		return *s, nil, nil, fmt.Errorf("fit: saddle solve: %w", r.Status.Err())
	}
	return sp.Saddle(r.X), r, sp, nil
}

// strided returns at most max elements of pts, every k-th one.
func strided(pts []r3.Vec, max int) []r3.Vec {
	if len(pts) <= max {
		return pts
	}
	k := len(pts) / max
	out := make([]r3.Vec, 0, len(pts)/k+1)
	for i := 0; i < len(pts); i += k {
		out = append(out, pts[i])
	}
	return out
}

// normalThreshold is the number of points above which the saddle solve
// uses the normal equations (see SaddleProblem): below it the QR path's
// m×8 Jacobian is small.
const normalThreshold = 20000

// signedDistances writes the signed orthogonal distance of each centred
// point to s.
func signedDistances(dst []float64, pts []r3.Vec, s *deviation.Saddle) {
	parallelBlocks(len(pts), func(lo, hi int) {
		for i := lo; i < hi; i++ {
			_, dst[i] = s.ClosestLocal(s.ToLocal(pts[i]))
		}
	})
}

// medianOf returns the median of v using buf (or a new slice) as scratch.
func medianOf(v, buf []float64) float64 {
	if len(buf) < len(v) {
		buf = make([]float64, len(v))
	}
	buf = buf[:len(v)]
	copy(buf, v)
	return median(buf)
}

// Tuning constants of the IRLS weights, for 95 % efficiency at the normal
// distribution (Huber 1981; Holland & Welsch 1977): Huber k = 1.345,
// Tukey biweight c = 4.685, in units of the robust scale σ = 1.4826·MAD.
const (
	HuberK = 1.345
	TukeyC = 4.685
)

// irlsWeights writes the Huber or Tukey weights of the residuals d, scaled
// by 1.4826·median|d|.
func irlsWeights(w, d []float64, kind string) {
	abs := make([]float64, len(d))
	for i, v := range d {
		abs[i] = math.Abs(v)
	}
	sigma := madScale * median(abs)
	if sigma == 0 {
		for i := range w {
			w[i] = 1
		}
		return
	}
	for i, v := range d {
		u := math.Abs(v) / sigma
		switch kind {
		case "huber":
			w[i] = 1
			if u > HuberK {
				w[i] = HuberK / u
			}
		case "tukey":
			w[i] = 0
			if u < TukeyC {
				r := u / TukeyC
				w[i] = (1 - r*r) * (1 - r*r)
			}
		}
	}
}

// uncertainty fills the covariance, standard uncertainties and intervals at
// the solution s (centred coordinates) from the inlier points pts.
//
// Model: the residuals are independent with variance σ²/wᵢ; then
// σ̂² = Σwᵢdᵢ²/(Σwᵢ − p) and Cov(θ) ≈ σ̂²(JᵀWJ)⁻¹ (the linearised
// least-squares covariance; with IRLS weights an approximation). The
// origin's covariance follows by the linear map o(ω, t) = o₀ + R(c + t) −
// R·Exp(ω)·c, ∂o/∂t = R, ∂o/∂ω = R·[c]×; an axis direction turns by the
// rotation components about the other two axes, so its angular variance is
// the sum of those two variances.
func (res *SaddleResult) uncertainty(sp *SaddleProblem, x []float64) error {
	const p = NumSaddlePar
	s := sp.Saddle(x)
	x = sp.X0(&s)
	sp.Accept(x) // ω = t = 0 at the solution; residuals unchanged
	jtj := mat.NewSymDense(p, nil)
	jtf := make([]float64, p)
	sp.Normal(jtj, jtf, x) // evaluates the residuals unless cached
	nobs := len(sp.Points)
	res.DOF = nobs - p
	ssr := 0.0
	for i, d := range sp.dist {
		if sp.Weights != nil {
			d *= math.Sqrt(sp.Weights[i])
		}
		ssr += d * d
	}
	// With IRLS weights the effective number of observations is Σwᵢ
	// (common practice; it makes σ̂ comparable with the unweighted one).
	neff := float64(nobs)
	if sp.Weights != nil {
		neff = 0
		for _, v := range sp.Weights {
			neff += v
		}
	}
	s2 := ssr / (neff - p)
	res.Sigma = math.Sqrt(s2)
	var ch mat.Cholesky
	if !ch.Factorize(jtj) {
		return fmt.Errorf("%w: singular normal matrix at the solution (parameters not determined by the data)", ErrDegenerate)
	}
	cov := mat.NewSymDense(p, nil)
	if err := ch.InverseTo(cov); err != nil {
		return fmt.Errorf("%w: %v", ErrDegenerate, err)
	}
	cov.ScaleSym(s2, cov)
	res.ParCov = cov
	corr := mat.NewSymDense(p, nil)
	for i := 0; i < p; i++ {
		for j := i; j < p; j++ {
			corr.SetSym(i, j, cov.At(i, j)/math.Sqrt(cov.At(i, i)*cov.At(j, j)))
		}
	}
	res.ParCorr = corr
	res.TQuantile = distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(res.DOF)}.Quantile(0.975)
	est := func(v, u float64) Estimate {
		return Estimate{Value: v, U: u, Lo95: v - res.TQuantile*u, Hi95: v + res.TQuantile*u}
	}
	res.K1 = est(s.K1, math.Sqrt(cov.At(ParK1, ParK1)))
	res.K2 = est(s.K2, math.Sqrt(cov.At(ParK2, ParK2)))
	// Origin: J_o = [0 0 | R[c]× | R] (3×8).
	c := sp.localPivot()
	res.Pivot = sp.pivot
	cx := [3][3]float64{{0, -c.Z, c.Y}, {c.Z, 0, -c.X}, {-c.Y, c.X, 0}}
	jo := mat.NewDense(3, p, nil)
	for i := 0; i < 3; i++ {
		for k := 0; k < 3; k++ {
			rik := [3]float64{s.Axes[k].X, s.Axes[k].Y, s.Axes[k].Z}[i] // R[i][k]
			jo.Set(i, ParT1+k, rik)
			for l := 0; l < 3; l++ {
				jo.Set(i, ParW1+l, jo.At(i, ParW1+l)+rik*cx[k][l])
			}
		}
	}
	var tmp, oc mat.Dense
	tmp.Mul(jo, cov)
	oc.Mul(&tmp, jo.T())
	res.OriginCov = mat.NewSymDense(3, nil)
	for i := 0; i < 3; i++ {
		for j := i; j < 3; j++ {
			res.OriginCov.SetSym(i, j, 0.5*(oc.At(i, j)+oc.At(j, i)))
		}
		u := math.Sqrt(res.OriginCov.At(i, i))
		res.Origin[i] = est(0, u) // value added by the caller
	}
	for k := 0; k < 3; k++ {
		v := 0.0
		for l := 0; l < 3; l++ {
			if l != k {
				v += cov.At(ParW1+l, ParW1+l)
			}
		}
		res.AxesU[k] = math.Sqrt(v)
	}
	return nil
}
