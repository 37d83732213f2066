package change

import (
	"fmt"
	"math"
	"runtime"
	"slices"
	"sync"
	"sync/atomic"

	"gonum.org/v1/gonum/spatial/r3"
)

// Default M3C2 settings (common practice for shells of a few metres to a few
// tens of metres span, surveyed to millimetres; adjust per structure).
const (
	// DefaultCoreSpacing is the plan spacing of core points, m.
	DefaultCoreSpacing = 0.25
	// DefaultRadius is the projection-cylinder radius r, m (diameter 1 m):
	// wide enough to hold at least MinPoints of a total-station epoch shot
	// at about 1 m spacing, small against shell spans.
	DefaultRadius = 0.5
	// DefaultHalfLength is the cylinder half-length along the normal, m. It
	// must exceed the largest expected movement plus roughness; shells move
	// by millimetres to centimetres.
	DefaultHalfLength = 0.5
	// DefaultMinPoints is the least number of points of each epoch inside a
	// cylinder for a distance to be reported. Lague et al. (2013) suggest
	// n ≥ 4 for the level of detection to be meaningful (from memory, as
	// recorded in the project's field guide; not checked against the paper
	// in this work). With so few points the normal quantile 1.96 is
	// optimistic: Student's t with n₁ + n₂ − 2 = 6 degrees of freedom would
	// give 2.45.
	DefaultMinPoints = 4
	// DefaultNormalScale is the plan radius for normal estimation, m: twice
	// the default cylinder radius, so that the fitted plane spans the
	// cylinder (Lague et al. 2013 advise a normal scale well above the
	// roughness scale; common practice).
	DefaultNormalScale = 1.0
	// Z95 is the two-sided 95 % standard normal quantile used by LoD95.
	Z95 = 1.959963984540054
)

// Settings controls Compare and Grid. A nil *Settings means all defaults;
// a zero field means its default.
//
// Where a design surface exists the normal at a core point is the design's
// exact normal there and no normal is estimated from the points; the normal
// scale of the original method (NormalScale) is used only by
// EstimateNormals, for comparisons without a design.
type Settings struct {
	// CoreSpacing is the plan (x, y) spacing of core points in m; zero means
	// DefaultCoreSpacing.
	CoreSpacing float64
	// Radius is the projection-cylinder radius r in m; zero means
	// DefaultRadius.
	Radius float64
	// HalfLength is the cylinder half-length along the normal in m; zero
	// means DefaultHalfLength.
	HalfLength float64
	// MinPoints is the least number of points per epoch per cylinder; zero
	// means DefaultMinPoints. Values below 2 are raised to 2 (a standard
	// deviation needs two points).
	MinPoints int
	// Registration is the registration error reg in m, added inside the
	// level of detection; zero means none (state it in reports).
	Registration float64
	// Median uses the median instead of the mean position along the normal
	// (robust against stray points; σ is still the standard deviation).
	Median bool
	// NormalScale is the plan radius in m of the neighbourhood whose
	// best-fit plane gives a core point's normal where no design surface is
	// available (EstimateNormals); zero means DefaultNormalScale. It is not
	// used where the design supplies the normal.
	NormalScale float64
	// Workers is the number of goroutines; zero means GOMAXPROCS.
	Workers int
}

func (s *Settings) withDefaults() Settings {
	var o Settings
	if s != nil {
		o = *s
	}
	if o.CoreSpacing <= 0 {
		o.CoreSpacing = DefaultCoreSpacing
	}
	if o.Radius <= 0 {
		o.Radius = DefaultRadius
	}
	if o.HalfLength <= 0 {
		o.HalfLength = DefaultHalfLength
	}
	if o.MinPoints == 0 {
		o.MinPoints = DefaultMinPoints
	}
	o.MinPoints = max(o.MinPoints, 2)
	if o.Registration < 0 || !finite(o.Registration) {
		o.Registration = 0
	}
	if o.NormalScale <= 0 {
		o.NormalScale = DefaultNormalScale
	}
	if o.Workers <= 0 {
		o.Workers = runtime.GOMAXPROCS(0)
	}
	return o
}

