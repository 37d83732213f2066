package deviation

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"sort"
	"strings"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

var statsTol = Tolerance{Source: "test", LimitM: 0.010, MinShare: 0.95, MaxAbsM: 0.025, BandsM: []float64{0.005, 0.010, 0.020}, FarM: 0.150}

func TestAccNISTNumAcc(t *testing.T) {
	// NIST StRD univariate summary statistics, NumAcc1 and NumAcc3
	// (certified mean and standard deviation; values from memory — the
	// univariate files are not in ../shared/reference): NumAcc1 is
	// 10000001, 10000003, 10000002 with mean 10000002 and sd 1; NumAcc3 is
	// 1000000.2 followed by 1000 values alternating 1000000.1, 1000000.3,
	// with mean 1000000.2 and sd 0.1.
	tests := []struct {
		name       string
		data       []float64
		mean, std  float64
		tolM, tolS float64
	}{
		{"NumAcc1", []float64{10000001, 10000003, 10000002}, 10000002, 1, 1e-15, 1e-13},
		{"NumAcc3", numAcc(1000000.2, 1000000.1, 1000000.3), 1000000.2, 0.1, 1e-15, 1e-9},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			a := NewAcc(statsTol)
			for _, v := range tt.data {
				a.Add(v)
			}
			if rel := math.Abs(a.Mean()-tt.mean) / tt.mean; rel > tt.tolM {
				t.Errorf("mean %.17g, want %.17g", a.Mean(), tt.mean)
			}
			if rel := math.Abs(a.Std()-tt.std) / tt.std; rel > tt.tolS {
				t.Errorf("std %.17g, want %.17g (rel %g)", a.Std(), tt.std, rel)
			}
		})
	}
}

func numAcc(first, a, b float64) []float64 {
	v := []float64{first}
	for i := 0; i < 1000; i++ {
		if i%2 == 0 {
			v = append(v, a)
		} else {
			v = append(v, b)
		}
	}
	return v
}

// exactPercentile is numpy.percentile's default (linear interpolation
// between closest ranks, h = (n − 1)·p/100) on a sorted copy: the
// reference for Acc.Percentile.
func exactPercentile(sorted []float64, p float64) float64 {
	h := float64(len(sorted)-1) * p / 100
	lo := int(math.Floor(h))
	if lo+1 >= len(sorted) {
		return sorted[lo]
	}
	return sorted[lo] + (h-float64(lo))*(sorted[lo+1]-sorted[lo])
}

func TestAccPercentilesAndMerge(t *testing.T) {
	rng := rand.New(rand.NewPCG(31, 32))
	for _, n := range []int{1, 2, 7, 100, 5001} {
		data := make([]float64, n)
		a, b, all := NewAcc(statsTol), NewAcc(statsTol), NewAcc(statsTol)
		for i := range data {
			data[i] = 0.003 + 0.006*rng.NormFloat64()
			all.Add(data[i])
			if i%3 == 0 {
				a.Add(data[i])
			} else {
				b.Add(data[i])
			}
		}
		if err := a.Merge(b); err != nil {
			t.Fatal(err)
		}
		// Two-pass mean and variance (the textbook reference).
		var sum, ss, sq float64
		for _, v := range data {
			sum += v
			sq += v * v
		}
		mean := sum / float64(n)
		for _, v := range data {
			ss += (v - mean) * (v - mean)
		}
		std := 0.0
		if n > 1 {
			std = math.Sqrt(ss / float64(n-1))
		}
		sorted := append([]float64(nil), data...)
		sort.Float64s(sorted)
		for _, acc := range []*Acc{a, all} {
			if acc.N() != int64(n) || math.Abs(acc.Mean()-mean) > 1e-15 || math.Abs(acc.Std()-std) > 1e-15 ||
				math.Abs(acc.RMS()-math.Sqrt(sq/float64(n))) > 1e-15 || acc.Min() != sorted[0] || acc.Max() != sorted[n-1] {
				t.Errorf("n=%d: n %d mean %g std %g rms %g min %g max %g; want %g %g", n, acc.N(), acc.Mean(), acc.Std(), acc.RMS(), acc.Min(), acc.Max(), mean, std)
			}
			for _, p := range []float64{0, 5, 50, 95, 100} {
				got, want := acc.Percentile(p), exactPercentile(sorted, p)
				if math.Abs(got-want) > HistBinM {
					t.Errorf("n=%d p%g: %g, exact %g (more than one bin apart)", n, p, got, want)
				}
			}
		}
	}
	if err := NewAcc(statsTol).Merge(NewAcc(Tolerance{Source: "x", LimitM: 0.002})); err == nil {
		t.Error("merge of different layouts succeeded")
	}
}

