package geojson

import (
	"math"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/cloud"
	"saddlecheck/deviation"
)

// TestSink feeds one result chunk (used, far, outside and rejected records)
// through the Sink and reads the collection back.
func TestSink(t *testing.T) {
	c := &cloud.Chunk{
		P:      []r3.Vec{{X: 512000, Y: 5400000, Z: 100}, {X: 512001, Y: 5400001, Z: 100.3}, {X: 511000, Y: 5400000, Z: 90}, {}},
		Line:   []int64{1, 2, 3, 4},
		Reject: []string{"", "", "", "not a number"},
	}
	r := &deviation.Result{
		Chunk:  c,
		Patch:  []int32{0, 1, -1, -1},
		Dev:    []float64{0.0042, 0.3, 0.01, math.NaN()},
		Status: []deviation.Status{deviation.StatusUsed, deviation.StatusFar, deviation.StatusOutside, deviation.StatusRejected},
	}
	path := filepath.Join(t.TempDir(), "s.geojson")
	w, err := Create(path, nil)
	if err != nil {
		t.Fatal(err)
	}
	s := NewSink(w, []string{"NE", "SW"}, []float64{0.005, 0.010})
	if err := s.Consume(r); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	got := readBack(t, path)
	if len(got.Features) != 3 || got.Metadata["rejected"] != 1.0 {
		t.Fatalf("%d features, metadata %v", len(got.Features), got.Metadata)
	}
	want := []struct {
		id, patch, band, status string
		dev                     float64
	}{
		{"1", "NE", "0-5", "used", 4.2},
		{"2", "SW", "", "far", 300},
		{"3", "", "", "outside", 10},
	}
	for i, w := range want {
		p := got.Features[i].Props
		if p["id"] != w.id || p["patch"] != w.patch || p["band"] != w.band || p["status"] != w.status || math.Abs(p["deviation_mm"].(float64)-w.dev) > 1e-9 {
			t.Errorf("feature %d: got %v, want %+v", i, p, w)
		}
	}
}
