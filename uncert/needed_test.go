package uncert

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestNeededUSmall checks NeededU and DecidedShare by hand on five points,
// limit 10, k = 2 (u* = |10 − |d||/2): d = 9, −11, 8, 12.5, 10 give
// u* = 0.5, 0.5, 1, 1.25, 0.
func TestNeededUSmall(t *testing.T) {
	ds := []float64{9, -11, 8, 12.5, 10}
	for _, c := range []struct{ share, want float64 }{
		{0.2, 1.25}, {0.4, 1}, {0.41, 0.5}, {0.6, 0.5}, {0.8, 0.5}, {1, 0},
	} {
		if got := NeededU(ds, 10, 2, c.share); got != c.want {
			t.Errorf("share %g: got %g, want %g", c.share, got, c.want)
		}
	}
	for _, c := range []struct{ u, want float64 }{{1.3, 0}, {1.25, 0.2}, {1, 0.4}, {0.5, 0.8}, {0, 1}} {
		if got := DecidedShare(ds, 10, 2, c.u); got != c.want {
			t.Errorf("u %g: got %g, want %g", c.u, got, c.want)
		}
	}
	if !math.IsNaN(NeededU(nil, 10, 2, 0.5)) || !math.IsNaN(DecidedShare(nil, 10, 2, 1)) {
		t.Error("no deviations: want NaN")
	}
	near(t, "k=0 means 2", DecidingU(7, 10, 0), 1.5, tolExact)
	defer func() {
		if recover() == nil {
			t.Error("share 0 did not panic")
		}
	}()
	NeededU(ds, 10, 2, 0)
}

// TestNeededUDecides checks NeededU against its meaning, with Decide as the
// truth: re-measuring every inconclusive point with u just below NeededU
// decides at least the share asked for, and a u just above decides fewer.
func TestNeededUDecides(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	const limit, k, u0 = 0.010, 2.0, 0.002
	var inc []float64
	for len(inc) < 500 {
		d := 0.02 * (rng.Float64() - 0.5) * 2
		if Decide(d, u0, limit, Rule{K: k}) == Inconclusive {
			inc = append(inc, d)
		}
	}
	for _, share := range []float64{0.1, 0.5, 0.92, 1} {
		un := NeededU(inc, limit, k, share)
		decided := func(u float64) float64 {
			c := 0
			for _, d := range inc {
				if Decide(d, u, limit, Rule{K: k}) != Inconclusive {
					c++
				}
			}
			return float64(c) / float64(len(inc))
		}
		if got := decided(un * (1 - 1e-9)); got < share {
			t.Errorf("share %g: u = %.6g decides %.4f", share, un, got)
		}
		if share < 1 {
			if got := decided(un * (1 + 1e-9)); got >= share {
				t.Errorf("share %g: a larger u %.6g still decides %.4f", share, un, got)
			}
		}
		if un > u0 {
			t.Errorf("share %g: needed u %.6g exceeds the u %.6g that left them inconclusive", share, un, u0)
		}
	}
}

// TestNeededHist checks the streaming histogram against the exact
// functions: U within one bin below the exact answer, Share a lower bound
// within one bin's content, Merge equal to a single pass.
func TestNeededHist(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	const limit, k, res = 0.010, 2.0, 0.00005
	ds := make([]float64, 3000)
	for i := range ds {
		ds[i] = limit + 0.004*rng.NormFloat64()
	}
	h := NewNeededHist(res, 0.004)
	a := NewNeededHist(res, 0.004)
	b := NewNeededHist(res, 0.004)
	for i, d := range ds {
		h.Add(d, limit, k)
		if i%3 == 0 {
			a.Add(d, limit, k)
		} else {
			b.Add(d, limit, k)
		}
	}
	a.Merge(b)
	for _, share := range []float64{0.05, 0.3, 0.5, 0.92, 1} {
		exact := NeededU(ds, limit, k, share)
		got := h.U(share)
		if !(got <= exact && got > exact-res) && !(exact >= 0.004 && got == 0.004) {
			t.Errorf("share %g: histogram %.6g, exact %.6g, res %g", share, got, exact, res)
		}
		if a.U(share) != got {
			t.Errorf("share %g: merged %.6g, single pass %.6g", share, a.U(share), got)
		}
		if s := h.Share(got); s < share {
			t.Errorf("share %g: Share(U) = %.4f", share, s)
		}
	}
	for _, u := range []float64{0, 0.0003, 0.001, 0.0021, 0.005} {
		exact := DecidedShare(ds, limit, k, u)
		if got := h.Share(u); got > exact+1e-12 {
			t.Errorf("u %g: histogram share %.4f overstates exact %.4f", u, got, exact)
		}
		if got := h.Share(u); exact-got > DecidedShare(ds, limit, k, u-res)-DecidedShare(ds, limit, k, u+res)+1e-12 && u < 0.004 {
			t.Errorf("u %g: histogram share %.4f more than a bin below exact %.4f", u, got, exact)
		}
	}
	if h.N() != int64(len(ds)) || a.N() != h.N() {
		t.Errorf("N: %d, merged %d, want %d", h.N(), a.N(), len(ds))
	}
	empty := NewNeededHist(res, 0.001)
	if !math.IsNaN(empty.U(0.5)) || !math.IsNaN(empty.Share(0)) {
		t.Error("empty histogram: want NaN")
	}
}

func BenchmarkNeededHistAdd(b *testing.B) {
	h := NewNeededHist(0.00005, 0.005)
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		h.Add(float64(i%400)*5e-5, 0.01, 2)
	}
}
