package uncert

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/spatial/r3"
)

// Tolerances used by the tests of this package.
const (
	tolExact = 1e-12 // algebraic identities evaluated two ways (relative)
	tolFD    = 1e-6  // central finite differences of smooth trig functions (relative to the largest entry)
	tolMC    = 0.02  // Monte Carlo variance, 10⁵ draws: sampling σ of a variance is √(2/N) = 0.45 %, so 2 % is > 4σ
)

// near fails t when got and want differ by more than tol·max(1, |want|)
// (tol relative for large values, absolute for small ones).
func near(t *testing.T, name string, got, want, tol float64) {
	t.Helper()
	if d := math.Abs(got - want); !(d <= tol*math.Max(1, math.Abs(want))) {
		t.Errorf("%s: got %.12g, want %.12g (|Δ| = %.3g, tol %.3g)", name, got, want, d, tol)
	}
}

// siteStation is an instrument centre with site-sized coordinates, so the
// tests also exercise the subtraction of the station before any algebra.
var siteStation = Station{ID: "S1", E: 512345.678, N: 5401234.567, H: 101.25, InstrumentHeight: 1.55}

func stationOrigin(st Station) r3.Vec {
	return r3.Vec{X: st.E, Y: st.N, Z: st.H + st.InstrumentHeight}
}

func mustSetup(t testing.TB, m Model) *Setup {
	t.Helper()
	s, err := m.Setup("")
	if err != nil {
		t.Fatalf("Setup: %v", err)
	}
	return s
}

func deg(x float64) float64 { return x * math.Pi / 180 }

// TestJacobianFiniteDifference checks the FIELD.md §3.3 Jacobian against
// central finite differences of FromPolar (gonum diff/fd).
func TestJacobianFiniteDifference(t *testing.T) {
	for _, o := range []Polar{
		{T: deg(37), Z: deg(80), S: 60},
		{T: deg(-150), Z: deg(95), S: 12.5},
		{T: deg(200), Z: deg(30), S: 140},
		{T: 0, Z: deg(90), S: 1},
	} {
		j := Jacobian(o)
		got := mat.NewDense(3, 3, j[:])
		want := mat.NewDense(3, 3, nil)
		fd.Jacobian(want, func(y, x []float64) {
			// J does not depend on the station: differentiate about a
			// zero station so site-sized coordinates do not swamp the
			// differences.
			p := FromPolar(r3.Vec{}, Polar{T: x[0], Z: x[1], S: x[2]})
			y[0], y[1], y[2] = p.X, p.Y, p.Z
		}, []float64{o.T, o.Z, o.S}, &fd.JacobianSettings{Formula: fd.Central})
		scale := mat.Norm(want, math.Inf(1))
		for i := 0; i < 3; i++ {
			for k := 0; k < 3; k++ {
				near(t, "J", got.At(i, k)/scale, want.At(i, k)/scale, tolFD)
			}
		}
	}
}

// TestPolarRoundTrip checks ToPolar as the inverse of FromPolar.
func TestPolarRoundTrip(t *testing.T) {
	st := stationOrigin(siteStation)
	o := Polar{T: deg(-123.4), Z: deg(101), S: 87.6}
	got := ToPolar(st, FromPolar(st, o))
	near(t, "T", got.T, o.T, 1e-9)
	near(t, "Z", got.Z, o.Z, 1e-9)
	near(t, "S", got.S, o.S, 1e-9)
}

// bigModel is a deliberately coarse total station (so that a Monte Carlo
// run sees the propagation, not rounding), with every input non-zero.
func bigModel() Model {
	return Model{Instrument: Instrument{
		Kind: KindTotalStation, HzArcsec: 20, ZenithArcsec: 30, OrientationArcsec: 10,
		DistanceMM: 5, DistancePPM: 20, CentringMM: 1, TargetHeightMM: 2,
		Stations: []Station{{E: siteStation.E, N: siteStation.N, H: siteStation.H,
			InstrumentHeight: siteStation.InstrumentHeight, SigmaMM: 0.5}},
	}}
}