// CoreStatus is the outcome at one core point.
type CoreStatus uint8

const (
	// NotDetected: |distance| ≤ LoD95; a change smaller than the level of
	// detection is not detected, which does not mean it is absent.
	NotDetected CoreStatus = iota
	// Significant: |distance| > LoD95.
	Significant
	// TooFewPoints: fewer than MinPoints of either epoch in the cylinder; no
	// distance is reported.
	TooFewPoints
)

func (s CoreStatus) String() string {
	switch s {
	case NotDetected:
		return "not detected"
	case Significant:
		return "significant"
	case TooFewPoints:
		return "too few points"
	}
	return fmt.Sprintf("CoreStatus(%d)", int(s))
}

// Core is one core point and, after Compare, its M3C2 result. Positions
// along the normal are measured from P.
type Core struct {
	P     r3.Vec // core point on the design surface, site frame, m
	N     r3.Vec // unit design normal at P (positive side)
	Patch int    // patch index given to Grid
	// Mean1, Mean2 are the mean (or median) positions of each epoch's
	// cylinder points along N, m.
	Mean1, Mean2 float64
	// Sigma1, Sigma2 are the standard deviations (n−1 denominator) of the
	// positions along N, m (the local roughness plus noise).
	Sigma1, Sigma2 float64
	N1, N2         int     // point counts inside the cylinder
	Distance       float64 // Mean2 − Mean1, m; NaN when TooFewPoints
	LoD            float64 // LoD95, m; NaN when TooFewPoints
	Status         CoreStatus
}

// ProjectFunc lifts a point onto the design surface of one patch: it
// returns the closest point foot, the unit normal there (positive side) and
// whether the foot lies inside the patch. A deviation.Surface adapts as
//
//	func(p r3.Vec) (r3.Vec, r3.Vec, bool) { q := s.Project(p); return q.Foot, q.Normal, q.Inside }
type ProjectFunc func(p r3.Vec) (foot, normal r3.Vec, inside bool)

// maxGridCells caps the core grid of Grid (about 200 MB of cell tables).
const maxGridCells = 1 << 24

// Grid appends to dst the core points of one patch: a regular plan grid of
// spacing s.CoreSpacing over the x, y extent of the points of both epochs.
// Each grid cell that holds points of either epoch gives one node at the
// cell centre and the mean height of those points; the node is projected
// with project and kept, at its foot with the design normal there, if the
// foot lies inside the patch. With project nil the node itself is kept with
// the vertical normal (0, 0, 1).
//
// Grid returns an error when the grid would exceed 2²⁴ cells (spacing too
// fine for the extent, or far outliers).
func Grid(dst []Core, project ProjectFunc, patch int, a, b []r3.Vec, s *Settings) ([]Core, error) {
	set := s.withDefaults()
	sp := set.CoreSpacing
	x0, y0 := math.Inf(1), math.Inf(1)
	x1, y1 := math.Inf(-1), math.Inf(-1)
	for _, pts := range [2][]r3.Vec{a, b} {
		for _, p := range pts {
			if finiteVec(p) {
				x0, x1 = math.Min(x0, p.X), math.Max(x1, p.X)
				y0, y1 = math.Min(y0, p.Y), math.Max(y1, p.Y)
			}
		}
	}
	if math.IsInf(x0, 0) {
		return dst, nil
	}
	fx, fy := math.Floor((x1-x0)/sp)+1, math.Floor((y1-y0)/sp)+1
	if fx*fy > maxGridCells {
		return dst, fmt.Errorf("change: a core grid of %.0f × %.0f cells at %g m spacing is too large; use a coarser spacing or remove far outliers", fx, fy, sp)
	}
	nx, ny := int(fx), int(fy)
	cnt := make([]int32, nx*ny)
	sumZ := make([]float64, nx*ny)
	for _, pts := range [2][]r3.Vec{a, b} {
		for _, p := range pts {
			if !finiteVec(p) {
				continue
			}
			c := min(int((p.Y-y0)/sp), ny-1)*nx + min(int((p.X-x0)/sp), nx-1)
			cnt[c]++
			sumZ[c] += p.Z
		}
	}
	for c, k := range cnt {
		if k == 0 {
			continue
		}
		i, j := c%nx, c/nx
		node := r3.Vec{X: x0 + (float64(i)+0.5)*sp, Y: y0 + (float64(j)+0.5)*sp, Z: sumZ[c] / float64(k)}
		core := Core{P: node, N: r3.Vec{Z: 1}, Patch: patch}
		if project != nil {
			foot, normal, inside := project(node)
			if !inside {
				continue
			}
			core.P, core.N = foot, normal
		}
		dst = append(dst, core)
	}
	return dst, nil
}

