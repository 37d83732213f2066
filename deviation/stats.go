package deviation

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// HistBinM is the bin width, in metres, of the fine histogram of an Acc:
// 0.01 mm. Percentiles read from it are within one bin of the exact
// sample percentile.
const HistBinM = 1e-5

// Acc accumulates the deviations of a stream of points (one patch, or the
// whole design), in metres, and can be merged with another Acc built with
// the same tolerance. The zero value is not usable; call NewAcc.
//
// It keeps: the count; the mean and the sum of squared deviations from it
// by Welford's update (Welford 1962, Technometrics 4(3)) and, on Merge,
// the pairwise combination of Chan, Golub & LeVeque (1979, "Updating
// formulae and a pairwise algorithm for computing sample variances");
// the plain sum of squares for the RMS; min and max; the number within the
// limit; counts per band; and a histogram of HistBinM bins over
// [−FarM, +FarM] with under- and overflow counters, for percentiles.
type Acc struct {
	n            int64
	mean, m2     float64
	sumSq        float64
	min, max     float64
	within       int64
	bands        []int64
	hist         []int64
	under, over  int64
	limit, far   float64
	bandEdges    []float64
	nbins        int
	binsPerMetre float64
}

// NewAcc returns an empty accumulator for the tolerance t (its limit,
// bands and far distance; zero fields take their documented defaults).
func NewAcc(t Tolerance) *Acc {
	t = t.WithDefaults()
	nb := int(math.Ceil(2 * t.FarM / HistBinM))
	return &Acc{
		min: math.Inf(1), max: math.Inf(-1),
		limit: t.LimitM, far: t.FarM,
		bandEdges:    append([]float64(nil), t.BandsM...),
		bands:        make([]int64, len(t.BandsM)+1),
		hist:         make([]int64, nb),
		nbins:        nb,
		binsPerMetre: 1 / HistBinM,
	}
}

// Add adds one deviation (metres; finite). It does not allocate. The
// limit and band tests use the sign bit of (edge − |d|), which is set
// exactly when |d| > edge, so a value on an edge counts as within it and
// the per-point work has no data-dependent branch.
func (a *Acc) Add(devM float64) {
	a.n++
	delta := devM - a.mean
	a.mean += delta / float64(a.n)
	a.m2 += delta * (devM - a.mean)
	a.sumSq += devM * devM
	if devM < a.min {
		a.min = devM
	}
	if devM > a.max {
		a.max = devM
	}
	ad := math.Abs(devM)
	a.within += 1 - int64(math.Float64bits(a.limit-ad)>>63)
	k := 0
	for _, b := range a.bandEdges {
		k += int(math.Float64bits(b-ad) >> 63)
	}
	a.bands[k]++
	switch {
	case devM < -a.far:
		a.under++
	case devM > a.far:
		a.over++
	default:
		i := int((devM + a.far) * a.binsPerMetre)
		if i >= a.nbins {
			i = a.nbins - 1
		}
		a.hist[i]++
	}
}

// ErrMismatch reports accumulators or grids of different layouts.
var ErrMismatch = errors.New("accumulators of different layout")

// Merge adds the contents of b to a. Both must come from NewAcc with the
// same tolerance.
func (a *Acc) Merge(b *Acc) error {
	if a.nbins != b.nbins || len(a.bands) != len(b.bands) || a.limit != b.limit {
		return ErrMismatch
	}
	if b.n == 0 {
		return nil
	}
	n := a.n + b.n
	delta := b.mean - a.mean
	fa, fb, fn := float64(a.n), float64(b.n), float64(n)
	a.mean += delta * fb / fn
	a.m2 += b.m2 + delta*delta*fa*fb/fn
	a.n = n
	a.sumSq += b.sumSq
	a.min = math.Min(a.min, b.min)
	a.max = math.Max(a.max, b.max)
	a.within += b.within
	for i := range a.bands {
		a.bands[i] += b.bands[i]
	}
	for i := range a.hist {
		a.hist[i] += b.hist[i]
	}
	a.under += b.under
	a.over += b.over
	return nil
}

// N returns the number of deviations added.
func (a *Acc) N() int64 { return a.n }

// Mean returns the mean deviation (NaN when empty).
func (a *Acc) Mean() float64 {
	if a.n == 0 {
		return math.NaN()
	}
	return a.mean
}

// Std returns the sample standard deviation (divisor n − 1; 0 for n < 2).
func (a *Acc) Std() float64 {
	if a.n < 2 {
		return 0
	}
	return math.Sqrt(a.m2 / float64(a.n-1))
}

// RMS returns √(Σd²/n), the root mean square deviation (NaN when empty).
func (a *Acc) RMS() float64 {
	if a.n == 0 {
		return math.NaN()
	}
	return math.Sqrt(a.sumSq / float64(a.n))
}

