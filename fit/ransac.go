package fit

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"sort"
	"sync"

	"gonum.org/v1/gonum/spatial/r3"
)

// SampleModel is a model family for sample consensus, separate from the
// estimator (the split of PCL's sample_consensus: the model knows its
// minimal sample size, how to fit a hypothesis and how far points are from
// it; RANSAC only draws samples and scores them). H is the hypothesis type.
type SampleModel[H any] interface {
	// SampleSize is the number of points of a minimal sample.
	SampleSize() int
	// FitSample fits a hypothesis to a minimal sample; ok is false for a
	// degenerate sample.
	FitSample(sample []r3.Vec) (h H, ok bool)
	// Refit fits a hypothesis to many points in the least-squares sense
	// (the local optimisation step); ok is false when that fails.
	Refit(pts []r3.Vec) (h H, ok bool)
	// Distances writes the approximate orthogonal distance (metres, ≥ 0) of
	// each point to h into dst.
	Distances(dst []float64, h H, pts []r3.Vec)
}

// DefaultSeed is the seed of the random source when RANSACSettings.Seed
// and Rand are zero. It is recorded in every result so a report can be
// reproduced.
const DefaultSeed uint64 = 20260601

// RANSACSettings control RANSAC. A nil *RANSACSettings means all defaults.
type RANSACSettings struct {
	// Threshold is the inlier threshold T in metres. Zero means: estimate
	// it from the data (see RANSAC).
	Threshold float64
	// InitialThreshold is the threshold used while searching when Threshold
	// is zero. Zero means 1 % of the RMS radius of the data (common
	// practice: loose enough for any minimal-sample fit of a good sample,
	// tight enough to reject clutter metres away).
	InitialThreshold float64
	// ThresholdFactor k gives T = k·σ̂ from the robust noise estimate σ̂.
	// Zero means 3 (common practice: 3σ keeps 99.7 % of Gaussian inliers).
	ThresholdFactor float64
	// Confidence p is the probability that at least one all-inlier sample
	// was drawn. Zero means 0.999.
	Confidence float64
	// MaxIterations caps the number of samples. Zero means 100000.
	MaxIterations int
	// ScoreSample is the number of points, drawn at random once, on which
	// hypotheses are scored; the winner is verified on all points. Zero
	// means 4096 (the inlier fraction of a hypothesis is then known to
	// about ±1 %, enough to rank hypotheses and to size N); negative means
	// score on all points. Values below 10 samples' worth are raised to it.
	ScoreSample int
	// Seed seeds the default random source, a PCG. Zero means DefaultSeed.
	Seed uint64
	// Rand, if not nil, is the random source (Seed is then only recorded).
	Rand *rand.Rand
}

// RANSACResult is the outcome of RANSAC.
type RANSACResult[H any] struct {
	Model      H
	Inliers    []bool  // parallel to the input points
	NumInliers int     // number of true elements of Inliers
	Threshold  float64 // inlier threshold used for Inliers, metres
	Sigma      float64 // robust noise estimate σ̂, metres (0 if Threshold was given)
	Iterations int     // samples drawn
	Seed       uint64  // seed of the random source
}

// ErrTooFewPoints reports fewer points than a minimal sample.
var ErrTooFewPoints = errors.New("fit: too few points")

// ErrNoModel reports that no sample gave a usable hypothesis.
var ErrNoModel = errors.New("fit: no consensus model found")

// madScale is 1/Φ⁻¹(3/4): σ = madScale·median|e| for Gaussian e.
const madScale = 1.4826

