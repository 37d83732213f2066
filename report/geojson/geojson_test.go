package geojson

import (
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

// fc is the part of RFC 7946 §3.3 the tests read back.
type fc struct {
	Type       string         `json:"type"`
	Metadata   map[string]any `json:"metadata"`
	Properties any            `json:"properties"` // must be absent (RFC 7946 §7.1)
	Features   []struct {
		Type     string          `json:"type"`
		ID       any             `json:"id"`
		Geometry json.RawMessage `json:"geometry"`
		Props    map[string]any  `json:"properties"`
	} `json:"features"`
}

type geometry struct {
	Type        string          `json:"type"`
	Coordinates json.RawMessage `json:"coordinates"`
}

func readBack(t *testing.T, path string) fc {
	t.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var c fc
	if err := json.Unmarshal(data, &c); err != nil {
		t.Fatalf("output is not JSON: %v", err)
	}
	if c.Type != "FeatureCollection" || c.Properties != nil {
		t.Fatalf("type %q, properties %v: want a FeatureCollection without properties", c.Type, c.Properties)
	}
	return c
}

// ringArea is the shoelace signed area in the x–y plane (positive
// counter-clockwise with x east, y north); RFC 7946 §3.1.6 wants exterior
// rings with positive area and holes with negative.
func ringArea(r [][]float64) float64 {
	var a float64
	for i := 0; i+1 < len(r); i++ {
		a += (r[i][0]-r[0][0])*(r[i+1][1]-r[0][1]) - (r[i+1][0]-r[0][0])*(r[i][1]-r[0][1])
	}
	return a / 2
}

func checkPolygon(t *testing.T, raw json.RawMessage) [][][]float64 {
	t.Helper()
	var g geometry
	if err := json.Unmarshal(raw, &g); err != nil || g.Type != "Polygon" {
		t.Fatalf("geometry %s: want a Polygon (%v)", raw, err)
	}
	var rings [][][]float64
	if err := json.Unmarshal(g.Coordinates, &rings); err != nil {
		t.Fatal(err)
	}
	for i, r := range rings {
		if len(r) < 4 {
			t.Fatalf("ring %d has %d positions, RFC 7946 §3.1.6 wants ≥ 4", i, len(r))
		}
		first, last := r[0], r[len(r)-1]
		for k := range first {
			if first[k] != last[k] {
				t.Fatalf("ring %d is not closed: %v … %v", i, first, last)
			}
		}
		if a := ringArea(r); (i == 0) != (a > 0) {
			t.Errorf("ring %d has signed area %v: exterior rings must be counter-clockwise, holes clockwise", i, a)
		}
	}
	return rings
}

// TestPoints writes points and patch outlines (one given clockwise, with a
// counter-clockwise hole, one not closed) and reads them back.
func TestPoints(t *testing.T) {
	path := filepath.Join(t.TempDir(), "map.geojson")
	w, err := Create(path, &Options{Name: "epoch 1"})
	if err != nil {
		t.Fatal(err)
	}
	// Easting 512000 ≠ northing 5400000: the order must be [x, y, z].
	pts := []Point{
		{ID: "P1", P: r3.Vec{X: 512000.125, Y: 5400000.5, Z: 101.25}, DeviationMM: 3.5, Band: "±5", Patch: "NE", Status: "used"},
		{ID: `odd "id"` + "\n\xff", P: r3.Vec{X: 512001, Y: 5400002, Z: 100}, DeviationMM: math.NaN(), Status: "outside"},
		{ID: "R9", Status: "rejected"},
	}
	for _, p := range pts {
		w.Add(p)
	}
	cw := []r3.Vec{{X: 512000, Y: 5400000}, {X: 512000, Y: 5400010}, {X: 512010, Y: 5400010}, {X: 512010, Y: 5400000}, {X: 512000, Y: 5400000}}
	hole := []r3.Vec{{X: 512002, Y: 5400002}, {X: 512004, Y: 5400002}, {X: 512004, Y: 5400004}}
	if err := w.AddPatch("NE", cw, hole); err != nil {
		t.Fatal(err)
	}
	open := []r3.Vec{{X: 0, Y: 0, Z: 1}, {X: 5, Y: 0, Z: 1}, {X: 5, Y: 5, Z: 2}}
	if err := w.AddPatch("SW", open); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(path); !os.IsNotExist(err) {
		t.Fatalf("file exists before Close (%v)", err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	c := readBack(t, path)
	if got := c.Metadata["crs"]; got != Caveat {
		t.Errorf("crs caveat: got %v", got)
	}
	if c.Metadata["points"] != 2.0 || c.Metadata["rejected"] != 1.0 || c.Metadata["mode"] != "points" || c.Metadata["name"] != "epoch 1" {
		t.Errorf("collection metadata: %v", c.Metadata)
	}
	if len(c.Features) != 4 {
		t.Fatalf("%d features, want 2 patches + 2 points", len(c.Features))
	}
	for i := 0; i < 2; i++ {
		if c.Features[i].Type != "Feature" || c.Features[i].Props["kind"] != "patch" {
			t.Fatalf("feature %d: %v", i, c.Features[i].Props)
		}
		rings := checkPolygon(t, c.Features[i].Geometry)
		if i == 0 && len(rings) != 2 {
			t.Errorf("NE: %d rings, want exterior and hole", len(rings))
		}
		if i == 1 && (len(rings[0]) != 4 || rings[0][2][2] != 2) {
			t.Errorf("SW ring %v: want the 3 positions closed, with z", rings[0])
		}
	}
	for i, want := range pts[:2] {
		f := c.Features[2+i]
		var g geometry
		var pos []float64
		if err := json.Unmarshal(f.Geometry, &g); err != nil || g.Type != "Point" {
			t.Fatalf("point %d geometry %s", i, f.Geometry)
		}
		if err := json.Unmarshal(g.Coordinates, &pos); err != nil {
			t.Fatal(err)
		}
		if len(pos) != 3 || pos[0] != want.P.X || pos[1] != want.P.Y || pos[2] != want.P.Z {
			t.Errorf("point %d position %v, want [easting %v, northing %v, z %v]", i, pos, want.P.X, want.P.Y, want.P.Z)
		}
		wantID := strings.ToValidUTF8(want.ID, "\uFFFD")
		if f.ID != wantID || f.Props["id"] != wantID || f.Props["status"] != want.Status || f.Props["patch"] != want.Patch {
			t.Errorf("point %d: id %q props %v", i, f.ID, f.Props)
		}
	}
	if d := c.Features[2].Props["deviation_mm"]; d != 3.5 {
		t.Errorf("deviation_mm %v, want 3.5", d)
	}
	if d := c.Features[3].Props["deviation_mm"]; d != nil {
		t.Errorf("deviation_mm of NaN: %v, want null", d)
	}
}

// TestCells adds a 100 × 100 m grid of points at 1 m spacing, deviation
// d = x − 512000 mm (so a 10 m cell starting at easting e has mean
// e − 512000 + 4.5 mm, min e − 512000, max e − 511991), far above the
// point limit.
func TestCells(t *testing.T) {
	path := filepath.Join(t.TempDir(), "cells.geojson")
	w, err := Create(path, &Options{MaxPoints: 500, CellM: 10, CRS: "EPSG:32633"})
	if err != nil {
		t.Fatal(err)
	}
	for i := 0; i < 100; i++ {
		for j := 0; j < 100; j++ {
			st := "used"
			if i == 0 && j == 0 {
				st = "far"
			}
			w.Add(Point{ID: "p", P: r3.Vec{X: 512000 + float64(i) + 0.5, Y: 5400000 + float64(j) + 0.5}, DeviationMM: float64(i) + 0.5, Status: st})
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	c := readBack(t, path)
	if c.Metadata["mode"] != "cells" || c.Metadata["cell_m"] != 10.0 || c.Metadata["points"] != 10000.0 {
		t.Fatalf("collection metadata: %v", c.Metadata)
	}
	if crs, _ := c.Metadata["crs"].(string); !strings.Contains(crs, "EPSG:32633") || !strings.Contains(crs, "not WGS 84") {
		t.Errorf("crs: %q", crs)
	}
	if len(c.Features) != 100 {
		t.Fatalf("%d cells, want 100", len(c.Features))
	}
	var total float64
	for _, f := range c.Features {
		rings := checkPolygon(t, f.Geometry)
		x0 := rings[0][0][0]
		total += f.Props["count"].(float64)
		used := f.Props["used"].(float64)
		wantMean := x0 - 512000 + 5
		if x0 == 512000 && rings[0][0][1] == 5400000 {
			// One far point (deviation 0.5) is left out of the statistics.
			wantMean = (100*5.0 - 0.5) / 99
			if used != 99 || f.Props["far"] != 1.0 {
				t.Errorf("corner cell: used %v far %v", used, f.Props["far"])
			}
		}
		if math.Abs(f.Props["mean_mm"].(float64)-wantMean) > 1e-9 || math.Abs(ringArea(rings[0])-100) > 1e-6 {
			t.Errorf("cell at %v: mean %v, want %v; area %v", rings[0][0], f.Props["mean_mm"], wantMean, ringArea(rings[0]))
		}
		if f.Props["min_mm"].(float64) != x0-512000+0.5 || f.Props["max_mm"].(float64) != x0-512000+9.5 {
			t.Errorf("cell at %v: min %v max %v", rings[0][0], f.Props["min_mm"], f.Props["max_mm"])
		}
	}
	if total != 10000 {
		t.Errorf("cell counts sum to %v, want 10000", total)
	}
}

// TestAutoCell checks the automatic cell side: a 1000 × 500 m extent over
// 20000 cells wants √25 = 5 m.
func TestAutoCell(t *testing.T) {
	pts := []Point{{P: r3.Vec{X: 0, Y: 0}}, {P: r3.Vec{X: 1000, Y: 500}}}
	if got := autoCell(pts); got != 5 {
		t.Errorf("got %v, want 5", got)
	}
}

// TestAbortAndErrors checks that Abort leaves no file and that degenerate
// rings are refused.
func TestAbortAndErrors(t *testing.T) {
	path := filepath.Join(t.TempDir(), "x.geojson")
	w, err := Create(path, nil)
	if err != nil {
		t.Fatal(err)
	}
	if err := w.AddPatch("line", []r3.Vec{{X: 0}, {X: 1}, {X: 2}}); !errors.Is(err, ErrRing) {
		t.Errorf("collinear ring: got %v, want ErrRing", err)
	}
	if err := w.AddPatch("two", []r3.Vec{{X: 0}, {X: 1}, {X: 0}}); !errors.Is(err, ErrRing) {
		t.Errorf("two-point ring: got %v, want ErrRing", err)
	}
	w.Abort()
	entries, _ := os.ReadDir(filepath.Dir(path))
	if len(entries) != 0 {
		t.Errorf("Abort left %d files", len(entries))
	}
	if _, err := Create(path, &Options{CellM: -1}); err == nil {
		t.Error("negative cell size accepted")
	}
}

// BenchmarkWrite writes 200 000 point features.
func BenchmarkWrite(b *testing.B) {
	b.ReportAllocs()
	dir := b.TempDir()
	for i := 0; i < b.N; i++ {
		w, err := Create(filepath.Join(dir, "b.geojson"), nil)
		if err != nil {
			b.Fatal(err)
		}
		for k := 0; k < DefaultMaxPoints; k++ {
			w.Add(Point{ID: "P", P: r3.Vec{X: 512000 + float64(k%1000)*0.01, Y: 5400000 + float64(k/1000)*0.01, Z: 100}, DeviationMM: 1.25, Band: "±5", Patch: "NE", Status: "used"})
		}
		if err := w.Close(); err != nil {
			b.Fatal(err)
		}
	}
}
