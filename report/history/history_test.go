package history

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"flag"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/change"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata")

var clock = time.Date(2026, 11, 30, 8, 0, 0, 0, time.UTC)

// sampleComparison builds a small comparison with every core status, from
// a fixed synthetic pattern (no randomness).
func sampleComparison() *Comparison {
	set := change.Settings{CoreSpacing: 0.5, Radius: 0.5, HalfLength: 0.5, MinPoints: 4, Registration: 0.0014}
	var cores []change.Core
	for j := 0; j < 6; j++ {
		for i := 0; i < 8; i++ {
			c := change.Core{P: r3.Vec{X: 1000 + 0.5*float64(i), Y: 2000 + 0.5*float64(j), Z: 30}, N: r3.Vec{Z: 1},
				N1: 40, N2: 60, Sigma1: 0.002, Sigma2: 0.002}
			d := 0.001 * float64(i-4) // −4 … +3 mm
			c.Mean2 = d
			c.Distance = d
			c.LoD = change.LoD95(c.Sigma1, c.N1, c.Sigma2, c.N2, set.Registration)
			c.Status = change.NotDetected
			if math.Abs(d) > c.LoD {
				c.Status = change.Significant
			}
			if j == 5 && i < 3 {
				c.N1, c.Distance, c.LoD, c.Status = 2, math.NaN(), math.NaN(), change.TooFewPoints
			}
			cores = append(cores, c)
		}
	}
	sum := change.Summary{Cores: len(cores), MaxAbs: -1}
	for k, c := range cores {
		switch c.Status {
		case change.Significant:
			sum.Significant++
			sum.MaxAbs = k
		case change.NotDetected:
			sum.NotDetected++
		default:
			sum.TooFewPoints++
		}
	}
	sum.MeanDistance, sum.RMSDistance = -0.0005, 0.0021
	q := mat.NewSymDense(2, []float64{4e-8, 0, 0, 9e-8})
	res := change.Congruency([]float64{9e-4, -1e-4}, q, 1, 0, 0.05)
	temp := 14.5
	return &Comparison{
		Tool: "saddlecheck test", Generated: clock, Structure: "Lindqvist Park kiosk roof", DesignSHA: strings.Repeat("d", 64),
		From:     Epoch{ID: 1, Date: "2019-05-14", Instrument: "total station, 1 mm + 1.5 ppm", Operator: "A. Surveyor", Datum: "control", RegistrationMM: 1, PointsSHA256: strings.Repeat("a", 64), Points: 412},
		To:       Epoch{ID: 2, Date: "2025-06-02", Instrument: "laser scanner", Operator: "B. Surveyor", Datum: "control", RegistrationMM: 1, TemperatureC: &temp, PointsSHA256: strings.Repeat("b", 64), Points: 1200000},
		Settings: set, Cores: cores, Summary: sum, Patches: []string{"north"},
		NormalSource: "design surface normal at each core point",
		Datum:        "Both epochs are placed on stable control: position, orientation and shape are tested.",
		Global:       []GlobalTest{{Patch: "north", Result: res, Note: "k1 and k2 only; their correlation is not stored and taken as zero."}},
		Params: []ParamChange{
			{Patch: "north", Name: "k1", From: 0.0712, To: 0.0721, Test: res.Params[0]},
			{Patch: "north", Name: "k2", From: -0.0655, To: -0.0656, Test: res.Params[1]},
		},
	}
}