// RANSAC estimates a model from pts that may contain many outliers
// (Fischler & Bolles 1981), with
//
//   - MSAC scoring (Torr & Zisserman 2000): a hypothesis costs
//     Σ ρ(eᵢ), ρ(e) = min(e², T²), instead of counting inliers;
//   - the adaptive number of samples N = log(1−p)/log(1−wˢ) with w the
//     inlier fraction of the best hypothesis so far and s the sample size;
//   - a local optimisation (LO-RANSAC, Chum, Matas & Kittler 2003):
//     whenever a new best hypothesis appears it is refitted to its inliers,
//     repeatedly while the cost decreases;
//   - scoring on a random subsample of ScoreSample points, so the search
//     costs O(N·ScoreSample), then one verification on all points: the
//     winner's inliers among all points are found, it is refitted to them
//     (to at most refitSample = 65536 of them, evenly strided, which
//     determines a quadric far better than the search needs), and the
//     final inlier mask of all points is taken from that refit.
//
// When Threshold is zero the search uses InitialThreshold, and the final
// threshold is T = k·σ̂ with σ̂ = 1.4826·median(eᵢ) over the points within
// the current threshold of the best model, iterated to a fixed point (a
// distance is |e| of a zero-mean residual, so median|e|·1.4826 is the
// MAD estimate of σ; the truncation at 3σ biases it by under 0.3 %).
//
// The result is a deterministic function of pts, the settings and the seed.
//
// References:
//
//	Fischler, M.A., Bolles, R.C. (1981). Random sample consensus. Commun.
//	ACM 24(6):381–395.
//	Torr, P.H.S., Zisserman, A. (2000). MLESAC: a new robust estimator with
//	application to estimating image geometry. CVIU 78(1):138–156.
//	Chum, O., Matas, J., Kittler, J. (2003). Locally optimized RANSAC.
//	DAGM 2003, LNCS 2781:236–243.
func RANSAC[H any](m SampleModel[H], pts []r3.Vec, s *RANSACSettings) (*RANSACResult[H], error) {
	set := RANSACSettings{}
	if s != nil {
		set = *s
	}
	if set.ThresholdFactor == 0 {
		set.ThresholdFactor = 3
	}
	if set.Confidence == 0 {
		set.Confidence = 0.999
	}
	if set.MaxIterations == 0 {
		set.MaxIterations = 100000
	}
	if set.ScoreSample == 0 {
		set.ScoreSample = 4096
	}
	if set.Seed == 0 {
		set.Seed = DefaultSeed
	}
	rng := set.Rand
	if rng == nil {
		rng = rand.New(rand.NewPCG(set.Seed, set.Seed^0x9e3779b97f4a7c15))
	}
	k := m.SampleSize()
	n := len(pts)
	if n < k {
		return nil, fmt.Errorf("%w: %d points, the model needs %d", ErrTooFewPoints, n, k)
	}

	if set.ScoreSample > 0 && set.ScoreSample < 10*k {
		set.ScoreSample = 10 * k
	}
	// Scoring subsample (drawn with replacement; duplicates do no harm).
	sub := pts
	if set.ScoreSample > 0 && n > set.ScoreSample {
		sub = make([]r3.Vec, set.ScoreSample)
		for i := range sub {
			sub[i] = pts[rng.IntN(n)]
		}
	}
	T := set.Threshold
	if T == 0 {
		T = set.InitialThreshold
		if T == 0 {
			_, r := normalisation(sub)
			T = 0.01 * r
		}
	}
	T2 := T * T
	dist := make([]float64, len(sub))
	// cost is the MSAC cost on the subsample, scored in chunks so that a
	// hypothesis already worse than bound is abandoned early (its cost is
	// then only a lower bound, ≥ bound).
	cost := func(h H, bound float64) (c float64, w int) {
		const chunk = 256
		for lo := 0; lo < len(sub); lo += chunk {
			hi := min(lo+chunk, len(sub))
			m.Distances(dist[lo:hi], h, sub[lo:hi])
			for _, e := range dist[lo:hi] {
				if e < T {
					c += e * e
					w++
				} else {
					c += T2
				}
			}
			if c >= bound {
				return c, w
			}
		}
		return c, w
	}
	buf := make([]r3.Vec, 0, len(sub))
	inliersOf := func(h H) []r3.Vec {
		m.Distances(dist, h, sub)
		buf = buf[:0]
		for i, e := range dist {
			if e < T {
				buf = append(buf, sub[i])
			}
		}
		return buf
	}

	sample := make([]r3.Vec, k)
	idx := make([]int, k)
	var best H
	bestCost := math.Inf(1)
	found := false
	limit := set.MaxIterations
	iter := 0
	for ; iter < limit; iter++ {
		drawDistinct(rng, idx, len(sub))
		for j, i := range idx {
			sample[j] = sub[i]
		}
		h, ok := m.FitSample(sample)
		if !ok {
			continue
		}
		c, w := cost(h, bestCost)
		if c >= bestCost {
			continue
		}
		best, bestCost, found = h, c, true
		// LO step: refit on the consensus set while it improves.
		for lo := 0; lo < 4; lo++ {
			in := inliersOf(best)
			if len(in) < k {
				break
			}
			h2, ok := m.Refit(in)
			if !ok {
				break
			}
			c2, w2 := cost(h2, bestCost)
			if c2 >= bestCost {
				break
			}
			best, bestCost, w = h2, c2, w2
		}
		limit = min(set.MaxIterations, adaptiveN(float64(w)/float64(len(sub)), k, set.Confidence))
	}
	if !found {
		return nil, ErrNoModel
	}
	res := &RANSACResult[H]{Model: best, Iterations: iter, Seed: set.Seed}

	// Verification on all points.
	all := make([]float64, n)
	parallelDistances(m, all, best, pts)
	if set.Threshold == 0 {
		T, res.Sigma = robustThreshold(all, T, set.ThresholdFactor)
	}
	inl := make([]r3.Vec, 0, n)
	for i, e := range all {
		if e < T {
			inl = append(inl, pts[i])
		}
	}
	if len(inl) >= k {
		if h, ok := m.Refit(strided(inl, refitSample)); ok {
			res.Model = h
			parallelDistances(m, all, h, pts)
			if set.Threshold == 0 {
				T, res.Sigma = robustThreshold(all, T, set.ThresholdFactor)
			}
		}
	}
	res.Threshold = T
	res.Inliers = make([]bool, n)
	for i, e := range all {
		if e < T {
			res.Inliers[i] = true
			res.NumInliers++
		}
	}
	return res, nil
}