// TestCovMatchesJacobian checks the trigonometry-free covariance against
// J·diag(σ_T², σ_Z², σ_S²)·Jᵀ + Σ_st formed with gonum/mat from Jacobian.
func TestCovMatchesJacobian(t *testing.T) {
	m := bigModel()
	s := mustSetup(t, m)
	in := m.Instrument
	for _, o := range []Polar{{T: deg(37), Z: deg(80), S: 60}, {T: deg(-100), Z: deg(120), S: 25}} {
		p := FromPolar(s.Origin(), o)
		j := Jacobian(o)
		J := mat.NewDense(3, 3, j[:])
		sigS := in.DistanceMM*mm + in.DistancePPM*ppm*o.S
		D := mat.NewDiagDense(3, []float64{
			sq(in.HzArcsec*arcsec) + sq(in.OrientationArcsec*arcsec), sq(in.ZenithArcsec * arcsec), sigS * sigS})
		var JD, want mat.Dense
		JD.Mul(J, D)
		want.Mul(&JD, J.T())
		c2, h2, x2 := sq(in.CentringMM*mm), sq(in.TargetHeightMM*mm), sq(in.Stations[0].SigmaMM*mm)
		want.Set(0, 0, want.At(0, 0)+c2+x2)
		want.Set(1, 1, want.At(1, 1)+c2+x2)
		want.Set(2, 2, want.At(2, 2)+h2+x2)
		c := s.Cov(p)
		got := [3][3]float64{{c.XX, c.XY, c.XZ}, {c.XY, c.YY, c.YZ}, {c.XZ, c.YZ, c.ZZ}}
		scale := want.At(0, 0) + want.At(1, 1) + want.At(2, 2)
		for i := 0; i < 3; i++ {
			for k := 0; k < 3; k++ {
				near(t, "Σ", got[i][k]/scale, want.At(i, k)/scale, 1e-9)
			}
		}
	}
}

// TestCovMonteCarlo checks the propagated covariance against a Monte Carlo
// evaluation of the same observation model (JCGM 101:2008, GUM Supplement 1:
// propagation of distributions by drawing the inputs), 10⁵ seeded draws:
// each variance, and the variance along a normal, to 2 %.
func TestCovMonteCarlo(t *testing.T) {
	m := bigModel()
	s := mustSetup(t, m)
	in := m.Instrument
	o := Polar{T: deg(37), Z: deg(80), S: 60}
	p0 := FromPolar(s.Origin(), o)
	n := r3.Unit(r3.Vec{X: 0.3, Y: -0.5, Z: 0.8})

	rng := rand.New(rand.NewPCG(1, 2))
	sT := math.Hypot(in.HzArcsec, in.OrientationArcsec) * arcsec
	sZ := in.ZenithArcsec * arcsec
	sS := in.DistanceMM*mm + in.DistancePPM*ppm*o.S
	sH := math.Hypot(in.CentringMM, in.Stations[0].SigmaMM) * mm
	sV := math.Hypot(in.TargetHeightMM, in.Stations[0].SigmaMM) * mm
	const draws = 100000
	var meanN float64
	var ss [3]float64
	var ssN float64
	var mean [3]float64
	devs := make([]r3.Vec, draws)
	for i := range devs {
		oi := Polar{T: o.T + sT*rng.NormFloat64(), Z: o.Z + sZ*rng.NormFloat64(), S: o.S + sS*rng.NormFloat64()}
		st := r3.Add(s.Origin(), r3.Vec{X: sH * rng.NormFloat64(), Y: sH * rng.NormFloat64(), Z: sV * rng.NormFloat64()})
		d := r3.Sub(FromPolar(st, oi), p0)
		devs[i] = d
		mean[0] += d.X
		mean[1] += d.Y
		mean[2] += d.Z
		meanN += r3.Dot(n, d)
	}
	for k := range mean {
		mean[k] /= draws
	}
	meanN /= draws
	for _, d := range devs {
		ss[0] += sq(d.X - mean[0])
		ss[1] += sq(d.Y - mean[1])
		ss[2] += sq(d.Z - mean[2])
		ssN += sq(r3.Dot(n, d) - meanN)
	}
	c := s.Cov(p0)
	for k, want := range []float64{c.XX, c.YY, c.ZZ} {
		got := ss[k] / (draws - 1)
		if r := got/want - 1; math.Abs(r) > tolMC {
			t.Errorf("variance %d: Monte Carlo %.4g m², propagated %.4g m² (%.2f %%)", k, got, want, 100*r)
		}
	}
	gotN := ssN / (draws - 1)
	wantN := sq(s.NormalU(p0, n))
	if r := gotN/wantN - 1; math.Abs(r) > tolMC {
		t.Errorf("along n: Monte Carlo %.4g m², NormalU² %.4g m² (%.2f %%)", gotN, wantN, 100*r)
	}
}

