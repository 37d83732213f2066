package main

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"saddlecheck/deviation"
)

func runArgs(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var out, errb bytes.Buffer
	code := run(args, &out, &errb)
	return code, out.String(), errb.String()
}

func readCSV(t *testing.T, path string) [][]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.FieldsPerRecord = -1
	rows, err := r.ReadAll()
	if err != nil {
		t.Fatalf("%s does not parse as CSV (encoding/csv, RFC 4180): %v", path, err)
	}
	return rows
}

// TestDemoEndToEnd runs the demo and checks the contract of every output
// file: all four exist, every input record is in deviations.csv in input
// order with its status, and summary.json has the documented keys.
func TestDemoEndToEnd(t *testing.T) {
	dir := t.TempDir()
	code, stdout, stderr := runArgs(t, "demo", "--out", dir)
	if code != exitOK {
		t.Fatalf("demo exit %d, stderr:\n%s", code, stderr)
	}
	if !strings.Contains(stdout, "report.html") {
		t.Errorf("demo does not say where the report is:\n%s", stdout)
	}
	for _, f := range []string{"deviations.csv", "summary.json", "patches.csv", "report.html"} {
		if st, err := os.Stat(filepath.Join(dir, f)); err != nil || st.Size() == 0 {
			t.Errorf("demo output %s missing or empty (%v)", f, err)
		}
	}
	ents, _ := os.ReadDir(dir)
	for _, e := range ents {
		if strings.Contains(e.Name(), ".tmp-") {
			t.Errorf("temporary file left behind: %s", e.Name())
		}
	}
	var s map[string]any
	b, _ := os.ReadFile(filepath.Join(dir, "summary.json"))
	if err := json.Unmarshal(b, &s); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"points_read", "points_used", "verdict", "timings_s", "patches", "tolerance", "basis", "sign_convention", "cautions"} {
		if _, ok := s[k]; !ok {
			t.Errorf("summary.json lacks %q", k)
		}
	}
	for _, k := range []string{"read", "deviation", "report"} {
		if _, ok := s["timings_s"].(map[string]any)[k]; !ok {
			t.Errorf("timings_s lacks %q", k)
		}
	}
	for _, p := range s["patches"].([]any) {
		for _, k := range []string{"id", "n", "mean_mm", "rms_mm", "max_abs_mm", "share_within_limit", "verdict"} {
			if _, ok := p.(map[string]any)[k]; !ok {
				t.Errorf("patch lacks %q", k)
			}
		}
	}
	if s["verdict"] != "nonconforming" {
		t.Errorf("demo verdict %v, want nonconforming (its SE patch sags by design)", s["verdict"])
	}

	rows := readCSV(t, filepath.Join(dir, "deviations.csv"))
	head := strings.Join(rows[0], ",")
	if !strings.HasPrefix(head, "id,x,y,z,patch,deviation_mm,band,status,reason") {
		t.Errorf("deviations.csv header %q", head)
	}
	pointsRead := int(s["points_read"].(float64))
	if len(rows)-1 != pointsRead {
		t.Errorf("deviations.csv has %d rows, summary says %d points read", len(rows)-1, pointsRead)
	}
	// every data line of the shot file appears once, in order
	shots, _ := os.ReadFile(filepath.Join(dir, "input", "shots.csv"))
	var dataLines []int
	for i, l := range strings.Split(strings.TrimRight(string(shots), "\n"), "\n") {
		if i >= 1 && !strings.HasPrefix(l, "#") && !strings.HasPrefix(l, "Point,") {
			dataLines = append(dataLines, i+1)
		}
	}
	if len(dataLines) != pointsRead {
		t.Errorf("shot file has %d data lines, %d points read", len(dataLines), pointsRead)
	}
	col := map[string]int{}
	for i, h := range rows[0] {
		col[h] = i
	}
	counts := map[string]int{}
	for i, r := range rows[1:] {
		counts[r[col["status"]]]++
		if i < len(dataLines) {
			if ln, _ := strconv.Atoi(r[col["line"]]); ln != dataLines[i] {
				t.Fatalf("row %d has line %d, want %d (input order)", i+1, ln, dataLines[i])
			}
		}
		if r[col["status"]] == "rejected" && r[col["reason"]] == "" {
			t.Errorf("rejected row %d has no reason", i+1)
		}
	}
	for _, st := range []string{"used", "outside", "far", "rejected"} {
		if counts[st] == 0 {
			t.Errorf("the demo should exercise status %q", st)
		}
	}
	if counts["rejected"] != 3 {
		t.Errorf("demo has 3 bad rows, got %d rejected", counts["rejected"])
	}
}