// adaptiveN returns ⌈log(1−p)/log(1−wᵏ)⌉, the number of samples that draws
// at least one all-inlier sample with probability p when a fraction w of
// the points are inliers.
func adaptiveN(w float64, k int, p float64) int {
	if w <= 0 {
		return math.MaxInt32
	}
	wk := math.Pow(w, float64(k))
	if wk >= 1 {
		return 1
	}
	nf := math.Log(1-p) / math.Log1p(-wk)
	if nf > math.MaxInt32 || math.IsNaN(nf) {
		return math.MaxInt32
	}
	return int(math.Ceil(nf))
}

// drawDistinct fills idx with distinct random indices in [0, n).
func drawDistinct(rng *rand.Rand, idx []int, n int) {
	for j := range idx {
	again:
		v := rng.IntN(n)
		for _, u := range idx[:j] {
			if u == v {
				goto again
			}
		}
		idx[j] = v
	}
}

// robustThreshold iterates T ← k·σ̂, σ̂ = 1.4826·median{eᵢ : eᵢ < T}, for
// unsigned distances e, from the starting threshold t0, to a fixed point
// (at most 30 steps; it grows geometrically from a too-small start and
// shrinks from a too-large one). It returns T and σ̂.
//
// For more than robustSample distances every k-th one is used, which
// leaves a relative standard error of about 1.2/√robustSample ≈ 0.3 % in
// σ̂ (the asymptotic efficiency of the MAD at the normal is 37 %).
func robustThreshold(e []float64, t0, k float64) (T, sigma float64) {
	T = t0
	stride := 1
	if len(e) > robustSample {
		stride = len(e) / robustSample
	}
	tmp := make([]float64, 0, len(e)/stride+1)
	for it := 0; it < 30; it++ {
		tmp = tmp[:0]
		for i := 0; i < len(e); i += stride {
			if v := e[i]; v < T {
				tmp = append(tmp, v)
			}
		}
		if len(tmp) == 0 {
			return T, sigma
		}
		sigma = madScale * median(tmp)
		Tn := k * sigma
		if Tn == 0 {
			return T, sigma
		}
		if math.Abs(Tn-T) <= 1e-3*T {
			return Tn, sigma
		}
		T = Tn
	}
	return T, sigma
}

// refitSample bounds the number of inliers of the final LO refit.
const refitSample = 1 << 16

// robustSample bounds the number of distances robustThreshold looks at.
const robustSample = 1 << 17

// median returns the median of v, reordering v.
func median(v []float64) float64 {
	n := len(v)
	if n == 0 {
		return math.NaN()
	}
	m := quickSelect(v, n/2)
	if n%2 == 1 {
		return m
	}
	// The lower middle is the maximum of the lower part.
	lo := v[0]
	for _, x := range v[:n/2] {
		lo = math.Max(lo, x)
	}
	return 0.5 * (lo + m)
}

