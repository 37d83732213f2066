package uncert

import (
	"math"
	"strings"
	"testing"
)

var guarded2 = Rule{Name: RuleGuarded, K: 2}

// TestDecideFieldTable is the FIELD.md §2 check (marked [computed] there):
// T = ±10 mm, u = 2 mm, k = 2 — d = 4 conforms (p_c 0.999), 6.5 and 11 are
// inconclusive (0.96, 0.31), 15 does not conform (0.006). p_c is compared
// to half a unit of the last digit stated.
func TestDecideFieldTable(t *testing.T) {
	for _, c := range []struct {
		d      float64
		want   Zone
		pc     float64
		pcTol  float64
		simple Zone
	}{
		{d: 4, want: Conforming, pc: 0.999, pcTol: 0.0005, simple: Conforming},
		{d: 6.5, want: Inconclusive, pc: 0.96, pcTol: 0.005, simple: Conforming},
		{d: 11, want: Inconclusive, pc: 0.31, pcTol: 0.005, simple: Nonconforming},
		{d: 15, want: Nonconforming, pc: 0.006, pcTol: 0.0005, simple: Nonconforming},
		{d: -15, want: Nonconforming, pc: 0.006, pcTol: 0.0005, simple: Nonconforming},
	} {
		if got := Decide(c.d, 2, 10, guarded2); got != c.want {
			t.Errorf("d = %g: got %v, want %v", c.d, got, c.want)
		}
		if got := Decide(c.d, 2, 10, Rule{Name: RuleSimple}); got != c.simple {
			t.Errorf("simple, d = %g: got %v, want %v", c.d, got, c.simple)
		}
		if got := ConformanceProb(c.d, 2, -10, 10); math.Abs(got-c.pc) > c.pcTol {
			t.Errorf("d = %g: p_c = %.4f, want %g", c.d, got, c.pc)
		}
	}
}

// TestConformanceProbJCGM106 uses the inputs of the JCGM 106:2012 §7.4
// example — measured value 13.6, u = 1.8, T_L = 12.5, T_U = 16.3 (inputs
// confirmed: metrologyrules.com, "Conformity to specification – calculating
// risk and implementing a decision rule in Excel or Calc", which restates
// the example). The guide's result p_c ≈ 0.66 is from memory. The guard
// band 2u = 3.6 is wider than half the 3.8 interval, so guarded
// acceptance is inconclusive and the measurement is not capable.
func TestConformanceProbJCGM106(t *testing.T) {
	got := ConformanceProb(13.6, 1.8, 12.5, 16.3)
	if math.Abs(got-0.66) > 0.005 {
		t.Errorf("p_c = %.4f, want 0.66", got)
	}
	if z := DecideInterval(13.6, 1.8, 12.5, 16.3, guarded2); z != Inconclusive {
		t.Errorf("guarded: got %v, want %v", z, Inconclusive)
	}
	if z := DecideInterval(13.6, 1.8, 12.5, 16.3, Rule{Name: RuleSimple}); z != Conforming {
		t.Errorf("simple: got %v, want %v", z, Conforming)
	}
	if Capable(1.8, (16.3-12.5)/2, guarded2) {
		t.Error("2·k·u = 7.2 ≥ width 3.8: want not capable")
	}
}

// TestDecideGuardBandExample is a worked guard-band example from
// talalspecialbolt.com, "ILAC-G8 Decision Rule and Guard Banding"
// (confirmed; a vendor's page, not the guide itself): MPE ±0.003 mm,
// U = 0.0010 mm (k = 2, so u = 0.0005 mm); deviation 0.0017 mm → 0.0027 ≤
// 0.003, conforming; 0.0025 mm → 0.0035 > 0.003, grey zone. Simple
// acceptance (ILAC G8:09/2019 §4.2.1, confirmed: pass when the measured
// value is within the acceptance limit AL = TL) passes both.
func TestDecideGuardBandExample(t *testing.T) {
	for _, c := range []struct {
		d              float64
		guarded, plain Zone
	}{
		{0.0017, Conforming, Conforming},
		{0.0025, Inconclusive, Conforming},
		{0.0031, Inconclusive, Nonconforming},
		{0.0041, Nonconforming, Nonconforming},
	} {
		if got := Decide(c.d, 0.0005, 0.003, guarded2); got != c.guarded {
			t.Errorf("guarded d = %g: got %v, want %v", c.d, got, c.guarded)
		}
		if got := Decide(c.d, 0.0005, 0.003, Rule{Name: RuleSimple}); got != c.plain {
			t.Errorf("simple d = %g: got %v, want %v", c.d, got, c.plain)
		}
	}
}

