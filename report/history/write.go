package history

import (
	"bytes"
	_ "embed"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"html/template"
	"math"
	"path/filepath"
	"strconv"
	"time"

	"saddlecheck/change"
	"saddlecheck/report"
)

//go:embed history.html.tmpl
var pageText string

var page = template.Must(template.New("history").Parse(pageText))

// Output file names.
const (
	CompareHTML = "compare.html"
	CompareCSV  = "cores.csv"
	CompareJSON = "compare.json"
	HistoryHTML = "history.html"
	HistoryCSV  = "history.csv"
	HistoryJSON = "history.json"
)

// view is the template's model: every number already formatted.
type view struct {
	Title, Tool, Generated, DesignSHA, Datum string
	Cautions                                 []string
	Epochs                                   []epochRow
	IsComparison                             bool

	CoreLine, Method, NormalSource, SpanMM string
	MinPoints                              int
	Map, Legend                            template.HTML
	Counts                                 countRow
	Global                                 []globalRow
	Params                                 []paramRow
	Alpha, NoParams                        string

	Series     []seriesRow
	CoreTrends string
	RateMap    template.HTML
	RateLegend template.HTML
	RateSpan   string

	Notes, Warnings []string
}

type epochRow struct {
	ID                                     int64
	Date, Instrument, Operator, Datum      string
	Registration, Temperature, Points, SHA string
}

type countRow struct {
	Cores, Significant, NotDetected, TooFew int
	Mean, RMS, Max                          string
}

type globalRow struct {
	Patch, T, Crit, P, Verdict, Note string
	Rank                             int
	Dof                              string
	Reject                           bool
}

type paramRow struct {
	Patch, Name, From, To, Delta, U, T, Crit, Verdict string
	Changed                                           bool
}

type seriesRow struct {
	Name      string
	Plot      template.HTML
	TrendLine string
}

func num(v float64, prec int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	return strconv.FormatFloat(v, 'f', prec, 64)
}

func sci(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	return strconv.FormatFloat(v, 'g', 5, 64)
}

func epochRows(es []Epoch) []epochRow {
	out := make([]epochRow, len(es))
	for i, e := range es {
		t := "not recorded"
		if e.TemperatureC != nil {
			t = num(*e.TemperatureC, 1) + " °C"
		}
		pts := "–"
		if e.Points > 0 {
			pts = strconv.FormatInt(e.Points, 10)
		}
		out[i] = epochRow{ID: e.ID, Date: e.Date, Instrument: e.Instrument, Operator: e.Operator, Datum: e.Datum,
			Registration: num(e.RegistrationMM, 1) + " mm", Temperature: t, Points: pts, SHA: e.PointsSHA256}
	}
	return out
}

func dofText(f int) string {
	if f <= 0 {
		return "∞"
	}
	return strconv.Itoa(f)
}