// hyparFixture writes a design of the worked-example hypar — corners
// (0,0,0), (L,0,0), (L,L,h), (0,L,0), i.e. z = (h/L²)·x·y (FIELD.md §4.3,
// an analytic-geometry identity) — placed at a site offset, and points at
// known signed distances along the surface normal.
func hyparFixture(t *testing.T, dir string, offsets []float64) (design, points string) {
	t.Helper()
	const L, h = 10.0, 2.0
	const e0, n0 = 500000.0, 5000000.0
	design = filepath.Join(dir, "design.yaml")
	y := fmt.Sprintf(`structure: worked-example hypar
units: m
normal: up
patches:
  - id: P
    corners: [[%[1]f, %[2]f, 0], [%[3]f, %[2]f, 0], [%[3]f, %[4]f, %[5]f], [%[1]f, %[4]f, 0]]
tolerance:
  source: "test fixture"
  limit_mm: 10
  min_share: 0.95
  max_abs_mm: 25
  bands_mm: [5, 10, 20]
`, e0, n0, e0+L, n0+L, h)
	if err := os.WriteFile(design, []byte(y), 0o644); err != nil {
		t.Fatal(err)
	}
	var b strings.Builder
	b.WriteString("id,e,n,z\n")
	c := h / (L * L)
	for i, d := range offsets {
		// a point on z = c·x·y with its unit normal (−c·y, −c·x, 1)/|·|
		x := 1 + 8*float64(i%7)/6
		yy := 1 + 8*float64((i/7)%7)/6
		z := c * x * yy
		nx, ny, nz := -c*yy, -c*x, 1.0
		nn := math.Sqrt(nx*nx + ny*ny + nz*nz)
		fmt.Fprintf(&b, "P%d,%.9f,%.9f,%.9f\n", i, e0+x+d*nx/nn, n0+yy+d*ny/nn, z+d*nz/nn)
	}
	points = filepath.Join(dir, "points.csv")
	if err := os.WriteFile(points, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return design, points
}

// TestCheckAgainstAnalyticHypar: points displaced by known distances along
// the normal of z = c·x·y come out with exactly those signed deviations,
// and the exit code follows the verdict.
func TestCheckAgainstAnalyticHypar(t *testing.T) {
	tests := []struct {
		name    string
		offsets []float64 // metres
		code    int
		verdict string
	}{
		{"within", []float64{0.004, -0.003, 0.0099, -0.0099, 0, 0.002, -0.007, 0.001}, exitOK, "conforming"},
		{"beyond", []float64{0.004, -0.030, 0.012, -0.011, 0, 0.002, 0.06, 0.001}, exitVerdict, "nonconforming"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			design, points := hyparFixture(t, dir, tc.offsets)
			out := filepath.Join(dir, "out")
			code, _, stderr := runArgs(t, "check", "--design", design, "--points", points, "--out", out)
			if code != tc.code {
				t.Fatalf("exit %d, want %d; stderr %s", code, tc.code, stderr)
			}
			rows := readCSV(t, filepath.Join(out, "deviations.csv"))
			if len(rows)-1 != len(tc.offsets) {
				t.Fatalf("%d rows, want %d", len(rows)-1, len(tc.offsets))
			}
			for i, r := range rows[1:] {
				got, err := strconv.ParseFloat(r[5], 64)
				if err != nil {
					t.Fatalf("row %d deviation %q", i, r[5])
				}
				if want := tc.offsets[i] * 1000; math.Abs(got-want) > 0.005 {
					t.Errorf("point %d: deviation %.3f mm, want %.3f mm", i, got, want)
				}
			}
			var s struct{ Verdict string }
			b, _ := os.ReadFile(filepath.Join(out, "summary.json"))
			json.Unmarshal(b, &s)
			if s.Verdict != tc.verdict {
				t.Errorf("verdict %q, want %q", s.Verdict, tc.verdict)
			}
		})
	}
}

