package deviation

import (
	"errors"
	"fmt"
	"math"
	"strings"
)

// DefaultFarM is the distance, in metres, beyond which a point is taken
// not to lie on the shell at all (scaffold, formwork, people, birds): its
// status is far and it is left out of statistics and verdicts. 150 mm is
// common practice for cast shells, an order of magnitude above typical
// shape tolerances; a design file may set far_mm.
const DefaultFarM = 0.150

// Tolerance is the conformity rule of a design, all lengths in metres.
// There is no built-in default tolerance (FIELD.md §1.5): every value
// comes from the design file, with its Source.
type Tolerance struct {
	// Source names where the numbers come from (document, edition,
	// clause); printed in every report. Required.
	Source string
	// LimitM: a point conforms where |deviation| <= LimitM. Required, > 0.
	LimitM float64
	// MinShare: a patch conforms where at least this share of its used
	// points conform. Zero means 1 (every point must conform).
	MinShare float64
	// MaxAbsM: ... and no used point exceeds it. Zero means no separate
	// cap (then only MinShare decides).
	MaxAbsM float64
	// BandsM are the report bands, ascending and positive. Nil means
	// {LimitM/2, LimitM, 2·LimitM}.
	BandsM []float64
	// FarM: beyond this |deviation| a point is not on the shell (status
	// far, not in the verdict). Zero means DefaultFarM.
	FarM float64
}

// ErrTolerance reports an invalid tolerance.
var ErrTolerance = errors.New("invalid tolerance")

// WithDefaults returns t with its zero fields replaced by their documented
// defaults.
func (t Tolerance) WithDefaults() Tolerance {
	if t.MinShare == 0 {
		t.MinShare = 1
	}
	if t.BandsM == nil && t.LimitM > 0 {
		t.BandsM = []float64{t.LimitM / 2, t.LimitM, 2 * t.LimitM}
	}
	if t.FarM == 0 {
		t.FarM = DefaultFarM
	}
	return t
}

// Validate reports whether t (after WithDefaults) is a usable rule.
func (t Tolerance) Validate() error {
	bad := func(format string, a ...any) error {
		return fmt.Errorf("%w: %s", ErrTolerance, fmt.Sprintf(format, a...))
	}
	fin := func(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
	switch {
	case strings.TrimSpace(t.Source) == "":
		return bad("source is empty: name the document, edition and clause the numbers come from")
	case !(t.LimitM > 0) || !fin(t.LimitM):
		return bad("limit %g mm must be > 0", t.LimitM*1000)
	case !(t.MinShare > 0 && t.MinShare <= 1):
		return bad("min_share %g must be in (0, 1]", t.MinShare)
	case !fin(t.MaxAbsM) || t.MaxAbsM < 0 || (t.MaxAbsM > 0 && t.MaxAbsM < t.LimitM):
		return bad("max_abs %g mm must be 0 (none) or >= the limit %g mm", t.MaxAbsM*1000, t.LimitM*1000)
	case !fin(t.FarM) || t.FarM <= math.Max(t.LimitM, t.MaxAbsM):
		return bad("far %g mm must exceed the limit and max_abs", t.FarM*1000)
	}
	for i, b := range t.BandsM {
		if !(b > 0) || !fin(b) || (i > 0 && b <= t.BandsM[i-1]) {
			return bad("bands must be positive and strictly ascending, got %v mm", mmList(t.BandsM))
		}
	}
	return nil
}

func mmList(v []float64) []float64 {
	out := make([]float64, len(v))
	for i, x := range v {
		out[i] = x * 1000
	}
	return out
}

// Conforms reports whether one deviation is within the limit; a deviation
// exactly at ±LimitM conforms.
func (t Tolerance) Conforms(devM float64) bool { return math.Abs(devM) <= t.LimitM }

// Band returns the band index of a deviation by its magnitude: 0 for
// |d| <= BandsM[0], i for BandsM[i−1] < |d| <= BandsM[i], and len(BandsM)
// beyond the last band. A deviation exactly on a band edge belongs to the
// inner band, as a deviation exactly at the limit conforms.
func (t Tolerance) Band(devM float64) int {
	a := math.Abs(devM)
	for i, b := range t.BandsM {
		if a <= b {
			return i
		}
	}
	return len(t.BandsM)
}

// Verdict is the outcome of the conformity rule for a patch or the whole
// design.
type Verdict uint8

// Verdicts.
const (
	// Inconclusive: not verified, because the patch has no used points
	// (nothing was measured on it) — never rounded to pass or fail.
	Inconclusive Verdict = iota
	Conforming
	Nonconforming
)

var verdictNames = [...]string{"inconclusive", "conforming", "nonconforming"}

func (v Verdict) String() string {
	if int(v) < len(verdictNames) {
		return verdictNames[v]
	}
	return fmt.Sprintf("Verdict(%d)", uint8(v))
}

// MarshalText writes the verdict name (for JSON).
func (v Verdict) MarshalText() ([]byte, error) { return []byte(v.String()), nil }

// PatchVerdict applies the rule to a patch with n used points, of which
// within conform, and the largest |deviation| maxAbsM among them.
func (t Tolerance) PatchVerdict(n, within int64, maxAbsM float64) Verdict {
	if n == 0 {
		return Inconclusive
	}
	minShare := t.MinShare
	if minShare == 0 {
		minShare = 1
	}
	// within/n and MinShare are both correctly rounded, so an exact share
	// equal to the decimal MinShare compares equal.
	if float64(within)/float64(n) < minShare {
		return Nonconforming
	}
	if t.MaxAbsM > 0 && maxAbsM > t.MaxAbsM {
		return Nonconforming
	}
	return Conforming
}

// Overall combines patch verdicts: nonconforming if any patch is (a
// failure proven on one patch stands whatever is missing elsewhere),
// otherwise inconclusive if any patch is (or there are no patches),
// otherwise conforming: the design conforms only when every patch does.
func Overall(vs []Verdict) Verdict {
	if len(vs) == 0 {
		return Inconclusive
	}
	out := Conforming
	for _, v := range vs {
		switch v {
		case Nonconforming:
			return Nonconforming
		case Inconclusive:
			out = Inconclusive
		}
	}
	return out
}

// RuleText spells out the rule in words for reports.
func (t Tolerance) RuleText() string {
	t = t.WithDefaults()
	var b strings.Builder
	fmt.Fprintf(&b, "A point conforms where its deviation from the design surface lies within ±%.1f mm. ", t.LimitM*1000)
	fmt.Fprintf(&b, "A patch conforms where at least %.1f %% of its used points conform", t.MinShare*100)
	if t.MaxAbsM > 0 {
		fmt.Fprintf(&b, " and no used point exceeds ±%.1f mm", t.MaxAbsM*1000)
	}
	b.WriteString("; a patch with no used points cannot be verified and is inconclusive. ")
	b.WriteString("The design conforms only when every patch conforms; it does not conform when any patch does not, and is otherwise inconclusive. ")
	fmt.Fprintf(&b, "Points farther than %.0f mm from the design surface are taken not to be on the shell and are left out. ", t.FarM*1000)
	fmt.Fprintf(&b, "Tolerance source: %s.", strings.TrimSpace(t.Source))
	return b.String()
}