func comparisonView(c *Comparison) *view {
	span := spanMM(c.Cores)
	s := c.Settings
	v := &view{
		Title:        fmt.Sprintf("Change of %s from epoch %d (%s) to epoch %d (%s)", c.Structure, c.From.ID, c.From.Date, c.To.ID, c.To.Date),
		Tool:         c.Tool,
		Generated:    c.Generated.UTC().Format(time.RFC3339),
		DesignSHA:    c.DesignSHA,
		Datum:        c.Datum,
		Cautions:     Cautions,
		Epochs:       epochRows([]Epoch{c.From, c.To}),
		IsComparison: true,
		CoreLine: fmt.Sprintf("%d core points on a %s m plan grid; %d show a change larger than their level of detection, %d show none detected, %d have too few points.",
			c.Summary.Cores, num(s.CoreSpacing, 3), c.Summary.Significant, c.Summary.NotDetected, c.Summary.TooFewPoints),
		Method: fmt.Sprintf("M3C2 (Lague, Brodu & Leroux 2013): projection cylinder radius %s m, half-length %s m, %s position along the normal, at least %d points per epoch; LoD95 = 1.96·(√(σ₁²/n₁ + σ₂²/n₂) + reg) with reg = %s mm (the registration errors of both epochs combined in quadrature).",
			num(s.Radius, 3), num(s.HalfLength, 3), map[bool]string{false: "mean", true: "median"}[s.Median], s.MinPoints, num(s.Registration*1e3, 2)),
		NormalSource: c.NormalSource + mapNote(len(c.Cores), s.CoreSpacing),
		SpanMM:       trim(span),
		MinPoints:    s.MinPoints,
		Map:          changeMapSVG(c.Cores, s.CoreSpacing, span),
		Legend:       legendSVG(span, "mm", "not detected", "too few points"),
		Counts: countRow{Cores: c.Summary.Cores, Significant: c.Summary.Significant, NotDetected: c.Summary.NotDetected, TooFew: c.Summary.TooFewPoints,
			Mean: num(c.Summary.MeanDistance*1e3, 2) + " mm", RMS: num(c.Summary.RMSDistance*1e3, 2) + " mm", Max: "none"},
		Alpha: "0.05",
		Notes: c.Notes, Warnings: c.Warning,
	}
	if k := c.Summary.MaxAbs; k >= 0 && k < len(c.Cores) {
		m := c.Cores[k]
		v.Counts.Max = fmt.Sprintf("%s mm ± %s mm (LoD95) at x %s, y %s", num(m.Distance*1e3, 2), num(m.LoD*1e3, 2), num(m.P.X, 2), num(m.P.Y, 2))
	}
	for _, g := range c.Global {
		r := g.Result
		row := globalRow{Patch: g.Patch, T: num(r.T, 3), Crit: num(r.Critical, 3), Rank: r.Rank, Dof: dofText(r.Dof), P: num(r.P, 4), Reject: r.Reject, Note: g.Note}
		switch {
		case r.Status == change.NothingTestable:
			row.Verdict = "nothing testable"
		case r.Reject:
			row.Verdict = "no: change detected"
		default:
			row.Verdict = "yes: no change detected"
		}
		v.Global = append(v.Global, row)
		v.Alpha = num(r.Alpha, 2)
	}
	for _, p := range c.Params {
		row := paramRow{Patch: p.Patch, Name: p.Name, From: sci(p.From), To: sci(p.To), Delta: sci(p.Test.Delta), U: sci(p.Test.U),
			T: num(p.Test.T, 2), Crit: num(p.Test.Critical, 3), Changed: p.Test.Changed}
		switch {
		case p.Test.Changed:
			row.Verdict = "changed"
		case p.Test.Significant:
			row.Verdict = "marginal only"
		default:
			row.Verdict = "not detected"
		}
		v.Params = append(v.Params, row)
	}
	if len(c.Global) == 0 {
		v.NoParams = "neither epoch has stored fitted parameters (run `saddlecheck archive recheck` on both)."
	}
	return v
}

// mapNote says when the map merges cores into coarser display cells.
func mapNote(n int, spacing float64) string {
	if n <= maxMapCells {
		return ""
	}
	k := math.Ceil(math.Sqrt(float64(n) / maxMapCells))
	return fmt.Sprintf(". The map merges the %d core points into %s m display cells, each showing its largest significant change (cores.csv has every core point)", n, num(k*spacing, 2))
}

// trendLine describes a fitted rate in words.
func trendLine(s *Series, scale float64, unit string) string {
	tr := s.Trend
	if tr == nil {
		return "No rate: fewer than three epochs with a stated uncertainty."
	}
	verdict := "not significant at 95 %"
	if tr.Significant {
		verdict = "significant at 95 % (t test)"
	}
	return fmt.Sprintf("Rate %s ± %s %s per year (u, with the a-posteriori variance factor %s, %d dof; t = %s, critical %s): %s.",
		sci(tr.Rate*scale), sci(tr.U*scale), unit, num(tr.S0sq, 2), tr.Dof, num(tr.TStat, 2), num(tr.Critical, 2), verdict)
}

