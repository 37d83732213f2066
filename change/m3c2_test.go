package change

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

// planeEpoch returns n points uniform over [0, w]×[0, w] on the plane
// through origin o with unit normal nrm, offset along nrm by shift and with
// Gaussian noise of SD sigma along nrm. e1, e2 span the plane.
func planeEpoch(rng *rand.Rand, n int, w float64, o, e1, e2, nrm r3.Vec, shift, sigma float64) []r3.Vec {
	pts := make([]r3.Vec, n)
	for i := range pts {
		u, v := rng.Float64()*w, rng.Float64()*w
		d := shift + sigma*rng.NormFloat64()
		pts[i] = r3.Add(o, r3.Add(r3.Scale(u, e1), r3.Add(r3.Scale(v, e2), r3.Scale(d, nrm))))
	}
	return pts
}

var (
	ex = r3.Vec{X: 1}
	ey = r3.Vec{Y: 1}
	ez = r3.Vec{Z: 1}
	// A site-scale origin, to exercise large coordinates.
	siteOrigin = r3.Vec{X: 512345.0, Y: 5401234.0, Z: 312.0}
)

// TestLoD95Formula checks LoD95 against the closed form of Lague, Brodu &
// Leroux (2013, eq. 1) with 1.96 multiplying the registration term too.
func TestLoD95Formula(t *testing.T) {
	// σ1 = 3 mm, n1 = 9; σ2 = 4 mm, n2 = 16; reg = 1 mm:
	// sqrt(1e-6 + 1e-6) = 1.41421 mm → 1.959964·(1.41421 + 1) mm.
	want := Z95 * (math.Sqrt2*1e-3 + 1e-3)
	near(t, "LoD95", LoD95(0.003, 9, 0.004, 16, 0.001), want, tolExact)
	near(t, "Z95", Z95, 1.96, 1e-4) // standard normal 97.5 % point
}

// TestCompareRigidOffset uses two synthetic epochs of a plane with a known
// rigid offset along the normal and known noise; the truth is the offset.
// Core points are 1 m apart with r = 0.45 m, so cylinders do not overlap and
// their results are independent.
func TestCompareRigidOffset(t *testing.T) {
	const (
		w      = 20.0
		n      = 32000 // ≈ 80 points per m², ≈ 50 per cylinder
		sigma  = 0.002
		offset = 0.005
	)
	set := &Settings{CoreSpacing: 1, Radius: 0.45, HalfLength: 0.1}
	rng := rand.New(rand.NewPCG(5, 6))
	a := planeEpoch(rng, n, w, siteOrigin, ex, ey, ez, 0, sigma)
	b := planeEpoch(rng, n, w, siteOrigin, ex, ey, ez, offset, sigma)
	cores, err := Grid(nil, nil, 0, a, b, set)
	if err != nil {
		t.Fatal(err)
	}
	if len(cores) != 400 {
		t.Fatalf("cores: got %d, want 400", len(cores))
	}
	sum := Compare(cores, a, b, set)
	if sum.TooFewPoints != 0 {
		t.Errorf("too few points at %d cores, want 0", sum.TooFewPoints)
	}
	// Each distance has SD ≈ σ·sqrt(2/50) = 0.4 mm; the mean of 400 has SE
	// 0.02 mm. Allow 5 SE.
	near(t, "mean distance", sum.MeanDistance, offset, 1e-4)
	if sum.Significant < 390 {
		t.Errorf("a 5 mm offset against LoD95 ≈ 1.1 mm: significant at %d of 400 cores, want ≥ 390", sum.Significant)
	}
}

