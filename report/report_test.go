package report

import (
	"bytes"
	"encoding/csv"
	"flag"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata")

// TestAppendField: every field written by appendField reads back unchanged
// with encoding/csv, the standard library's RFC 4180 reader.
func TestAppendField(t *testing.T) {
	fields := []string{"", "plain", "a,b", `say "hi"`, "line\nbreak", " lead", "trail ", "cr\rx", `"`, ",", "ünïcode, ok"}
	var b []byte
	for i, f := range fields {
		if i > 0 {
			b = append(b, ',')
		}
		b = appendField(b, f)
	}
	b = append(b, '\n')
	rec, err := csv.NewReader(bytes.NewReader(b)).Read()
	if err != nil {
		t.Fatalf("encoding/csv cannot read %q: %v", b, err)
	}
	for i, f := range fields {
		want := strings.ReplaceAll(f, "\r", "\r") // encoding/csv keeps a lone CR inside quotes
		if rec[i] != want {
			t.Errorf("field %d: read back %q, wrote %q", i, rec[i], f)
		}
	}
}

// TestAppendFixed: the fast fixed-point formatter agrees with
// strconv.AppendFloat (the standard library's correctly rounded decimal
// conversion) except where the value lies within 1e-9 of the last digit's
// half-way point, and there it differs by at most one unit in that digit.
func TestAppendFixed(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	vals := []float64{0, -0.0001, 0.004999, -12.5, 500123.45675, 6123400.0001, 1e-7, -1e-7, 999.995, 1 << 50, math.Inf(1), math.NaN()}
	for i := 0; i < 20000; i++ {
		vals = append(vals, (rng.Float64()-0.5)*2e7)
		vals = append(vals, (rng.Float64()-0.5)*0.2)
	}
	for _, dec := range []int{2, 4} {
		for _, v := range vals {
			got := string(appendFixed(nil, v, dec))
			want := strconv.FormatFloat(v, 'f', dec, 64)
			if got == want {
				continue
			}
			s := v * math.Pow(10, float64(dec))
			frac := math.Abs(s - math.Trunc(s))
			g, _ := strconv.ParseFloat(got, 64)
			w, _ := strconv.ParseFloat(want, 64)
			if math.Abs(frac-0.5) > 1e-6 || math.Abs(g-w) > 1.01*math.Pow(10, -float64(dec)) {
				t.Errorf("appendFixed(%v, %d) = %s, strconv gives %s", v, dec, got, want)
			}
		}
	}
}

// TestColour: the palette is symmetric about zero, white at zero, and takes
// the end classes of ColorBrewer PuOr (from memory: #7f3b08 and #2d004b) at
// and beyond the span.
func TestColour(t *testing.T) {
	if Hex(Colour(0, 20)) != "#f7f7f7" {
		t.Errorf("zero is %s, want the neutral #f7f7f7", Hex(Colour(0, 20)))
	}
	if Hex(Colour(25, 20)) != "#7f3b08" || Hex(Colour(-25, 20)) != "#2d004b" {
		t.Errorf("ends %s %s", Hex(Colour(25, 20)), Hex(Colour(-25, 20)))
	}
	if Colour(1, 20) != Colour(-1, 20) || classOf(Colour(1, 20)) != 5 {
		t.Errorf("±1 mm of a ±20 mm scale should both be the neutral class")
	}
	for _, v := range []float64{3, 7, 11, 19} {
		a, b := Colour(v, 20), Colour(-v, 20)
		if a == b {
			t.Errorf("±%g mm share a colour", v)
		}
		ka, kb := classOf(a), classOf(b)
		if ka+kb != 10 {
			t.Errorf("±%g mm: classes %d and %d are not mirror images", v, ka, kb)
		}
	}
}

func classOf(c [3]uint8) int {
	for i, p := range puOr {
		if p == c {
			return i
		}
	}
	return -1
}

func sampleSummary() *Summary {
	s := &Summary{
		Tool: Tool{Name: "saddlecheck", Version: "test"}, Generated: time.Date(2026, 3, 4, 5, 6, 7, 0, time.UTC),
		Structure: "Golden fixture canopy",
		Design:    Design{Path: "design.yaml", SHA256: strings.Repeat("ab", 32), Units: "m", Normal: "up", MarginM: 0.05},
		Inputs:    []Input{{Path: "shots.csv", SHA256: strings.Repeat("cd", 32), Format: "csv", Units: "m", Records: 5, Rejected: 1}},
		Basis:     BasisAsPlaced, SignConvention: "positive up",
		Tolerance:  Tolerance{Source: "fixture", LimitMM: 10, MinShare: 0.95, MaxAbsMM: 25, BandsMM: []float64{5, 10, 20}, FarMM: 150, Rule: "rule text", DecisionRule: "simple"},
		PointsRead: 5, PointsUsed: 3, PointsOutside: 1, PointsRejected: 1,
		Verdict: "nonconforming", VerdictText: "Does not conform.",
		Patches:   []Patch{{ID: "A", Kind: "corners", Stats: Stats{N: 3, MeanMM: 4, StdMM: 7, RMSMM: 7.5, MinMM: -3, MaxMM: 12, P05MM: -3, P50MM: 3, P95MM: 12, MaxAbsMM: 12, ShareWithinLimit: 2.0 / 3, BandShares: []float64{1.0 / 3, 1.0 / 3, 1.0 / 3, 0}}, Verdict: "nonconforming"}},
		Worst:     []WorstPoint{{ID: "7", File: "shots.csv", Line: 9, Patch: "A", DeviationMM: 12, X: 1, Y: 2, Z: 3}},
		Histogram: Histogram{BinMM: 5, FromMM: -5, Counts: []int64{1, 1, 0, 1}},
		Map:       Map{MinX: 0, MinY: 0, MaxX: 10, MaxY: 10, Points: []MapPoint{{1, 1, -3, false}, {5, 5, 3, false}, {9, 9, 12, true}}, Outline: [][][2]float64{{{0, 0}, {10, 0}, {10, 10}, {0, 10}}}},
		TimingsS:  map[string]float64{"read": 0.1, "deviation": 0.2, "report": 0.3},
	}
	return s
}

// TestHTMLGolden renders a fixed summary and compares it with
// testdata/report_golden.html (regenerate with go test ./report -update).
// The page must be self-contained: no URL of any kind.
func TestHTMLGolden(t *testing.T) {
	var buf bytes.Buffer
	if err := RenderHTML(&buf, sampleSummary()); err != nil {
		t.Fatal(err)
	}
	got := buf.Bytes()
	for _, bad := range []string{"http://", "https://", "src=", "@import"} {
		if bytes.Contains(got, []byte(bad)) {
			t.Errorf("report.html contains %q: it must be self-contained", bad)
		}
	}
	for i := bytes.Index(got, []byte("url(")); i >= 0; {
		if got[i+4] != '#' {
			t.Errorf("report.html refers to an outside resource: %q", got[i:i+20])
		}
		j := bytes.Index(got[i+4:], []byte("url("))
		if j < 0 {
			break
		}
		i += 4 + j
	}
	for _, must := range []string{"engineer of record", "AS-PLACED", "Sign convention", "nonconforming", "Golden fixture canopy"} {
		if !bytes.Contains(got, []byte(must)) {
			t.Errorf("report.html lacks %q", must)
		}
	}
	golden := filepath.Join("testdata", "report_golden.html")
	if *update {
		if err := os.WriteFile(golden, got, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(golden)
	if err != nil {
		t.Fatalf("%v (run go test ./report -update to create it)", err)
	}
	if !bytes.Equal(got, want) {
		t.Errorf("report.html differs from %s; if the change is intended, run go test ./report -update", golden)
	}
}

// TestPatchesCSV: the per-patch table has the documented columns and reads
// back with encoding/csv.
func TestPatchesCSV(t *testing.T) {
	path := filepath.Join(t.TempDir(), "patches.csv")
	if err := WritePatchesCSV(path, sampleSummary()); err != nil {
		t.Fatal(err)
	}
	f, _ := os.Open(path)
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	want := "id,kind,n,mean_mm,std_mm,rms_mm,min_mm,max_mm,p05_mm,p50_mm,p95_mm,max_abs_mm,share_within_limit,verdict,share_band_0-5,share_band_5-10,share_band_10-20,share_band_>20"
	if got := strings.Join(rows[0], ","); got != want {
		t.Errorf("header\n got %s\nwant %s", got, want)
	}
	if len(rows) != 2 || rows[1][0] != "A" || rows[1][13] != "nonconforming" {
		t.Errorf("rows %v", rows)
	}
}

// TestAtomicFile: nothing appears at the final name before Commit, and
// Abort leaves nothing at all.
func TestAtomicFile(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "out.txt")
	w, err := Create(p)
	if err != nil {
		t.Fatal(err)
	}
	w.WriteString("half")
	if _, err := os.Stat(p); err == nil {
		t.Fatal("final name exists before Commit")
	}
	if err := w.Commit(); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(p); string(b) != "half" {
		t.Fatalf("content %q", b)
	}
	w2, _ := Create(filepath.Join(dir, "gone.txt"))
	w2.WriteString("x")
	w2.Abort()
	ents, _ := os.ReadDir(dir)
	if len(ents) != 1 {
		t.Errorf("left behind: %v", ents)
	}
}