// TestFalseAcceptRisk checks the risks the guidance documents quote for the
// two rules, with the normal model of ConformanceProb: a guard band w = U
// (k = 2) keeps the probability of false acceptance below 2.5 % at the
// acceptance limit (confirmed: SGS decision-rule page quoting ILAC
// G8:09/2019 "Probability of False Acceptance < 2.5%"; calibrationos.com
// guard-banding page "around 2.5%"), and simple acceptance reaches 50 % at
// the tolerance limit (confirmed: tuv.com decision-rule page on ILAC
// G8:09/2019, "as high as 50%"). One-sided: 1 − Φ(2) = 2.275 %.
func TestFalseAcceptRisk(t *testing.T) {
	const limit, u = 10.0, 1.0
	d := limit - 2*u // last conforming value under guarded k = 2
	if Decide(d, u, limit, guarded2) != Conforming {
		t.Fatalf("d = %g should conform", d)
	}
	pfa := 1 - ConformanceProb(d, u, -limit, limit)
	if !(pfa < 0.025) || math.Abs(pfa-0.02275) > 0.00001 {
		t.Errorf("guarded: PFA at the acceptance limit %.5f, want 0.02275 (< 2.5 %%)", pfa)
	}
	if Decide(limit, u, limit, Rule{Name: RuleSimple}) != Conforming {
		t.Fatal("simple acceptance: d = limit should pass")
	}
	near(t, "simple PFA at the limit", 1-ConformanceProb(limit, u, -limit, limit), 0.5, 1e-12)
}

// TestDecideBoundaries uses binary-exact values so the equalities are
// exact: |d| + k·u == limit conforms; |d| − k·u == limit is inconclusive.
func TestDecideBoundaries(t *testing.T) {
	const limit, u = 0.625, 0.125 // k·u = 0.25
	for _, c := range []struct {
		name string
		d    float64
		r    Rule
		want Zone
	}{
		{"|d|+ku == limit", 0.375, guarded2, Conforming},
		{"-(|d|+ku) == limit", -0.375, guarded2, Conforming},
		{"|d|-ku == limit", 0.875, guarded2, Inconclusive},
		{"just beyond", math.Nextafter(0.875, 1), guarded2, Nonconforming},
		{"just past |d|+ku == limit", math.Nextafter(limit, 1) - 0.25, guarded2, Inconclusive},
		{"zero rule is guarded k=2", 0.375, Rule{}, Conforming},
		{"k=3", 0.375, Rule{K: 3}, Inconclusive},
		{"simple at limit", 0.625, Rule{Name: RuleSimple}, Conforming},
		{"simple beyond", math.Nextafter(0.625, 1), Rule{Name: RuleSimple}, Nonconforming},
		{"NaN d", math.NaN(), guarded2, Inconclusive},
		{"NaN d simple", math.NaN(), Rule{Name: RuleSimple}, Inconclusive},
	} {
		t.Run(c.name, func(t *testing.T) {
			if got := Decide(c.d, u, limit, c.r); got != c.want {
				t.Errorf("got %v, want %v", got, c.want)
			}
		})
	}
	if got := Decide(0, math.NaN(), 1, guarded2); got != Inconclusive {
		t.Errorf("NaN u: got %v, want %v", got, Inconclusive)
	}
	// Asymmetric interval [−0.5, 1]: conform needs −0.25 ≤ d ≤ 0.75.
	for d, want := range map[float64]Zone{-0.25: Conforming, 0.75: Conforming, 0.8: Inconclusive, -0.8: Nonconforming, 1.3: Nonconforming} {
		if got := DecideInterval(d, u, -0.5, 1, guarded2); got != want {
			t.Errorf("interval d = %g: got %v, want %v", d, got, want)
		}
	}
	defer func() {
		if recover() == nil {
			t.Error("negative u did not panic")
		}
	}()
	Decide(0, -1, 1, guarded2)
}

// TestCapable: NOT CAPABLE where 2·k·u ≥ 2·limit (FIELD.md §2).
func TestCapable(t *testing.T) {
	if Capable(5, 10, guarded2) {
		t.Error("2·2·5 = 20 ≥ 20: want not capable")
	}
	if !Capable(4.99, 10, guarded2) {
		t.Error("2·2·4.99 < 20: want capable")
	}
	if !Capable(50, 10, Rule{Name: RuleSimple}) {
		t.Error("simple acceptance ignores u")
	}
}

