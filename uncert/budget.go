package uncert

import "math"

// Component names one term of a point's uncertainty budget. Each is a
// standard uncertainty along the design normal.
type Component int

// The budget components, in report order.
const (
	// Angles is the horizontal-direction and zenith-angle noise, per point.
	Angles Component = iota
	// Orientation is the setup's orientation error, common to the setup.
	Orientation
	// Distance is the distance (total station) or incidence-inflated range
	// (scanner) noise, per point.
	Distance
	// StationSetup is centring, instrument/target height and station
	// coordinates, common to the setup.
	StationSetup
	// Plain is the per-file standard uncertainty of a plain model, per point.
	Plain
	// Control is the set-out / registration component, common.
	Control
	// Design is the design-model component, common.
	Design
	// SurfaceTexture is the surface or target component, per point.
	SurfaceTexture
	// Fit is the fitted reference's own uncertainty (FitComponent), per
	// point; zero when the reference is a design surface.
	Fit
	// NumComponents is the number of components.
	NumComponents
)

var componentNames = [NumComponents]string{
	"angles", "orientation", "distance", "station setup", "stated per file",
	"control / registration", "design model", "surface / target", "fitted reference",
}

// String returns the component's report name.
func (c Component) String() string {
	if c < 0 || c >= NumComponents {
		return "unknown"
	}
	return componentNames[c]
}

// MarshalText returns the report name, so that components read as words in
// JSON.
func (c Component) MarshalText() ([]byte, error) { return []byte(c.String()), nil }

// Common reports whether the component is common to all points of a setup
// (correlated between them: averaging many points does not reduce it)
// rather than independent per point (FIELD.md §2, budget note).
func (c Component) Common() bool {
	switch c {
	case Orientation, StationSetup, Control, Design:
		return true
	}
	return false
}

// PointU is the uncertainty budget of one point, metres.
type PointU struct {
	// C holds each component's standard uncertainty along the normal.
	C [NumComponents]float64
	// Grazing is set when a scanner's incidence angle exceeded the cap
	// (Instrument.MaxIncidenceDeg): the range inflation was capped, so the
	// uncertainty of this point may be understated.
	Grazing bool
	// Incidence is the angle between the scanner beam and the normal,
	// radians (zero for other kinds).
	Incidence float64
}

// U returns the combined standard uncertainty √(Σ C²).
func (p *PointU) U() float64 { return math.Sqrt(p.sumSq()) }

func (p *PointU) sumSq() float64 {
	var v float64
	for _, c := range p.C {
		v += c * c
	}
	return v
}

// BudgetLine is one row of a budget table.
type BudgetLine struct {
	Component Component `json:"component"`
	Name      string    `json:"name"`
	// MM is the value in millimetres (the statistic the Budget was made with).
	MM float64 `json:"mm"`
	// Common is Component.Common.
	Common bool `json:"common"`
}

// Budget is an uncertainty budget for a report table: one line per
// non-zero component and the combined standard uncertainty, mm.
type Budget struct {
	// Statistic says what MM holds: "rms", "mean" or "max" over the points.
	Statistic  string       `json:"statistic"`
	Lines      []BudgetLine `json:"lines"`
	CombinedMM float64      `json:"combined_mm"`
	// Points is the number of points summarised.
	Points int64 `json:"points"`
}

// BudgetStats accumulates PointU values over a stream of points. The zero
// value is ready; Add does not allocate; Merge combines per-worker tallies.
type BudgetStats struct {
	n       int64
	sum, ss [NumComponents]float64
	max     [NumComponents]float64
	sumU    float64
	maxU    float64
	grazing int64
}

// Add records one point.
func (b *BudgetStats) Add(p *PointU) {
	b.n++
	var v float64
	for i, c := range p.C {
		b.sum[i] += c
		b.ss[i] += c * c
		b.max[i] = math.Max(b.max[i], c)
		v += c * c
	}
	u := math.Sqrt(v)
	b.sumU += u
	b.maxU = math.Max(b.maxU, u)
	if p.Grazing {
		b.grazing++
	}
}

// Merge adds the tallies of o to b.
func (b *BudgetStats) Merge(o *BudgetStats) {
	b.n += o.n
	for i := range b.sum {
		b.sum[i] += o.sum[i]
		b.ss[i] += o.ss[i]
		b.max[i] = math.Max(b.max[i], o.max[i])
	}
	b.sumU += o.sumU
	b.maxU = math.Max(b.maxU, o.maxU)
	b.grazing += o.grazing
}

// N returns the number of points added.
func (b *BudgetStats) N() int64 { return b.n }

// Grazing returns the number of points flagged grazing.
func (b *BudgetStats) Grazing() int64 { return b.grazing }

// MeanDeviationU returns the standard uncertainty (metres) of the mean
// deviation of the points added, for a patch's mean offset:
//
//	u²(d̄) = Σ_common (mean c)² + Σ_per-point mean(c²) / N.
//
// Per-point components average down by √N; components common to a setup
// do not (FIELD.md §2 budget note). The common part uses the mean of the
// magnitudes, an upper bound where a common error projects with different
// signs on different normals. Meant for the points of one setup; over
// several setups it overstates (their common errors are independent).
// NaN with no points.
func (b *BudgetStats) MeanDeviationU() float64 {
	if b.n == 0 {
		return math.NaN()
	}
	fn := float64(b.n)
	var v float64
	for i := Component(0); i < NumComponents; i++ {
		if i.Common() {
			v += sq(b.sum[i] / fn)
		} else {
			v += b.ss[i] / fn / fn
		}
	}
	return math.Sqrt(v)
}

// RMS returns the budget of root-mean-square values. Its lines add in
// quadrature to its combined value exactly (mean u² = Σ mean c²), so it is
// the table to print.
func (b *BudgetStats) RMS() Budget {
	return b.budget("rms", func(i int) float64 { return math.Sqrt(b.ss[i] / float64(b.n)) }, func() float64 {
		var v float64
		for _, s := range b.ss {
			v += s
		}
		return math.Sqrt(v / float64(b.n))
	})
}

// Mean returns the budget of mean values; its combined value is the mean
// of the points' combined u (it does not add in quadrature from the lines).
func (b *BudgetStats) Mean() Budget {
	return b.budget("mean", func(i int) float64 { return b.sum[i] / float64(b.n) }, func() float64 { return b.sumU / float64(b.n) })
}

// Max returns the budget of maxima; its combined value is the largest
// combined u of any point.
func (b *BudgetStats) Max() Budget {
	return b.budget("max", func(i int) float64 { return b.max[i] }, func() float64 { return b.maxU })
}

func (b *BudgetStats) budget(stat string, line func(int) float64, combined func() float64) Budget {
	out := Budget{Statistic: stat, Points: b.n}
	if b.n == 0 {
		return out
	}
	for i := Component(0); i < NumComponents; i++ {
		if b.max[i] == 0 {
			continue
		}
		out.Lines = append(out.Lines, BudgetLine{Component: i, Name: i.String(), MM: line(int(i)) / mm, Common: i.Common()})
	}
	out.CombinedMM = combined() / mm
	return out
}