// TestCompareFalsePositiveRate checks that where nothing moved, the fraction
// of cores flagged significant is the 5 % the LoD95 formula implies (Lague,
// Brodu & Leroux 2013, eq. 1: a two-sided 95 % interval of a difference of
// means). With about 50 points per cylinder the normal quantile 1.96 is
// close to Student's t (1.98 for 98 dof), so the expected rate is about
// 5.3 %; with n = 4 it would be about 10 % (t with 6 dof), which is why the
// check uses dense cylinders. Edge cores hold about half as many points,
// which pushes the rate up a little more: pooled over 20 other seeds (8000
// cores) it was 5.8 % in this session. 400 independent cores: binomial SE
// 1.1 %; accepted 2.5–7.5 %.
func TestCompareFalsePositiveRate(t *testing.T) {
	const w, n, sigma = 20.0, 32000, 0.002
	set := &Settings{CoreSpacing: 1, Radius: 0.45, HalfLength: 0.1}
	rng := rand.New(rand.NewPCG(7, 8))
	a := planeEpoch(rng, n, w, siteOrigin, ex, ey, ez, 0, sigma)
	b := planeEpoch(rng, n, w, siteOrigin, ex, ey, ez, 0, sigma)
	cores, err := Grid(nil, nil, 0, a, b, set)
	if err != nil {
		t.Fatal(err)
	}
	sum := Compare(cores, a, b, set)
	rate := float64(sum.Significant) / float64(sum.Cores-sum.TooFewPoints)
	t.Logf("false-positive rate: %.4f over %d cores", rate, sum.Cores-sum.TooFewPoints)
	if rate < 0.025 || rate > 0.075 {
		t.Errorf("false-positive rate with no movement: got %.3f, want about 0.05 (0.025–0.075)", rate)
	}
	if math.Abs(sum.MeanDistance) > 1e-4 {
		t.Errorf("mean distance with no movement: got %.5f m, want 0 ± 0.1 mm", sum.MeanDistance)
	}
}

// TestCompareTiltedNormal checks a plane tilted 35° about the x axis, with
// core points lifted onto it and the plane normal from a projector: the
// distance along the normal equals the offset along the normal, which the
// plan-index reach (r + h·|n_xy|) must find.
func TestCompareTiltedNormal(t *testing.T) {
	th := 35 * math.Pi / 180
	e2 := r3.Vec{Y: math.Cos(th), Z: math.Sin(th)}
	nrm := r3.Vec{Y: -math.Sin(th), Z: math.Cos(th)}
	proj := func(p r3.Vec) (r3.Vec, r3.Vec, bool) {
		d := r3.Dot(r3.Sub(p, siteOrigin), nrm)
		return r3.Sub(p, r3.Scale(d, nrm)), nrm, true
	}
	set := &Settings{CoreSpacing: 1, Radius: 0.45, HalfLength: 0.3}
	rng := rand.New(rand.NewPCG(9, 10))
	a := planeEpoch(rng, 20000, 12, siteOrigin, ex, e2, nrm, 0, 0.001)
	b := planeEpoch(rng, 20000, 12, siteOrigin, ex, e2, nrm, -0.008, 0.001)
	cores, err := Grid(nil, proj, 3, a, b, set)
	if err != nil {
		t.Fatal(err)
	}
	sum := Compare(cores, a, b, set)
	near(t, "mean distance", sum.MeanDistance, -0.008, 1e-4)
	if cores[0].Patch != 3 {
		t.Errorf("patch: got %d, want 3", cores[0].Patch)
	}
	// Interior cores see the full disk: about π·0.45²·(20000/144) ≈ 88.
	best := 0
	for _, c := range cores {
		best = max(best, c.N1)
	}
	if best < 60 {
		t.Errorf("largest cylinder count %d, want ≈ 88 (the reach misses points)", best)
	}
}

