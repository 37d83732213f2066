package change

import (
	"math"
	"testing"
)

// Tolerances used by the tests of this package.
const (
	tolExact = 1e-12 // closed-form identities in float64
	tolTable = 5e-5  // relative, printed tables give 4–6 significant digits
)

func near(t *testing.T, what string, got, want, tol float64) {
	t.Helper()
	if math.Abs(got-want) > tol*math.Max(1, math.Abs(want)) {
		t.Errorf("%s: got %.10g, want %.10g (tol %g)", what, got, want, tol)
	}
}