// Summary counts the outcomes of Compare.
type Summary struct {
	Cores        int
	Significant  int
	NotDetected  int
	TooFewPoints int
	// MeanDistance and the RMS are over the cores with a distance, m; NaN
	// if there are none.
	MeanDistance float64
	RMSDistance  float64
	// MaxAbs is the core with the largest |Distance| among the significant
	// ones, -1 if none.
	MaxAbs int
}

// Compare computes, in place, the M3C2 distance at every core point between
// epoch a (earlier) and epoch b (later), after Lague, Brodu & Leroux (2013):
// the points of each epoch inside the cylinder of radius r around the line
// P + t·N, |t| ≤ HalfLength, give the mean (or median) position along N,
// m_i, its standard deviation σ_i and count n_i. Then
//
//	distance = m₂ − m₁,
//	LoD95    = 1.96 · ( sqrt(σ₁²/n₁ + σ₂²/n₂) + reg ),
//
// and the core is Significant where |distance| > LoD95. The 1.96 multiplies
// the whole bracket, registration error included: that is how the open
// point-cloud library PDAL implements the paper's equation 1 (its
// filters/M3C2Filter.cpp, read with the search tool in this work); the
// paper itself was not consulted. A core with fewer than MinPoints of either epoch is
// TooFewPoints and gets no distance.
//
// The level of detection assumes independent, roughly normal errors and
// enough points per cylinder: for small n the normal quantile is optimistic
// (Student's t would be wider), which is why MinPoints defaults to 4.
//
// Points are indexed on a uniform plan grid with cells of size r; the work
// is spread over core points in parallel. Compare allocates two copies of
// the points (the indexes) and a small scratch per worker, never per point.
func Compare(cores []Core, a, b []r3.Vec, s *Settings) Summary {
	set := s.withDefaults()
	ia := newPlanIndex(a, set.Radius)
	ib := newPlanIndex(b, set.Radius)
	parallel(len(cores), set.Workers, func(k int, scratch []float64) []float64 {
		c := &cores[k]
		c.Mean1, c.Sigma1, c.N1, scratch = cylinder(ia, c.P, c.N, &set, scratch)
		c.Mean2, c.Sigma2, c.N2, scratch = cylinder(ib, c.P, c.N, &set, scratch)
		decide(c, &set)
		return scratch
	})
	return summarise(cores)
}

// Position is one epoch's statistics in the cylinder of one core point:
// the mean (or median) position along the normal from the core point, m,
// its standard deviation (n−1 denominator), m, and the point count.
type Position struct {
	Mean, Sigma float64
	N           int
}

// U returns the standard uncertainty of the position's mean,
// sqrt(σ²/n + reg²), with reg the epoch's registration standard error
// (common to all its points, so not divided by n). It is NaN for n < 2.
func (p Position) U(reg float64) float64 {
	if p.N < 2 {
		return math.NaN()
	}
	return math.Sqrt(p.Sigma*p.Sigma/float64(p.N) + reg*reg)
}

