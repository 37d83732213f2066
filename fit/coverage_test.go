package fit

import (
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

// TestCoverage checks the reported 95 % intervals against the truth: over
// 400 seeded trials of 300 points (2 mm Gaussian noise, 10 % outliers,
// design start) the true K1 and K2 must lie inside their intervals in
// 92.5–97.5 % of trials. With 400 trials the binomial standard error of a
// 95 % rate is 1.1 %, so the band is ±2.3 standard errors.
func TestCoverage(t *testing.T) {
	truth := synthSaddle()
	design := truth
	design.K1 *= 1.01
	design.K2 *= 0.99
	design.Origin = r3.Add(design.Origin, r3.Vec{X: 0.02, Y: 0.01, Z: -0.01})
	const trials = 400
	in1, in2 := 0, 0
	for k := 0; k < trials; k++ {
		pts, _ := synthPoints(&truth, workloadOptions(300, 0.1, 0, uint64(1000+k)))
		res, err := FitSaddle(pts, &SaddleSettings{Start: &design})
		if err != nil {
			t.Fatalf("trial %d: %v", k, err)
		}
		if res.K1.Lo95 <= truth.K1 && truth.K1 <= res.K1.Hi95 {
			in1++
		}
		if res.K2.Lo95 <= truth.K2 && truth.K2 <= res.K2.Hi95 {
			in2++
		}
	}
	r1, r2 := float64(in1)/trials, float64(in2)/trials
	t.Logf("coverage of the 95 %% intervals: K1 %.1f %%, K2 %.1f %%", 100*r1, 100*r2)
	for _, r := range []float64{r1, r2} {
		if r < 0.925 || r > 0.975 {
			t.Errorf("coverage %.3f, want 0.925–0.975", r)
		}
	}
}