// TestLateralClosedForm: a horizontal sight (zenith 90°) of range r with
// angle σ moves the point across the line of sight by r·σ_rad, horizontally
// for the direction and vertically for the zenith angle; the distance σ acts
// only along the line of sight. Arc length s = r·θ, the small-angle geometry
// of angular error propagation (Ghilani, "Adjustment Computations: Spatial
// Data Analysis", Wiley, ch. 7 "Error Propagation in Angle and Distance
// Observations": chapter title confirmed, the formula from memory).
func TestLateralClosedForm(t *testing.T) {
	for _, c := range []struct {
		name        string
		r, hz, zen  float64 // m, arcsec, arcsec
		distMM, tDg float64
	}{
		{name: "50 m 1″", r: 50, hz: 1, zen: 1, distMM: 2, tDg: 0},
		{name: "100 m 5″/2″", r: 100, hz: 5, zen: 2, distMM: 1, tDg: 63},
		{name: "7 m 20″", r: 7, hz: 20, zen: 20, distMM: 3, tDg: -140},
	} {
		t.Run(c.name, func(t *testing.T) {
			m := Model{Instrument: Instrument{Kind: KindTotalStation, HzArcsec: c.hz, ZenithArcsec: c.zen,
				DistanceMM: c.distMM, Stations: []Station{siteStation}}}
			s := mustSetup(t, m)
			o := Polar{T: deg(c.tDg), Z: deg(90), S: c.r}
			p := FromPolar(s.Origin(), o)
			sinT, cosT := math.Sincos(o.T)
			across := r3.Vec{X: cosT, Y: -sinT} // horizontal, perpendicular to the sight
			along := r3.Vec{X: sinT, Y: cosT}   // the line of sight
			up := r3.Vec{Z: 1}                  // vertical, perpendicular to the sight
			near(t, "across", s.NormalU(p, across), c.r*c.hz*arcsec, tolExact)
			near(t, "vertical", s.NormalU(p, up), c.r*c.zen*arcsec, tolExact)
			near(t, "along", s.NormalU(p, along), c.distMM*mm, tolExact)
		})
	}
}

// TestFieldWorkedExample is the FIELD.md §3.3 example: s = 60 m, z = 80°,
// t = 37°, 1″ for both angles, 1 mm + 1.5 ppm added linearly give
// σ_E, σ_N, σ_H = 0.69, 0.88, 0.34 mm. FIELD.md marks these [computed]
// (an independent script of the guide's author), so this is a cross-check
// of two computations, not an outside reference; the values are stated to
// 0.01 mm, hence the 0.005 mm tolerance.
func TestFieldWorkedExample(t *testing.T) {
	m := Model{Instrument: Instrument{Kind: KindTotalStation, AngleArcsec: 1, DistanceMM: 1, DistancePPM: 1.5,
		DistanceCombine: CombineLinear, Stations: []Station{siteStation}}}
	s := mustSetup(t, m)
	p := FromPolar(s.Origin(), Polar{T: deg(37), Z: deg(80), S: 60})
	c := s.Cov(p)
	for _, v := range []struct {
		name      string
		got, want float64
	}{
		{"σ_E", math.Sqrt(c.XX) / mm, 0.69},
		{"σ_N", math.Sqrt(c.YY) / mm, 0.88},
		{"σ_H", math.Sqrt(c.ZZ) / mm, 0.34},
	} {
		if math.Abs(v.got-v.want) > 0.005 {
			t.Errorf("%s: got %.4f mm, want %.2f mm", v.name, v.got, v.want)
		}
	}
	// NormalU along the coordinate axes is the same numbers.
	near(t, "NormalU E", s.NormalU(p, r3.Vec{X: 1}), math.Sqrt(c.XX), tolExact)
}

