package uncert

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// Polar is a polar observation from an instrument centre: horizontal
// direction T (radians, clockwise from grid north), zenith angle Z
// (radians from the upward vertical) and slope distance S (metres).
type Polar struct{ T, Z, S float64 }

// ToPolar reconstructs the polar observation of point p seen from the
// instrument centre st (both site coordinates, metres). T lies in (−π, π];
// a point straight above or below st has T = 0.
func ToPolar(st, p r3.Vec) Polar {
	d := r3.Sub(p, st)
	h := math.Hypot(d.X, d.Y)
	return Polar{T: math.Atan2(d.X, d.Y), Z: math.Atan2(h, d.Z), S: r3.Norm(d)}
}

// FromPolar returns the point observed as o from the instrument centre st:
//
//	E = E₀ + S·sin Z·sin T,  N = N₀ + S·sin Z·cos T,  H = H₀ + S·cos Z.
//
// Curvature and refraction are not applied (0.17 mm at 50 m, FIELD.md
// §3.2 [computed]); instrument and target heights are in st and the point.
func FromPolar(st r3.Vec, o Polar) r3.Vec {
	sz, cz := math.Sincos(o.Z)
	st2, ct := math.Sincos(o.T)
	return r3.Vec{X: st.X + o.S*sz*st2, Y: st.Y + o.S*sz*ct, Z: st.Z + o.S*cz}
}

// Jacobian returns J = ∂(E, N, H)/∂(T, Z, S) at o, row-major:
//
//	J = [ S sin Z cos T   S cos Z sin T   sin Z sin T ]
//	    [ −S sin Z sin T  S cos Z cos T   sin Z cos T ]
//	    [ 0               −S sin Z        cos Z       ]
//
// (FIELD.md §3.3). Setup evaluates the same columns without trigonometry
// from the station→point vector (dx, dy, dz), h = √(dx² + dy²):
// ∂/∂T = (dy, −dx, 0), ∂/∂Z = (dz·dx/h, dz·dy/h, −h), ∂/∂S = (dx, dy, dz)/S.
func Jacobian(o Polar) [9]float64 {
	sz, cz := math.Sincos(o.Z)
	st, ct := math.Sincos(o.T)
	return [9]float64{
		o.S * sz * ct, o.S * cz * st, sz * st,
		-o.S * sz * st, o.S * cz * ct, sz * ct,
		0, -o.S * sz, cz,
	}
}

// Sym3 is a symmetric 3×3 covariance in the site frame (E, N, H), m²,
// kept as its six distinct entries.
type Sym3 struct{ XX, XY, XZ, YY, YZ, ZZ float64 }

// Quad returns the quadratic form nᵀ C n (the variance along n when n is a
// unit vector).
func (c Sym3) Quad(n r3.Vec) float64 {
	return c.XX*n.X*n.X + c.YY*n.Y*n.Y + c.ZZ*n.Z*n.Z +
		2*(c.XY*n.X*n.Y+c.XZ*n.X*n.Z+c.YZ*n.Y*n.Z)
}

// addOuter adds w·v·vᵀ to c.
func (c *Sym3) addOuter(w float64, v r3.Vec) {
	c.XX += w * v.X * v.X
	c.XY += w * v.X * v.Y
	c.XZ += w * v.X * v.Z
	c.YY += w * v.Y * v.Y
	c.YZ += w * v.Y * v.Z
	c.ZZ += w * v.Z * v.Z
}

// Setup is one instrument position of a Model, compiled to metres and
// radians. Build it with Model.Setups or Model.Setup; the zero Setup is a
// plain model with zero uncertainty. A Setup is read-only after it is
// built and safe for concurrent use.
type Setup struct {
	// ID is the station ID ("" for a single unnamed station or a plain model).
	ID string

	kind    Kind
	polar   bool // a total station or scanner (else a plain model)
	scanner bool
	origin  r3.Vec // instrument centre
	// ref is the instrument centre lowered by the target height: the
	// vector from ref to a measured point equals the vector from the
	// instrument centre to the target that observed it.
	ref r3.Vec

	varT, varZ   float64 // per-point angle variances, rad²
	varO         float64 // orientation variance (common), rad²
	distA, distB float64 // distance σ = a + b·s (or rss): m, m/m
	rss          bool
	cosMax       float64 // scanner: cos of the maximum incidence; 0 for a total station
	station      Sym3    // centring, heights, station coordinates (common), m²

	plain2, control2, design2, surface2 float64 // m²
	extra2                              float64 // their sum
}

// Origin returns the instrument centre (station plus instrument height).
func (s *Setup) Origin() r3.Vec { return s.origin }