// TestInputErrors: bad input exits 2 with a message naming the file and
// the line, and leaves no report behind.
func TestInputErrors(t *testing.T) {
	dir := t.TempDir()
	design, points := hyparFixture(t, dir, []float64{0, 0.001})
	badDesign := filepath.Join(dir, "bad.yaml")
	b, _ := os.ReadFile(design)
	os.WriteFile(badDesign, []byte(strings.Replace(string(b), "normal: up", "normal: up\ncolour: blue", 1)), 0o644)
	mostlyBad := filepath.Join(dir, "mostly-bad.csv")
	os.WriteFile(mostlyBad, []byte("id,e,n,z\n1,500001,5000001,0.02\n2,x,y,z\n3,,,\n4,a,b,c\n"), 0o644)
	tests := []struct {
		name string
		args []string
		want []string
	}{
		{"unknown design key", []string{"check", "--design", badDesign, "--points", points}, []string{"bad.yaml", ":4", "colour"}},
		{"missing points file", []string{"check", "--design", design, "--points", filepath.Join(dir, "nope.csv")}, []string{"nope.csv"}},
		{"mostly bad rows", []string{"check", "--design", design, "--points", mostlyBad}, []string{"mostly-bad.csv", "line"}},
		{"no flags", []string{"check"}, []string{"--design"}},
		{"bad unit", []string{"check", "--design", design, "--points", points, "--units", "furlong"}, []string{"furlong"}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			out := filepath.Join(t.TempDir(), "out")
			code, _, stderr := runArgs(t, append(tc.args, "--out", out)...)
			if code != exitUsage {
				t.Fatalf("exit %d, want %d; stderr %s", code, exitUsage, stderr)
			}
			for _, w := range tc.want {
				if !strings.Contains(stderr, w) {
					t.Errorf("error %q does not name %q", stderr, w)
				}
			}
			if _, err := os.Stat(filepath.Join(out, "summary.json")); err == nil {
				t.Errorf("a failed check left a summary.json")
			}
		})
	}
}

// TestHelp: every command has --help with an example, exit 0.
func TestHelp(t *testing.T) {
	for name := range commands {
		t.Run(name, func(t *testing.T) {
			code, _, stderr := runArgs(t, name, "--help")
			if code != exitOK {
				t.Errorf("%s --help exit %d", name, code)
			}
			if !strings.Contains(stderr, "Example") {
				t.Errorf("%s --help has no example:\n%s", name, stderr)
			}
		})
	}
	if code, _, _ := runArgs(t, "frobnicate"); code != exitUsage {
		t.Errorf("unknown command exit %d, want 2", code)
	}
}

// TestCheckWithUncertainty: the guarded-acceptance rule of ISO 14253-1
// (FIELD.md §2): with u = 3 mm and k = 2 a deviation of 9.8 mm against a
// 10 mm limit is inconclusive, 2 mm is proven conforming (2 + 6 <= 10) and
// 17 mm is proven nonconforming (17 − 6 > 10); simple acceptance (JCGM
// 106:2012) calls 9.8 mm conforming.
func TestCheckWithUncertainty(t *testing.T) {
	offsets := []float64{0.0098, 0.002, 0.017}
	tests := []struct {
		rule  string
		zones []string
		code  int
	}{
		{"guarded", []string{"INCONCLUSIVE", "CONFORMS", "DOES NOT CONFORM"}, exitVerdict},
		{"simple", []string{"CONFORMS", "CONFORMS", "DOES NOT CONFORM"}, exitVerdict},
	}
	for _, tc := range tests {
		t.Run(tc.rule, func(t *testing.T) {
			dir := t.TempDir()
			design, points := hyparFixture(t, dir, offsets)
			out := filepath.Join(dir, "out")
			code, _, stderr := runArgs(t, "check", "--design", design, "--points", points, "--out", out, "--u-mm", "3", "--rule", tc.rule, "--no-fit")
			if code != tc.code {
				t.Fatalf("exit %d, want %d: %s", code, tc.code, stderr)
			}
			rows := readCSV(t, filepath.Join(out, "deviations.csv"))
			col := map[string]int{}
			for i, h := range rows[0] {
				col[h] = i
			}
			for i, r := range rows[1:] {
				if got := r[col["zone"]]; got != tc.zones[i] {
					t.Errorf("point %d (%.1f mm): zone %q, want %q", i, offsets[i]*1000, got, tc.zones[i])
				}
				if got := r[col["u_mm"]]; got != "3.00" {
					t.Errorf("point %d: u_mm %q, want 3.00", i, got)
				}
			}
		})
	}
}