// Min returns the smallest deviation (+Inf when empty).
func (a *Acc) Min() float64 { return a.min }

// Max returns the largest deviation (−Inf when empty).
func (a *Acc) Max() float64 { return a.max }

// Within returns the number of deviations with |d| <= the limit.
func (a *Acc) Within() int64 { return a.within }

// BandCounts returns the counts per band (len(bands)+1 entries, the last
// beyond the last band). The slice is the accumulator's own; do not
// modify it.
func (a *Acc) BandCounts() []int64 { return a.bands }

// Percentile returns the p-th percentile (0 ≤ p ≤ 100) of the deviations
// with the definition of linear interpolation between closest ranks
// (rank h = (n − 1)·p/100; the default of numpy.percentile), read from the
// histogram: each of the two order statistics is replaced by the centre
// of its bin (clamped to [Min, Max]), so the result is within one bin,
// HistBinM, of the exact value (half a bin from each statistic). A rank
// that falls among values beyond ±FarM returns ±FarM (a bound, not a
// value). It returns NaN when empty.
func (a *Acc) Percentile(p float64) float64 {
	if a.n == 0 || math.IsNaN(p) {
		return math.NaN()
	}
	p = math.Max(0, math.Min(100, p))
	h := float64(a.n-1) * p / 100
	lo := int64(math.Floor(h))
	frac := h - float64(lo)
	xlo := a.orderStat(lo)
	if frac == 0 || lo+1 >= a.n {
		return xlo
	}
	xhi := a.orderStat(lo + 1)
	return xlo + frac*(xhi-xlo)
}

// orderStat returns the approximate k-th smallest value (0-based).
func (a *Acc) orderStat(k int64) float64 {
	if k < a.under {
		return -a.far
	}
	c := a.under
	for i, h := range a.hist {
		c += h
		if k < c {
			v := -a.far + (float64(i)+0.5)*HistBinM
			return math.Max(a.min, math.Min(a.max, v))
		}
	}
	return a.far
}

// Summary is the statistics of one patch or of the design, in millimetres
// at the report boundary. For N = 0 all numbers are zero and the verdict
// is inconclusive.
type Summary struct {
	N      int64   `json:"n"`
	MeanMM float64 `json:"mean_mm"`
	StdMM  float64 `json:"std_mm"`
	RMSMM  float64 `json:"rms_mm"`
	MinMM  float64 `json:"min_mm"`
	MaxMM  float64 `json:"max_mm"`
	P05MM  float64 `json:"p05_mm"`
	P50MM  float64 `json:"p50_mm"`
	P95MM  float64 `json:"p95_mm"`
	// BandsMM are the band edges; SharePerBand has one more entry, the
	// share beyond the last edge.
	BandsMM          []float64 `json:"bands_mm"`
	SharePerBand     []float64 `json:"share_per_band"`
	ShareWithinLimit float64   `json:"share_within_limit"`
	MaxAbsMM         float64   `json:"max_abs_mm"`
	Verdict          Verdict   `json:"verdict"`
}

// PatchStats is the Summary of one patch.
type PatchStats struct {
	ID   string `json:"id"`
	Kind string `json:"kind"`
	Summary
}

// Summary returns the statistics and the verdict of the accumulated
// deviations under t.
func (a *Acc) Summary(t Tolerance) Summary {
	t = t.WithDefaults()
	s := Summary{N: a.n, BandsMM: mmList(a.bandEdges), SharePerBand: make([]float64, len(a.bands))}
	maxAbs := 0.0
	if a.n > 0 {
		maxAbs = math.Max(math.Abs(a.min), math.Abs(a.max))
		s.MeanMM, s.StdMM, s.RMSMM = a.mean*1000, a.Std()*1000, a.RMS()*1000
		s.MinMM, s.MaxMM = a.min*1000, a.max*1000
		s.P05MM, s.P50MM, s.P95MM = a.Percentile(5)*1000, a.Percentile(50)*1000, a.Percentile(95)*1000
		for i, c := range a.bands {
			s.SharePerBand[i] = float64(c) / float64(a.n)
		}
		s.ShareWithinLimit = float64(a.within) / float64(a.n)
		s.MaxAbsMM = maxAbs * 1000
	}
	s.Verdict = t.PatchVerdict(a.n, a.within, maxAbs)
	return s
}

// GridCell holds the deviations of the points in one plan cell.
type GridCell struct {
	N             int64
	Sum, Min, Max float64 // metres; Sum/N is the mean
}

// Mean returns the cell's mean deviation (NaN when empty).
func (c GridCell) Mean() float64 {
	if c.N == 0 {
		return math.NaN()
	}
	return c.Sum / float64(c.N)
}

