package change

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// Sentinel errors for callers that use errors.Is.
var (
	// ErrTooFewEpochs is returned by FitTrend for fewer than three epochs.
	ErrTooFewEpochs = errors.New("change: a trend needs at least three epochs")
	// ErrParamMismatch is returned by Difference when the two estimates do
	// not carry the same parameter names.
	ErrParamMismatch = errors.New("change: the two epochs do not have the same parameters")
	// ErrNotFinite marks a NaN or infinite input value.
	ErrNotFinite = errors.New("change: value is not finite")
	// ErrUncertainty marks a zero, negative or missing standard uncertainty.
	ErrUncertainty = errors.New("change: standard uncertainty must be positive")
)

// InputError says which input element is bad and why.
type InputError struct {
	What  string // "epoch time", "value", "uncertainty", "parameter", …
	Index int    // 0-based position in the input, -1 if not applicable
	Err   error
}

func (e *InputError) Error() string {
	if e.Index < 0 {
		return fmt.Sprintf("%s: %v", e.What, e.Err)
	}
	return fmt.Sprintf("%s %d: %v", e.What, e.Index, e.Err)
}

func (e *InputError) Unwrap() error { return e.Err }

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

func finiteVec(p r3.Vec) bool { return finite(p.X) && finite(p.Y) && finite(p.Z) }
