package uncert

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"

	"gonum.org/v1/gonum/spatial/r3"
)

// Kind names an instrument error model.
type Kind string

// The instrument kinds a Model can state.
const (
	// KindTotalStation propagates a polar observation (horizontal
	// direction, zenith angle, slope distance) from a station.
	KindTotalStation Kind = "total-station"
	// KindScanner propagates a scanner's polar observation (horizontal
	// angle, vertical angle, range), inflating the range noise with the
	// incidence angle on the surface.
	KindScanner Kind = "scanner"
	// KindPlain takes one standard uncertainty for every point of the file,
	// applied along the normal.
	KindPlain Kind = "plain"
)

// DistanceCombine names how a distance specification a + b·s is turned into
// a standard deviation.
type DistanceCombine string

const (
	// CombineLinear is σ_s = a + b·s, the way spec sheets add the two terms;
	// conservative. The zero value means CombineLinear.
	CombineLinear DistanceCombine = "linear"
	// CombineRSS is σ_s = √(a² + (b·s)²), treating the constant and the
	// proportional parts as independent.
	CombineRSS DistanceCombine = "rss"
)

// DefaultMaxIncidenceDeg is the incidence angle (between the scanner beam
// and the surface normal) beyond which the range-noise inflation 1/cos α is
// capped and the point flagged as grazing, when Instrument.MaxIncidenceDeg is
// zero. FIELD.md §3.4: above ~60° the incidence angle dominates precision
// (Soudarissanane et al. 2009); working practice caps or rejects beyond
// 60–70° [practice]. 75° keeps the inflation finite (1/cos 75° = 3.86).
const DefaultMaxIncidenceDeg = 75

// Model is the measurement model of one survey file: the instrument and the
// components that are stated directly along the normal. It is the
// `uncertainty:` section of a design file (see DecodeModel). All values
// are standard uncertainties (k = 1) unless a field says otherwise.
type Model struct {
	Instrument Instrument `yaml:"instrument"`
	// ControlMM is the set-out / registration uncertainty along the normal,
	// common to all points of a setup (correlated), mm.
	ControlMM float64 `yaml:"control_mm,omitempty"`
	// DesignMM is the uncertainty of the design model itself (digitising,
	// mesh faceting), common, mm.
	DesignMM float64 `yaml:"design_mm,omitempty"`
	// SurfaceMM is the surface or target component (texture, laitance,
	// target offset), per point, mm.
	SurfaceMM float64 `yaml:"surface_mm,omitempty"`
	// Decision is the decision rule and the patch verdict parameters.
	Decision DecisionSpec `yaml:"decision,omitempty"`
}

// Instrument states one instrument's error model. Kind selects which of the
// fields apply; a field of another kind must be zero.
type Instrument struct {
	Kind Kind `yaml:"kind"`

	// AngleArcsec is the standard deviation of one measured angle (both
	// faces, as ISO 17123-3 states it), for the horizontal direction and
	// the zenith / vertical angle. Total station and scanner. (A scanner's
	// vertical angle may be an elevation e = 90° − z: its error enters the
	// Jacobian with the same magnitude, so the model is the same.)
	AngleArcsec float64 `yaml:"angle_arcsec,omitempty"`
	// HzArcsec and ZenithArcsec override AngleArcsec for the horizontal
	// direction and the zenith angle when non-zero.
	HzArcsec     float64 `yaml:"hz_arcsec,omitempty"`
	ZenithArcsec float64 `yaml:"zenith_arcsec,omitempty"`
	// OrientationArcsec is the standard deviation of the setup's
	// orientation (backsight / resection), shared by all points of the
	// setup. Zero means none stated.
	OrientationArcsec float64 `yaml:"orientation_arcsec,omitempty"`

	// DistanceMM and DistancePPM are the total station's distance
	// specification a mm + b ppm (ISO 17123-4 style).
	DistanceMM  float64 `yaml:"distance_mm,omitempty"`
	DistancePPM float64 `yaml:"distance_ppm,omitempty"`
	// DistanceCombine says how a and b·s are combined; empty means linear.
	DistanceCombine DistanceCombine `yaml:"distance_combine,omitempty"`

	// RangeMM and RangeMMPerM are the scanner's range noise
	// σ_r(ρ) = a + b·ρ with a in mm and b in mm per metre of range, before
	// the incidence inflation.
	RangeMM     float64 `yaml:"range_mm,omitempty"`
	RangeMMPerM float64 `yaml:"range_mm_per_m,omitempty"`
	// MaxIncidenceDeg caps the incidence inflation (scanner); zero means
	// DefaultMaxIncidenceDeg. Must lie in (0°, 89°].
	MaxIncidenceDeg float64 `yaml:"max_incidence_deg,omitempty"`

	// CentringMM is the centring standard deviation of instrument and
	// target over their marks, each horizontal axis, common to a setup.
	CentringMM float64 `yaml:"centring_mm,omitempty"`
	// TargetHeightMM is the standard deviation of the measured instrument
	// and target heights together, vertical, common to a setup.
	TargetHeightMM float64 `yaml:"target_height_mm,omitempty"`
	// TargetHeight is the height of the prism above the measured point,
	// metres (total station; 0 for reflectorless shots): the polar
	// observation is reconstructed to the prism, not to the point.
	TargetHeight float64 `yaml:"target_height,omitempty"`

	// SigmaMM is the plain per-file standard uncertainty along the normal
	// (KindPlain only), mm.
	SigmaMM float64 `yaml:"sigma_mm,omitempty"`

	// Stations are the instrument positions. One station may have an empty
	// ID; several need distinct IDs, matched against the per-shot station
	// IDs of the survey file. Total station and scanner.
	Stations []Station `yaml:"stations,omitempty"`
}