// Positions computes, for every core point, one epoch's cylinder
// statistics (see Compare) and returns them in dst (reused if long enough).
// Settings as for Compare; Registration is not used.
func Positions(dst []Position, cores []Core, pts []r3.Vec, s *Settings) []Position {
	set := s.withDefaults()
	if cap(dst) < len(cores) {
		dst = make([]Position, len(cores))
	}
	dst = dst[:len(cores)]
	ix := newPlanIndex(pts, set.Radius)
	parallel(len(cores), set.Workers, func(k int, scratch []float64) []float64 {
		p := &dst[k]
		p.Mean, p.Sigma, p.N, scratch = cylinder(ix, cores[k].P, cores[k].N, &set, scratch)
		return scratch
	})
	return dst
}

// parallel calls f(k) for k in [0, n) on workers goroutines, in blocks;
// each worker keeps its own scratch slice.
func parallel(n, workers int, f func(k int, scratch []float64) []float64) {
	var next atomic.Int64
	const block = 32
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var scratch []float64
			for {
				k0 := int(next.Add(block)) - block
				if k0 >= n {
					return
				}
				for k := k0; k < min(k0+block, n); k++ {
					scratch = f(k, scratch)
				}
			}
		}()
	}
	wg.Wait()
}

// CoreTrend is the trend of the position along the normal at one core point
// over three or more epochs.
type CoreTrend struct {
	Trend
	Epochs int  // epochs with at least MinPoints in the cylinder
	OK     bool // false when fewer than three epochs qualify
}

// CoreTrends fits, at every core point, the rate of its position along the
// normal over the epochs (years[k], positions pos[k], registration standard
// error reg[k] in m), by FitTrend with uᵢ = Position.U(reg). Epochs with
// fewer than MinPoints in the cylinder are left out at that core; a core
// with fewer than three epochs left has OK false.
func CoreTrends(dst []CoreTrend, years []float64, pos [][]Position, reg []float64, s *Settings, alpha float64) []CoreTrend {
	set := s.withDefaults()
	if len(pos) != len(years) || len(reg) != len(years) {
		panic("change: CoreTrends: years, pos and reg differ in length")
	}
	n := 0
	if len(pos) > 0 {
		n = len(pos[0])
	}
	if cap(dst) < n {
		dst = make([]CoreTrend, n)
	}
	dst = dst[:n]
	t := make([]float64, 0, len(years))
	y := make([]float64, 0, len(years))
	u := make([]float64, 0, len(years))
	for c := 0; c < n; c++ {
		t, y, u = t[:0], y[:0], u[:0]
		for k := range years {
			p := pos[k][c]
			if p.N < set.MinPoints {
				continue
			}
			uk := p.U(reg[k])
			if !(uk > 0) {
				continue
			}
			t, y, u = append(t, years[k]), append(y, p.Mean), append(u, uk)
		}
		dst[c] = CoreTrend{Epochs: len(t)}
		if len(t) < 3 {
			continue
		}
		tr, err := FitTrend(t, y, u, alpha)
		if err != nil {
			continue
		}
		dst[c].Trend, dst[c].OK = tr, true
	}
	return dst
}

// decide sets Distance, LoD and Status of c from its cylinder statistics.
func decide(c *Core, set *Settings) {
	if c.N1 < set.MinPoints || c.N2 < set.MinPoints {
		c.Distance, c.LoD, c.Status = math.NaN(), math.NaN(), TooFewPoints
		return
	}
	c.Distance = c.Mean2 - c.Mean1
	c.LoD = LoD95(c.Sigma1, c.N1, c.Sigma2, c.N2, set.Registration)
	c.Status = NotDetected
	if math.Abs(c.Distance) > c.LoD {
		c.Status = Significant
	}
}

