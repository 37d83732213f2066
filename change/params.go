package change

import (
	"fmt"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// Datum says how an epoch was placed in the site frame.
type Datum int

const (
	// DatumControl: the epoch was observed from, or transformed onto, stable
	// control off the shell. Position and orientation are meaningful.
	DatumControl Datum = iota
	// DatumBestFit: the epoch was registered by best fit to the shell
	// itself. Its position and orientation were absorbed by the fit and
	// carry no information about rigid motion.
	DatumBestFit
)

// String returns the archive spelling, "control" or "bestfit".
func (d Datum) String() string {
	switch d {
	case DatumControl:
		return "control"
	case DatumBestFit:
		return "bestfit"
	}
	return fmt.Sprintf("Datum(%d)", int(d))
}

// ParseDatum parses "control" or "bestfit".
func ParseDatum(s string) (Datum, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "control":
		return DatumControl, nil
	case "bestfit", "best-fit":
		return DatumBestFit, nil
	}
	return 0, fmt.Errorf("unknown datum kind %q: use control (placed on stable control) or bestfit (registered by best fit to the shell)", s)
}

// Kind classifies a fitted parameter for the datum rule.
type Kind int

const (
	// Shape parameters (saddle coefficients, curvatures) are invariant
	// under rigid motion and always testable.
	Shape Kind = iota
	// Translation parameters (origin coordinates, mean offset along the
	// normal) describe position.
	Translation
	// Rotation parameters (axis angles) describe orientation.
	Rotation
)

func (k Kind) String() string {
	switch k {
	case Shape:
		return "shape"
	case Translation:
		return "translation"
	case Rotation:
		return "rotation"
	}
	return fmt.Sprintf("Kind(%d)", int(k))
}

// Param names one element of a fitted parameter vector.
type Param struct {
	Name string
	Kind Kind
}

// Estimate is one epoch's fitted parameter vector.
type Estimate struct {
	Params []Param
	Value  []float64
	// Cov is the covariance matrix of Value, or its cofactor matrix when
	// Cofactor is true.
	Cov *mat.SymDense
	// Cofactor reports that Cov is a cofactor matrix (a priori variance
	// factor 1) and S0sq the fit's a-posteriori variance factor σ̂0²; false
	// means Cov is already scaled (Cov = σ̂0²·Q) and S0sq is ignored.
	Cofactor bool
	S0sq     float64
	// Dof is the fit's residual degrees of freedom (observations minus
	// parameters); 0 means unknown or infinite.
	Dof int
}

// Diff is a parameter difference ready for Congruency.
type Diff struct {
	Params []Param       // the parameters compared, in order
	Delta  []float64     // θ2 − θ1
	Q      *mat.SymDense // Q1 + Q2 (cofactors) or C1 + C2 (covariances)
	S0sq   float64       // pooled σ̂0², or 1 for scaled covariances
	Dof    int           // f1 + f2; 0 if either is unknown
	// Dropped lists the rigid-motion parameters left out because of the
	// datum rule.
	Dropped []string
	// Note is the datum statement to print with the result.
	Note string
}

