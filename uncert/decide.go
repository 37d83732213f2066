package uncert

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// Names of the decision rules.
//
// References (markers as in FIELD.md):
//   - ISO 14253-1:2017, GPS — Inspection by measurement of workpieces and
//     measuring equipment — Part 1: Decision rules for verifying conformity
//     or nonconformity with specifications (title and scope confirmed; the
//     rule details from memory, as FIELD.md §2 notes).
//   - ILAC G8:09/2019, Guidelines on Decision Rules and Statements of
//     Conformity: §4.2.1 simple acceptance (w = 0, AL = TL) and §4.2.2
//     guard band (AL = TL − w) (confirmed, fliphtml5 copy of p. 9).
//   - JCGM 106:2012 (ISO/IEC Guide 98-4), Evaluation of measurement data —
//     The role of measurement uncertainty in conformity assessment: presents
//     simple acceptance and guarded acceptance (confirmed, eurachem.org note
//     on ILAC G8:2019); the clause number §8.2 for simple acceptance and
//     the p_c formula of §7 are from memory.
const (
	// RuleGuarded is guarded acceptance after ISO 14253-1: conformity is
	// proven only inside the tolerance zone shrunk by k·u, nonconformity
	// only outside it grown by k·u, and in between neither is proven.
	RuleGuarded = "guarded"
	// RuleSimple is simple acceptance (ILAC G8:09/2019 §4.2.1, guard band
	// w = 0; JCGM 106:2012 §8.2): the measured value is compared with the
	// tolerance limits as if it were exact.
	RuleSimple = "simple"
)

// DefaultK is the coverage factor when Rule.K is zero: k = 2 gives about
// 95 % coverage for a normal distribution with many degrees of freedom
// (JCGM 100:2008, confirmed via the NIST/SEMATECH e-Handbook §2.5.7 as
// FIELD.md §2 records; the GUM clause §6.3.3 from memory).
const DefaultK = 2

// Rule is a decision rule. The zero Rule is guarded acceptance with k = 2.
type Rule struct {
	// Name is RuleGuarded or RuleSimple; empty means RuleGuarded.
	Name string
	// K is the coverage factor of the guard band w = K·u; zero means
	// DefaultK. Simple acceptance ignores it.
	K float64
}

// NewRule returns the rule with the given name (RuleGuarded, RuleSimple, or
// "" for guarded) and coverage factor (0 for DefaultK), for command-line
// flags. It rejects an unknown name and a k that is negative, not finite,
// or above 10 (a coverage factor is conventionally 1–3; larger values are
// taken for a unit mistake).
func NewRule(name string, k float64) (Rule, error) {
	switch name {
	case "", RuleGuarded, RuleSimple:
	default:
		return Rule{}, fmt.Errorf("uncert: unknown decision rule %q (want %s or %s)", name, RuleGuarded, RuleSimple)
	}
	if !(k >= 0 && k <= 10) {
		return Rule{}, fmt.Errorf("uncert: coverage factor k = %v outside [0, 10]", k)
	}
	return Rule{Name: name, K: k}.norm(), nil
}

func (r Rule) norm() Rule {
	if r.Name == "" {
		r.Name = RuleGuarded
	}
	if r.K == 0 {
		r.K = DefaultK
	}
	return r
}

// guard returns the guard band multiplier applied to u (0 for simple
// acceptance). It panics on an unknown rule name.
func (r Rule) guard() float64 {
	switch r.Name {
	case "", RuleGuarded:
		if r.K == 0 {
			return DefaultK
		}
		return r.K
	case RuleSimple:
		return 0
	}
	panic("uncert: unknown decision rule " + r.Name)
}

// Text states the rule in words, for the provenance block of a report.
func (r Rule) Text() string {
	r = r.norm()
	switch r.Name {
	case RuleSimple:
		return "Simple acceptance (ILAC G8:09/2019 §4.2.1, JCGM 106:2012 §8.2): a point conforms when its " +
			"deviation lies within the tolerance and does not conform otherwise. Measurement uncertainty is " +
			"not taken into account, so at the tolerance limit the risk of a wrong decision approaches 50 %."
	default:
		k := fmt.Sprintf("%g", r.K)
		return "Guarded acceptance after ISO 14253-1 with coverage factor k = " + k + " (guard band w = " + k +
			"·u): a point conforms when |d| + w ≤ T, does not conform when |d| − w > T, and is inconclusive " +
			"otherwise; where 2·w is at least the tolerance width the measurement is not capable of deciding."
	}
}

