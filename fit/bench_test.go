package fit

import (
	"path/filepath"
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

// BenchmarkLMNISTMGH10 solves NIST StRD MGH10 from start 1 (293
// evaluations), the hardest of the certified problems for this solver.
func BenchmarkLMNISTMGH10(b *testing.B) {
	path := filepath.Join(repoRoot(b), "..", "shared", "reference", "nist-strd", "MGH10.dat")
	d, err := parseNIST(path)
	if err != nil {
		b.Skipf("MGH10.dat not available: %v", err)
	}
	p := d.problem(nistModels["MGH10"])
	set := &Settings{FTol: 1e-15, XTol: 1e-15, MaxEvaluations: 5000}
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		if _, err := LevenbergMarquardt(p, d.start1, set); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkRANSACQuadric100k runs the general-quadric RANSAC alone on
// 10⁵ points with 15 % outliers.
func BenchmarkRANSACQuadric100k(b *testing.B) {
	truth := synthSaddle()
	pts, _ := synthPoints(&truth, workloadOptions(100_000, 0.12, 0.03, 8))
	m := NewQuadricModel(pts)
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := RANSAC[Quadric](m, pts, nil); err != nil {
			b.Fatal(err)
		}
	}
}
