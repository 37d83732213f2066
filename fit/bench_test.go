package fit

import (
	"testing"
)

// BenchmarkFitSaddle1M fits 10⁶ points shaped like the peer workload
// (../shared/peers/make_workloads.py: z = x²/a² − y²/b², a = 12 m, b = 9 m,
// patch x∈[3,33], y∈[−9,21], 2 mm noise, 12 % outliers 5–50 cm off, 3 %
// clutter metres off; here the clutter is spread along the normal rather
// than in four clusters), RANSAC on the general quadric plus
// Levenberg–Marquardt, no design start.
//
//	go test -run '^$' -bench FitSaddle1M -benchtime 3x ./fit
func BenchmarkFitSaddle1M(b *testing.B) {
	benchFit(b, 1_000_000, nil)
}

// BenchmarkFitSaddle1MDesignStart is the same with the design pose as the
// start (no RANSAC).
func BenchmarkFitSaddle1MDesignStart(b *testing.B) {
	truth := synthSaddle()
	benchFit(b, 1_000_000, &SaddleSettings{Start: &truth})
}

func benchFit(b *testing.B, n int, s *SaddleSettings) {
	truth := synthSaddle()
	pts, _ := synthPoints(&truth, workloadOptions(n, 0.12, 0.03, 42))
	b.ReportAllocs()
	b.ResetTimer()
	cpu0 := cpuSeconds()
	for i := 0; i < b.N; i++ {
		res, err := FitSaddle(pts, s)
		if err != nil {
			b.Fatal(err)
		}
		if i == 0 {
			b.ReportMetric(float64(res.Solver.Evaluations), "lm-evals")
			b.ReportMetric(float64(res.Rounds), "rounds")
		}
	}
	// CPU seconds per fit (user + system, all threads): on a shared
	// machine this is steadier than wall time; wall ≈ cpu/2 on 2 idle cores.
	b.ReportMetric((cpuSeconds()-cpu0)/float64(b.N), "cpu-s/op")
}