// Difference builds the parameter difference of two independent epochs
// (later minus earlier) for the congruency test, applying the datum rule:
// when either epoch is of kind DatumBestFit, every Translation and Rotation
// parameter is dropped and only Shape parameters are tested; Note says so.
//
// Variance factor: when both estimates carry cofactor matrices, Q = Q1 + Q2
// and σ̂0² = (f1·s1² + f2·s2²)/(f1 + f2) (pooled; the plain mean if a Dof is
// 0). Otherwise each matrix is scaled to a covariance (a cofactor matrix by
// its own S0sq), Q = C1 + C2 and σ̂0² = 1. Dof is f1 + f2, or 0 (infinite)
// when either is 0.
//
// Parameters are matched by name; the order of the earlier epoch is kept.
func Difference(earlier, later Estimate, d1, d2 Datum) (Diff, error) {
	if err := checkEstimate(earlier); err != nil {
		return Diff{}, err
	}
	if err := checkEstimate(later); err != nil {
		return Diff{}, err
	}
	if len(earlier.Params) != len(later.Params) {
		return Diff{}, ErrParamMismatch
	}
	pos := make(map[string]int, len(later.Params))
	for j, p := range later.Params {
		pos[p.Name] = j
	}
	bestfit := d1 == DatumBestFit || d2 == DatumBestFit
	var keep1, keep2 []int
	var out Diff
	for i, p := range earlier.Params {
		j, ok := pos[p.Name]
		if !ok {
			return Diff{}, &InputError{What: "parameter " + p.Name, Index: -1, Err: ErrParamMismatch}
		}
		if bestfit && p.Kind != Shape {
			out.Dropped = append(out.Dropped, p.Name)
			continue
		}
		keep1 = append(keep1, i)
		keep2 = append(keep2, j)
		out.Params = append(out.Params, p)
	}
	n := len(keep1)
	out.Delta = make([]float64, n)
	for k := range keep1 {
		out.Delta[k] = later.Value[keep2[k]] - earlier.Value[keep1[k]]
	}
	both := earlier.Cofactor && later.Cofactor
	s1, s2 := 1.0, 1.0
	if !both {
		if earlier.Cofactor {
			s1 = earlier.S0sq
		}
		if later.Cofactor {
			s2 = later.S0sq
		}
	}
	out.Q = mat.NewSymDense(max(n, 1), nil)
	if n == 0 {
		out.Q = &mat.SymDense{}
	}
	for a := 0; a < n; a++ {
		for b := a; b < n; b++ {
			v := s1*earlier.Cov.At(keep1[a], keep1[b]) + s2*later.Cov.At(keep2[a], keep2[b])
			out.Q.SetSym(a, b, v)
		}
	}
	out.S0sq = 1
	if both {
		f1, f2 := earlier.Dof, later.Dof
		if f1 > 0 && f2 > 0 {
			out.S0sq = (float64(f1)*earlier.S0sq + float64(f2)*later.S0sq) / float64(f1+f2)
		} else {
			out.S0sq = (earlier.S0sq + later.S0sq) / 2
		}
	}
	if earlier.Dof > 0 && later.Dof > 0 {
		out.Dof = earlier.Dof + later.Dof
	}
	out.Note = datumNote(d1, d2, out.Params, out.Dropped)
	return out, nil
}

// DatumStatement is the datum sentence for a point-level comparison of two
// epochs (M3C2 distances): with stable control on both sides the distances
// include any rigid movement; when either epoch was registered by best fit
// to the shell, a rigid movement of the whole shell was absorbed by the
// registration and only changes of shape show.
func DatumStatement(d1, d2 Datum) string {
	if d1 == DatumControl && d2 == DatumControl {
		return "Both epochs are placed on stable control: distances include any movement of the shell as a whole."
	}
	return "At least one epoch was registered by best fit to the shell: a rigid movement (translation, rotation) of the shell as a whole was absorbed by that registration and is not visible; distances show changes of shape only."
}

func datumNote(d1, d2 Datum, tested []Param, dropped []string) string {
	names := make([]string, len(tested))
	for i, p := range tested {
		names[i] = p.Name
	}
	list := "none"
	if len(names) > 0 {
		list = strings.Join(names, ", ")
	}
	if d1 == DatumControl && d2 == DatumControl {
		return "Both epochs are placed on stable control: every parameter is testable. Tested: " + list + "."
	}
	var which string
	switch {
	case d1 == DatumBestFit && d2 == DatumBestFit:
		which = "Both epochs were"
	case d1 == DatumBestFit:
		which = "The earlier epoch was"
	default:
		which = "The later epoch was"
	}
	s := which + " registered by best fit to the shell, so rigid motion (translation, rotation) is not testable: only the shape is tested. Tested: " + list + "."
	if len(dropped) > 0 {
		s += " Left out: " + strings.Join(dropped, ", ") + "."
	}
	return s
}

func checkEstimate(e Estimate) error {
	n := len(e.Params)
	if len(e.Value) != n || e.Cov == nil || e.Cov.SymmetricDim() != n {
		return &InputError{What: "estimate", Index: -1, Err: fmt.Errorf("%d parameters, %d values and a covariance of a different order", n, len(e.Value))}
	}
	for i, v := range e.Value {
		if !finite(v) {
			return &InputError{What: "value of " + e.Params[i].Name, Index: -1, Err: ErrNotFinite}
		}
	}
	if e.Cofactor && !(e.S0sq > 0) {
		return &InputError{What: "variance factor", Index: -1, Err: ErrUncertainty}
	}
	return nil
}