// TestCompareSparseEpoch compares a sparse total-station epoch (four shots
// per m², about three per cylinder of r = 0.5 m) with a dense scan: cores whose cylinder holds fewer than
// MinPoints shots are TooFewPoints, carry NaN distances and are left out of
// the summary statistics rather than guessed.
func TestCompareSparseEpoch(t *testing.T) {
	set := &Settings{CoreSpacing: 0.5, Radius: 0.5, HalfLength: 0.1}
	rng := rand.New(rand.NewPCG(11, 12))
	sparse := planeEpoch(rng, 1600, 20, siteOrigin, ex, ey, ez, 0, 0.002)
	dense := planeEpoch(rng, 40000, 20, siteOrigin, ex, ey, ez, 0.004, 0.002)
	cores, err := Grid(nil, nil, 0, sparse, dense, set)
	if err != nil {
		t.Fatal(err)
	}
	sum := Compare(cores, sparse, dense, set)
	if sum.TooFewPoints == 0 || sum.TooFewPoints == sum.Cores {
		t.Fatalf("too few points at %d of %d cores, want some but not all", sum.TooFewPoints, sum.Cores)
	}
	for _, c := range cores {
		few := c.N1 < DefaultMinPoints || c.N2 < DefaultMinPoints
		if few != (c.Status == TooFewPoints) {
			t.Fatalf("core with n1=%d n2=%d has status %v", c.N1, c.N2, c.Status)
		}
		if few && !math.IsNaN(c.Distance) {
			t.Fatalf("too-few core has distance %g, want NaN", c.Distance)
		}
	}
	// Cores with a distance: several hundred, each with SD ≈ 1 mm but
	// overlapping cylinders; 0.5 mm is about 5 effective SE.
	near(t, "mean distance", sum.MeanDistance, 0.004, 5e-4)
}

// TestCompareMedian checks the median option against a cylinder with a
// known stray point: the median ignores it, the mean does not.
func TestCompareMedian(t *testing.T) {
	a := []r3.Vec{{X: 0, Y: 0, Z: 0}, {X: 0.1, Y: 0, Z: 0.001}, {X: 0, Y: 0.1, Z: -0.001}, {X: -0.1, Y: 0, Z: 0}, {X: 0, Y: -0.1, Z: 0}}
	b := []r3.Vec{{X: 0, Y: 0, Z: 0.01}, {X: 0.1, Y: 0, Z: 0.011}, {X: 0, Y: 0.1, Z: 0.009}, {X: -0.1, Y: 0, Z: 0.01}, {X: 0, Y: -0.1, Z: 0.3}}
	core := []Core{{P: r3.Vec{}, N: ez}}
	Compare(core, a, b, &Settings{Radius: 0.2, HalfLength: 0.5, Median: true})
	near(t, "median distance", core[0].Distance, 0.01, tolExact)
	Compare(core, a, b, &Settings{Radius: 0.2, HalfLength: 0.5})
	near(t, "mean distance", core[0].Distance, (0.05+0.29)/5, 1e-12)
	if core[0].N1 != 5 || core[0].N2 != 5 {
		t.Errorf("counts: got %d, %d, want 5, 5", core[0].N1, core[0].N2)
	}
}

func TestGridTooLarge(t *testing.T) {
	a := []r3.Vec{{}, {X: 1e5, Y: 1e5}}
	if _, err := Grid(nil, nil, 0, a, nil, &Settings{CoreSpacing: 0.01}); err == nil {
		t.Error("a 10¹⁴-cell grid: got no error")
	}
}

func benchmarkCompare(b *testing.B, n int) {
	// A 30 m × 20 m shell footprint, 2 mm noise, two epochs of n points,
	// core grid 0.25 m, r = 0.5 m.
	rng := rand.New(rand.NewPCG(13, 14))
	gen := func(shift float64) []r3.Vec {
		pts := make([]r3.Vec, n)
		for i := range pts {
			x, y := rng.Float64()*30, rng.Float64()*20
			z := 0.02*(x-15)*(x-15) - 0.03*(y-10)*(y-10) + shift + 0.002*rng.NormFloat64()
			pts[i] = r3.Add(siteOrigin, r3.Vec{X: x, Y: y, Z: z})
		}
		return pts
	}
	e1, e2 := gen(0), gen(0.003)
	set := &Settings{CoreSpacing: 0.25, Radius: 0.5, HalfLength: 0.5}
	b.ReportAllocs()
	b.ResetTimer()
	var cores []Core
	for range b.N {
		// The whole comparison: core grid, normals from the earlier epoch
		// (the no-design path, the slower one), distances.
		var err error
		if cores, err = Grid(cores[:0], nil, 0, e1, e2, set); err != nil {
			b.Fatal(err)
		}
		EstimateNormals(cores, e1, set)
		Compare(cores, e1, e2, set)
	}
	b.ReportMetric(float64(len(cores)), "cores")
}