func historyView(h *History) *view {
	v := &view{
		Title:     "Survey history of " + h.Structure,
		Tool:      h.Tool,
		Generated: h.Generated.UTC().Format(time.RFC3339),
		DesignSHA: h.DesignSHA,
		Datum:     h.Datum,
		Cautions:  Cautions,
		Epochs:    epochRows(h.Epochs),
		Notes:     h.Notes, Warnings: h.Warning,
	}
	for i := range h.Series {
		s := &h.Series[i]
		v.Series = append(v.Series, seriesRow{Name: s.Name + " [" + s.Unit + "]", Plot: seriesSVG(s, 1), TrendLine: trendLine(s, 1, s.Unit)})
	}
	if ct := h.CoreTrends; ct != nil {
		v.CoreTrends = fmt.Sprintf("%d core points; a rate was fitted at %d (three or more epochs with enough points), significant at 95 %% at %d; mean rate %s mm/yr, largest |rate| %s mm/yr.",
			ct.Cores, ct.Fitted, ct.Significant, num(ct.MeanRateMMPerYear, 3), num(ct.MaxAbsMMPerYear, 3))
		if len(h.Cores) > 0 && h.Spacing > 0 {
			rc := rateCores(h.Cores, h.Rates)
			span := spanMM(rc)
			v.RateMap, v.RateLegend, v.RateSpan = changeMapSVG(rc, h.Spacing, span), legendSVG(span, "mm/yr", "not significant", "no rate"), trim(span)
		}
	}
	return v
}

func render(v *view) ([]byte, error) {
	var b bytes.Buffer
	if err := page.Execute(&b, v); err != nil {
		return nil, fmt.Errorf("history: rendering: %w", err)
	}
	return b.Bytes(), nil
}

// RenderComparison returns the comparison report as HTML.
func RenderComparison(c *Comparison) ([]byte, error) { return render(comparisonView(c)) }

// RenderHistory returns the history report as HTML.
func RenderHistory(h *History) ([]byte, error) { return render(historyView(h)) }

// WriteComparison writes compare.html, cores.csv and compare.json into dir,
// each to a temporary name renamed when complete.
func WriteComparison(dir string, c *Comparison) error {
	html, err := RenderComparison(c)
	if err != nil {
		return err
	}
	if err := writeCoresCSV(filepath.Join(dir, CompareCSV), c); err != nil {
		return err
	}
	if err := writeJSON(filepath.Join(dir, CompareJSON), comparisonJSON(c)); err != nil {
		return err
	}
	return report.WriteFile(filepath.Join(dir, CompareHTML), html)
}

// WriteHistory writes history.html, history.csv and history.json into dir.
func WriteHistory(dir string, h *History) error {
	html, err := RenderHistory(h)
	if err != nil {
		return err
	}
	if err := writeSeriesCSV(filepath.Join(dir, HistoryCSV), h); err != nil {
		return err
	}
	if err := writeJSON(filepath.Join(dir, HistoryJSON), historyJSON(h)); err != nil {
		return err
	}
	return report.WriteFile(filepath.Join(dir, HistoryHTML), html)
}

// writeCSV writes the rows produced by fill through encoding/csv to path
// atomically, checking Flush and Error.
func writeCSV(path string, header []string, fill func(w *csv.Writer) error) error {
	f, err := report.Create(path)
	if err != nil {
		return err
	}
	w := csv.NewWriter(f)
	if err := w.Write(header); err != nil {
		f.Abort()
		return err
	}
	if err := fill(w); err != nil {
		f.Abort()
		return err
	}
	w.Flush()
	if err := w.Error(); err != nil {
		f.Abort()
		return fmt.Errorf("writing %s: %w", path, err)
	}
	return f.Commit()
}

// CoreColumns is the header of cores.csv. Coordinates in m (site frame),
// normal components unitless, positions and changes in mm.
var CoreColumns = []string{"patch", "x", "y", "z", "nx", "ny", "nz", "n1", "n2", "mean1_mm", "mean2_mm", "sigma1_mm", "sigma2_mm", "change_mm", "lod95_mm", "status"}

func writeCoresCSV(path string, c *Comparison) error {
	return writeCSV(path, CoreColumns, func(w *csv.Writer) error {
		rec := make([]string, len(CoreColumns))
		for _, k := range c.Cores {
			patch := strconv.Itoa(k.Patch)
			if k.Patch >= 0 && k.Patch < len(c.Patches) {
				patch = c.Patches[k.Patch]
			}
			rec = append(rec[:0], patch, num(k.P.X, 4), num(k.P.Y, 4), num(k.P.Z, 4), num(k.N.X, 6), num(k.N.Y, 6), num(k.N.Z, 6),
				strconv.Itoa(k.N1), strconv.Itoa(k.N2), num(k.Mean1*1e3, 3), num(k.Mean2*1e3, 3), num(k.Sigma1*1e3, 3), num(k.Sigma2*1e3, 3),
				num(k.Distance*1e3, 3), num(k.LoD*1e3, 3), k.Status.String())
			if err := w.Write(rec); err != nil {
				return err
			}
		}
		return nil
	})
}