// TestInspectSharedFormats: the command knows every registered format —
// the LAS, E57 and PLY sample files of ../shared/reference give the point
// counts their PROVENANCE.md files state (skipped where ../shared is
// absent).
func TestInspectSharedFormats(t *testing.T) {
	ref := filepath.Join("..", "..", "..", "shared", "reference")
	for _, tc := range []struct {
		file  string
		count string
	}{
		{"las/simple.las", "1065"},       // las/PROVENANCE.md: 1065 points
		{"las/test1_4.las", "1000"},      // LAS 1.4, point format 6, 1000 points
		{"e57/bunnyDouble.e57", "30571"}, // e57/PROVENANCE.md: 30571-point bunny
		{"ply/bun000.ply", "40256"},      // ply/PROVENANCE.md: 40256 vertices
	} {
		t.Run(tc.file, func(t *testing.T) {
			p := filepath.Join(ref, tc.file)
			if _, err := os.Stat(p); err != nil {
				t.Skipf("%s absent (../shared/reference not here): %v", p, err)
			}
			code, stdout, stderr := runArgs(t, "inspect", p)
			if code != exitOK {
				t.Fatalf("inspect exit %d: %s", code, stderr)
			}
			if !strings.Contains(stdout, "records    "+tc.count+" (0 rejected)") {
				t.Errorf("inspect %s:\n%s\nwant %s records", tc.file, stdout, tc.count)
			}
		})
	}
}

// TestDesignUncertaintySection: the design file's uncertainty section
// applies when no --uncertainty is given (same ISO 14253-1 guarded rule
// check as above: 9.8 mm with u = 3 mm, k = 2, against 10 mm is
// inconclusive), and a bad key in it is an error naming the line.
func TestDesignUncertaintySection(t *testing.T) {
	dir := t.TempDir()
	design, points := hyparFixture(t, dir, []float64{0.0098, 0.002})
	b, _ := os.ReadFile(design)
	good := string(b) + "uncertainty:\n  instrument:\n    kind: plain\n    sigma_mm: 3\n"
	os.WriteFile(design, []byte(good), 0o644)
	out := filepath.Join(dir, "out")
	if code, _, stderr := runArgs(t, "check", "--design", design, "--points", points, "--out", out, "--no-fit"); code != exitVerdict {
		t.Fatalf("exit %d, want 1 (inconclusive): %s", code, stderr)
	}
	var s struct {
		Verdict     string
		Uncertainty *struct{ Zones map[string]int }
	}
	raw, _ := os.ReadFile(filepath.Join(out, "summary.json"))
	json.Unmarshal(raw, &s)
	if s.Verdict != "inconclusive" || s.Uncertainty == nil || s.Uncertainty.Zones["inconclusive"] != 1 || s.Uncertainty.Zones["conforming"] != 1 {
		t.Errorf("verdict %q, uncertainty %+v", s.Verdict, s.Uncertainty)
	}
	lines := strings.Count(good, "\n")
	os.WriteFile(design, []byte(good+"  colour: 1\n"), 0o644)
	code, _, stderr := runArgs(t, "check", "--design", design, "--points", points, "--out", out)
	if code != exitUsage || !strings.Contains(stderr, fmt.Sprintf(":%d:", lines+1)) || !strings.Contains(stderr, "colour") {
		t.Errorf("exit %d, stderr %q: want 2 and the line %d named", code, stderr, lines+1)
	}
}