// TestArcsecConversions checks the unit conversions of FIELD.md §3.2
// ([computed] there): 1″ = 4.848 µrad; 1″ → 0.24 mm at 50 m and 0.48 mm at
// 100 m; 5″ → 2.42 mm at 100 m; 1 mm + 1.5 ppm at 100 m is 1.15 mm (linear
// sum). The spec-sheet inputs themselves (1″, 5″, 1 mm + 1.5 ppm to a
// prism) are FIELD.md's typical total-station figures, marked [practice]:
// ISO 17123-3/-4 are cited there only for their scope.
func TestArcsecConversions(t *testing.T) {
	near(t, "1″ in µrad", arcsec*1e6, 4.848, 0.0005)
	for _, c := range []struct {
		arcsec, r, wantMM, tol float64
	}{{1, 50, 0.24, 0.005}, {1, 100, 0.48, 0.005}, {5, 100, 2.42, 0.005}} {
		m := Model{Instrument: Instrument{Kind: KindTotalStation, AngleArcsec: c.arcsec, Stations: []Station{siteStation}}}
		s := mustSetup(t, m)
		p := FromPolar(s.Origin(), Polar{Z: deg(90), S: c.r})
		if got := s.NormalU(p, r3.Vec{X: 1}) / mm; math.Abs(got-c.wantMM) > c.tol {
			t.Errorf("%g″ at %g m: got %.4f mm, want %.2f mm", c.arcsec, c.r, got, c.wantMM)
		}
	}
	m := Model{Instrument: Instrument{Kind: KindTotalStation, DistanceMM: 1, DistancePPM: 1.5, Stations: []Station{siteStation}}}
	s := mustSetup(t, m)
	p := FromPolar(s.Origin(), Polar{Z: deg(90), S: 100})
	near(t, "1 mm + 1.5 ppm at 100 m", s.NormalU(p, r3.Vec{Y: 1})/mm, 1.15, tolExact)
	m.Instrument.DistanceCombine = CombineRSS
	s = mustSetup(t, m)
	near(t, "rss at 100 m", s.NormalU(p, r3.Vec{Y: 1})/mm, math.Hypot(1, 0.15), tolExact)
	// Reflectorless on concrete, 2 mm + 2 ppm [practice] at 50 m: 2.1 mm.
	m.Instrument.DistanceMM, m.Instrument.DistancePPM, m.Instrument.DistanceCombine = 2, 2, ""
	s = mustSetup(t, m)
	p = FromPolar(s.Origin(), Polar{Z: deg(90), S: 50})
	near(t, "2 mm + 2 ppm at 50 m", s.NormalU(p, r3.Vec{Y: 1})/mm, 2.1, tolExact)
	// Centring 0.3–1 mm [practice] acts horizontally only, whatever the range.
	m.Instrument.DistanceMM, m.Instrument.DistancePPM, m.Instrument.CentringMM = 0, 0, 1
	s = mustSetup(t, m)
	near(t, "centring E", s.NormalU(p, r3.Vec{X: 1})/mm, 1, tolExact)
	near(t, "centring H", s.NormalU(p, r3.Vec{Z: 1})/mm, 0, tolExact)
}

// TestScannerIncidence checks the incidence model σ_r/cos α (FIELD.md §3.4
// working model [practice]) by its definition: at normal incidence the
// range σ is unchanged, at 60° it doubles, and beyond the cap the factor
// stays at 1/cos(cap) and the point is flagged.
func TestScannerIncidence(t *testing.T) {
	m := Model{Instrument: Instrument{Kind: KindScanner, RangeMM: 1, RangeMMPerM: 0.1, MaxIncidenceDeg: 70,
		Stations: []Station{siteStation}}}
	s := mustSetup(t, m)
	r := 20.0
	p := FromPolar(s.Origin(), Polar{T: deg(10), Z: deg(90), S: r})
	sig := (1 + 0.1*r) * mm
	beam := r3.Unit(r3.Sub(p, s.Origin()))
	perp := r3.Unit(r3.Cross(beam, r3.Vec{Z: 1}))
	for _, c := range []struct {
		alphaDeg float64
		factor   float64
		grazing  bool
	}{{0, 1, false}, {60, 2, false}, {69, 1 / math.Cos(deg(69)), false}, {80, 1 / math.Cos(deg(70)), true}} {
		a := deg(c.alphaDeg)
		n := r3.Add(r3.Scale(math.Cos(a), beam), r3.Scale(math.Sin(a), perp))
		// Only the range contributes along n's beam component: σ·factor·cos α.
		want := sig * c.factor * math.Cos(a)
		near(t, "u", s.NormalU(p, n), want, tolExact)
		e := s.Eval(p, n)
		if e.Grazing != c.grazing {
			t.Errorf("α = %g°: grazing %v, want %v", c.alphaDeg, e.Grazing, c.grazing)
		}
		near(t, "incidence", e.Incidence, a, 1e-9)
	}
}

