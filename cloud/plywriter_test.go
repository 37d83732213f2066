package cloud

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

// TestPLYWriterRoundTrip writes points in several batches and reads them
// back with the reader: coordinates exactly (double), extras as float32,
// colours exactly, and the header count patched on Close.
func TestPLYWriterRoundTrip(t *testing.T) {
	tests := []struct {
		name   string
		layout PLYLayout
		n      int
	}{
		{"empty", PLYLayout{}, 0},
		{"one point", PLYLayout{}, 1},
		{"extras and colour", PLYLayout{Extra: []string{"deviation_mm", "weight"}, Color: true, Comments: []string{"as-built check"}}, 40000},
		{"colour", PLYLayout{Color: true}, 7},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			path := filepath.Join(t.TempDir(), "out.ply")
			w, err := CreatePLY(path, tt.layout)
			if err != nil {
				t.Fatal(err)
			}
			pts := make([]r3.Vec, tt.n)
			extra := make([][]float64, len(tt.layout.Extra))
			for k := range extra {
				extra[k] = make([]float64, tt.n)
			}
			var rgb [][3]uint8
			if tt.layout.Color {
				rgb = make([][3]uint8, tt.n)
			}
			for i := range pts {
				pts[i] = r3.Vec{X: 500000.123 + float64(i)*1e-3, Y: 5000000.456 - float64(i), Z: math.Pi * float64(i)}
				for k := range extra {
					extra[k][i] = float64(i)*0.1 - float64(k)
				}
				if rgb != nil {
					rgb[i] = [3]uint8{uint8(i), uint8(i >> 8), 200}
				}
			}
			// Three uneven batches.
			cuts := []int{0, tt.n / 3, tt.n / 2, tt.n}
			for c := 0; c+1 < len(cuts); c++ {
				a, b := cuts[c], cuts[c+1]
				var ex [][]float64
				for k := range extra {
					ex = append(ex, extra[k][a:b])
				}
				if ex == nil {
					ex = [][]float64{}
				}
				var col [][3]uint8
				if rgb != nil {
					col = rgb[a:b]
				}
				if err := w.Write(pts[a:b], ex, col); err != nil {
					t.Fatal(err)
				}
			}
			if w.Count() != int64(tt.n) {
				t.Errorf("Count: got %d, want %d", w.Count(), tt.n)
			}
			if err := w.Close(); err != nil {
				t.Fatal(err)
			}
			data, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			if want := "element vertex " + strings.Repeat("0", countWidth-len(itoa(int64(tt.n)))) + itoa(int64(tt.n)) + "\n"; !bytes.Contains(data, []byte(want)) {
				t.Errorf("header lacks %q", want)
			}
			tb, info, err := openAll(t, path, Options{})
			if err != nil {
				t.Fatal(err)
			}
			if info.Count != int64(tt.n) || len(tb.P) != tt.n {
				t.Fatalf("got %d points (header %d), want %d", len(tb.P), info.Count, tt.n)
			}
			for i := range pts {
				if tb.P[i] != pts[i] {
					t.Fatalf("point %d: got %v, want %v", i, tb.P[i], pts[i])
				}
				for k, name := range tt.layout.Extra {
					if got, want := tb.Attr[name][i], float64(float32(extra[k][i])); got != want {
						t.Fatalf("%s %d: got %v, want %v", name, i, got, want)
					}
				}
				if rgb != nil {
					got := [3]uint8{uint8(tb.Attr["red"][i]), uint8(tb.Attr["green"][i]), uint8(tb.Attr["blue"][i])}
					if got != rgb[i] {
						t.Fatalf("colour %d: got %v, want %v", i, got, rgb[i])
					}
				}
			}
		})
	}
}

// TestPLYWriterMisuse checks the writer's argument errors.
func TestPLYWriterMisuse(t *testing.T) {
	dir := t.TempDir()
	if _, err := CreatePLY(filepath.Join(dir, "a.ply"), PLYLayout{Extra: []string{"two words"}}); err == nil {
		t.Error("a property name with a blank was accepted")
	}
	if _, err := CreatePLY(filepath.Join(dir, "b.ply"), PLYLayout{Comments: []string{"a\nb"}}); err == nil {
		t.Error("a comment with a newline was accepted")
	}
	w, err := CreatePLY(filepath.Join(dir, "c.ply"), PLYLayout{Extra: []string{"d"}})
	if err != nil {
		t.Fatal(err)
	}
	p := []r3.Vec{{X: 1}}
	for _, tt := range []struct {
		extra [][]float64
		rgb   [][3]uint8
	}{{nil, nil}, {[][]float64{{1, 2}}, nil}, {[][]float64{{1}}, [][3]uint8{{1, 2, 3}}}} {
		if err := w.Write(p, tt.extra, tt.rgb); err == nil {
			t.Errorf("Write(%v, %v) accepted", tt.extra, tt.rgb)
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	if err := w.Write(p, [][]float64{{1}}, nil); err == nil {
		t.Error("Write after Close accepted")
	}
}
