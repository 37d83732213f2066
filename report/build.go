package report

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

// Frame labels for the measurement basis (printed on every report).
const (
	BasisAsPlaced = "AS-PLACED (site grid): points and design in the same project control frame, no adjustment"
)

// SignConvention returns the sign convention sentence for a design.
func SignConvention(d *deviation.Design) string {
	side := "up (+Z)"
	if !d.NormalUp {
		side = "down (−Z)"
	}
	s := fmt.Sprintf("A deviation is the signed orthogonal distance from the design surface to the measured point, along the true normal at the point's closest point on the design (not a vertical difference); positive on the design's normal side, %s; negative on the other side.", side)
	if d.OffsetM != 0 {
		s += fmt.Sprintf(" The design offset of %.1f mm (measured face beyond the design surface on the positive side) is subtracted before the tolerance applies.", d.OffsetM*1000)
	}
	return s
}

func stats(s deviation.Summary) Stats {
	return Stats{N: s.N, MeanMM: s.MeanMM, StdMM: s.StdMM, RMSMM: s.RMSMM, MinMM: s.MinMM, MaxMM: s.MaxMM,
		P05MM: s.P05MM, P50MM: s.P50MM, P95MM: s.P95MM, MaxAbsMM: s.MaxAbsMM, ShareWithinLimit: s.ShareWithinLimit,
		BandShares: s.SharePerBand, PercentileResolutionMM: deviation.HistBinM * 1000}
}

// Build assembles the Summary of a finished run from its Collector. The
// caller fills Tool, Generated, Inputs and TimingsS.
func Build(c *deviation.Collector, d *deviation.Design) *Summary {
	t := d.Tolerance
	s := &Summary{
		Structure: d.Structure,
		Design: Design{Path: d.Path, SHA256: d.SHA256, Units: d.Unit.Name, Normal: normalWord(d.NormalUp),
			OffsetMM: d.OffsetM * 1000, MarginM: d.MarginM},
		Basis:          BasisAsPlaced,
		SignConvention: SignConvention(d),
		Tolerance: Tolerance{Source: t.Source, LimitMM: t.LimitM * 1000, MinShare: t.MinShare, MaxAbsMM: t.MaxAbsM * 1000,
			BandsMM: mmList(t.BandsM), FarMM: t.FarM * 1000, Rule: t.RuleText(),
			DecisionRule: "simple acceptance (JCGM 106:2012): each deviation is compared with the limit as measured; measurement uncertainty is not taken into account because no uncertainty model was given"},
		PointsUsed:     c.Count(deviation.StatusUsed),
		PointsOutside:  c.Count(deviation.StatusOutside),
		PointsFar:      c.Count(deviation.StatusFar),
		PointsRejected: c.Count(deviation.StatusRejected),
		Warnings:       append([]string(nil), d.Warnings...),
		Cautions:       Cautions,
	}
	s.PointsRead = s.PointsUsed + s.PointsOutside + s.PointsFar + s.PointsRejected
	verdicts, overall := c.Verdicts()
	s.Verdict = overall.String()
	s.Overall = stats(c.Overall.Summary(t))
	for i, p := range d.Patches {
		ps := c.Patches[i].Summary(t)
		row := Patch{ID: p.ID, Kind: p.Kind, Stats: stats(ps), Verdict: verdicts[i].String()}
		s.Patches = append(s.Patches, row)
		for _, n := range p.Notes {
			s.Design.Notes = append(s.Design.Notes, "patch "+p.ID+": "+n)
		}
	}
	s.VerdictText = VerdictText(s)
	for _, w := range c.Worst() {
		wp := WorstPoint{ID: w.ID, Source: w.Source, Line: w.Line, DeviationMM: w.DevM * 1000, X: w.P.X, Y: w.P.Y, Z: w.P.Z}
		if w.Patch >= 0 && w.Patch < len(d.Patches) {
			wp.Patch = d.Patches[w.Patch].ID
		}
		if !math.IsNaN(w.U) {
			wp.UMM = w.U * 1000
		}
		s.Worst = append(s.Worst, wp)
	}
	s.Histogram = histogram(c.Overall, t)
	s.Map = buildMap(c, d)
	for _, r := range c.FirstRejected {
		s.Warnings = append(s.Warnings, fmt.Sprintf("rejected row (input %d, line %d): %s", r.Source+1, r.Line, r.Reason))
	}
	return s
}

func normalWord(up bool) string {
	if up {
		return "up"
	}
	return "down"
}

