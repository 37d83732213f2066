package report

import (
	"bytes"
	_ "embed"
	"fmt"
	"html/template"
	"math"
	"strings"
)

//go:embed report.html.tmpl
var reportTmpl string

var tmpl = template.Must(template.New("report").Parse(reportTmpl))

// view is the HTML view model: every number is already formatted.
type view struct {
	S          *Summary
	Generated  string
	VerdictCls string
	Histogram  template.HTML
	Map        template.HTML
	Legend     template.HTML
	LocalMap   template.HTML
	WorstLocal []worstRow
	Patches    []patchRow
	Worst      []worstRow
	AsBuilt    []asBuiltRow
	Timings    string
	Bands      []string
	Zones      bool
}

type patchRow struct {
	ID, Kind, N, Mean, Std, RMS, Min, Max, P05, P50, P95, MaxAbs, Within, Verdict, Cls string
	Bands                                                                              []string
	Zones                                                                              string
}

type worstRow struct {
	ID, File, Patch, Dev, U, X, Y, Z string
	Line                             int64
}

type asBuiltRow struct {
	ID, Fitted, K1, K2, DK1, DK2, Placement, Tilt, RMSLocal, MaxLocal, Outliers, Class, Note string
}

func mm(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	return fmt.Sprintf("%+.1f", v)
}

func mmAbs(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	return fmt.Sprintf("%.1f", v)
}

func pct(v float64) string {
	if math.IsNaN(v) {
		return "–"
	}
	return fmt.Sprintf("%.1f %%", 100*v)
}

func verdictClass(v string) string {
	switch v {
	case "conforming":
		return "ok"
	case "nonconforming":
		return "bad"
	}
	return "unk"
}

// WriteHTML writes the self-contained report.html for s to path.
func WriteHTML(path string, s *Summary) error {
	var buf bytes.Buffer
	if err := RenderHTML(&buf, s); err != nil {
		return err
	}
	return WriteFile(path, buf.Bytes())
}

// RenderHTML renders the report for s.
func RenderHTML(w *bytes.Buffer, s *Summary) error {
	if s.Cautions == nil {
		s.Cautions = Cautions
	}
	v := view{S: s, Generated: s.Generated.UTC().Format("2006-01-02 15:04 UTC"), VerdictCls: verdictClass(s.Verdict)}
	for i, b := range s.Tolerance.BandsMM {
		if i == 0 {
			v.Bands = append(v.Bands, fmt.Sprintf("≤ %g", b))
		} else {
			v.Bands = append(v.Bands, fmt.Sprintf("%g–%g", s.Tolerance.BandsMM[i-1], b))
		}
	}
	if n := len(s.Tolerance.BandsMM); n > 0 {
		v.Bands = append(v.Bands, fmt.Sprintf("> %g", s.Tolerance.BandsMM[n-1]))
	}
	for _, p := range s.Patches {
		r := patchRow{ID: p.ID, Kind: p.Kind, N: fmt.Sprint(p.N), Mean: mm(p.MeanMM), Std: mmAbs(p.StdMM),
			RMS: mmAbs(p.RMSMM), Min: mm(p.MinMM), Max: mm(p.MaxMM), P05: mm(p.P05MM), P50: mm(p.P50MM),
			P95: mm(p.P95MM), MaxAbs: mmAbs(p.MaxAbsMM), Within: pct(p.ShareWithinLimit), Verdict: p.Verdict,
			Cls: verdictClass(p.Verdict)}
		if p.N == 0 {
			r.Mean, r.Std, r.RMS, r.Min, r.Max, r.P05, r.P50, r.P95, r.MaxAbs, r.Within = "–", "–", "–", "–", "–", "–", "–", "–", "–", "–"
		}
		for _, b := range p.BandShares {
			r.Bands = append(r.Bands, pct(b))
		}
		if p.Zones != nil {
			v.Zones = true
			r.Zones = fmt.Sprintf("%d / %d / %d", p.Zones.Conforming, p.Zones.Inconclusive, p.Zones.Nonconforming)
		}
		v.Patches = append(v.Patches, r)
		if a := p.AsBuilt; a != nil {
			row := asBuiltRow{ID: p.ID, Note: a.Note, Fitted: "no"}
			if a.Fitted {
				sig := func(b bool) string {
					if b {
						return " (significant)"
					}
					return " (not significant)"
				}
				row.Fitted = "yes"
				row.K1 = fmt.Sprintf("%.5f ± %.5f (design %.5f)", a.K1.Value, a.K1.U, a.DesignK1)
				row.K2 = fmt.Sprintf("%.5f ± %.5f (design %.5f)", a.K2.Value, a.K2.U, a.DesignK2)
				row.DK1 = fmt.Sprintf("%+.5f%s", a.K1.Value-a.DesignK1, sig(a.DK1Sig))
				row.DK2 = fmt.Sprintf("%+.5f%s", a.K2.Value-a.DesignK2, sig(a.DK2Sig))
				row.Placement = mm(a.PlacementMM)
				row.Tilt = fmt.Sprintf("%.1f", a.TiltMgon)
				row.RMSLocal = mmAbs(a.RMSLocalMM)
				row.MaxLocal = mmAbs(a.MaxLocalMM)
				row.Outliers = fmt.Sprintf("%d of %d", a.Outliers, a.SampleSize)
				row.Class = a.QuadricClass
			}
			v.AsBuilt = append(v.AsBuilt, row)
		}
	}
	for _, p := range s.Worst {
		r := worstRow{ID: p.ID, File: p.File, Line: p.Line, Patch: p.Patch, Dev: mm(p.DeviationMM),
			X: fmt.Sprintf("%.3f", p.X), Y: fmt.Sprintf("%.3f", p.Y), Z: fmt.Sprintf("%.3f", p.Z)}
		if p.UMM > 0 {
			r.U = mmAbs(p.UMM)
		}
		v.Worst = append(v.Worst, r)
	}
	var ts []string
	for _, k := range []string{"read", "fit", "deviation", "report"} {
		if t, ok := s.TimingsS[k]; ok {
			ts = append(ts, fmt.Sprintf("%s %.2f s", k, t))
		}
	}
	v.Timings = strings.Join(ts, ", ")
	span := s.Tolerance.LimitMM
	if len(s.Tolerance.BandsMM) > 0 {
		span = s.Tolerance.BandsMM[len(s.Tolerance.BandsMM)-1]
	}
	v.Histogram = histogramSVG(&s.Histogram, s.Tolerance.LimitMM, span)
	v.Map = mapSVG(&s.Map, span)
	v.Legend = legendSVG(span)
	if len(v.AsBuilt) > 0 {
		v.LocalMap = mapSVG(&s.LocalMap, span)
		for _, p := range s.WorstLocal {
			v.WorstLocal = append(v.WorstLocal, worstRow{ID: p.ID, File: p.File, Line: p.Line, Patch: p.Patch, Dev: mm(p.DeviationMM),
				X: fmt.Sprintf("%.3f", p.X), Y: fmt.Sprintf("%.3f", p.Y), Z: fmt.Sprintf("%.3f", p.Z)})
		}
	}
	return tmpl.Execute(w, v)
}