func BenchmarkCompare1M(b *testing.B) { benchmarkCompare(b, 1_000_000) }

// BenchmarkCompare5M is the speed target: two 5-million-point epochs on a
// 0.25 m core grid (run with -benchtime=1x).
func BenchmarkCompare5M(b *testing.B) {
	if testing.Short() {
		b.Skip("large benchmark")
	}
	benchmarkCompare(b, 5_000_000)
}

// TestCoreTrends generates four epochs of a plane sinking at a known rate
// (the truth) and checks the per-core rates and their significance.
func TestCoreTrends(t *testing.T) {
	const rate = -0.002 // m per year
	years := []float64{2020, 2022, 2023.5, 2026}
	set := &Settings{CoreSpacing: 2, Radius: 0.45, HalfLength: 0.1}
	rng := rand.New(rand.NewPCG(15, 16))
	epochs := make([][]r3.Vec, len(years))
	for k, y := range years {
		epochs[k] = planeEpoch(rng, 16000, 20, siteOrigin, ex, ey, ez, rate*(y-2020), 0.001)
	}
	cores, err := Grid(nil, nil, 0, epochs[0], epochs[1], set)
	if err != nil {
		t.Fatal(err)
	}
	pos := make([][]Position, len(years))
	for k := range years {
		pos[k] = Positions(nil, cores, epochs[k], set)
	}
	trends := CoreTrends(nil, years, pos, make([]float64, len(years)), set, 0.05)
	var sum float64
	n, sig := 0, 0
	for _, tr := range trends {
		if !tr.OK {
			continue
		}
		n++
		sum += tr.Rate
		if tr.Significant {
			sig++
		}
	}
	if n < len(cores)*9/10 {
		t.Fatalf("trends at %d of %d cores", n, len(cores))
	}
	// Per core u(rate) ≈ 0.15 mm/yr / sqrt(25 points) → mean of 100 cores
	// within 0.05 mm/yr.
	near(t, "mean rate", sum/float64(n), rate, 5e-5)
	if sig < n*8/10 {
		t.Errorf("significant at %d of %d cores, want most", sig, n)
	}
	// sqrt(0.009²/9 + 0.004²) = sqrt(9e-6 + 16e-6) = 5 mm.
	near(t, "Position.U", Position{Mean: 0, Sigma: 0.009, N: 9}.U(0.004), 0.005, tolExact)
}

func TestSettingsResolved(t *testing.T) {
	r := Settings{Radius: 0.3}.Resolved()
	if r.Radius != 0.3 || r.CoreSpacing != DefaultCoreSpacing || r.MinPoints != DefaultMinPoints || r.NormalScale != DefaultNormalScale || r.Workers < 1 {
		t.Errorf("resolved settings: %+v", r)
	}
	near(t, "combined registration", CombineRegistration(0.003, 0.004), 0.005, tolExact)
}

// TestGridPatchFilter checks that Grid keeps only nodes whose foot lies
// inside the patch, places them at the foot and takes the patch normal.
func TestGridPatchFilter(t *testing.T) {
	rng := rand.New(rand.NewPCG(19, 20))
	a := planeEpoch(rng, 4000, 10, r3.Vec{}, ex, ey, ez, 0, 0.001)
	half := func(p r3.Vec) (r3.Vec, r3.Vec, bool) {
		return r3.Vec{X: p.X, Y: p.Y, Z: 0.5}, ez, p.X < 5
	}
	cores, err := Grid(nil, half, 7, a, nil, &Settings{CoreSpacing: 1})
	if err != nil {
		t.Fatal(err)
	}
	if len(cores) != 50 {
		t.Fatalf("cores: got %d, want 50 (5 × 10 cells with x < 5)", len(cores))
	}
	for _, c := range cores {
		if c.P.X >= 5 || c.P.Z != 0.5 || c.Patch != 7 {
			t.Fatalf("core %+v: want x < 5, z on the surface 0.5, patch 7", c)
		}
	}
}