// TestConformanceProbIdentities: symmetry, complements and exact zero-u
// limits of the normal model, and tail precision far outside.
func TestConformanceProbIdentities(t *testing.T) {
	for _, d := range []float64{0, 0.3, 1.7, 4} {
		near(t, "symmetric", ConformanceProb(d, 1, -2, 2), ConformanceProb(-d, 1, -2, 2), tolExact)
	}
	// Whole line is certain; a zero-width interval is impossible.
	near(t, "whole line", ConformanceProb(3, 1, math.Inf(-1), math.Inf(1)), 1, tolExact)
	near(t, "empty", ConformanceProb(3, 1, 2, 2), 0, tolExact)
	// One-sided: Φ(1) for d = 0, upper limit 1, u = 1 (0.8413447460685429,
	// standard normal table).
	near(t, "Φ(1)", ConformanceProb(0, 1, math.Inf(-1), 1), 0.8413447460685429, 1e-12)
	if ConformanceProb(1, 0, 0, 1) != 1 || ConformanceProb(1.5, 0, 0, 1) != 0 {
		t.Error("u = 0: want 1 inside, 0 outside")
	}
	// Far above the interval the difference of survival functions keeps
	// relative precision: Q(30) − Q(32) ≈ Q(30) = 4.906713927148764e-198
	// (Python math.erfc, 0.5·erfc(30/√2)).
	got := ConformanceProb(0, 1, 30, 32)
	if r := got/4.906713927148764e-198 - 1; math.Abs(r) > 1e-6 {
		t.Errorf("tail: got %g", got)
	}
}

func TestRuleTextAndZoneString(t *testing.T) {
	if s := (Rule{K: 3}).Text(); !strings.Contains(s, "k = 3") || !strings.Contains(s, "ISO 14253-1") {
		t.Errorf("guarded text: %q", s)
	}
	if s := (Rule{Name: RuleSimple}).Text(); !strings.Contains(s, "Simple acceptance") || !strings.Contains(s, "50 %") {
		t.Errorf("simple text: %q", s)
	}
	for z, want := range map[Zone]string{Conforming: "CONFORMS", Nonconforming: "DOES NOT CONFORM", Inconclusive: "INCONCLUSIVE", Zone(9): "Zone(9)"} {
		if got := z.String(); got != want {
			t.Errorf("Zone %d: got %q, want %q", z, got, want)
		}
	}
	var zero Zone
	if zero != Inconclusive {
		t.Error("the zero Zone must be Inconclusive")
	}
}

// TestVerdict walks the patch verdict rules (see ZoneCounts.Verdict).
func TestVerdict(t *testing.T) {
	cr := Criterion{Limit: 10, MaxAbs: 20, MinShare: 0.9, Rule: guarded2}
	pts := func(ds ...float64) ZoneCounts {
		var c ZoneCounts
		for _, d := range ds {
			c.AddPoint(&cr, d, 1)
		}
		return c
	}
	rep := func(d float64, n int) []float64 {
		s := make([]float64, n)
		for i := range s {
			s[i] = d
		}
		return s
	}
	cat := func(parts ...[]float64) []float64 {
		var s []float64
		for _, p := range parts {
			s = append(s, p...)
		}
		return s
	}
	for _, c := range []struct {
		name string
		ds   []float64
		want Zone
	}{
		{"empty", nil, Inconclusive},
		{"all in", rep(1, 20), Conforming},
		{"90% in, rest out but under cap", cat(rep(1, 18), rep(15, 2)), Conforming},
		{"89% in", cat(rep(1, 89), rep(15, 11)), Nonconforming},
		{"90% in, 10% inconclusive", cat(rep(1, 90), rep(9, 10)), Conforming},
		{"85% in, rest inconclusive", cat(rep(1, 85), rep(9, 15)), Inconclusive},
		{"one proven beyond cap", cat(rep(1, 99), rep(25, 1)), Nonconforming},
		{"one not proven within cap", cat(rep(1, 99), rep(19, 1)), Inconclusive},
	} {
		t.Run(c.name, func(t *testing.T) {
			zc := pts(c.ds...)
			if got := zc.Verdict(&cr); got != c.want {
				t.Errorf("got %v, want %v (counts %+v)", got, c.want, zc)
			}
		})
	}
	// Zero MinShare means every point; no cap means AbsUnproven stays 0.
	all := Criterion{Limit: 10, Rule: guarded2}
	var zc ZoneCounts
	zc.AddPoint(&all, 1, 1)
	zc.AddPoint(&all, 9, 1)
	if got := zc.Verdict(&all); got != Inconclusive || zc.AbsUnproven != 0 {
		t.Errorf("min_share 0: got %v, counts %+v", got, zc)
	}
	// Decimal shares at exact counts: 95 of 100 with min_share 0.95.
	cr95 := Criterion{Limit: 10, MinShare: 0.95, Rule: guarded2}
	zc = ZoneCounts{Conforming: 95, Nonconforming: 5}
	if got := zc.Verdict(&cr95); got != Conforming {
		t.Errorf("95/100 at 0.95: got %v, want %v", got, Conforming)
	}
	zc = ZoneCounts{Conforming: 94, Nonconforming: 6}
	if got := zc.Verdict(&cr95); got != Nonconforming {
		t.Errorf("94/100 at 0.95: got %v, want %v", got, Nonconforming)
	}
}