func TestAccSummary(t *testing.T) {
	a := NewAcc(statsTol)
	// 19 points inside the limit (one exactly on it), one at 12 mm: share
	// within limit 0.95, max |d| 12 mm ≤ 25 mm → conforming.
	for i := 0; i < 18; i++ {
		a.Add(0.001)
	}
	a.Add(-0.010)
	a.Add(0.012)
	s := a.Summary(statsTol)
	if s.N != 20 || s.ShareWithinLimit != 0.95 || s.Verdict != Conforming || s.MaxAbsMM != 12 {
		t.Errorf("summary %+v", s)
	}
	if want := []float64{0.9, 0.05, 0.05, 0}; len(s.SharePerBand) != 4 || s.SharePerBand[0] != want[0] || s.SharePerBand[1] != want[1] || s.SharePerBand[2] != want[2] || s.SharePerBand[3] != want[3] {
		t.Errorf("bands %v, want %v", s.SharePerBand, want)
	}
	b, err := json.Marshal(PatchStats{ID: "NE", Kind: "corners", Summary: s})
	if err != nil || !strings.Contains(string(b), `"share_within_limit":0.95`) || !strings.Contains(string(b), `"verdict":"conforming"`) || !strings.Contains(string(b), `"id":"NE"`) {
		t.Errorf("json %s %v", b, err)
	}
	empty := NewAcc(statsTol).Summary(statsTol)
	if empty.Verdict != Inconclusive || empty.N != 0 {
		t.Errorf("empty summary %+v", empty)
	}
	if _, err := json.Marshal(empty); err != nil {
		t.Errorf("empty summary does not encode: %v", err)
	}
}

func TestGrid(t *testing.T) {
	lo, hi := r3.Vec{X: 1000, Y: 2000}, r3.Vec{X: 1040, Y: 2030}
	// √(40·30/1200) = 1 m exactly.
	if c := GridCellSize(lo, hi, 1200); c != 1 {
		t.Errorf("cell %g, want 1", c)
	}
	if c := GridCellSize(lo, hi, 100); c != 5 { // √12 = 3.46 → 5
		t.Errorf("cell %g, want 5", c)
	}
	g, err := NewGrid(lo, hi, 1)
	if err != nil {
		t.Fatal(err)
	}
	h, _ := NewGrid(lo, hi, 1)
	g.Add(r3.Vec{X: 1000.5, Y: 2000.5}, 0.002)
	h.Add(r3.Vec{X: 1000.9, Y: 2000.1}, -0.004)
	if g.Add(r3.Vec{X: 999, Y: 2000}, 1) {
		t.Error("point outside the grid was added")
	}
	if err := g.Merge(h); err != nil {
		t.Fatal(err)
	}
	c := g.Cell(0, 0)
	if c.N != 2 || math.Abs(c.Mean()+0.001) > 1e-18 || c.Min != -0.004 || c.Max != 0.002 || g.NX != 41 || g.NY != 31 {
		t.Errorf("cell %+v grid %d×%d", c, g.NX, g.NY)
	}
	if _, err := NewGrid(lo, r3.Vec{X: 1e9, Y: 1e9}, 0.01); err == nil {
		t.Error("huge grid accepted")
	}
}

// BenchmarkAccAdd adds survey-like deviations (normal, σ = 6 mm).
func BenchmarkAccAdd(b *testing.B) {
	rng := rand.New(rand.NewPCG(71, 72))
	devs := make([]float64, 1<<12)
	for i := range devs {
		devs[i] = 0.006 * rng.NormFloat64()
	}
	a := NewAcc(statsTol)
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		a.Add(devs[i&(len(devs)-1)])
	}
}