// Kind returns the instrument kind.
func (s *Setup) Kind() Kind { return s.kind }

// columns returns the three Jacobian columns projected on n (gT, gZ, gS)
// and the slope distance r.
//
// Degenerate cases, documented choices: with h = 0 the direction T is
// undefined and a zenith error moves the point horizontally in the
// direction T happens to have, so gZ² is taken as the worst case
// (n_E² + n_N²)·dz²; with r = 0 the distance error is taken in the
// direction of n (gS = 1).
func (s *Setup) columns(p, n r3.Vec) (gT, gZ, gS, r float64) {
	dx, dy, dz := p.X-s.ref.X, p.Y-s.ref.Y, p.Z-s.ref.Z
	h2 := dx*dx + dy*dy
	h := math.Sqrt(h2)
	r = math.Sqrt(h2 + dz*dz)
	gT = n.X*dy - n.Y*dx
	if h > 0 {
		gZ = dz*(n.X*dx+n.Y*dy)/h - n.Z*h
	} else {
		gZ = math.Sqrt(n.X*n.X+n.Y*n.Y) * math.Abs(dz)
	}
	if r > 0 {
		gS = (n.X*dx + n.Y*dy + n.Z*dz) / r
	} else {
		gS = 1
	}
	return gT, gZ, gS, r
}

// sigmaS returns the distance (range) standard deviation at slope distance
// r and, for a scanner, the incidence factor: cosA = |ê·n̂| floored at the
// cap, and whether the cap was hit.
func (s *Setup) sigmaS(r, gS float64) (sig float64, grazing bool) {
	sig = s.distSigma(r)
	if s.scanner {
		c := math.Abs(gS)
		if c < s.cosMax {
			c, grazing = s.cosMax, true
		}
		sig /= c
	}
	return sig, grazing
}

// distSigma returns the distance or range σ at slope distance r, before any
// incidence inflation.
func (s *Setup) distSigma(r float64) float64 {
	if s.rss {
		return math.Hypot(s.distA, s.distB*r)
	}
	return s.distA + s.distB*r
}

// NormalU returns the combined standard uncertainty (metres) of the
// deviation of point p measured along the unit design normal n:
//
//	u² = (σ_T² + σ_O²)·g_T² + σ_Z²·g_Z² + σ_S²·g_S² + nᵀΣ_st n
//	     + u²_plain + u²_control + u²_design + u²_surface,
//
// where g = Jᵀn are the Jacobian columns projected on n (see Jacobian),
// σ_S is the distance or, for a scanner, the incidence-inflated range σ,
// and Σ_st the centring/height/station covariance. This is n̂ᵀ Σ_p n̂
// with Σ_p = J·diag(σ_T², σ_Z², σ_S²)·Jᵀ + Σ_st (the law of propagation
// of uncertainty for uncorrelated inputs, JCGM 100:2008 §5.1.2 Eq. (10),
// confirmed on the GUM's HTML edition at iso.org, clause 5) without
// forming Σ_p. It does not allocate.
//
// n must be a unit vector; p is in site coordinates. The fit component is
// not included (see FitComponent).
func (s *Setup) NormalU(p, n r3.Vec) float64 {
	if !s.polar {
		return math.Sqrt(s.extra2)
	}
	// The same sum as Eval, arranged for the hot path (one square root for
	// the slope distance, one division): with hn = n_E·dx + n_N·dy and
	// sd = n·d, g_Z² = (dz·hn − n_H·h²)²/h² and g_S² = sd²/r².
	dx, dy, dz := p.X-s.ref.X, p.Y-s.ref.Y, p.Z-s.ref.Z
	h2 := dx*dx + dy*dy
	r2 := h2 + dz*dz
	gT := n.X*dy - n.Y*dx
	hn := n.X*dx + n.Y*dy
	sd := hn + n.Z*dz
	if h2 == 0 || r2 == 0 {
		e := s.Eval(p, n) // degenerate geometry: the documented worst cases
		return e.U()
	}
	num := dz*hn - n.Z*h2
	inv := 1 / (h2 * r2)
	gZ2 := num * num * r2 * inv
	gS2 := sd * sd * h2 * inv
	r := math.Sqrt(r2)
	sig := s.distA + s.distB*r
	if s.rss {
		sig = math.Sqrt(s.distA*s.distA + s.distB*s.distB*r2) // distSigma without Hypot's scaling
	}
	v := (s.varT+s.varO)*gT*gT + s.varZ*gZ2 + s.station.Quad(n)
	if s.scanner {
		// σ_S²·g_S² with σ_S = σ_r/cos α and cos α = |sd|/r is σ_r² unless
		// the cap applies.
		if gS2 < s.cosMax*s.cosMax {
			v += sig * sig * gS2 / (s.cosMax * s.cosMax)
		} else {
			v += sig * sig
		}
	} else {
		v += sig * sig * gS2
	}
	return math.Sqrt(v + s.extra2)
}