// Station is one instrument position in the site frame.
type Station struct {
	ID string  `yaml:"id,omitempty"`
	E  float64 `yaml:"e"`
	N  float64 `yaml:"n"`
	H  float64 `yaml:"h"`
	// InstrumentHeight is added to H to give the instrument centre, m.
	InstrumentHeight float64 `yaml:"instrument_height,omitempty"`
	// SigmaMM is the standard uncertainty of each station coordinate
	// (from the control survey), common to the setup, mm.
	SigmaMM float64 `yaml:"sigma_mm,omitempty"`
}

// DecisionSpec states the decision rule and the patch verdict.
type DecisionSpec struct {
	// Rule is RuleGuarded or RuleSimple; empty means RuleGuarded.
	Rule string `yaml:"rule,omitempty"`
	// K is the coverage factor, at most 10 (see NewRule); zero means 2.
	K float64 `yaml:"k,omitempty"`
	// MinShare is the share of points that must be proven conforming for a
	// patch to conform, in (0, 1]; zero means 1 (every point).
	MinShare float64 `yaml:"min_share,omitempty"`
	// MaxAbsMM is the absolute cap no point may exceed, mm; zero means none.
	MaxAbsMM float64 `yaml:"max_abs_mm,omitempty"`
}

// ErrNoStation is returned by Model.Setup for a station ID the model does
// not state.
var ErrNoStation = errors.New("uncert: no such station")

// fieldError is a validation failure at a path of yaml keys (sequence
// indices as decimal strings), turned into a LineError by DecodeModel.
type fieldError struct {
	path []string
	msg  string
}

func (e *fieldError) Error() string {
	s := "uncertainty"
	for _, p := range e.path {
		s += "." + p
	}
	return s + ": " + e.msg
}

// Validate reports the first inconsistency of m: a negative or non-finite
// value, a field that does not apply to the instrument kind, a missing
// station, duplicate station IDs, or an unknown rule. The error names the
// field as a dotted path.
func (m *Model) Validate() error {
	if e := m.validate(); e != nil {
		return e
	}
	return nil
}