// TestPerShotStations: with a two-station total-station model and a
// station column in the shot file, each shot takes its own station's
// uncertainty. Only a 1″ angle error is modelled and the sights are close
// to horizontal, so along the (near-vertical) normal u ≈ s·σ_rad, the
// small-angle closed form (FIELD.md §3.2: 1″ gives 0.24 mm at 50 m and
// 0.48 mm at 100 m [computed]; Ghilani, Adjustment Computations, error
// propagation in angles, from memory).
func TestPerShotStations(t *testing.T) {
	dir := t.TempDir()
	design, points := hyparFixture(t, dir, []float64{0, 0, 0, 0, 0, 0})
	const e0, n0 = 500000.0, 5000000.0
	b, _ := os.ReadFile(points)
	lines := strings.Split(strings.TrimSpace(string(b)), "\n")
	var out strings.Builder
	out.WriteString("id,e,n,z,station\n")
	for i, l := range lines[1:] {
		stn := "FAR"
		if i%2 == 1 {
			stn = "NEAR"
		}
		out.WriteString(l + "," + stn + "\n")
	}
	os.WriteFile(points, []byte(out.String()), 0o644)
	model := filepath.Join(dir, "ts.yaml")
	os.WriteFile(model, []byte(fmt.Sprintf(`instrument:
  kind: total-station
  angle_arcsec: 1
  stations:
    - {id: FAR, e: %.3f, n: %.3f, h: 0.0, instrument_height: 0.0}
    - {id: NEAR, e: %.3f, n: %.3f, h: 0.0, instrument_height: 0.0}
`, e0-100, n0+5, e0-50, n0+5)), 0o644)
	res := filepath.Join(dir, "out")
	code, _, stderr := runArgs(t, "check", "--design", design, "--points", points, "--out", res, "--uncertainty", model, "--no-fit")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	rows := readCSV(t, filepath.Join(res, "deviations.csv"))
	col := map[string]int{}
	for i, h := range rows[0] {
		col[h] = i
	}
	const sigma = math.Pi / 180 / 3600 // 1″ in radians
	for i, r := range rows[1:] {
		x, _ := strconv.ParseFloat(r[col["x"]], 64)
		y, _ := strconv.ParseFloat(r[col["y"]], 64)
		z, _ := strconv.ParseFloat(r[col["z"]], 64)
		st := [2]float64{e0 - 100, n0 + 5}
		if i%2 == 1 {
			st = [2]float64{e0 - 50, n0 + 5}
		}
		s := math.Sqrt((x-st[0])*(x-st[0]) + (y-st[1])*(y-st[1]) + z*z)
		u, _ := strconv.ParseFloat(r[col["u_mm"]], 64)
		if want := s * sigma * 1000; math.Abs(u-want) > 0.03*want+0.006 {
			t.Errorf("shot %d (station %s, %.1f m): u %.3f mm, want about %.3f mm", i, r[col["id"]], s, u, want)
		}
	}
	// a file without a station column cannot use a two-station model
	os.WriteFile(points, []byte(strings.Join(lines, "\n")+"\n"), 0o644)
	code, _, stderr = runArgs(t, "check", "--design", design, "--points", points, "--out", res, "--uncertainty", model, "--no-fit")
	if code != exitUsage || !strings.Contains(stderr, "station column") {
		t.Errorf("exit %d, %q: want 2 and a request for a station column", code, stderr)
	}
}

// TestREADMEDesignExample: the design file shown in README.md parses as
// written, so a first-time user who copies it gets a working design.
func TestREADMEDesignExample(t *testing.T) {
	raw, err := os.ReadFile(filepath.Join("..", "..", "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	text := string(raw)
	i := strings.Index(text, "```yaml\nstructure:")
	if i < 0 {
		t.Fatal("README.md has no design-file example")
	}
	body := text[i+len("```yaml\n"):]
	body = body[:strings.Index(body, "```")]
	d, err := deviation.ParseDesign("README example", []byte(body), ".")
	if err != nil {
		t.Fatalf("the README's design example does not parse: %v", err)
	}
	if len(d.Patches) != 2 || d.Tolerance.Source == "" {
		t.Errorf("README example: %d patches, source %q", len(d.Patches), d.Tolerance.Source)
	}
	// and so does its uncertainty model example
	j := strings.Index(text, "```yaml\ninstrument:")
	if j < 0 {
		t.Fatal("README.md has no uncertainty-model example")
	}
	ub := text[j+len("```yaml\n"):]
	ub = ub[:strings.Index(ub, "```")]
	f := filepath.Join(t.TempDir(), "model.yaml")
	os.WriteFile(f, []byte(ub), 0o644)
	if _, err := loadModel(f); err != nil {
		t.Errorf("the README's uncertainty example does not parse: %v", err)
	}
}
