package geojson

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"flag"
	"math"
	"os"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

var update = flag.Bool("update", false, "rewrite testdata/*_golden.geojson")

// goldenCases builds the collections kept as golden files: point features
// with two patches (one given clockwise, with a hole), and the same kind of
// input folded into cells.
var goldenCases = []struct {
	file  string
	build func(w *Writer) error
	opt   Options
}{
	{file: "points_golden.geojson", opt: Options{Name: "golden points"}, build: func(w *Writer) error {
		w.Add(Point{ID: "P1", P: r3.Vec{X: 512000.125, Y: 5400000.5, Z: 101.25}, DeviationMM: 3.5, Band: "0-5", Patch: "NE", Status: "used"})
		w.Add(Point{ID: "P2", P: r3.Vec{X: 512003, Y: 5400006, Z: 100.75}, DeviationMM: -7.25, Band: "5-10", Patch: "NE", Status: "used"})
		w.Add(Point{ID: "P3", P: r3.Vec{X: 512020, Y: 5400001, Z: 99}, DeviationMM: math.NaN(), Status: "outside"})
		w.Add(Point{ID: "P4", Status: "rejected"})
		cw := []r3.Vec{{X: 512000, Y: 5400000, Z: 100}, {X: 512000, Y: 5400010, Z: 101}, {X: 512010, Y: 5400010, Z: 100}, {X: 512010, Y: 5400000, Z: 101}}
		hole := []r3.Vec{{X: 512002, Y: 5400002, Z: 100}, {X: 512004, Y: 5400002, Z: 100}, {X: 512004, Y: 5400004, Z: 100}}
		if err := w.AddPatch("NE", cw, hole); err != nil {
			return err
		}
		return w.AddPatch("SW", []r3.Vec{{X: 511990, Y: 5399990, Z: 99}, {X: 512000, Y: 5399990, Z: 99}, {X: 512000, Y: 5400000, Z: 100}, {X: 511990, Y: 5399990, Z: 99}})
	}},
	{file: "cells_golden.geojson", opt: Options{MaxPoints: 3, CellM: 5}, build: func(w *Writer) error {
		for i := 0; i < 20; i++ {
			st := "used"
			if i%7 == 6 {
				st = "far"
			}
			w.Add(Point{ID: "p", P: r3.Vec{X: 512000 + float64(i%5)*2.5, Y: 5400000 + float64(i/5)*2.5, Z: 100}, DeviationMM: float64(i) - 9.5, Status: st})
		}
		return w.AddPatch("NE", []r3.Vec{{X: 512000, Y: 5400000}, {X: 512012.5, Y: 5400000}, {X: 512012.5, Y: 5400010}, {X: 512000, Y: 5400010}})
	}},
}

// TestGolden writes the golden collections and compares them byte for
// byte with testdata (regenerate with -update).
func TestGolden(t *testing.T) {
	for _, tc := range goldenCases {
		t.Run(tc.file, func(t *testing.T) {
			path := filepath.Join(t.TempDir(), tc.file)
			opt := tc.opt
			w, err := Create(path, &opt)
			if err != nil {
				t.Fatal(err)
			}
			if err := tc.build(w); err != nil {
				t.Fatal(err)
			}
			if err := w.Close(); err != nil {
				t.Fatal(err)
			}
			got, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			golden := filepath.Join("testdata", tc.file)
			if *update {
				if err := os.WriteFile(golden, got, 0o644); err != nil {
					t.Fatal(err)
				}
			}
			want, err := os.ReadFile(golden)
			if err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(got, want) {
				t.Errorf("output differs from %s (run with -update if the change is intended)\ngot:\n%s", golden, got)
			}
		})
	}
}

// TestExternalValidation reads testdata/validation.json, written by
// testdata/validate.mjs with two general-purpose GeoJSON libraries from
// npm: @placemarkio/check-geojson (structure per RFC 7946: must report no
// issue) and @mapbox/geojson-rewind (rewinding to the RFC 7946 right-hand
// rule must change nothing). The recorded SHA-256 must match the golden
// files, so the record is about the files the writer produces now.
func TestExternalValidation(t *testing.T) {
	raw, err := os.ReadFile(filepath.Join("testdata", "validation.json"))
	if err != nil {
		t.Fatal(err)
	}
	var v struct {
		Tools map[string]string
		Files map[string]struct {
			SHA256        string   `json:"sha256"`
			Issues        []string `json:"issues"`
			RewindChanged bool     `json:"rewind_changed"`
			Polygons      int      `json:"polygons"`
		}
	}
	if err := json.Unmarshal(raw, &v); err != nil {
		t.Fatal(err)
	}
	for _, tc := range goldenCases {
		f, ok := v.Files[tc.file]
		if !ok {
			t.Errorf("%s not validated", tc.file)
			continue
		}
		data, err := os.ReadFile(filepath.Join("testdata", tc.file))
		if err != nil {
			t.Fatal(err)
		}
		sum := sha256.Sum256(data)
		if hex.EncodeToString(sum[:]) != f.SHA256 {
			t.Errorf("%s changed since it was validated: rerun testdata/validate.mjs (see testdata/README.md)", tc.file)
		}
		if len(f.Issues) != 0 || f.RewindChanged || f.Polygons == 0 {
			t.Errorf("%s: issues %q, rewind changed %v, %d polygons (tools %v)", tc.file, f.Issues, f.RewindChanged, f.Polygons, v.Tools)
		}
	}
}