// NormalUTo sets dst[i] = NormalU(pts[i], normals[i]) for a chunk of
// points. It panics unless the three slices have the same length.
func (s *Setup) NormalUTo(dst []float64, pts, normals []r3.Vec) {
	if len(dst) != len(pts) || len(normals) != len(pts) {
		panic("uncert: NormalUTo: slice lengths differ")
	}
	for i, p := range pts {
		dst[i] = s.NormalU(p, normals[i])
	}
}

// Eval returns the uncertainty components of point p along the unit normal
// n, for budgets and flags. Its U() equals NormalU(p, n).
func (s *Setup) Eval(p, n r3.Vec) PointU {
	var pt PointU
	pt.C[Plain] = math.Sqrt(s.plain2)
	pt.C[Control] = math.Sqrt(s.control2)
	pt.C[Design] = math.Sqrt(s.design2)
	pt.C[SurfaceTexture] = math.Sqrt(s.surface2)
	if !s.polar {
		return pt
	}
	gT, gZ, gS, r := s.columns(p, n)
	sig, grazing := s.sigmaS(r, gS)
	pt.C[Angles] = math.Sqrt(s.varT*gT*gT + s.varZ*gZ*gZ)
	pt.C[Orientation] = math.Sqrt(s.varO) * math.Abs(gT)
	pt.C[Distance] = sig * math.Abs(gS)
	pt.C[StationSetup] = math.Sqrt(s.station.Quad(n))
	pt.Grazing = grazing
	if s.scanner {
		pt.Incidence = math.Acos(math.Min(1, math.Abs(gS)))
	}
	return pt
}

// Cov returns the full covariance Σ_p (m²) of point p from the polar
// observation, J·diag(σ_T² + σ_O², σ_Z², σ_S²)·Jᵀ + Σ_st. The normal is
// unknown here, so a scanner's range σ is not inflated for incidence;
// the components stated along the normal (plain, control, design,
// surface) are not included.
func (s *Setup) Cov(p r3.Vec) Sym3 {
	var c Sym3
	if !s.polar {
		return c
	}
	d := r3.Sub(p, s.ref)
	h := math.Hypot(d.X, d.Y)
	r := r3.Norm(d)
	sig := s.distSigma(r)
	c = s.station
	c.addOuter(s.varT+s.varO, r3.Vec{X: d.Y, Y: -d.X})
	if h > 0 {
		c.addOuter(s.varZ, r3.Vec{X: d.Z * d.X / h, Y: d.Z * d.Y / h, Z: -h})
	}
	if r > 0 {
		c.addOuter(sig*sig, r3.Scale(1/r, d))
	}
	return c
}

// FitComponent returns the standard uncertainty u_fit = √(gᵀ C_θ g) that a
// fitted reference surface contributes to a point's deviation, where
// g = ∂d/∂θ (length p) is the deviation's gradient with respect to the fit
// parameters at that point and cov is their p×p covariance, row-major
// (the law of propagation for correlated inputs, JCGM 100:2008 §5.2,
// Eq. (13): confirmed, GUM HTML edition at iso.org, clause 5). Only the upper triangle of cov
// is read. Combine it with the measurement as
// math.Hypot(s.NormalU(pt, n), FitComponent(g, cov)), or store it in
// PointU.C[Fit] for a budget.
//
// A quadratic form below zero by no more than rounding (|q| ≤ 1e-12 of the
// sum of the absolute terms) gives 0; a clearly negative one (cov not
// positive semi-definite) gives NaN, which Decide treats as inconclusive.
// It does not allocate; it panics if len(cov) != len(g)².
func FitComponent(g []float64, cov []float64) float64 {
	p := len(g)
	if len(cov) != p*p {
		panic("uncert: FitComponent: len(cov) != len(g)²")
	}
	var q, qa float64
	for i := 0; i < p; i++ {
		row := cov[i*p : (i+1)*p]
		t := g[i] * g[i] * row[i]
		q += t
		qa += math.Abs(t)
		for j := i + 1; j < p; j++ {
			t := 2 * g[i] * row[j] * g[j]
			q += t
			qa += math.Abs(t)
		}
	}
	switch {
	case q >= 0:
		return math.Sqrt(q)
	case q >= -1e-12*qa:
		return 0
	}
	return math.NaN()
}