// Zone is the decision for one deviation. The zero Zone is Inconclusive, so
// that nothing unset ever reads as a pass or a fail.
type Zone int8

const (
	// Inconclusive: neither conformity nor nonconformity is proven.
	Inconclusive Zone = iota
	// Conforming: conformity is proven under the rule.
	Conforming
	// Nonconforming: nonconformity is proven under the rule.
	Nonconforming
)

// String returns the report wording (FIELD.md §8).
func (z Zone) String() string {
	switch z {
	case Conforming:
		return "CONFORMS"
	case Nonconforming:
		return "DOES NOT CONFORM"
	case Inconclusive:
		return "INCONCLUSIVE"
	}
	return fmt.Sprintf("Zone(%d)", int8(z))
}

// MarshalText returns the report wording, so that zones read as words in
// JSON.
func (z Zone) MarshalText() ([]byte, error) { return []byte(z.String()), nil }

// Decide classifies deviation d with standard uncertainty u against the
// symmetric tolerance ±limit under rule r (any consistent unit):
//
//	guarded:  |d| + k·u ≤ limit → Conforming
//	          |d| − k·u > limit → Nonconforming
//	          otherwise         → Inconclusive
//	simple:   |d| ≤ limit → Conforming, else Nonconforming.
//
// The boundaries are as written: a point exactly at |d| + k·u = limit
// conforms; one exactly at |d| − k·u = limit is inconclusive. A NaN d or u
// is Inconclusive. It panics if u < 0.
func Decide(d, u, limit float64, r Rule) Zone {
	return DecideInterval(d, u, -limit, limit, r)
}

// DecideInterval is Decide for a tolerance interval [lo, hi]:
// conforming when lo + w ≤ d ≤ hi − w, nonconforming when d < lo − w or
// d > hi + w, with w = k·u (w = 0 for simple acceptance).
func DecideInterval(d, u, lo, hi float64, r Rule) Zone {
	if u < 0 {
		panic("uncert: negative uncertainty")
	}
	if math.IsNaN(d) || math.IsNaN(u) {
		return Inconclusive
	}
	w := r.guard() * u
	if r.Name == RuleSimple {
		if d >= lo && d <= hi {
			return Conforming
		}
		return Nonconforming
	}
	switch {
	case d-w >= lo && d+w <= hi:
		return Conforming
	case d+w < lo || d-w > hi:
		return Nonconforming
	}
	return Inconclusive
}

// Capable reports whether a measurement with standard uncertainty u can
// prove conformity at all for the symmetric tolerance ±limit under rule r:
// false (NOT CAPABLE, FIELD.md §2) where 2·k·u ≥ 2·limit, the tolerance
// width. Simple acceptance is always "capable" since it ignores u; report
// its risk instead.
func Capable(u, limit float64, r Rule) bool {
	return 2*r.guard()*u < 2*limit || r.guard() == 0
}

// ConformanceProb returns the conformance probability of a deviation d
// with standard uncertainty u for the tolerance interval [lo, hi] under a
// normal model of the measurand centred on d (JCGM 106:2012 §7 [memory]):
//
//	p_c = Φ((hi − d)/u) − Φ((lo − d)/u).
//
// With u = 0 it is 1 inside [lo, hi] and 0 outside. The difference is taken
// in the lower tail, where gonum's CDF (an erfc) keeps relative precision:
// above the mean by symmetry, Φ(−a) − Φ(−b). (distuv.Normal.Survival is
// 1 − erf and loses the far tail.)
func ConformanceProb(d, u, lo, hi float64) float64 {
	if u == 0 {
		if d >= lo && d <= hi {
			return 1
		}
		return 0
	}
	a, b := (lo-d)/u, (hi-d)/u
	n := distuv.UnitNormal
	if a > 0 {
		return n.CDF(-a) - n.CDF(-b)
	}
	return n.CDF(b) - n.CDF(a)
}

// Criterion is a complete conformity criterion for one patch: the symmetric
// tolerance, an optional absolute cap, the share of points that must be
// proven conforming, and the rule. Lengths in metres.
type Criterion struct {
	// Limit is the tolerance half-width T (|d| ≤ T conforms), m.
	Limit float64
	// MaxAbs is a cap no point may exceed, m; zero means none.
	MaxAbs float64
	// MinShare is the share of points that must be proven conforming, in
	// (0, 1]; zero means 1 (every point).
	MinShare float64
	Rule     Rule
}