func (m *Model) validate() *fieldError {
	in := &m.Instrument
	bad := func(msg string, path ...string) *fieldError { return &fieldError{path: path, msg: msg} }
	// nonNeg checks a standard uncertainty (or another size) read from the
	// file: finite and ≥ 0 (NaN fails both comparisons).
	nonNeg := func(v float64, path ...string) *fieldError {
		if v >= 0 && !math.IsInf(v, 1) {
			return nil
		}
		return bad(fmt.Sprintf("must be a finite number ≥ 0, got %v", v), path...)
	}
	ts, sc, pl := KindTotalStation, KindScanner, KindPlain
	fields := []struct {
		name  string
		v     float64
		kinds []Kind // the kinds the field applies to
	}{
		{"angle_arcsec", in.AngleArcsec, []Kind{ts, sc}},
		{"hz_arcsec", in.HzArcsec, []Kind{ts, sc}},
		{"zenith_arcsec", in.ZenithArcsec, []Kind{ts, sc}},
		{"orientation_arcsec", in.OrientationArcsec, []Kind{ts, sc}},
		{"distance_mm", in.DistanceMM, []Kind{ts}},
		{"distance_ppm", in.DistancePPM, []Kind{ts}},
		{"range_mm", in.RangeMM, []Kind{sc}},
		{"range_mm_per_m", in.RangeMMPerM, []Kind{sc}},
		{"max_incidence_deg", in.MaxIncidenceDeg, []Kind{sc}},
		{"centring_mm", in.CentringMM, []Kind{ts, sc}},
		{"target_height_mm", in.TargetHeightMM, []Kind{ts, sc}},
		{"sigma_mm", in.SigmaMM, []Kind{pl}},
		{"target_height", in.TargetHeight, []Kind{ts}},
	}
	switch in.Kind {
	case ts, sc, pl:
	case "":
		return bad("missing (want total-station, scanner or plain)", "instrument", "kind")
	default:
		return bad(fmt.Sprintf("unknown kind %q (want total-station, scanner or plain)", in.Kind), "instrument", "kind")
	}
	for _, f := range fields {
		if e := nonNeg(f.v, "instrument", f.name); e != nil {
			return e
		}
		if f.v != 0 && !slices.Contains(f.kinds, in.Kind) {
			return bad(fmt.Sprintf("does not apply to kind %s", in.Kind), "instrument", f.name)
		}
	}
	if in.MaxIncidenceDeg > 89 {
		return bad(fmt.Sprintf("must be at most 89, got %v", in.MaxIncidenceDeg), "instrument", "max_incidence_deg")
	}
	switch in.DistanceCombine {
	case "", CombineLinear, CombineRSS:
		if in.DistanceCombine != "" && in.Kind != ts {
			return bad(fmt.Sprintf("does not apply to kind %s", in.Kind), "instrument", "distance_combine")
		}
	default:
		return bad(fmt.Sprintf("unknown rule %q (want linear or rss)", in.DistanceCombine), "instrument", "distance_combine")
	}
	if e := m.validateStations(bad, nonNeg); e != nil {
		return e
	}
	for _, c := range []struct {
		name string
		v    float64
	}{{"control_mm", m.ControlMM}, {"design_mm", m.DesignMM}, {"surface_mm", m.SurfaceMM}} {
		if e := nonNeg(c.v, c.name); e != nil {
			return e
		}
	}
	d := &m.Decision
	switch d.Rule {
	case "", RuleGuarded, RuleSimple:
	default:
		return bad(fmt.Sprintf("unknown rule %q (want %s or %s)", d.Rule, RuleGuarded, RuleSimple), "decision", "rule")
	}
	if !(d.K >= 0 && d.K <= 10) {
		return bad(fmt.Sprintf("must lie in [0, 10] (0 means 2), got %v", d.K), "decision", "k")
	}
	if !(d.MinShare >= 0 && d.MinShare <= 1) {
		return bad(fmt.Sprintf("must lie in (0, 1] (0 means 1), got %v", d.MinShare), "decision", "min_share")
	}
	return nonNeg(d.MaxAbsMM, "decision", "max_abs_mm")
}

func (m *Model) validateStations(bad func(string, ...string) *fieldError, nonNeg func(float64, ...string) *fieldError) *fieldError {
	in := &m.Instrument
	if in.Kind == KindPlain {
		if len(in.Stations) > 0 {
			return bad("does not apply to kind plain", "instrument", "stations")
		}
		return nil
	}
	if len(in.Stations) == 0 {
		return bad(fmt.Sprintf("kind %s needs at least one station", in.Kind), "instrument", "stations")
	}
	seen := make(map[string]bool, len(in.Stations))
	for i, st := range in.Stations {
		idx := strconv.Itoa(i)
		for _, c := range []struct {
			name string
			v    float64
		}{{"e", st.E}, {"n", st.N}, {"h", st.H}, {"instrument_height", st.InstrumentHeight}} {
			if math.IsNaN(c.v) || math.IsInf(c.v, 0) {
				return bad("must be finite", "instrument", "stations", idx, c.name)
			}
		}
		if e := nonNeg(st.SigmaMM, "instrument", "stations", idx, "sigma_mm"); e != nil {
			return e
		}
		if st.ID == "" && len(in.Stations) > 1 {
			return bad("several stations need an id each", "instrument", "stations", idx)
		}
		if seen[st.ID] {
			return bad(fmt.Sprintf("duplicate station id %q", st.ID), "instrument", "stations", idx, "id")
		}
		seen[st.ID] = true
	}
	return nil
}