// TestEvalMatchesNormalU checks the component split against the fast path
// and against the full covariance (nᵀΣn plus the stated components).
func TestEvalMatchesNormalU(t *testing.T) {
	m := bigModel()
	m.ControlMM, m.DesignMM, m.SurfaceMM = 2, 0.5, 1
	sc := m
	sc.Instrument = Instrument{Kind: KindScanner, AngleArcsec: 8, RangeMM: 1, RangeMMPerM: 0.05,
		CentringMM: 1, Stations: m.Instrument.Stations}
	rng := rand.New(rand.NewPCG(3, 4))
	for _, mod := range []Model{m, sc} {
		s := mustSetup(t, mod)
		grazing := 0
		for i := 0; i < 200; i++ {
			p := FromPolar(s.Origin(), Polar{T: rng.Float64() * 2 * math.Pi, Z: deg(40 + 100*rng.Float64()), S: 1 + 100*rng.Float64()})
			n := r3.Unit(r3.Vec{X: rng.NormFloat64(), Y: rng.NormFloat64(), Z: rng.NormFloat64()})
			e := s.Eval(p, n)
			u := s.NormalU(p, n)
			near(t, "Eval.U", e.U(), u, tolExact)
			if e.Grazing {
				grazing++
			}
			if mod.Instrument.Kind == KindTotalStation {
				wantSq := s.Cov(p).Quad(n) + sq(2*mm) + sq(0.5*mm) + sq(1*mm)
				near(t, "Cov", u*u/wantSq, 1, 1e-9)
			}
		}
		dst := make([]float64, 2)
		p := FromPolar(s.Origin(), Polar{T: 1, Z: 1, S: 10})
		s.NormalUTo(dst, []r3.Vec{p, p}, []r3.Vec{{Z: 1}, {X: 1}})
		if dst[0] != s.NormalU(p, r3.Vec{Z: 1}) || dst[1] != s.NormalU(p, r3.Vec{X: 1}) {
			t.Errorf("NormalUTo: got %v", dst)
		}
		if mod.Instrument.Kind == KindScanner && (grazing == 0 || grazing == 200) {
			t.Errorf("scanner: %d of 200 random normals grazing; the draw should cover both cases", grazing)
		}
	}
	s := mustSetup(t, m)
	// Straight above the station: the degenerate direction takes the
	// worst-case horizontal zenith error.
	up := r3.Add(s.Origin(), r3.Vec{Z: 10})
	if u := s.NormalU(up, r3.Vec{X: 1}); !(u > 0) || math.IsInf(u, 0) {
		t.Errorf("point above station: u = %v", u)
	}
	if u := s.NormalU(s.Origin(), r3.Vec{Z: 1}); !(u > 0) || math.IsInf(u, 0) {
		t.Errorf("point at station: u = %v", u)
	}
}

// TestTargetHeight: with a prism t_h above the point, the observation is
// the one to the prism, so u at point p equals u without target height at
// the prism p + t_h·ẑ (a translation identity).
func TestTargetHeight(t *testing.T) {
	m := bigModel()
	s0 := mustSetup(t, m)
	m.Instrument.TargetHeight = 1.8
	s1 := mustSetup(t, m)
	prism := FromPolar(s0.Origin(), Polar{T: deg(20), Z: deg(70), S: 15})
	point := r3.Sub(prism, r3.Vec{Z: 1.8})
	n := r3.Unit(r3.Vec{X: 1, Z: 1})
	near(t, "u", s1.NormalU(point, n), s0.NormalU(prism, n), tolExact)
	if d := math.Abs(s1.NormalU(point, n) - s0.NormalU(point, n)); d < 1e-7 {
		t.Errorf("target height changed u by only %g m: the geometry was not used", d)
	}
	near(t, "Cov", s1.Cov(point).XX, s0.Cov(prism).XX, tolExact)
}

// TestPlain: a plain model's u is the root-sum-square of its stated parts.
func TestPlain(t *testing.T) {
	m := Model{Instrument: Instrument{Kind: KindPlain, SigmaMM: 3}, ControlMM: 4}
	s := mustSetup(t, m)
	near(t, "plain", s.NormalU(r3.Vec{X: 5e5}, r3.Vec{Z: 1})/mm, 5, tolExact)
	var zero Setup
	if u := zero.NormalU(r3.Vec{}, r3.Vec{Z: 1}); u != 0 {
		t.Errorf("zero Setup: got %v, want 0", u)
	}
}