// ZoneCounts tallies the decisions of a patch (or of the whole survey).
// The zero value is ready; Merge combines per-worker tallies.
type ZoneCounts struct {
	// Zone counts against the tolerance limit.
	Conforming, Nonconforming, Inconclusive int64
	// NotCapable counts points with 2·k·u ≥ 2·limit.
	NotCapable int64
	// AbsUnproven counts points not proven within MaxAbs (|d| + k·u > MaxAbs);
	// AbsExceeded those proven beyond it (|d| − k·u > MaxAbs). Both stay 0
	// without a cap.
	AbsUnproven, AbsExceeded int64
}

// Add records the zone of one point against the limit.
func (c *ZoneCounts) Add(z Zone) {
	switch z {
	case Conforming:
		c.Conforming++
	case Nonconforming:
		c.Nonconforming++
	default:
		c.Inconclusive++
	}
}

// AddPoint decides the point (d, u) under cr, records it, and returns its
// zone against the limit. It does not allocate.
func (c *ZoneCounts) AddPoint(cr *Criterion, d, u float64) Zone {
	z := Decide(d, u, cr.Limit, cr.Rule)
	c.Add(z)
	if !Capable(u, cr.Limit, cr.Rule) {
		c.NotCapable++
	}
	if cr.MaxAbs > 0 {
		switch Decide(d, u, cr.MaxAbs, cr.Rule) {
		case Nonconforming:
			c.AbsExceeded++
			c.AbsUnproven++
		case Inconclusive:
			c.AbsUnproven++
		}
	}
	return z
}

// Merge adds o to c.
func (c *ZoneCounts) Merge(o ZoneCounts) {
	c.Conforming += o.Conforming
	c.Nonconforming += o.Nonconforming
	c.Inconclusive += o.Inconclusive
	c.NotCapable += o.NotCapable
	c.AbsUnproven += o.AbsUnproven
	c.AbsExceeded += o.AbsExceeded
}

// Total returns the number of points recorded.
func (c *ZoneCounts) Total() int64 { return c.Conforming + c.Nonconforming + c.Inconclusive }

// Share returns the share of points in zone z (NaN with no points).
func (c *ZoneCounts) Share(z Zone) float64 {
	n := float64(c.Total())
	switch z {
	case Conforming:
		return float64(c.Conforming) / n
	case Nonconforming:
		return float64(c.Nonconforming) / n
	}
	return float64(c.Inconclusive) / n
}

// Verdict derives the patch verdict from the tallies under cr.
//
// The patch requirement is: at least MinShare of its points lie within the
// tolerance, and no point exceeds MaxAbs. From the point decisions:
//
//   - Conforming is proven when the proven-conforming share is at least
//     MinShare (even if every other point were out, enough are in) and
//     every point is proven within MaxAbs (AbsUnproven = 0).
//   - Nonconforming is proven when the proven-nonconforming share exceeds
//     1 − MinShare (then fewer than MinShare can be in, whatever the
//     inconclusive points truly are), or some point is proven beyond
//     MaxAbs.
//   - Otherwise the patch is Inconclusive, as is a patch with no points.
//
// Note the asymmetry at the cap: a point merely not proven within MaxAbs
// blocks a conforming verdict but does not prove nonconformity.
// Under simple acceptance no point is inconclusive, so neither is the patch
// (except an empty one). NOT CAPABLE is not a zone: report it beside the
// verdict when NotCapable > 0 (those points can never be proven
// conforming with this survey).
func (c *ZoneCounts) Verdict(cr *Criterion) Zone {
	n := c.Total()
	if n == 0 {
		return Inconclusive
	}
	ms := cr.MinShare
	if ms == 0 {
		ms = 1
	}
	// Compare counts, not rounded shares: conforming needs
	// Conforming ≥ ms·n, nonconforming needs Nonconforming > (1 − ms)·n.
	// Counts are integers, so a slack of countSlack (far below ½) absorbs the
	// representation error of a decimal share such as 0.95 (≤ 1 ulp, i.e.
	// < 1e-6 counts for n < 10⁹) without changing any integer comparison.
	const countSlack = 1e-6
	fn := float64(n)
	if c.AbsExceeded > 0 || float64(c.Nonconforming) > (1-ms)*fn+countSlack {
		return Nonconforming
	}
	if c.AbsUnproven == 0 && float64(c.Conforming) >= ms*fn-countSlack {
		return Conforming
	}
	return Inconclusive
}
