package change

import (
	"encoding/json"
	"fmt"

	"gonum.org/v1/gonum/mat"
)

// MarshalText returns the kind's name: shape, translation or rotation.
func (k Kind) MarshalText() ([]byte, error) {
	switch k {
	case Shape, Translation, Rotation:
		return []byte(k.String()), nil
	}
	return nil, fmt.Errorf("change: unknown parameter kind %d", int(k))
}

// UnmarshalText parses shape, translation or rotation.
func (k *Kind) UnmarshalText(b []byte) error {
	switch string(b) {
	case "shape":
		*k = Shape
	case "translation":
		*k = Translation
	case "rotation":
		*k = Rotation
	default:
		return fmt.Errorf("change: unknown parameter kind %q (want shape, translation or rotation)", b)
	}
	return nil
}

// estimateJSON is the stored form of an Estimate: the covariance as a full
// row-major matrix, so that any JSON reader can use it.
type estimateJSON struct {
	Params   []paramJSON `json:"params"`
	Value    []float64   `json:"value"`
	Cov      [][]float64 `json:"cov"`
	Cofactor bool        `json:"cofactor"`
	S0sq     float64     `json:"s0sq,omitempty"`
	Dof      int         `json:"dof"`
}

type paramJSON struct {
	Name string `json:"name"`
	Kind Kind   `json:"kind"`
}

// MarshalJSON encodes e as {"params":[{"name","kind"}…], "value":[…],
// "cov":[[…]…], "cofactor", "s0sq", "dof"}.
func (e Estimate) MarshalJSON() ([]byte, error) {
	n := len(e.Params)
	j := estimateJSON{Value: e.Value, Cofactor: e.Cofactor, S0sq: e.S0sq, Dof: e.Dof}
	for _, p := range e.Params {
		j.Params = append(j.Params, paramJSON(p))
	}
	j.Cov = make([][]float64, n)
	for r := 0; r < n; r++ {
		j.Cov[r] = make([]float64, n)
		for c := 0; c < n; c++ {
			if e.Cov != nil {
				j.Cov[r][c] = e.Cov.At(r, c)
			}
		}
	}
	return json.Marshal(j)
}

// UnmarshalJSON decodes the form written by MarshalJSON; the covariance
// must be square, of the parameters' order and symmetric.
func (e *Estimate) UnmarshalJSON(b []byte) error {
	var j estimateJSON
	if err := json.Unmarshal(b, &j); err != nil {
		return err
	}
	n := len(j.Params)
	if len(j.Value) != n || len(j.Cov) != n {
		return fmt.Errorf("change: estimate has %d parameters, %d values and %d covariance rows", n, len(j.Value), len(j.Cov))
	}
	cov := mat.NewSymDense(max(n, 1), nil)
	for r := 0; r < n; r++ {
		if len(j.Cov[r]) != n {
			return fmt.Errorf("change: covariance row %d has %d entries, want %d", r, len(j.Cov[r]), n)
		}
		for c := r; c < n; c++ {
			a, bb := j.Cov[r][c], j.Cov[c][r]
			if a != bb {
				return fmt.Errorf("change: covariance is not symmetric at (%d, %d)", r, c)
			}
			cov.SetSym(r, c, a)
		}
	}
	*e = Estimate{Value: j.Value, Cofactor: j.Cofactor, S0sq: j.S0sq, Dof: j.Dof}
	if n > 0 {
		e.Cov = cov
	} else {
		e.Cov = &mat.SymDense{}
	}
	for _, p := range j.Params {
		e.Params = append(e.Params, Param(p))
	}
	return nil
}

// ShapeEstimate builds the two-parameter shape estimate (k1, k2) of a saddle
// from values with standard uncertainties when only those are known (a
// report summary): the covariance is diagonal — the correlation of k1 and k2
// is not known and is taken as zero, which the caller must state — and the
// degrees of freedom are dof (0 for unknown, then the test treats the
// variance as known).
func ShapeEstimate(k1, u1, k2, u2 float64, dof int) Estimate {
	return Estimate{
		Params: []Param{{"k1", Shape}, {"k2", Shape}},
		Value:  []float64{k1, k2},
		Cov:    mat.NewSymDense(2, []float64{u1 * u1, 0, 0, u2 * u2}),
		Dof:    dof,
	}
}
