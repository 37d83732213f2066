package change

import (
	"errors"
	"math"
	"testing"
)

// TestFitTrendAnscombe checks the rate against Anscombe's data set I
// (Anscombe, F. J. (1973) Graphs in statistical analysis. Am. Stat.
// 27:17–21; data confirmed with the search tool from the Oxford Index
// entry "Anscombe's regression data"): the fitted line is y = 3.00 + 0.500x
// [source]; the slope's standard error 0.118 and t = 4.24 are the usual
// printed summary (from memory; reproduced by a closed-form straight-line
// fit in this session). Equal uncertainties u = 1 make the WLS an OLS.
func TestFitTrendAnscombe(t *testing.T) {
	x := []float64{10, 8, 13, 9, 11, 14, 6, 4, 12, 7, 5}
	y := []float64{8.04, 6.95, 7.58, 8.81, 8.33, 9.96, 7.24, 4.26, 10.84, 4.82, 5.68}
	u := make([]float64, len(x))
	for i := range u {
		u[i] = 1
	}
	tr, err := FitTrend(x, y, u, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "slope", tr.Rate, 0.500, 1e-3)
	near(t, "intercept", tr.Level-tr.Rate*tr.T0, 3.00, 1e-3)
	near(t, "SE slope", tr.U, 0.118, 1e-3)
	near(t, "t", tr.TStat, 4.24, 1e-2)
	if tr.Dof != 9 || !tr.Significant {
		t.Errorf("dof %d significant %v, want 9 true", tr.Dof, tr.Significant)
	}
	// Student's t 97.5 % point for 9 dof is 2.262 (NIST e-Handbook
	// §1.3.6.7.2 t table, from memory).
	near(t, "t critical", tr.Critical, 2.262, 2e-4)
}

// TestFitTrendExactLine checks an exact linear series (the truth is the
// line): rate recovered to rounding, zero residual variance, and — with
// unequal weights — the same rate.
func TestFitTrendExactLine(t *testing.T) {
	years := []float64{2011.4, 2014.7, 2019.1, 2023.9, 2026.2}
	const rate, level = -0.0012, 0.0031 // m/yr, m at 2011
	y := make([]float64, len(years))
	for i, ti := range years {
		y[i] = level + rate*(ti-2011)
	}
	u := []float64{0.003, 0.001, 0.002, 0.0005, 0.001}
	tr, err := FitTrend(years, y, u, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "rate", tr.Rate, rate, 1e-12)
	if tr.S0sq > 1e-18 {
		t.Errorf("S0sq: got %g, want 0", tr.S0sq)
	}
	if !tr.Significant {
		t.Error("an exact non-zero trend should be significant")
	}
}

// TestFitTrendReplication checks the weighting identity: integer weights kᵢ
// (uᵢ = 1/sqrt(kᵢ)) give the same rate and a-priori uncertainty as an
// unweighted fit to the data with point i repeated kᵢ times.
func TestFitTrendReplication(t *testing.T) {
	tt := []float64{0, 1, 2.5, 4}
	y := []float64{1.0, 1.4, 1.9, 3.1}
	k := []int{1, 3, 2, 4}
	u := make([]float64, len(tt))
	var rt, ry, ru []float64
	for i := range tt {
		u[i] = 1 / math.Sqrt(float64(k[i]))
		for j := 0; j < k[i]; j++ {
			rt, ry, ru = append(rt, tt[i]), append(ry, y[i]), append(ru, 1)
		}
	}
	w, err := FitTrend(tt, y, u, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	r, err := FitTrend(rt, ry, ru, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "rate", w.Rate, r.Rate, tolExact)
	near(t, "UPrior", w.UPrior, r.UPrior, tolExact)
}

func TestFitTrendErrors(t *testing.T) {
	tests := []struct {
		name    string
		t, y, u []float64
		want    error
	}{
		{"two epochs", []float64{1, 2}, []float64{0, 1}, []float64{1, 1}, ErrTooFewEpochs},
		{"zero uncertainty", []float64{1, 2, 3}, []float64{0, 1, 2}, []float64{1, 0, 1}, ErrUncertainty},
		{"NaN value", []float64{1, 2, 3}, []float64{0, math.NaN(), 2}, []float64{1, 1, 1}, ErrNotFinite},
		{"same time", []float64{2, 2, 2}, []float64{0, 1, 2}, []float64{1, 1, 1}, ErrTooFewEpochs},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := FitTrend(tc.t, tc.y, tc.u, 0.05)
			if !errors.Is(err, tc.want) {
				t.Errorf("got %v, want %v", err, tc.want)
			}
		})
	}
}