func sampleHistory() *History {
	h := &History{Tool: "saddlecheck test", Generated: clock, Structure: "Lindqvist Park kiosk roof", DesignSHA: strings.Repeat("d", 64),
		Datum: "All epochs are placed on stable control."}
	dates := []string{"2014-04-01", "2017-04-20", "2020-05-11", "2023-04-30", "2026-05-05"}
	for i, d := range dates {
		h.Epochs = append(h.Epochs, Epoch{ID: int64(i + 1), Date: d, Datum: "control", RegistrationMM: 1})
	}
	add := func(name, unit string, vals, us []float64) {
		s := Series{Name: name, Unit: unit}
		for i, d := range dates {
			y, _ := DecimalYear(d)
			s.Points = append(s.Points, Point{EpochID: int64(i + 1), Date: d, Year: y, Value: vals[i], U: us[i]})
		}
		s.Fit(0.05)
		h.Series = append(h.Series, s)
	}
	add("k1 (patch north)", "1/m", []float64{0.0712, 0.0713, 0.0712, 0.0714, 0.0713}, []float64{2e-4, 2e-4, 1e-4, 1e-4, 1e-4})
	add("mean offset", "mm", []float64{0.4, -0.3, -1.1, -1.6, -2.5}, []float64{0.5, 0.5, 0.4, 0.4, 0.3})
	var cores []change.Core
	var rates []change.CoreTrend
	for j := 0; j < 4; j++ {
		for i := 0; i < 6; i++ {
			cores = append(cores, change.Core{P: r3.Vec{X: 1000 + float64(i), Y: 2000 + float64(j), Z: 30}, N: r3.Vec{Z: 1}})
			r := change.CoreTrend{Epochs: 5, OK: i > 0}
			r.Rate = -0.0002 * float64(i)
			r.Significant = i >= 3
			rates = append(rates, r)
		}
	}
	h.SetCoreTrends(cores, rates, 1)
	return h
}

func golden(t *testing.T, name string, got []byte) {
	t.Helper()
	path := filepath.Join("testdata", name)
	if *update {
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test -update to create it)", err)
	}
	if !bytes.Equal(got, want) {
		t.Errorf("%s differs from the golden file (run go test -update after checking the change)", name)
	}
}

var externalRef = regexp.MustCompile(`(?i)(https?:|//[a-z]|src=|href=|@import|url\((?:[^#)]))`)

func checkSelfContained(t *testing.T, html []byte) {
	t.Helper()
	if m := externalRef.Find(html); m != nil {
		t.Errorf("HTML has an external reference: %q", m)
	}
	for _, c := range Cautions[:2] {
		if !bytes.Contains(html, []byte(templateEscape(c))) {
			t.Errorf("HTML lacks the caution %q", c)
		}
	}
}

// templateEscape mirrors html/template's escaping of the cautions' text
// (only the apostrophe occurs).
func templateEscape(s string) string { return strings.ReplaceAll(s, "'", "&#39;") }

func TestComparisonReport(t *testing.T) {
	c := sampleComparison()
	html, err := RenderComparison(c)
	if err != nil {
		t.Fatal(err)
	}
	checkSelfContained(t, html)
	for _, want := range []string{"PuOr", "too few points", "url(#few)", c.Datum, "no: change detected"} {
		if !bytes.Contains(html, []byte(want)) {
			t.Errorf("comparison HTML lacks %q", want)
		}
	}
	golden(t, "compare_golden.html", html)

	dir := t.TempDir()
	if err := WriteComparison(dir, c); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(filepath.Join(dir, CompareCSV))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) != 1+len(c.Cores) || len(rows[0]) != len(CoreColumns) {
		t.Fatalf("cores.csv: %d rows of %d fields, want %d of %d", len(rows), len(rows[0]), 1+len(c.Cores), len(CoreColumns))
	}
	if rows[1][len(CoreColumns)-1] != "significant" || rows[len(rows)-8][len(CoreColumns)-1] != "too few points" {
		t.Errorf("status column: %q, %q", rows[1][len(CoreColumns)-1], rows[len(rows)-8][len(CoreColumns)-1])
	}
	var doc map[string]any
	b, _ := os.ReadFile(filepath.Join(dir, CompareJSON))
	if err := json.Unmarshal(b, &doc); err != nil {
		t.Fatalf("compare.json: %v", err)
	}
	golden(t, "compare_golden.json", b)
	entries, _ := os.ReadDir(dir)
	for _, e := range entries {
		if strings.HasPrefix(e.Name(), ".") {
			t.Errorf("temporary file left: %s", e.Name())
		}
	}
}