// TestFitComponent checks u_fit² = gᵀC g against the textbook variance of
// a fitted straight line's mean response, σ²(1/n + (x₀ − x̄)²/Sxx) (the
// standard least-squares result, e.g. Draper & Smith, "Applied Regression
// Analysis", ch. 1 [from memory]; it is also an algebraic identity of
// C = σ²(XᵀX)⁻¹), and the unit-vector identity gᵀCg = C_ii.
func TestFitComponent(t *testing.T) {
	xs := []float64{0, 1, 2, 3.5, 5, 8}
	sigma := 0.003
	X := mat.NewDense(len(xs), 2, nil)
	var xbar, sxx float64
	for i, x := range xs {
		X.Set(i, 0, 1)
		X.Set(i, 1, x)
		xbar += x
	}
	xbar /= float64(len(xs))
	for _, x := range xs {
		sxx += sq(x - xbar)
	}
	var xtx, inv mat.Dense
	xtx.Mul(X.T(), X)
	if err := inv.Inverse(&xtx); err != nil {
		t.Fatal(err)
	}
	inv.Scale(sigma*sigma, &inv)
	cov := inv.RawMatrix().Data
	for _, x0 := range []float64{-2, 0, xbar, 4, 12} {
		want := sigma * math.Sqrt(1/float64(len(xs))+sq(x0-xbar)/sxx)
		near(t, "line", FitComponent([]float64{1, x0}, cov), want, tolExact)
	}
	near(t, "unit vector", FitComponent([]float64{0, 1}, cov), math.Sqrt(cov[3]), tolExact)
	if got := FitComponent(nil, nil); got != 0 {
		t.Errorf("empty: got %v, want 0", got)
	}
	// Not positive semi-definite: [[1, 2], [2, 1]] along (1, −1) is −2.
	if got := FitComponent([]float64{1, -1}, []float64{1, 2, 2, 1}); !math.IsNaN(got) {
		t.Errorf("indefinite covariance: got %v, want NaN", got)
	}
	// Singular but valid: [[1, 1], [1, 1]] along (1, −1) is exactly 0.
	if got := FitComponent([]float64{1, -1}, []float64{1, 1, 1, 1}); got != 0 {
		t.Errorf("singular covariance: got %v, want 0", got)
	}
	defer func() {
		if recover() == nil {
			t.Error("length mismatch did not panic")
		}
	}()
	FitComponent([]float64{1, 2}, cov[:3])
}

// BenchmarkNormalU measures the per-point cost on the hot path (a chunk of
// 4096 points through NormalUTo); the closest-point solve it sits beside
// costs ~50–90 ns/point.
func BenchmarkNormalU(b *testing.B) {
	for _, kind := range []Kind{KindTotalStation, KindScanner, KindPlain} {
		b.Run(string(kind), func(b *testing.B) {
			m := bigModel()
			m.ControlMM = 2
			if kind == KindScanner {
				m.Instrument = Instrument{Kind: KindScanner, AngleArcsec: 8, RangeMM: 1, RangeMMPerM: 0.02,
					Stations: m.Instrument.Stations}
			}
			if kind == KindPlain {
				m.Instrument = Instrument{Kind: KindPlain, SigmaMM: 3}
			}
			s := mustSetup(b, m)
			const np = 4096
			pts := make([]r3.Vec, np)
			nrm := make([]r3.Vec, np)
			rng := rand.New(rand.NewPCG(5, 6))
			for i := range pts {
				pts[i] = FromPolar(s.Origin(), Polar{T: rng.Float64() * 6, Z: deg(60 + 60*rng.Float64()), S: 5 + 50*rng.Float64()})
				nrm[i] = r3.Unit(r3.Vec{X: rng.NormFloat64(), Y: rng.NormFloat64(), Z: 3})
			}
			dst := make([]float64, np)
			b.ReportAllocs()
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				s.NormalUTo(dst, pts, nrm)
			}
			b.StopTimer()
			b.ReportMetric(float64(b.N)*np/b.Elapsed().Seconds(), "points/s")
			b.ReportMetric(b.Elapsed().Seconds()*1e9/(float64(b.N)*np), "ns/point")
			if dst[0] <= 0 {
				b.Fatal(dst[0])
			}
		})
	}
}
