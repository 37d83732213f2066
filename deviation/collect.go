package deviation

import (
	"container/heap"
	"math"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/cloud"
	"saddlecheck/uncert"
)

// MapPointLimit is the number of used points up to which the plan-view map
// shows every point; above it the map shows aggregated Grid cells.
const MapPointLimit = 50000

// WorstCount is how many of the largest |deviation| points are kept.
const WorstCount = 20

// Collector is the Sink that gathers what the reports need, in bounded
// memory: per-patch and overall accumulators, the plan grid, the largest
// deviations, counts by status and by source, and (when the run has them)
// as-built residual accumulators per patch.
type Collector struct {
	d       *Design
	Overall *Acc
	Patches []*Acc
	// Local holds, per patch, the residuals from the as-built fit of used
	// points (nil until a result carries residuals).
	Local []*Acc
	Grid  *Grid
	// LocalGrid and LocalPoints map the as-built residuals like Grid and
	// Points map the deviations.
	LocalGrid   *Grid
	LocalPoints []MapPoint
	worstLocal  worstHeap
	// Points are the used points for the map while there are at most
	// MapPointLimit of them (nil afterwards).
	Points []MapPoint
	worst  worstHeap
	status [4]int64
	recs   []int64
	rej    []int64
	// FirstRejected holds up to 5 examples of rejected records.
	FirstRejected []RejectedRecord

	// With a Decision (SetDecision) and results carrying U: decision zones
	// per patch and overall, the uncertainty budget, the uncertainty that
	// would decide the inconclusive points, and inconclusive counts per
	// grid cell.
	Decision *Decision
	Zones    []uncert.ZoneCounts
	ZonesAll uncert.ZoneCounts
	Budget   uncert.BudgetStats
	Needed   *uncert.NeededHist
	CellInc  []int64
	UStats   *Acc // the combined u of used points, as an accumulator
	sawU     bool
}

// NeededMaxM is the range of the needed-uncertainty histogram: an
// inconclusive point is decided by any u below |limit − |d||/k, which is
// below its own u, so 50 mm covers every practical survey.
const NeededMaxM = 0.05

// SetDecision makes the Collector decide points with their uncertainty.
func (c *Collector) SetDecision(d *Decision) {
	c.Decision = d
	c.Zones = make([]uncert.ZoneCounts, len(c.Patches))
	c.Needed = uncert.NewNeededHist(1e-5, NeededMaxM)
	if c.Grid != nil {
		c.CellInc = make([]int64, c.Grid.NX*c.Grid.NY)
	}
	t := c.d.Tolerance.WithDefaults()
	t.LimitM, t.MaxAbsM = 1, 0 // u accumulator: bands are irrelevant
	t.BandsM = nil
	t.FarM = NeededMaxM * 10
	c.UStats = NewAcc(t)
}

// HasU reports whether any result carried uncertainties.
func (c *Collector) HasU() bool { return c.sawU }

// MapPoint is a used point for the map.
type MapPoint struct {
	X, Y, DevM float64
	U          float64 // standard uncertainty, NaN when unknown
}

// RejectedRecord is an example of a rejected input record.
type RejectedRecord struct {
	Source int
	Line   int64
	Reason string
}

// WorstPoint is a used point with one of the largest |deviation|.
type WorstPoint struct {
	ID     string
	Source int
	Line   int64
	Patch  int
	P      r3.Vec
	DevM   float64
	U      float64 // NaN when unknown
}

// NewCollector returns a Collector for the design d and nSources inputs.
func NewCollector(d *Design, nSources int) *Collector {
	c := &Collector{d: d, Overall: NewAcc(d.Tolerance), recs: make([]int64, nSources), rej: make([]int64, nSources)}
	for range d.Patches {
		c.Patches = append(c.Patches, NewAcc(d.Tolerance))
	}
	if lo, hi, ok := d.Extent(); ok {
		if g, err := NewGrid(lo, hi, GridCellSize(lo, hi, 6000)); err == nil {
			c.Grid = g
		}
		if g, err := NewGrid(lo, hi, GridCellSize(lo, hi, 6000)); err == nil {
			c.LocalGrid = g
		}
	}
	c.Points = make([]MapPoint, 0, 1024)
	c.LocalPoints = make([]MapPoint, 0, 1024)
	return c
}

