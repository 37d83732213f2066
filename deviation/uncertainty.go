package deviation

import (
	"math"
	"sync/atomic"

	"saddlecheck/uncert"
)

// BudgetEvery is the stride of the points whose full uncertainty budget
// (each component) is evaluated for the report's budget table: every
// BudgetEvery-th point of a chunk. The combined u of every point is always
// computed; the table's mean and maximum per component come from this
// systematic sample.
const BudgetEvery = 8

// Uncertainty is the Enricher that gives every measured point its standard
// uncertainty along the design normal at its closest point, from the
// instrument model of the point's input file (package uncert).
type Uncertainty struct {
	// Setups holds the model of each input (by Chunk.Source); a nil entry
	// means no model for that input (u is NaN there).
	Setups []*uncert.Setup
	// ByStation, where an input's model has several stations, maps each
	// station id to its setup; the point's own station id (Chunk.Station)
	// picks it. A point whose station the model lacks gets u = NaN and is
	// counted in Unmatched.
	ByStation []map[string]*uncert.Setup
	Unmatched atomic.Int64
}

var _ Enricher = (*Uncertainty)(nil)

// Prepare makes r carry uncertainties and a budget sample.
func (e *Uncertainty) Prepare(r *Result, n int) {
	if r.U == nil {
		r.U = make([]float64, 0, n)
	}
	if r.Budget == nil {
		r.Budget = &uncert.BudgetStats{}
	}
}

// Enrich fills r.U (metres) and r.Budget.
func (e *Uncertainty) Enrich(r *Result) {
	c := r.Chunk
	*r.Budget = uncert.BudgetStats{}
	var s *uncert.Setup
	if c.Source < len(e.Setups) {
		s = e.Setups[c.Source]
	}
	var byStn map[string]*uncert.Setup
	if c.Source < len(e.ByStation) && c.Station != nil {
		byStn = e.ByStation[c.Source]
	}
	nan := math.NaN()
	var unmatched int64
	for i, n := 0, c.Len(); i < n; i++ {
		if byStn != nil && r.Status[i] != StatusRejected {
			s = byStn[c.Station[i]]
			if s == nil {
				unmatched++
			}
		}
		if s == nil || r.Status[i] == StatusRejected {
			r.U[i] = nan
			continue
		}
		if i%BudgetEvery == 0 && r.Status[i] == StatusUsed {
			pu := s.Eval(c.P[i], r.Normal[i])
			r.Budget.Add(&pu)
			r.U[i] = pu.U()
			continue
		}
		r.U[i] = s.NormalU(c.P[i], r.Normal[i])
	}
	if unmatched > 0 {
		e.Unmatched.Add(unmatched)
	}
}

// Decision is what the Collector needs to decide points with their
// uncertainty.
type Decision struct {
	Rule uncert.Rule
	// Criterion is built from the design's tolerance and Rule.
	Criterion uncert.Criterion
}

// NewDecision returns the decision of tolerance t under rule r.
func NewDecision(t Tolerance, r uncert.Rule) *Decision {
	t = t.WithDefaults()
	return &Decision{Rule: r, Criterion: uncert.Criterion{Limit: t.LimitM, MaxAbs: t.MaxAbsM, MinShare: t.MinShare, Rule: r}}
}

// Zone decides one deviation d with standard uncertainty u (metres).
func (d *Decision) Zone(dev, u float64) uncert.Zone {
	return uncert.Decide(dev, u, d.Criterion.Limit, d.Rule)
}
