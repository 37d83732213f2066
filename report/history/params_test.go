package history

import (
	"encoding/json"
	"math"
	"strings"
	"testing"

	"saddlecheck/change"
	"saddlecheck/report"
)

func summaryWith(k1, u1, k2, u2 float64, meanMM, stdMM float64, n int64) *report.Summary {
	return &report.Summary{
		Overall: report.Stats{N: n, MeanMM: meanMM, StdMM: stdMM},
		Patches: []report.Patch{
			{ID: "north", AsBuilt: &report.AsBuilt{Fitted: true, K1: report.Value{Value: k1, U: u1}, K2: report.Value{Value: k2, U: u2}, Inliers: 1008}},
			{ID: "unfitted"},
		},
	}
}

// TestParameterTests stores shape parameters from two summaries, reads them
// back through JSON and tests them: a change of k1 by 10 u is detected and
// localised to k1, with σ̂0² = 1 and f = 2·1000 (scaled covariances).
func TestParameterTests(t *testing.T) {
	p1 := ParamsFromSummary(summaryWith(0.0700, 1e-4, -0.0650, 1e-4, 0, 2, 1000))
	p2 := ParamsFromSummary(summaryWith(0.0714, 1e-4, -0.0651, 1e-4, 0, 2, 1000))
	if len(p1.Patches) != 1 || p1.Patches[0].Estimate.Dof != 1000 {
		t.Fatalf("params from summary: %+v", p1)
	}
	var r1, r2 StoredParams
	for _, c := range []struct {
		in  StoredParams
		out *StoredParams
	}{{p1, &r1}, {p2, &r2}} {
		b, err := json.Marshal(c.in)
		if err != nil {
			t.Fatal(err)
		}
		if err := json.Unmarshal(b, c.out); err != nil {
			t.Fatal(err)
		}
	}
	global, params, notes := ParameterTests(r1, r2, change.DatumControl, change.DatumBestFit, 0.05)
	if len(global) != 1 || !global[0].Result.Reject || global[0].Result.Dof != 2000 {
		t.Fatalf("global test: %+v", global)
	}
	// T = ((0.0014/√2e-8)² + (0.0001/√2e-8)²)/2 = (98 + 0.5)/2 = 49.25.
	if math.Abs(global[0].Result.T-49.25) > 1e-9 {
		t.Errorf("T: got %.6f, want 49.25", global[0].Result.T)
	}
	if len(params) != 2 || !params[0].Test.Changed || params[1].Test.Changed || params[0].From != 0.0700 || params[0].To != 0.0714 {
		t.Errorf("localisation: %+v", params)
	}
	if !strings.Contains(global[0].Note, "best fit") || !strings.Contains(notes[0], "correlation") {
		t.Errorf("notes: %q %q", global[0].Note, notes)
	}
}

func TestSeriesBuilder(t *testing.T) {
	var b SeriesBuilder
	for i, d := range []string{"2018-06-01", "2020-06-01", "2022-06-01", "2024-06-01"} {
		y, _ := DecimalYear(d)
		mean := -0.5 * float64(i) // −0.25 mm/yr exactly (two-year steps)
		p := ParamsFromSummary(summaryWith(0.07, 1e-4, -0.065, 1e-4, mean, 2, 400))
		b.Add(Epoch{ID: int64(i + 1), Date: d, RegistrationMM: 0.3}, y, summaryWith(0, 0, 0, 0, mean, 2, 400), &p)
	}
	b.Add(Epoch{ID: 9, Date: "2025-01-01"}, 2025, nil, nil) // no result: nothing added
	// A best-fit epoch adds its shape parameters but no mean offset.
	p := ParamsFromSummary(summaryWith(0.07, 1e-4, -0.065, 1e-4, 0, 2, 400))
	b.Add(Epoch{ID: 10, Date: "2025-06-01", Datum: "bestfit"}, 2025.4, summaryWith(0, 0, 0, 0, 0, 2, 400), &p)
	series := b.Series(0.05)
	if len(series) != 3 {
		t.Fatalf("series: got %d, want k1, k2 and mean offset", len(series))
	}
	var mean *Series
	for i := range series {
		if strings.HasPrefix(series[i].Name, "mean offset") {
			mean = &series[i]
		}
	}
	// u = sqrt(2²/400 + 0.3²) = sqrt(0.01 + 0.09) = 0.3162 mm.
	if math.Abs(mean.Points[0].U-math.Sqrt(0.1)) > 1e-12 {
		t.Errorf("u of the mean offset: got %g, want %g", mean.Points[0].U, math.Sqrt(0.1))
	}
	if len(mean.Points) != 4 {
		t.Errorf("mean offset: %d points, want 4 (the best-fit epoch left out)", len(mean.Points))
	}
	if mean.Trend == nil || math.Abs(mean.Trend.Rate+0.25) > 1e-3 || !mean.Trend.Significant {
		t.Errorf("mean-offset trend: %+v, want −0.25 mm/yr significant", mean.Trend)
	}
}