func TestNewRuleAndNotCapable(t *testing.T) {
	for _, c := range []struct {
		name string
		k    float64
		want Rule
		ok   bool
	}{
		{"", 0, Rule{Name: RuleGuarded, K: 2}, true},
		{RuleSimple, 0, Rule{Name: RuleSimple, K: 2}, true},
		{RuleGuarded, 3, Rule{Name: RuleGuarded, K: 3}, true},
		{"lenient", 2, Rule{}, false},
		{RuleGuarded, -1, Rule{}, false},
		{RuleGuarded, math.NaN(), Rule{}, false},
		{RuleGuarded, 95, Rule{}, false},
	} {
		got, err := NewRule(c.name, c.k)
		if (err == nil) != c.ok || got != c.want {
			t.Errorf("NewRule(%q, %v): got %+v, %v", c.name, c.k, got, err)
		}
	}
	cr := Criterion{Limit: 10, Rule: guarded2}
	var zc ZoneCounts
	zc.AddPoint(&cr, 0, 5)   // 2·2·5 = 20 ≥ 20: not capable, and conforms only at d = 0
	zc.AddPoint(&cr, 0, 4.9) // capable
	zc.AddPoint(&cr, 40, 6)  // not capable, yet proven nonconforming
	if zc.NotCapable != 2 || zc.Conforming != 2 || zc.Nonconforming != 1 {
		t.Errorf("counts %+v", zc)
	}
	b, _ := Nonconforming.MarshalText()
	if string(b) != "DOES NOT CONFORM" {
		t.Errorf("MarshalText: %q", b)
	}
}

func TestZoneCountsMerge(t *testing.T) {
	cr := Criterion{Limit: 10, MaxAbs: 12, Rule: guarded2}
	ds := []float64{1, 9, 11, 15, -3, -30, 10}
	var all, a, b ZoneCounts
	for i, d := range ds {
		all.AddPoint(&cr, d, 1.5)
		if i%2 == 0 {
			a.AddPoint(&cr, d, 1.5)
		} else {
			b.AddPoint(&cr, d, 1.5)
		}
	}
	a.Merge(b)
	if a != all {
		t.Errorf("merge: got %+v, want %+v", a, all)
	}
	if all.Total() != int64(len(ds)) {
		t.Errorf("total: got %d, want %d", all.Total(), len(ds))
	}
	// 1, −3 conform; 15, −30 do not; 9, 11, 10 inconclusive.
	want := ZoneCounts{Conforming: 2, Nonconforming: 2, Inconclusive: 3, AbsUnproven: 4, AbsExceeded: 1}
	if all != want {
		t.Errorf("counts: got %+v, want %+v", all, want)
	}
	near(t, "share", all.Share(Inconclusive), 3.0/7, tolExact)
}

func BenchmarkAddPoint(b *testing.B) {
	cr := Criterion{Limit: 0.01, MaxAbs: 0.03, MinShare: 0.95, Rule: guarded2}
	var zc ZoneCounts
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		zc.AddPoint(&cr, float64(i%200-100)*1e-4, 0.002)
	}
	if zc.Total() != int64(b.N) {
		b.Fatal(zc)
	}
}
