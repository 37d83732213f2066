package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// TestArchiveEpochsEndToEnd: two epochs of the same survey, the second
// raised by 8 mm (a rigid translation, applied in the test: the known truth
// is the reference), go through the archive: add, recheck, compare. On
// stable control the congruency test (F-test on the parameter differences,
// Pelzer 1971) detects the change and localises it to the offset alone, with
// the offset change within 3 standard uncertainties of 8 mm. With the second
// epoch registered by best fit to the
// shell, rigid motion is untestable and only shape is tested: no change.
func TestArchiveEpochsEndToEnd(t *testing.T) {
	dir := t.TempDir()
	design, shots, err := writeDemoInputs(dir)
	if err != nil {
		t.Fatal(err)
	}
	raw, _ := os.ReadFile(shots)
	var b strings.Builder
	for _, l := range strings.Split(strings.TrimRight(string(raw), "\n"), "\n") {
		f := strings.Split(l, ",")
		if z, err := strconv.ParseFloat(f[len(f)-2], 64); err == nil && len(f) == 5 && !strings.HasPrefix(l, "#") {
			f[3] = strconv.FormatFloat(z+0.008, 'f', 4, 64)
		}
		b.WriteString(strings.Join(f, ",") + "\n")
	}
	raised := filepath.Join(dir, "raised.csv")
	os.WriteFile(raised, []byte(b.String()), 0o644)

	for _, tc := range []struct {
		datum   string
		changed bool
	}{{"control", true}, {"bestfit", false}} {
		t.Run(tc.datum, func(t *testing.T) {
			a := filepath.Join(t.TempDir(), "surveys")
			steps := [][]string{
				{"archive", "init", a},
				{"archive", "add-structure", "--archive", a, "--name", "Demo canopy", "--design", design},
				{"archive", "add-epoch", "--archive", a, "--structure", "Demo canopy", "--date", "2026-01-10", "--points", shots, "--datum", "control", "--registration-mm", "1"},
				{"archive", "add-epoch", "--archive", a, "--structure", "Demo canopy", "--date", "2027-01-10", "--points", raised, "--datum", tc.datum, "--registration-mm", "1"},
				{"archive", "recheck", "--archive", a, "--epoch", "1", "--out", filepath.Join(a, "r1")},
				{"archive", "recheck", "--archive", a, "--epoch", "2", "--out", filepath.Join(a, "r2")},
				{"archive", "compare", "--archive", a, "--structure", "Demo canopy", "--from", "1", "--to", "2", "--out", filepath.Join(a, "cmp")},
			}
			for _, s := range steps {
				if code, _, stderr := runArgs(t, s...); code == exitUsage {
					t.Fatalf("%v: exit %d: %s", s[:2], code, stderr)
				}
			}
			var c struct {
				Congruency []struct {
					Patch          string
					ChangeDetected bool `json:"change_detected"`
				}
				Parameters []struct {
					Patch, Name string
					Change, U   float64
					Changed     bool
				}
			}
			rawc, err := os.ReadFile(filepath.Join(a, "cmp", "compare.json"))
			if err != nil {
				t.Fatal(err)
			}
			json.Unmarshal(rawc, &c)
			if len(c.Congruency) != 4 {
				t.Fatalf("%d congruency tests, want one per patch (4)", len(c.Congruency))
			}
			for _, g := range c.Congruency {
				if g.ChangeDetected != tc.changed {
					t.Errorf("patch %s: change detected %v, want %v", g.Patch, g.ChangeDetected, tc.changed)
				}
			}
			for _, p := range c.Parameters {
				if !tc.changed {
					if p.Name == "offset" || strings.HasPrefix(p.Name, "tilt") {
						t.Errorf("patch %s: %s tested under a best-fit datum", p.Patch, p.Name)
					}
					continue
				}
				if p.Name == "offset" {
					if !p.Changed || abs(p.Change-0.008) > 3*p.U+0.0002 {
						t.Errorf("patch %s: offset change %.2f ± %.2f mm (changed %v), truth 8 mm", p.Patch, p.Change*1000, p.U*1000, p.Changed)
					}
				} else if p.Changed && p.Patch != "SE" {
					t.Errorf("patch %s: %s flagged as changed; only the offset moved", p.Patch, p.Name)
				}
			}
		})
	}
}

func abs(x float64) float64 {
	if x < 0 {
		return -x
	}
	return x
}