// SeriesColumns is the header of history.csv.
var SeriesColumns = []string{"series", "unit", "epoch", "date", "year", "value", "u"}

func writeSeriesCSV(path string, h *History) error {
	return writeCSV(path, SeriesColumns, func(w *csv.Writer) error {
		for _, s := range h.Series {
			for _, p := range s.Points {
				if err := w.Write([]string{s.Name, s.Unit, strconv.FormatInt(p.EpochID, 10), p.Date, num(p.Year, 4), sci(p.Value), sci(p.U)}); err != nil {
					return err
				}
			}
		}
		return nil
	})
}

func writeJSON(path string, v any) error {
	b, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		return fmt.Errorf("history: %s: %w", path, err)
	}
	return report.WriteFile(path, append(b, '\n'))
}

// jnum is a float that encodes NaN and ±Inf as null.
type jnum float64

func (f jnum) MarshalJSON() ([]byte, error) {
	if math.IsNaN(float64(f)) || math.IsInf(float64(f), 0) {
		return []byte("null"), nil
	}
	return []byte(strconv.FormatFloat(float64(f), 'g', -1, 64)), nil
}

type comparisonDoc struct {
	Tool      string      `json:"tool"`
	Generated string      `json:"generated"`
	Structure string      `json:"structure"`
	DesignSHA string      `json:"design_sha256"`
	From      Epoch       `json:"from"`
	To        Epoch       `json:"to"`
	Datum     string      `json:"datum"`
	Normals   string      `json:"normals"`
	Settings  settingsDoc `json:"m3c2"`
	Cores     countsDoc   `json:"cores"`
	Global    []globalDoc `json:"congruency"`
	Params    []paramDoc  `json:"parameters"`
	Notes     []string    `json:"notes"`
	Warnings  []string    `json:"warnings"`
	Cautions  []string    `json:"cautions"`
}

type settingsDoc struct {
	CoreSpacingM   float64 `json:"core_spacing_m"`
	RadiusM        float64 `json:"radius_m"`
	HalfLengthM    float64 `json:"half_length_m"`
	MinPoints      int     `json:"min_points"`
	RegistrationMM float64 `json:"registration_mm"`
	Median         bool    `json:"median"`
	LoDFormula     string  `json:"lod_formula"`
}

type countsDoc struct {
	N           int  `json:"n"`
	Significant int  `json:"significant"`
	NotDetected int  `json:"not_detected"`
	TooFew      int  `json:"too_few_points"`
	MeanMM      jnum `json:"mean_change_mm"`
	RMSMM       jnum `json:"rms_change_mm"`
}

type globalDoc struct {
	Patch    string `json:"patch"`
	Status   string `json:"status"`
	T        jnum   `json:"t"`
	Critical jnum   `json:"critical"`
	Rank     int    `json:"h"`
	Dof      int    `json:"f"`
	P        jnum   `json:"p"`
	Alpha    jnum   `json:"alpha"`
	Reject   bool   `json:"change_detected"`
	Note     string `json:"note"`
}

type paramDoc struct {
	Patch    string `json:"patch"`
	Name     string `json:"name"`
	From     jnum   `json:"from"`
	To       jnum   `json:"to"`
	Delta    jnum   `json:"change"`
	U        jnum   `json:"u"`
	T        jnum   `json:"t"`
	Critical jnum   `json:"critical_t"`
	Changed  bool   `json:"changed"`
}