// LoD95 returns the M3C2 95 % level of detection
//
//	LoD95 = 1.96 · ( sqrt(σ₁²/n₁ + σ₂²/n₂) + reg )
//
// (Lague, Brodu & Leroux 2013, eq. 1), with σ in m, n point counts and reg
// the registration error in m.
func LoD95(sigma1 float64, n1 int, sigma2 float64, n2 int, reg float64) float64 {
	return Z95 * (math.Sqrt(sigma1*sigma1/float64(n1)+sigma2*sigma2/float64(n2)) + reg)
}

// cylinder returns the mean (or median) position along n of the indexed
// points inside the cylinder around p, their standard deviation and count.
func cylinder(ix *planIndex, p, n r3.Vec, set *Settings, scratch []float64) (mean, sd float64, cnt int, _ []float64) {
	r, h := set.Radius, set.HalfLength
	r2 := r * r
	// The plan footprint of the cylinder lies within r + h·|n_xy| of p.
	reach := r + h*math.Hypot(n.X, n.Y)
	i0, i1, j0, j1 := ix.cellRange(p.X, p.Y, reach)
	var s1, s2 float64
	scratch = scratch[:0]
	for j := j0; j <= j1; j++ {
		row := j * ix.nx
		lo, hi := ix.start[row+i0], ix.start[row+i1+1]
		for _, q := range ix.pts[lo:hi] {
			dx, dy, dz := q.X-p.X, q.Y-p.Y, q.Z-p.Z
			t := dx*n.X + dy*n.Y + dz*n.Z
			if t > h || t < -h {
				continue
			}
			if dx*dx+dy*dy+dz*dz-t*t > r2 {
				continue
			}
			cnt++
			s1 += t
			s2 += t * t
			if set.Median {
				scratch = append(scratch, t)
			}
		}
	}
	if cnt == 0 {
		return math.NaN(), math.NaN(), 0, scratch
	}
	mean = s1 / float64(cnt)
	if cnt > 1 {
		// Positions are relative to p and bounded by h, so the one-pass sums
		// lose at most about h²·ε/σ² relatively: negligible for h ≤ 10 m
		// and σ ≥ 0.1 mm.
		v := (s2 - s1*mean) / float64(cnt-1)
		sd = math.Sqrt(math.Max(v, 0))
	} else {
		sd = math.NaN()
	}
	if set.Median {
		slices.Sort(scratch)
		m := len(scratch) / 2
		if len(scratch)%2 == 1 {
			mean = scratch[m]
		} else {
			mean = (scratch[m-1] + scratch[m]) / 2
		}
	}
	return mean, sd, cnt, scratch
}

func summarise(cores []Core) Summary {
	sum := Summary{Cores: len(cores), MaxAbs: -1}
	var s1, s2 float64
	n := 0
	best := -1.0
	for k := range cores {
		c := &cores[k]
		switch c.Status {
		case TooFewPoints:
			sum.TooFewPoints++
			continue
		case Significant:
			sum.Significant++
			if a := math.Abs(c.Distance); a > best {
				best, sum.MaxAbs = a, k
			}
		default:
			sum.NotDetected++
		}
		n++
		s1 += c.Distance
		s2 += c.Distance * c.Distance
	}
	sum.MeanDistance, sum.RMSDistance = math.NaN(), math.NaN()
	if n > 0 {
		sum.MeanDistance = s1 / float64(n)
		sum.RMSDistance = math.Sqrt(s2 / float64(n))
	}
	return sum
}

// Resolved returns s with every zero field replaced by its default, as
// Compare uses it (for reports that state the settings).
func (s Settings) Resolved() Settings { return s.withDefaults() }

// CombineRegistration returns the registration error of a comparison of two
// epochs whose registrations (each to the common datum) have independent
// standard errors reg1 and reg2, in quadrature: sqrt(reg1² + reg2²).
func CombineRegistration(reg1, reg2 float64) float64 { return math.Hypot(reg1, reg2) }