// Warnings lists statements a report should carry about a valid model that
// is probably incomplete: an instrument whose angle or distance noise is
// stated as zero (so that term is taken as exact), or a model whose
// combined uncertainty is zero everywhere (guarded acceptance then decides
// like simple acceptance).
func (m *Model) Warnings() []string {
	in := &m.Instrument
	var w []string
	angle := in.AngleArcsec > 0 || (in.HzArcsec > 0 && in.ZenithArcsec > 0)
	switch in.Kind {
	case KindTotalStation:
		if !angle {
			w = append(w, "no angle uncertainty stated: angle errors are taken as zero")
		}
		if in.DistanceMM == 0 && in.DistancePPM == 0 {
			w = append(w, "no distance uncertainty stated: distance errors are taken as zero")
		}
	case KindScanner:
		if !angle {
			w = append(w, "no angle uncertainty stated: angle errors are taken as zero")
		}
		if in.RangeMM == 0 && in.RangeMMPerM == 0 {
			w = append(w, "no range uncertainty stated: range errors are taken as zero")
		}
	case KindPlain:
		if in.SigmaMM == 0 && m.ControlMM == 0 && m.DesignMM == 0 && m.SurfaceMM == 0 {
			w = append(w, "every uncertainty is zero: deviations are treated as exact")
		}
	}
	if in.Kind != KindPlain && m.ControlMM == 0 {
		w = append(w, "no control / registration uncertainty stated (control_mm): the frame is taken as exact")
	}
	return w
}

// Rule returns the decision rule the model states (guarded, k = 2 when
// unset).
func (m *Model) Rule() Rule { return Rule{Name: m.Decision.Rule, K: m.Decision.K}.norm() }

// Criterion returns the decision criterion for a symmetric tolerance ±limit
// (metres) with the model's rule, min_share and max_abs.
func (m *Model) Criterion(limit float64) Criterion {
	return Criterion{Limit: limit, MaxAbs: m.Decision.MaxAbsMM * mm, MinShare: m.Decision.MinShare, Rule: m.Rule()}
}

// Unit conversions (exact by definition: 1″ = π/648000 rad).
const (
	mm     = 1e-3
	arcsec = math.Pi / 648000
	ppm    = 1e-6
)

// Setups validates m and returns one Setup per station, in the order of
// Instrument.Stations (one Setup with an empty ID for KindPlain), with
// every value converted to metres and radians.
func (m *Model) Setups() ([]Setup, error) {
	if err := m.Validate(); err != nil {
		return nil, err
	}
	in := &m.Instrument
	base := Setup{
		kind:     in.Kind,
		control2: sq(m.ControlMM * mm),
		design2:  sq(m.DesignMM * mm),
		surface2: sq(m.SurfaceMM * mm),
		plain2:   sq(in.SigmaMM * mm),
	}
	base.extra2 = base.control2 + base.design2 + base.surface2 + base.plain2
	if in.Kind == KindPlain {
		return []Setup{base}, nil
	}
	base.polar = true
	base.scanner = in.Kind == KindScanner
	hz, zen := in.AngleArcsec, in.AngleArcsec
	if in.HzArcsec != 0 {
		hz = in.HzArcsec
	}
	if in.ZenithArcsec != 0 {
		zen = in.ZenithArcsec
	}
	base.varT = sq(hz * arcsec)
	base.varZ = sq(zen * arcsec)
	base.varO = sq(in.OrientationArcsec * arcsec)
	switch in.Kind {
	case KindTotalStation:
		base.distA, base.distB = in.DistanceMM*mm, in.DistancePPM*ppm
		base.rss = in.DistanceCombine == CombineRSS
	case KindScanner:
		base.distA, base.distB = in.RangeMM*mm, in.RangeMMPerM*mm
		maxInc := in.MaxIncidenceDeg
		if maxInc == 0 {
			maxInc = DefaultMaxIncidenceDeg
		}
		base.cosMax = math.Cos(maxInc * math.Pi / 180)
	}
	c2 := sq(in.CentringMM * mm)
	h2 := sq(in.TargetHeightMM * mm)
	out := make([]Setup, len(in.Stations))
	for i, st := range in.Stations {
		s := base
		s.ID = st.ID
		s.origin = r3.Vec{X: st.E, Y: st.N, Z: st.H + st.InstrumentHeight}
		s.ref = r3.Vec{X: s.origin.X, Y: s.origin.Y, Z: s.origin.Z - in.TargetHeight}
		x2 := sq(st.SigmaMM * mm)
		s.station = Sym3{XX: c2 + x2, YY: c2 + x2, ZZ: h2 + x2}
		out[i] = s
	}
	return out, nil
}

// Setup returns the Setup of the station with the given ID. An empty ID
// selects the only station (or the plain model); with several stations it
// is an error wrapping ErrNoStation, as is an unknown ID.
func (m *Model) Setup(id string) (*Setup, error) {
	ss, err := m.Setups()
	if err != nil {
		return nil, err
	}
	if id == "" && len(ss) == 1 {
		return &ss[0], nil
	}
	for i := range ss {
		if ss[i].ID == id {
			return &ss[i], nil
		}
	}
	return nil, fmt.Errorf("%w: %q", ErrNoStation, id)
}

func sq(x float64) float64 { return x * x }