// quickSelect puts the k-th smallest element of v at v[k] and returns it,
// with smaller elements before it (Hoare's selection, median-of-three).
func quickSelect(v []float64, k int) float64 {
	lo, hi := 0, len(v)-1
	for hi > lo {
		if hi-lo < 16 {
			sort.Float64s(v[lo : hi+1])
			return v[k]
		}
		mid := lo + (hi-lo)/2
		if v[mid] < v[lo] {
			v[mid], v[lo] = v[lo], v[mid]
		}
		if v[hi] < v[lo] {
			v[hi], v[lo] = v[lo], v[hi]
		}
		if v[hi] < v[mid] {
			v[hi], v[mid] = v[mid], v[hi]
		}
		pivot := v[mid]
		i, j := lo, hi
		for i <= j {
			for v[i] < pivot {
				i++
			}
			for v[j] > pivot {
				j--
			}
			if i <= j {
				v[i], v[j] = v[j], v[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return v[k]
		}
	}
	return v[k]
}

// parallelBlocks runs fn over [0, n) split into one contiguous block per
// CPU when n is large enough (2¹⁴ points) to pay for the goroutines.
func parallelBlocks(n int, fn func(lo, hi int)) {
	parallelBlocksN(n, workersFor(n), func(_, lo, hi int) { fn(lo, hi) })
}

// workersFor returns the number of goroutines for n points.
func workersFor(n int) int {
	if n < 1<<14 {
		return 1
	}
	return runtime.GOMAXPROCS(0)
}

func parallelDistances[H any](m SampleModel[H], dst []float64, h H, pts []r3.Vec) {
	parallelBlocks(len(pts), func(lo, hi int) { m.Distances(dst[lo:hi], h, pts[lo:hi]) })
}

// QuadricModel is the general-quadric SampleModel: minimal samples of 9
// points fitted by FitQuadric, distances by the Sampson approximation. All
// hypotheses share the normalisation (centroid, RMS radius) of the data
// set it was made for, which keeps their coefficients comparable.
type QuadricModel struct {
	Centre r3.Vec
	Scale  float64
	// Accept, if not nil, rejects hypotheses (from samples and refits)
	// for which it returns false: a degeneracy test such as "is in the
	// saddle family", which keeps a large plane of outliers (the ground, a
	// wall) from winning the consensus with a plane-pair quadric.
	Accept func(*Quadric) bool
}

var _ SampleModel[Quadric] = QuadricModel{}

// SaddleFamily reports whether q looks like a hyperbolic paraboloid or its
// limit, a parabolic cylinder: the QuadricModel.Accept test FitSaddle uses.
func SaddleFamily(q *Quadric) bool {
	k := Classify(q).Kind
	return k == KindHyperbolicParaboloid || k == KindParabolicCylinder
}

// NewQuadricModel returns a QuadricModel normalised for pts.
func NewQuadricModel(pts []r3.Vec) QuadricModel {
	c, s := normalisation(pts)
	return QuadricModel{Centre: c, Scale: s}
}

// SampleSize returns 9, the number of points that fix a quadric.
func (QuadricModel) SampleSize() int { return 9 }

// FitSample fits the quadric through 9 points.
func (m QuadricModel) FitSample(sample []r3.Vec) (Quadric, bool) {
	q, err := fitQuadricNorm(sample, m.Centre, m.Scale)
	return q, err == nil && (m.Accept == nil || m.Accept(&q))
}

// Refit fits the Taubin quadric to pts, accumulating in parallel blocks.
func (m QuadricModel) Refit(pts []r3.Vec) (Quadric, bool) {
	if len(pts) < 9 {
		return Quadric{}, false
	}
	workers := workersFor(len(pts))
	accs := make([]taubinAcc, workers)
	inv := 1 / m.Scale
	c := m.Centre
	parallelBlocksN(len(pts), workers, func(w, lo, hi int) {
		a := &accs[w]
		for _, p := range pts[lo:hi] {
			a.add(r3.Vec{X: (p.X - c.X) * inv, Y: (p.Y - c.Y) * inv, Z: (p.Z - c.Z) * inv})
		}
	})
	for w := 1; w < workers; w++ {
		accs[0].merge(&accs[w])
	}
	q := Quadric{Centre: m.Centre, Scale: m.Scale, Spread: accs[0].spread()}
	if err := accs[0].solve(&q.C); err != nil {
		return Quadric{}, false
	}
	return q, m.Accept == nil || m.Accept(&q)
}

// Distances writes Sampson distances.
func (QuadricModel) Distances(dst []float64, q Quadric, pts []r3.Vec) { q.SampsonDistances(dst, pts) }

// parallelBlocksN runs fn(w, lo, hi) for w in [0, workers).
func parallelBlocksN(n, workers int, fn func(w, lo, hi int)) {
	if workers <= 1 {
		fn(0, 0, n)
		return
	}
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		lo, hi := n*w/workers, n*(w+1)/workers
		wg.Add(1)
		go func() {
			defer wg.Done()
			fn(w, lo, hi)
		}()
	}
	wg.Wait()
}