func TestHistoryReport(t *testing.T) {
	h := sampleHistory()
	if ct := h.CoreTrends; ct.Fitted != 20 || ct.Significant != 12 || math.Abs(ct.MaxAbsMMPerYear-1) > 1e-12 {
		t.Errorf("core-trend summary: %+v, want 20 fitted, 12 significant, max 1 mm/yr", ct)
	}
	if h.Series[1].Trend == nil || !h.Series[1].Trend.Significant {
		t.Fatalf("mean-offset trend: %+v, want a significant rate", h.Series[1].Trend)
	}
	html, err := RenderHistory(h)
	if err != nil {
		t.Fatal(err)
	}
	checkSelfContained(t, html)
	golden(t, "history_golden.html", html)
	dir := t.TempDir()
	if err := WriteHistory(dir, h); err != nil {
		t.Fatal(err)
	}
	b, _ := os.ReadFile(filepath.Join(dir, HistoryCSV))
	golden(t, "history_golden.csv", b)
	var doc map[string]any
	j, _ := os.ReadFile(filepath.Join(dir, HistoryJSON))
	if err := json.Unmarshal(j, &doc); err != nil {
		t.Fatalf("history.json: %v", err)
	}
}

func TestDecimalYear(t *testing.T) {
	tests := []struct {
		date string
		want float64
	}{
		{"2020-01-01", 2020},
		{"2021-07-02", 2021 + 182.0/365}, // day 183 of a common year
		{"2020-07-02", 2020 + 183.0/366}, // leap year
	}
	for _, tc := range tests {
		got, err := DecimalYear(tc.date)
		if err != nil || math.Abs(got-tc.want) > 1e-12 {
			t.Errorf("DecimalYear(%s) = %v, %v; want %v", tc.date, got, err, tc.want)
		}
	}
	if _, err := DecimalYear("2020-02-30"); err == nil {
		t.Error("invalid date: got no error")
	}
}

func TestNiceCeil(t *testing.T) {
	for _, tc := range []struct{ in, want float64 }{{0.7, 1}, {1, 1}, {1.2, 2}, {3, 5}, {7, 10}, {23, 50}, {0.031, 0.05}} {
		if got := niceCeil(tc.in); math.Abs(got-tc.want) > 1e-12 {
			t.Errorf("niceCeil(%g) = %g, want %g", tc.in, got, tc.want)
		}
	}
}

// TestAggregate checks the display-cell merge of a large map: 200 × 300
// cores at 0.25 m are merged k = ceil(sqrt(60000/50000)) = 2 to a side into
// 0.5 m cells (100 × 150 = 15000), and a cell keeps its largest
// significant change.
func TestAggregate(t *testing.T) {
	var cores []change.Core
	for j := 0; j < 300; j++ {
		for i := 0; i < 200; i++ {
			c := change.Core{P: r3.Vec{X: 0.125 + 0.25*float64(i), Y: 0.125 + 0.25*float64(j)}, Status: change.NotDetected}
			if i == 1 && j == 1 {
				c.Status, c.Distance = change.Significant, -0.004
			}
			cores = append(cores, c)
		}
	}
	out, cell := aggregate(cores, 0.25)
	if cell != 0.5 || len(out) != 15000 {
		t.Fatalf("aggregate: %d cells of %g m, want 15000 of 0.5 m", len(out), cell)
	}
	if out[0].Status != change.Significant || out[0].Distance != -0.004 {
		t.Errorf("first display cell: %+v, want the significant core", out[0])
	}
	if !strings.Contains(mapNote(len(cores), 0.25), "0.50 m display cells") {
		t.Errorf("map note: %q", mapNote(len(cores), 0.25))
	}
}
