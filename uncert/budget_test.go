package uncert

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

// TestComponentCommon: setup and orientation errors are common to all points
// of a station, so averaging does not reduce them (FIELD.md §2, budget note
// [practice]); the per-point noise terms are not.
func TestComponentCommon(t *testing.T) {
	common := map[Component]bool{Orientation: true, StationSetup: true, Control: true, Design: true}
	for c := Component(0); c < NumComponents; c++ {
		if c.Common() != common[c] {
			t.Errorf("%v: Common() = %v", c, c.Common())
		}
		if c.String() == "unknown" || c.String() == "" {
			t.Errorf("component %d has no name", c)
		}
	}
	if NumComponents.String() != "unknown" {
		t.Error("out-of-range component must read unknown")
	}
}

// TestBudgetStats checks the accumulator on Eval output: the RMS budget's
// lines add in quadrature to its combined value (mean u² = Σ mean c²), which
// equals the RMS of the points' NormalU; Mean and Max combined values are
// the mean and max of NormalU; merged halves equal a single pass.
func TestBudgetStats(t *testing.T) {
	m := bigModel()
	m.ControlMM, m.SurfaceMM = 2, 1
	s := mustSetup(t, m)
	rng := rand.New(rand.NewPCG(11, 12))
	var all, a, b BudgetStats
	var sumU2, sumU, maxU float64
	const n = 300
	for i := 0; i < n; i++ {
		p := FromPolar(s.Origin(), Polar{T: rng.Float64() * 6, Z: deg(60 + 60*rng.Float64()), S: 2 + 80*rng.Float64()})
		nv := r3.Unit(r3.Vec{X: rng.NormFloat64(), Y: rng.NormFloat64(), Z: 2})
		e := s.Eval(p, nv)
		e.C[Fit] = FitComponent([]float64{1, p.X - s.Origin().X}, []float64{1e-6, 0, 0, 1e-9})
		all.Add(&e)
		if i%2 == 0 {
			a.Add(&e)
		} else {
			b.Add(&e)
		}
		u := e.U()
		sumU2 += u * u
		sumU += u
		maxU = math.Max(maxU, u)
	}
	a.Merge(&b)
	rms := all.RMS()
	var q float64
	for _, l := range rms.Lines {
		q += l.MM * l.MM
		if l.Common != l.Component.Common() || l.Name != l.Component.String() {
			t.Errorf("line %+v inconsistent", l)
		}
	}
	near(t, "RMS lines in quadrature", math.Sqrt(q), rms.CombinedMM, 1e-9)
	near(t, "RMS combined", rms.CombinedMM, math.Sqrt(sumU2/n)/mm, 1e-9)
	near(t, "Mean combined", all.Mean().CombinedMM, sumU/n/mm, 1e-9)
	near(t, "Max combined", all.Max().CombinedMM, maxU/mm, 1e-12)
	if len(rms.Lines) != 7 { // angles, orientation, distance, station, control, surface, fit
		t.Errorf("got %d lines, want 7 (zero components omitted): %+v", len(rms.Lines), rms.Lines)
	}
	for _, l := range all.Max().Lines {
		if l.Component == Control {
			near(t, "control max", l.MM, 2, 1e-12)
		}
	}
	// Merging changes the summation order only.
	if got := a.RMS(); len(got.Lines) != len(rms.Lines) || a.N() != n {
		t.Errorf("merge: got %+v, want %+v", got, rms)
	} else {
		near(t, "merged combined", got.CombinedMM, rms.CombinedMM, 1e-12)
		for i := range got.Lines {
			near(t, "merged "+got.Lines[i].Name, got.Lines[i].MM, rms.Lines[i].MM, 1e-12)
		}
	}
	var empty BudgetStats
	if bd := empty.RMS(); bd.Points != 0 || bd.Lines != nil || bd.CombinedMM != 0 {
		t.Errorf("empty budget: %+v", bd)
	}
}

// TestMeanDeviationU: with 2 mm control (common) and 3 mm plain noise (per
// point), the mean of N = 9 points has u² = 2² + 3²/9 = 5 mm² — the
// textbook √N rule for the independent part only.
func TestMeanDeviationU(t *testing.T) {
	s := mustSetup(t, Model{Instrument: Instrument{Kind: KindPlain, SigmaMM: 3}, ControlMM: 2})
	var b BudgetStats
	if !math.IsNaN(b.MeanDeviationU()) {
		t.Error("empty: want NaN")
	}
	for i := 0; i < 9; i++ {
		e := s.Eval(r3.Vec{X: float64(i)}, r3.Vec{Z: 1})
		b.Add(&e)
	}
	near(t, "u(mean)", b.MeanDeviationU()/mm, math.Sqrt(5), 1e-12)
}

func BenchmarkBudgetAdd(b *testing.B) {
	s := mustSetup(b, bigModel())
	p := FromPolar(s.Origin(), Polar{T: 1, Z: deg(80), S: 30})
	e := s.Eval(p, r3.Vec{Z: 1})
	var st BudgetStats
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		st.Add(&e)
	}
}

// TestBudgetJSON: components and zones read as words in a JSON report.
func TestBudgetJSON(t *testing.T) {
	b, err := json.Marshal(Budget{Statistic: "rms", Lines: []BudgetLine{{Component: Control, Name: Control.String(), MM: 2, Common: true}}, CombinedMM: 2, Points: 1})
	if err != nil {
		t.Fatal(err)
	}
	want := `{"statistic":"rms","lines":[{"component":"control / registration","name":"control / registration","mm":2,"common":true}],"combined_mm":2,"points":1}`
	if string(b) != want {
		t.Errorf("got %s\nwant %s", b, want)
	}
}