// Consume adds one result.
func (c *Collector) Consume(r *Result) error {
	ch := r.Chunk
	src := ch.Source
	if r.Budget != nil && c.Decision != nil {
		c.Budget.Merge(r.Budget)
	}
	for i, n := 0, ch.Len(); i < n; i++ {
		st := r.Status[i]
		c.status[st]++
		if src < len(c.recs) {
			c.recs[src]++
			if st == StatusRejected {
				c.rej[src]++
			}
		}
		switch st {
		case StatusRejected:
			if len(c.FirstRejected) < 5 {
				c.FirstRejected = append(c.FirstRejected, RejectedRecord{Source: src, Line: ch.Line[i], Reason: ch.Reject[i]})
			}
			continue
		case StatusUsed:
		default:
			continue
		}
		d := r.Dev[i]
		k := r.Patch[i]
		c.Overall.Add(d)
		c.Patches[k].Add(d)
		p := ch.P[i]
		if c.Grid != nil {
			c.Grid.Add(p, d)
		}
		u := math.NaN()
		if r.U != nil {
			u = r.U[i]
			if c.Decision != nil {
				// a point without a known u (its station is not in the
				// model) is decided by its deviation alone (u = 0)
				uz := u
				if math.IsNaN(uz) {
					uz = 0
				} else {
					c.sawU = true
					c.UStats.Add(u)
				}
				z := c.Zones[k].AddPoint(&c.Decision.Criterion, d, uz)
				c.ZonesAll.Add(z)
				if z == uncert.Inconclusive {
					c.Needed.Add(d, c.Decision.Criterion.Limit, c.Decision.Rule.K)
					if c.CellInc != nil {
						if ci, ok := c.Grid.Index(p); ok {
							c.CellInc[ci]++
						}
					}
				}
			}
		}
		if c.Points != nil {
			if len(c.Points) < MapPointLimit {
				c.Points = append(c.Points, MapPoint{X: p.X, Y: p.Y, DevM: d, U: u})
			} else {
				c.Points = nil
			}
		}
		if r.Resid != nil && !math.IsNaN(r.Resid[i]) {
			if c.Local == nil {
				c.Local = make([]*Acc, len(c.Patches))
			}
			if c.Local[k] == nil {
				c.Local[k] = NewAcc(c.d.Tolerance)
			}
			e := r.Resid[i]
			c.Local[k].Add(e)
			if c.LocalGrid != nil {
				c.LocalGrid.Add(p, e)
			}
			if c.LocalPoints != nil {
				if len(c.LocalPoints) < MapPointLimit {
					c.LocalPoints = append(c.LocalPoints, MapPoint{X: p.X, Y: p.Y, DevM: e, U: math.NaN()})
				} else {
					c.LocalPoints = nil
				}
			}
			c.worstLocal.offer(ch, i, int(k), p, e, math.NaN())
		}
		c.worst.offer(ch, i, int(k), p, d, u)
	}
	return nil
}

// Count returns the number of records with status st.
func (c *Collector) Count(st Status) int64 { return c.status[st] }

// Records returns the number of records read from source i.
func (c *Collector) Records(i int) int64 { return c.recs[i] }

// Rejected returns the number of rejected records of source i.
func (c *Collector) Rejected(i int) int64 { return c.rej[i] }

// Worst returns the kept largest-|deviation| points, largest first.
func (c *Collector) Worst() []WorstPoint { return c.worst.sorted() }

// WorstLocal returns the kept largest-|residual| points from the as-built
// fits, largest first (DevM holds the residual).
func (c *Collector) WorstLocal() []WorstPoint { return c.worstLocal.sorted() }

// offer keeps record i among the WorstCount largest |v|.
func (h *worstHeap) offer(ch *cloud.Chunk, i, k int, p r3.Vec, v, u float64) {
	if len(*h) == WorstCount && math.Abs(v) <= math.Abs((*h)[0].DevM) {
		return
	}
	w := WorstPoint{ID: ch.PointID(i), Source: ch.Source, Line: ch.Line[i], Patch: k, P: p, DevM: v, U: u}
	if len(*h) < WorstCount {
		heap.Push(h, w)
		return
	}
	(*h)[0] = w
	heap.Fix(h, 0)
}

func (h worstHeap) sorted() []WorstPoint {
	out := append([]WorstPoint(nil), h...)
	for i := 1; i < len(out); i++ {
		for j := i; j > 0 && math.Abs(out[j].DevM) > math.Abs(out[j-1].DevM); j-- {
			out[j], out[j-1] = out[j-1], out[j]
		}
	}
	return out
}

// Verdicts returns each patch's verdict and the overall verdict. With
// uncertainties (SetDecision and results carrying U) a patch's verdict
// follows the decision rule on its zone counts (uncert.ZoneCounts.Verdict);
// otherwise it is the simple-acceptance rule of the tolerance.
func (c *Collector) Verdicts() ([]Verdict, Verdict) {
	vs := make([]Verdict, len(c.Patches))
	for i, a := range c.Patches {
		if c.sawU && c.Zones != nil {
			switch c.Zones[i].Verdict(&c.Decision.Criterion) {
			case uncert.Conforming:
				vs[i] = Conforming
			case uncert.Nonconforming:
				vs[i] = Nonconforming
			default:
				vs[i] = Inconclusive
			}
			continue
		}
		vs[i] = a.Summary(c.d.Tolerance).Verdict
	}
	return vs, Overall(vs)
}

// worstHeap is a min-heap on |DevM|.
type worstHeap []WorstPoint

func (h worstHeap) Len() int           { return len(h) }
func (h worstHeap) Less(i, j int) bool { return math.Abs(h[i].DevM) < math.Abs(h[j].DevM) }
func (h worstHeap) Swap(i, j int)      { h[i], h[j] = h[j], h[i] }
func (h *worstHeap) Push(x any)        { *h = append(*h, x.(WorstPoint)) }
func (h *worstHeap) Pop() any {
	old := *h
	x := old[len(old)-1]
	*h = old[:len(old)-1]
	return x
}

// Index returns the cell index (j·NX + i) of the plan point p, and false
// outside the grid.
func (g *Grid) Index(p r3.Vec) (int, bool) {
	fi := math.Floor((p.X - g.X0) / g.CellM)
	fj := math.Floor((p.Y - g.Y0) / g.CellM)
	if !(fi >= 0 && fi < float64(g.NX) && fj >= 0 && fj < float64(g.NY)) {
		return 0, false
	}
	return int(fj)*g.NX + int(fi), true
}