// Grid accumulates deviations in square plan cells (site X, Y) for a
// deviation map. Cell (i, j) covers [X0 + i·CellM, X0 + (i+1)·CellM) ×
// [Y0 + j·CellM, Y0 + (j+1)·CellM). Grids of the same layout merge.
type Grid struct {
	X0, Y0, CellM float64
	NX, NY        int
	cells         []GridCell
	inv           float64 // 1/CellM
}

// MaxGridCells bounds the size of a Grid (4 Mi cells, 128 MiB).
const MaxGridCells = 1 << 22

// GridCellSize returns a cell size for a plan extent [lo, hi] (X, Y) that
// gives about target cells: √(area/target) rounded up to 1, 2 or 5 × 10ᵏ m,
// at least 1 cm.
func GridCellSize(lo, hi r3.Vec, target int) float64 {
	if target < 1 {
		target = 1
	}
	w, h := math.Max(hi.X-lo.X, 0), math.Max(hi.Y-lo.Y, 0)
	raw := math.Sqrt(math.Max(w*h, w*w/1e6+h*h/1e6) / float64(target))
	if !(raw > 0.01) || math.IsInf(raw, 0) {
		return 0.01
	}
	e := math.Pow(10, math.Floor(math.Log10(raw)))
	for _, m := range []float64{1, 2, 5, 10} {
		if m*e >= raw*(1-1e-12) {
			return m * e
		}
	}
	return 10 * e
}

// NewGrid returns an empty grid covering the plan extent [lo, hi] (X, Y)
// with square cells of cellM metres.
func NewGrid(lo, hi r3.Vec, cellM float64) (*Grid, error) {
	if !(cellM > 0) || math.IsInf(cellM, 0) {
		return nil, fmt.Errorf("grid cell size %g m must be > 0", cellM)
	}
	nx := math.Floor((hi.X-lo.X)/cellM) + 1
	ny := math.Floor((hi.Y-lo.Y)/cellM) + 1
	if !(nx >= 1 && ny >= 1) || nx*ny > MaxGridCells {
		return nil, fmt.Errorf("grid of %g × %g cells of %g m: empty or more than %d cells", nx, ny, cellM, MaxGridCells)
	}
	g := &Grid{X0: lo.X, Y0: lo.Y, CellM: cellM, NX: int(nx), NY: int(ny), inv: 1 / cellM}
	g.cells = make([]GridCell, g.NX*g.NY)
	for i := range g.cells {
		g.cells[i] = GridCell{Min: math.Inf(1), Max: math.Inf(-1)}
	}
	return g, nil
}

// Add adds the deviation devM of the point p to its cell; it reports false
// (and does nothing) for a point outside the grid. It does not allocate.
func (g *Grid) Add(p r3.Vec, devM float64) bool {
	fi := math.Floor((p.X - g.X0) * g.inv)
	fj := math.Floor((p.Y - g.Y0) * g.inv)
	if !(fi >= 0 && fi < float64(g.NX) && fj >= 0 && fj < float64(g.NY)) {
		return false
	}
	c := &g.cells[int(fj)*g.NX+int(fi)]
	c.N++
	c.Sum += devM
	if devM < c.Min {
		c.Min = devM
	}
	if devM > c.Max {
		c.Max = devM
	}
	return true
}

// Merge adds the cells of o (same layout) to g.
func (g *Grid) Merge(o *Grid) error {
	if g.X0 != o.X0 || g.Y0 != o.Y0 || g.CellM != o.CellM || g.NX != o.NX || g.NY != o.NY {
		return ErrMismatch
	}
	for i := range g.cells {
		a, b := &g.cells[i], o.cells[i]
		a.N += b.N
		a.Sum += b.Sum
		a.Min = math.Min(a.Min, b.Min)
		a.Max = math.Max(a.Max, b.Max)
	}
	return nil
}

// Cell returns cell (i, j): i along X, j along Y.
func (g *Grid) Cell(i, j int) GridCell { return g.cells[j*g.NX+i] }

// HistogramInto re-bins the fine histogram of a into len(counts) bins of
// width binM starting at fromM (metres), adding to counts; values below
// fromM or above the last bin add to under and over. Each fine bin goes
// whole to the coarse bin holding its centre, so the coarse counts are
// exact to one fine bin (HistBinM) at each edge.
func HistogramInto(a *Acc, fromM, binM float64, counts []int64, under, over *int64) {
	*under += a.under
	*over += a.over
	for i, c := range a.hist {
		if c == 0 {
			continue
		}
		centre := -a.far + (float64(i)+0.5)/a.binsPerMetre
		k := int(math.Floor((centre - fromM) / binM))
		switch {
		case k < 0:
			*under += c
		case k >= len(counts):
			*over += c
		default:
			counts[k] += c
		}
	}
}
