package report

import (
	"fmt"
	"math"

	"saddlecheck/deviation"
	"saddlecheck/uncert"
)

// AddUncertainty fills the uncertainty section of s from a run whose
// results carried per-point uncertainties: the decision rule in words, the
// budget table, the zone counts overall and per patch, the inconclusive
// marks on the map, and what survey uncertainty would decide the
// inconclusive points.
func AddUncertainty(s *Summary, c *deviation.Collector, rule uncert.Rule, modelNotes []string) {
	if c.Decision == nil || !c.HasU() {
		return
	}
	u := &Uncertainty{Rule: rule.Text(), K: rule.K}
	if u.K == 0 {
		u.K = uncert.DefaultK
	}
	mean, max := c.Budget.Mean(), c.Budget.Max()
	maxBy := map[uncert.Component]float64{}
	for _, l := range max.Lines {
		maxBy[l.Component] = l.MM
	}
	for _, l := range mean.Lines {
		u.Components = append(u.Components, Component{Name: l.Name, MeanMM: l.MM, MaxMM: maxBy[l.Component], Common: l.Common})
	}
	u.CombinedMM = c.UStats.Mean() * 1000
	u.MaxMM = c.UStats.Max() * 1000
	z := c.ZonesAll
	u.Zones = Zones{Conforming: z.Conforming, Nonconforming: z.Nonconforming, Inconclusive: z.Inconclusive}
	if n := c.Needed.N(); n > 0 {
		for _, share := range []float64{0.5, 0.9} {
			need := c.Needed.U(share)
			if need > 0 && !math.IsNaN(need) {
				u.Decide += fmt.Sprintf("A survey with u ≤ %.2f mm would decide at least %.0f %% of the %d inconclusive points. ", need*1000, 100*share, n)
			}
		}
		if u.Decide == "" {
			u.Decide = fmt.Sprintf("The %d inconclusive points lie so close to the limit that no practical survey uncertainty would decide most of them.", n)
		}
	}
	s.Uncertainty = u
	s.Tolerance.DecisionRule = rule.Text()
	cr := c.Decision.Criterion
	share := cr.MinShare
	if share == 0 {
		share = 1
	}
	patchRule := fmt.Sprintf(" With measurement uncertainty the patch verdicts follow the decision zones instead: a patch conforms when at least %.1f %% of its used points are proven conforming", 100*share)
	if cr.MaxAbs > 0 {
		patchRule += fmt.Sprintf(" and every point is proven within ±%.1f mm", cr.MaxAbs*1000)
	}
	patchRule += fmt.Sprintf("; it does not conform when more than %.1f %% are proven nonconforming", 100*(1-share))
	if cr.MaxAbs > 0 {
		patchRule += fmt.Sprintf(" or a point is proven beyond ±%.1f mm", cr.MaxAbs*1000)
	}
	patchRule += "; otherwise it is inconclusive."
	s.Tolerance.Rule += patchRule
	for i := range s.Patches {
		if i < len(c.Zones) {
			zc := c.Zones[i]
			s.Patches[i].Zones = &Zones{Conforming: zc.Conforming, Nonconforming: zc.Nonconforming, Inconclusive: zc.Inconclusive}
		}
	}
	for _, w := range modelNotes {
		s.Warnings = append(s.Warnings, w)
	}
	// inconclusive marks on the map
	for i := range s.Map.Points {
		if i < len(c.Points) {
			p := c.Points[i]
			s.Map.Points[i].Inconclusive = !math.IsNaN(p.U) && c.Decision.Zone(p.DevM, p.U) == uncert.Inconclusive
		}
	}
	if c.CellInc != nil && c.Grid != nil && s.Map.CellM > 0 {
		for i := range s.Map.Cells {
			cell := &s.Map.Cells[i]
			if ci, ok := c.Grid.Index(cellCentre(cell, s.Map.CellM)); ok {
				cell.Inconclusive = c.CellInc[ci]
			}
		}
	}
}