func comparisonJSON(c *Comparison) comparisonDoc {
	s := c.Settings
	d := comparisonDoc{Tool: c.Tool, Generated: c.Generated.UTC().Format(time.RFC3339), Structure: c.Structure, DesignSHA: c.DesignSHA,
		From: c.From, To: c.To, Datum: c.Datum, Normals: c.NormalSource,
		Settings: settingsDoc{CoreSpacingM: s.CoreSpacing, RadiusM: s.Radius, HalfLengthM: s.HalfLength, MinPoints: s.MinPoints,
			RegistrationMM: s.Registration * 1e3, Median: s.Median, LoDFormula: "LoD95 = 1.96*(sqrt(s1^2/n1 + s2^2/n2) + reg)"},
		Cores: countsDoc{N: c.Summary.Cores, Significant: c.Summary.Significant, NotDetected: c.Summary.NotDetected, TooFew: c.Summary.TooFewPoints,
			MeanMM: jnum(c.Summary.MeanDistance * 1e3), RMSMM: jnum(c.Summary.RMSDistance * 1e3)},
		Notes: nonNil(c.Notes), Warnings: nonNil(c.Warning), Cautions: Cautions, Global: []globalDoc{}, Params: []paramDoc{}}
	for _, g := range c.Global {
		r := g.Result
		d.Global = append(d.Global, globalDoc{Patch: g.Patch, Status: r.Status.String(), T: jnum(r.T), Critical: jnum(r.Critical), Rank: r.Rank,
			Dof: r.Dof, P: jnum(r.P), Alpha: jnum(r.Alpha), Reject: r.Reject, Note: g.Note})
	}
	for _, p := range c.Params {
		d.Params = append(d.Params, paramDoc{Patch: p.Patch, Name: p.Name, From: jnum(p.From), To: jnum(p.To), Delta: jnum(p.Test.Delta),
			U: jnum(p.Test.U), T: jnum(p.Test.T), Critical: jnum(p.Test.Critical), Changed: p.Test.Changed})
	}
	return d
}

type historyDoc struct {
	Tool      string            `json:"tool"`
	Generated string            `json:"generated"`
	Structure string            `json:"structure"`
	DesignSHA string            `json:"design_sha256"`
	Datum     string            `json:"datum"`
	Epochs    []Epoch           `json:"epochs"`
	Series    []seriesDoc       `json:"series"`
	Cores     *CoreTrendSummary `json:"core_trends,omitempty"`
	Notes     []string          `json:"notes"`
	Warnings  []string          `json:"warnings"`
	Cautions  []string          `json:"cautions"`
}

type seriesDoc struct {
	Name   string     `json:"name"`
	Unit   string     `json:"unit"`
	Points []pointDoc `json:"points"`
	Trend  *trendDoc  `json:"trend"`
}

type pointDoc struct {
	Epoch int64  `json:"epoch"`
	Date  string `json:"date"`
	Year  jnum   `json:"year"`
	Value jnum   `json:"value"`
	U     jnum   `json:"u"`
}

type trendDoc struct {
	RatePerYear jnum `json:"rate_per_year"`
	U           jnum `json:"u"`
	UPrior      jnum `json:"u_prior"`
	S0sq        jnum `json:"s0sq"`
	Dof         int  `json:"dof"`
	T           jnum `json:"t"`
	Critical    jnum `json:"critical_t"`
	Significant bool `json:"significant"`
}

func historyJSON(h *History) historyDoc {
	d := historyDoc{Tool: h.Tool, Generated: h.Generated.UTC().Format(time.RFC3339), Structure: h.Structure, DesignSHA: h.DesignSHA, Datum: h.Datum,
		Epochs: h.Epochs, Cores: h.CoreTrends, Notes: nonNil(h.Notes), Warnings: nonNil(h.Warning), Cautions: Cautions, Series: []seriesDoc{}}
	if d.Epochs == nil {
		d.Epochs = []Epoch{}
	}
	for _, s := range h.Series {
		sd := seriesDoc{Name: s.Name, Unit: s.Unit, Points: []pointDoc{}}
		for _, p := range s.Points {
			sd.Points = append(sd.Points, pointDoc{Epoch: p.EpochID, Date: p.Date, Year: jnum(p.Year), Value: jnum(p.Value), U: jnum(p.U)})
		}
		if tr := s.Trend; tr != nil {
			sd.Trend = &trendDoc{RatePerYear: jnum(tr.Rate), U: jnum(tr.U), UPrior: jnum(tr.UPrior), S0sq: jnum(tr.S0sq), Dof: tr.Dof,
				T: jnum(tr.TStat), Critical: jnum(tr.Critical), Significant: tr.Significant}
		}
		d.Series = append(d.Series, sd)
	}
	return d
}

func nonNil(s []string) []string {
	if s == nil {
		return []string{}
	}
	return s
}
