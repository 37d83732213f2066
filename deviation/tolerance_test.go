package deviation

import (
	"errors"
	"strings"
	"testing"
)

func TestToleranceBoundaries(t *testing.T) {
	// Limits are inclusive, as in the decision table of FIELD.md §2
	// (T_L ≤ d ≤ T_U conforms, with w = 0 here): |d| == limit conforms, and
	// a value on a band edge belongs to the inner band.
	tol := Tolerance{Source: "s", LimitM: 0.010, BandsM: []float64{0.005, 0.010, 0.020}}.WithDefaults()
	tests := []struct {
		dev      float64
		conforms bool
		band     int
	}{
		{0, true, 0},
		{0.005, true, 0}, // on a band edge: inner band
		{-0.005, true, 0},
		{0.0050001, true, 1},
		{0.010, true, 1}, // |d| == limit conforms
		{-0.010, true, 1},
		{0.0100001, false, 2},
		{0.020, false, 2},
		{-0.0200001, false, 3},
	}
	for _, tt := range tests {
		if got := tol.Conforms(tt.dev); got != tt.conforms {
			t.Errorf("Conforms(%g) = %v, want %v", tt.dev, got, tt.conforms)
		}
		if got := tol.Band(tt.dev); got != tt.band {
			t.Errorf("Band(%g) = %d, want %d", tt.dev, got, tt.band)
		}
	}
}

func TestPatchVerdict(t *testing.T) {
	tol := Tolerance{Source: "s", LimitM: 0.010, MinShare: 0.95, MaxAbsM: 0.025}
	tests := []struct {
		name      string
		n, within int64
		maxAbs    float64
		want      Verdict
	}{
		{"no points", 0, 0, 0, Inconclusive},
		{"share exactly", 100, 95, 0.02, Conforming},
		{"share exactly 19/20", 20, 19, 0.02, Conforming},
		{"share below", 100, 94, 0.02, Nonconforming},
		{"max exactly", 100, 100, 0.025, Conforming},
		{"max above", 100, 100, 0.0250001, Nonconforming},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := tol.PatchVerdict(tt.n, tt.within, tt.maxAbs); got != tt.want {
				t.Errorf("got %v, want %v", got, tt.want)
			}
		})
	}
	strict := Tolerance{Source: "s", LimitM: 0.01} // MinShare 0 = every point
	if strict.PatchVerdict(100, 99, 0.02) != Nonconforming || strict.PatchVerdict(100, 100, 0.01) != Conforming {
		t.Error("default min share is not 1")
	}
}

func TestOverall(t *testing.T) {
	C, N, I := Conforming, Nonconforming, Inconclusive
	tests := []struct {
		vs   []Verdict
		want Verdict
	}{
		{nil, I},
		{[]Verdict{C, C}, C},
		{[]Verdict{C, I}, I},
		{[]Verdict{C, N, I}, N},
	}
	for _, tt := range tests {
		if got := Overall(tt.vs); got != tt.want {
			t.Errorf("Overall(%v) = %v, want %v", tt.vs, got, tt.want)
		}
	}
	if C.String() != "conforming" || N.String() != "nonconforming" || I.String() != "inconclusive" {
		t.Error("verdict names")
	}
}

func TestRuleText(t *testing.T) {
	tol := Tolerance{Source: "Project spec 03 30 00, cl. 3.4.2", LimitM: 0.010, MinShare: 0.95, MaxAbsM: 0.025}
	got := tol.RuleText()
	for _, w := range []string{"at least 95.0 % of its used points", "±10.0 mm", "exceeds ±25.0 mm", "inconclusive", "150 mm", "Project spec 03 30 00, cl. 3.4.2"} {
		if !strings.Contains(got, w) {
			t.Errorf("RuleText %q lacks %q", got, w)
		}
	}
}

func TestToleranceValidate(t *testing.T) {
	ok := Tolerance{Source: "s", LimitM: 0.01}.WithDefaults()
	if err := ok.Validate(); err != nil {
		t.Fatal(err)
	}
	bad := []Tolerance{
		{LimitM: 0.01},
		{Source: "s"},
		{Source: "s", LimitM: 0.01, MinShare: 1.5},
		{Source: "s", LimitM: 0.01, MaxAbsM: 0.005},
		{Source: "s", LimitM: 0.01, BandsM: []float64{0.01, 0.01}},
		{Source: "s", LimitM: 0.2},
	}
	for i, b := range bad {
		if err := b.WithDefaults().Validate(); !errors.Is(err, ErrTolerance) {
			t.Errorf("case %d: got %v, want ErrTolerance", i, err)
		}
	}
}
