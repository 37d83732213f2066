package change

import (
	"encoding/json"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

func TestEstimateJSONRoundTrip(t *testing.T) {
	e := Estimate{
		Params:   []Param{{"k1", Shape}, {"t_z", Translation}, {"rot_x", Rotation}},
		Value:    []float64{0.1, -0.002, 1e-4},
		Cov:      mat.NewSymDense(3, []float64{1e-8, 2e-9, 0, 2e-9, 4e-6, 1e-9, 0, 1e-9, 1e-10}),
		Cofactor: true, S0sq: 1.3, Dof: 211,
	}
	b, err := json.Marshal(e)
	if err != nil {
		t.Fatal(err)
	}
	var got Estimate
	if err := json.Unmarshal(b, &got); err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got.Params, e.Params) || !reflect.DeepEqual(got.Value, e.Value) || got.Dof != e.Dof || got.S0sq != e.S0sq || !got.Cofactor {
		t.Errorf("round trip: got %+v, want %+v", got, e)
	}
	if !mat.Equal(got.Cov, e.Cov) {
		t.Errorf("covariance: got %v, want %v", mat.Formatted(got.Cov), mat.Formatted(e.Cov))
	}
	bad := []struct{ name, in, want string }{
		{"asymmetric", `{"params":[{"name":"a","kind":"shape"},{"name":"b","kind":"shape"}],"value":[1,2],"cov":[[1,2],[3,1]]}`, "symmetric"},
		{"kind", `{"params":[{"name":"a","kind":"wobble"}],"value":[1],"cov":[[1]]}`, "kind"},
		{"rows", `{"params":[{"name":"a","kind":"shape"}],"value":[1],"cov":[]}`, "covariance rows"},
	}
	for _, tc := range bad {
		t.Run(tc.name, func(t *testing.T) {
			var e Estimate
			err := json.Unmarshal([]byte(tc.in), &e)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("got %v, want an error containing %q", err, tc.want)
			}
		})
	}
}

// TestEstimateTestdata decodes the testdata estimates and runs them through
// Difference under both datum kinds: the eight-parameter estimate keeps two
// shape parameters under bestfit.
func TestEstimateTestdata(t *testing.T) {
	var shape, full Estimate
	for name, dst := range map[string]*Estimate{"estimate_shape.json": &shape, "estimate_saddle8.json": &full} {
		b, err := os.ReadFile(filepath.Join("testdata", name))
		if err != nil {
			t.Fatal(err)
		}
		if err := json.Unmarshal(b, dst); err != nil {
			t.Fatalf("%s: %v", name, err)
		}
	}
	d, err := Difference(full, full, DatumControl, DatumBestFit)
	if err != nil {
		t.Fatal(err)
	}
	if len(d.Params) != 2 || len(d.Dropped) != 6 {
		t.Errorf("bestfit: kept %v, dropped %v; want k1, k2 kept and 6 dropped", d.Params, d.Dropped)
	}
	if len(shape.Params) != 2 || shape.Cov.At(1, 1) != 9e-8 {
		t.Errorf("shape estimate: %+v", shape)
	}
}

func FuzzEstimateJSON(f *testing.F) {
	files, _ := filepath.Glob(filepath.Join("testdata", "estimate_*.json"))
	for _, name := range files {
		b, err := os.ReadFile(name)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(string(b))
	}
	f.Add(`{"params":[],"value":[],"cov":[]}`)
	f.Fuzz(func(t *testing.T, s string) {
		var e Estimate
		if json.Unmarshal([]byte(s), &e) != nil {
			return
		}
		b, err := json.Marshal(e)
		if err != nil {
			t.Fatal(err)
		}
		var again Estimate
		if err := json.Unmarshal(b, &again); err != nil {
			t.Fatalf("re-reading %s: %v", b, err)
		}
	})
}
