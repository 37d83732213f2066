package uncert

import (
	"math"
	"slices"
)

// DecidingU returns u* = |limit − |d|| / k, the largest standard
// uncertainty at which guarded acceptance with coverage factor k decides
// deviation d against ±limit: a point inside the limit conforms for every
// u ≤ u*, a point beyond it is proven nonconforming for every u < u* (at
// u = u* exactly it sits on the boundary, which Decide leaves
// inconclusive). A point exactly at the limit has u* = 0: no survey decides
// it. k = 0 means DefaultK.
func DecidingU(d, limit, k float64) float64 {
	if k == 0 {
		k = DefaultK
	}
	return math.Abs(limit-math.Abs(d)) / k
}

// NeededU returns the largest standard uncertainty u at which at least the
// given share of the deviations would be decided under guarded acceptance
// with coverage factor k: the ⌈share·n⌉-th largest DecidingU. It is meant
// for the currently inconclusive points ("a survey with u ≤ 1.5 mm would
// decide 92 % of these"). share must lie in (0, 1]; NaN for no deviations.
// It sorts a copy of the values; for a stream use NeededHist.
func NeededU(inconclusiveDevs []float64, limit, k, share float64) float64 {
	checkShare(share)
	n := len(inconclusiveDevs)
	if n == 0 {
		return math.NaN()
	}
	us := make([]float64, n)
	for i, d := range inconclusiveDevs {
		us[i] = DecidingU(d, limit, k)
	}
	slices.Sort(us)
	return us[n-needCount(share, int64(n))]
}

// DecidedShare is the inverse of NeededU: the share of the deviations that
// a survey with standard uncertainty u would decide (DecidingU ≥ u). NaN for
// no deviations.
func DecidedShare(inconclusiveDevs []float64, limit, k, u float64) float64 {
	if len(inconclusiveDevs) == 0 {
		return math.NaN()
	}
	var c int
	for _, d := range inconclusiveDevs {
		if DecidingU(d, limit, k) >= u {
			c++
		}
	}
	return float64(c) / float64(len(inconclusiveDevs))
}

// needCount returns ⌈share·n⌉ (at least 1), with a slack for the
// representation error of a decimal share (see ZoneCounts.Verdict).
func needCount(share float64, n int64) int {
	m := int(math.Ceil(share*float64(n) - 1e-6))
	return max(m, 1)
}

func checkShare(share float64) {
	if !(share > 0 && share <= 1) {
		panic("uncert: share must lie in (0, 1]")
	}
}

// NeededHist is a streaming histogram of DecidingU values with a fixed
// resolution, for NeededU and DecidedShare over more points than one wants
// to keep. Bin i holds u* in [i·Res, (i+1)·Res); values at or beyond
// Res·bins go to an overflow bin with lower edge Res·bins. Both queries are
// conservative to one bin: U(share) is at most the exact NeededU and
// more than NeededU − Res (unless the answer lies in the overflow bin);
// Share(u) never overstates the exact DecidedShare.
type NeededHist struct {
	res  float64
	bins []int64 // len = number of regular bins + 1 (overflow last)
	n    int64
}

// NewNeededHist returns a histogram with bin width res covering [0, max)
// (metres). An inconclusive point has u* below its own u (else it would be
// decided), so max = the largest u of the survey loses nothing; for
// example res = 0.01 mm, max = 10 mm. It panics unless 0 < res ≤ max and
// max/res ≤ 10⁶.
func NewNeededHist(res, max float64) *NeededHist {
	if !(res > 0 && max >= res && max/res <= 1e6) {
		panic("uncert: NewNeededHist: need 0 < res ≤ max, max/res ≤ 1e6")
	}
	nb := int(math.Ceil(max/res - 1e-9))
	return &NeededHist{res: res, bins: make([]int64, nb+1)}
}

// Res returns the bin width.
func (h *NeededHist) Res() float64 { return h.res }

// N returns the number of values added.
func (h *NeededHist) N() int64 { return h.n }

// Add records the deviation d of an inconclusive point. It does not
// allocate.
func (h *NeededHist) Add(d, limit, k float64) {
	u := DecidingU(d, limit, k)
	last := len(h.bins) - 1
	i := last
	if f := u / h.res; f < float64(last) {
		i = int(f)
	}
	h.bins[i]++
	h.n++
}

// Merge adds o's counts to h. It panics if the two differ in resolution or
// range.
func (h *NeededHist) Merge(o *NeededHist) {
	if h.res != o.res || len(h.bins) != len(o.bins) {
		panic("uncert: NeededHist.Merge: different bins")
	}
	for i, c := range o.bins {
		h.bins[i] += c
	}
	h.n += o.n
}

// U returns the lower edge of the bin at which the count of values from the
// top first reaches ⌈share·n⌉: a survey with standard uncertainty at most
// U(share) decides at least that share. share must lie in (0, 1]; NaN when
// empty.
func (h *NeededHist) U(share float64) float64 {
	checkShare(share)
	if h.n == 0 {
		return math.NaN()
	}
	need := int64(needCount(share, h.n))
	var c int64
	for i := len(h.bins) - 1; i >= 0; i-- {
		c += h.bins[i]
		if c >= need {
			return float64(i) * h.res
		}
	}
	return 0
}

// Share returns the share of values in bins whose lower edge is at least
// u: a lower bound on the share a survey with standard uncertainty u
// decides. NaN when empty.
func (h *NeededHist) Share(u float64) float64 {
	if h.n == 0 {
		return math.NaN()
	}
	var c int64
	for i := len(h.bins) - 1; i >= 0 && float64(i)*h.res >= u; i-- {
		c += h.bins[i]
	}
	return float64(c) / float64(h.n)
}
