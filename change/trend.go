package change

import (
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// Trend is a straight-line rate fitted to one quantity over epochs.
type Trend struct {
	// Rate is the fitted change per year (unit of y per year).
	Rate float64
	// T0 is the weighted mean epoch time (years), where the line's value
	// Level is least correlated with Rate.
	T0, Level float64
	// UPrior is the standard uncertainty of Rate from the weights alone,
	// sqrt(1/Σ wᵢ(tᵢ − T0)²) with wᵢ = 1/uᵢ².
	UPrior float64
	// S0sq is the a-posteriori variance factor Σ wᵢ rᵢ² / (n − 2).
	S0sq float64
	// U is the standard uncertainty used for the test: UPrior·sqrt(S0sq).
	U float64
	// Dof is n − 2.
	Dof int
	// TStat is Rate / U and Critical the two-sided t_{1−α/2}(Dof) quantile.
	TStat, Critical float64
	// Significant reports |TStat| > Critical.
	Significant bool
}

// FitTrend fits y(t) = Level + Rate·(t − T0) by weighted least squares with
// weights wᵢ = 1/uᵢ² (t in years, y with standard uncertainties u > 0) and
// tests the rate against zero with Student's t at level alpha (0.05 for
// 95 %):
//
//	T0   = Σ wᵢtᵢ / Σ wᵢ,          Level = Σ wᵢyᵢ / Σ wᵢ,
//	Rate = Σ wᵢ(tᵢ − T0)(yᵢ − Level) / Σ wᵢ(tᵢ − T0)²,
//	u²(Rate) = S0sq / Σ wᵢ(tᵢ − T0)²,  S0sq = Σ wᵢrᵢ²/(n − 2).
//
// The a-posteriori variance factor is used whenever there are degrees of
// freedom (n ≥ 3, so always here): the rate's uncertainty then reflects the
// observed scatter about the line, not only the stated uncertainties, and
// TStat ~ t(n − 2) under no trend. With few epochs the t quantile is large
// (12.7 for n = 3), as it should be. UPrior is reported beside it.
//
// FitTrend needs at least three epochs with distinct times.
//
// References: the closed-form weighted straight-line fit is in every
// adjustment textbook (e.g. Niemeier, Ausgleichungsrechnung; Taylor, An
// Introduction to Error Analysis, ch. 8).
func FitTrend(t, y, u []float64, alpha float64) (Trend, error) {
	n := len(t)
	if len(y) != n || len(u) != n {
		panic("change: FitTrend: t, y and u differ in length")
	}
	if !(alpha > 0 && alpha < 1) {
		panic("change: FitTrend: alpha must be in (0, 1)")
	}
	if n < 3 {
		return Trend{}, ErrTooFewEpochs
	}
	var sw, swt, swy float64
	for i := range t {
		switch {
		case !finite(t[i]):
			return Trend{}, &InputError{What: "epoch time", Index: i, Err: ErrNotFinite}
		case !finite(y[i]):
			return Trend{}, &InputError{What: "value", Index: i, Err: ErrNotFinite}
		case !(u[i] > 0) || !finite(u[i]):
			return Trend{}, &InputError{What: "uncertainty", Index: i, Err: ErrUncertainty}
		}
		w := 1 / (u[i] * u[i])
		sw += w
		swt += w * t[i]
		swy += w * y[i]
	}
	var tr Trend
	tr.T0, tr.Level = swt/sw, swy/sw
	var stt, sty float64
	for i := range t {
		w := 1 / (u[i] * u[i])
		dt := t[i] - tr.T0
		stt += w * dt * dt
		sty += w * dt * (y[i] - tr.Level)
	}
	if !(stt > 0) {
		return Trend{}, &InputError{What: "epoch time", Index: -1, Err: ErrTooFewEpochs}
	}
	tr.Rate = sty / stt
	var swrr float64
	for i := range t {
		r := y[i] - tr.Level - tr.Rate*(t[i]-tr.T0)
		swrr += r * r / (u[i] * u[i])
	}
	tr.Dof = n - 2
	tr.S0sq = swrr / float64(tr.Dof)
	tr.UPrior = math.Sqrt(1 / stt)
	tr.U = tr.UPrior * math.Sqrt(tr.S0sq)
	tr.Critical = distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(tr.Dof)}.Quantile(1 - alpha/2)
	if tr.U > 0 {
		tr.TStat = tr.Rate / tr.U
	} else if tr.Rate != 0 {
		tr.TStat = math.Inf(int(math.Copysign(1, tr.Rate)))
	}
	tr.Significant = math.Abs(tr.TStat) > tr.Critical
	return tr, nil
}