func mmList(v []float64) []float64 {
	out := make([]float64, len(v))
	for i, x := range v {
		out[i] = x * 1000
	}
	return out
}

// VerdictText states the overall verdict in a sentence.
func VerdictText(s *Summary) string {
	var nc, inc []string
	for _, p := range s.Patches {
		switch p.Verdict {
		case "nonconforming":
			nc = append(nc, p.ID)
		case "inconclusive":
			inc = append(inc, p.ID)
		}
	}
	switch s.Verdict {
	case "conforming":
		return fmt.Sprintf("Every patch conforms to the stated tolerance (%d used points).", s.PointsUsed)
	case "nonconforming":
		return fmt.Sprintf("Does not conform: patch(es) %v do not meet the stated tolerance.", nc)
	}
	return fmt.Sprintf("Inconclusive: patch(es) %v could not be decided (no used points, or the measurement uncertainty leaves the decision open).", inc)
}

// histogram turns the fine accumulator histogram into report bins of a
// readable width over ±(last band + a margin).
func histogram(a *deviation.Acc, t deviation.Tolerance) Histogram {
	if a.N() == 0 {
		return Histogram{}
	}
	span := t.LimitM * 2
	if n := len(t.BandsM); n > 0 && t.BandsM[n-1] > span {
		span = t.BandsM[n-1]
	}
	// symmetric about zero, wide enough for the data and both limit lines
	ext := math.Max(math.Max(-a.Min(), a.Max()), t.LimitM*1.2)
	ext = math.Min(ext, span*1.25)
	lo, hi := -ext, ext
	spanMM := math.Max(hi-lo, t.LimitM) * 1000
	bin := niceStep(spanMM / 40)
	from := math.Floor(lo*1000/bin) * bin
	to := math.Ceil(hi*1000/bin) * bin
	if to <= from {
		to = from + bin
	}
	nb := int(math.Round((to - from) / bin))
	h := Histogram{BinMM: bin, FromMM: from, Counts: make([]int64, nb)}
	deviation.HistogramInto(a, from/1000, bin/1000, h.Counts, &h.Under, &h.Over)
	return h
}

// buildMap fills the plan-view map: every used point when there are few
// enough, else the grid cells.
func buildMap(c *deviation.Collector, d *deviation.Design) Map {
	var m Map
	first := true
	grow := func(x, y float64) {
		if first {
			m.MinX, m.MaxX, m.MinY, m.MaxY = x, x, y, y
			first = false
			return
		}
		m.MinX, m.MaxX = math.Min(m.MinX, x), math.Max(m.MaxX, x)
		m.MinY, m.MaxY = math.Min(m.MinY, y), math.Max(m.MaxY, y)
	}
	for _, p := range d.Patches {
		if p.Kind == "mesh" {
			continue
		}
		var ring [][2]float64
		var cx, cy float64
		for _, q := range p.Corners {
			ring = append(ring, [2]float64{q.X, q.Y})
			grow(q.X, q.Y)
			cx += q.X / 4
			cy += q.Y / 4
		}
		m.Outline = append(m.Outline, ring)
		m.Labels = append(m.Labels, MapLabel{X: cx, Y: cy, Text: p.ID})
	}
	if c.Points != nil {
		for _, p := range c.Points {
			m.Points = append(m.Points, MapPoint{X: p.X, Y: p.Y, DevMM: p.DevM * 1000})
			grow(p.X, p.Y)
		}
		return m
	}
	if g := c.Grid; g != nil {
		m.CellM = g.CellM
		m.Cells = gridCells(g)
		for _, cell := range m.Cells {
			grow(cell.X, cell.Y)
			grow(cell.X+g.CellM, cell.Y+g.CellM)
		}
	}
	return m
}

// gridCells lists the non-empty cells of g, in millimetres.
func gridCells(g *deviation.Grid) []Cell {
	var out []Cell
	for j := 0; j < g.NY; j++ {
		for i := 0; i < g.NX; i++ {
			cell := g.Cell(i, j)
			if cell.N == 0 {
				continue
			}
			out = append(out, Cell{X: g.X0 + float64(i)*g.CellM, Y: g.Y0 + float64(j)*g.CellM, N: cell.N,
				MeanMM: cell.Mean() * 1000, MinMM: cell.Min * 1000, MaxMM: cell.Max * 1000})
		}
	}
	return out
}

func cellCentre(c *Cell, size float64) r3.Vec {
	return r3.Vec{X: c.X + size/2, Y: c.Y + size/2}
}
