package cloud

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

// TestPLYReference reads the PLY files of ../shared/reference/ply and checks
// the counts and bounds measured in its PROVENANCE.md (values printed there
// in shortest form of the stored float32, so they are compared after
// rounding to float32).
func TestPLYReference(t *testing.T) {
	tests := []struct {
		file     string
		format   string
		count    int
		min, max r3.Vec
		attrs    []string
	}{
		// PROVENANCE.md "bun000.ply": 40256 vertices, obj_info lines,
		// range_grid of 204800 rows, 164544 of them empty lists.
		{"bun000.ply", "ply-ascii", 40256,
			r3.Vec{X: -0.09475, Y: 0.0357363, Z: -0.0586982}, r3.Vec{X: 0.061, Y: 0.18794, Z: 0.0587228}, nil},
		// PROVENANCE.md "bun_zipper.ply": 35947 vertices, confidence and
		// intensity properties, one trailing blank per line.
		{"bun_zipper.ply", "ply-ascii", 35947,
			r3.Vec{X: -0.0946899, Y: 0.0329874, Z: -0.0618736}, r3.Vec{X: 0.0610091, Y: 0.187321, Z: 0.0587997}, []string{"confidence", "intensity"}},
		// PROVENANCE.md "bun_zipper_res2.ply": 8171 vertices.
		{"bun_zipper_res2.ply", "ply-ascii", 8171,
			r3.Vec{X: -0.0945716, Y: 0.0333891, Z: -0.0618736}, r3.Vec{X: 0.0609346, Y: 0.186643, Z: 0.0586895}, []string{"confidence", "intensity"}},
		// PROVENANCE.md: bounding box [-1, 1]³ of the unit-sphere mesh.
		{"test_pos_color.ply", "ply-binary_little_endian", 114,
			r3.Vec{X: -1, Y: -1, Z: -1}, r3.Vec{X: 1, Y: 1, Z: 1}, []string{"red", "green", "blue", "alpha"}},
		{"test_pos_color_big_endian.ply", "ply-binary_big_endian", 114,
			r3.Vec{X: -1, Y: -1, Z: -1}, r3.Vec{X: 1, Y: 1, Z: 1}, []string{"red", "green", "blue", "alpha"}},
		{"test_pos_color_ascii.ply", "ply-ascii", 114,
			r3.Vec{X: -1, Y: -1, Z: -1}, r3.Vec{X: 1, Y: 1, Z: 1}, []string{"red", "green", "blue", "alpha"}},
		// PROVENANCE.md "test_extra_whitespace.ply": 3 vertices
		// (0.25,0.1,0) (0.5,0.9,0) (0.75,0.1,0).
		{"test_extra_whitespace.ply", "ply-ascii", 3,
			r3.Vec{X: 0.25, Y: 0.1, Z: 0}, r3.Vec{X: 0.75, Y: 0.9, Z: 0}, []string{"red", "green", "blue", "alpha"}},
		// PROVENANCE.md "points_ascii_with_lists.ply": 5 vertices, then a
		// custom element with two lists and a scalar.
		{"points_ascii_with_lists.ply", "ply-ascii", 5, r3.Vec{}, r3.Vec{}, nil},
	}
	for _, tt := range tests {
		t.Run(tt.file, func(t *testing.T) {
			path := sharedRef(t, "ply/"+tt.file)
			r, err := Open(path, Options{})
			if err != nil {
				t.Fatal(err)
			}
			defer r.Close()
			s, err := Scan(r)
			if err != nil {
				t.Fatal(err)
			}
			if len(s.Info.Warnings) > 0 {
				t.Errorf("unexpected warnings %q", s.Info.Warnings)
			}
			if s.Info.Format != tt.format {
				t.Errorf("format: got %q, want %q", s.Info.Format, tt.format)
			}
			if s.Count != int64(tt.count) || s.Rejected != 0 || s.Info.Count != int64(tt.count) {
				t.Errorf("count: got %d (rejected %d, header %d), want %d", s.Count, s.Rejected, s.Info.Count, tt.count)
			}
			if tt.min != (r3.Vec{}) || tt.max != (r3.Vec{}) {
				f32 := func(v r3.Vec) r3.Vec {
					return r3.Vec{X: float64(float32(v.X)), Y: float64(float32(v.Y)), Z: float64(float32(v.Z))}
				}
				if got, want := f32(s.Min), f32(tt.min); got != want && !near(s.Min, tt.min, 5e-7) {
					t.Errorf("min: got %v, want %v", s.Min, tt.min)
				}
				if got, want := f32(s.Max), f32(tt.max); got != want && !near(s.Max, tt.max, 5e-7) {
					t.Errorf("max: got %v, want %v", s.Max, tt.max)
				}
			}
			for i, a := range tt.attrs {
				if i >= len(s.Info.Columns)-3 || s.Info.Columns[3+i] != a {
					t.Errorf("columns: got %v, want x y z %v", s.Info.Columns, tt.attrs)
					break
				}
			}
		})
	}
}

// near reports whether a and b differ by at most tol in every coordinate.
// The 5e-7 used above is the ascii rounding PROVENANCE.md states for the
// test_pos_color files (at most 4.8e-7 from the binary values).
func near(a, b r3.Vec, tol float64) bool {
	return math.Abs(a.X-b.X) <= tol && math.Abs(a.Y-b.Y) <= tol && math.Abs(a.Z-b.Z) <= tol
}

// TestPLYReferenceEncodings checks PROVENANCE.md's statement that the
// little- and big-endian test_pos_color files decode to identical values.
func TestPLYReferenceEncodings(t *testing.T) {
	le := sharedRef(t, "ply/test_pos_color.ply")
	be := sharedRef(t, "ply/test_pos_color_big_endian.ply")
	a, _, err := openAll(t, le, Options{})
	if err != nil {
		t.Fatal(err)
	}
	b, _, err := openAll(t, be, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(a.P) != 114 || len(b.P) != 114 {
		t.Fatalf("got %d and %d points, want 114", len(a.P), len(b.P))
	}
	for i := range a.P {
		if a.P[i] != b.P[i] {
			t.Fatalf("point %d: little-endian %v, big-endian %v", i+1, a.P[i], b.P[i])
		}
		// PROVENANCE.md: every vertex lies on the unit sphere.
		if n := r3.Norm(a.P[i]); math.Abs(n-1) > 1e-7 {
			t.Fatalf("point %d: |v| = %v, want 1", i+1, n)
		}
	}
	for _, name := range []string{"red", "green", "blue", "alpha"} {
		for i := range a.Attr[name] {
			if a.Attr[name][i] != b.Attr[name][i] {
				t.Fatalf("%s of point %d: %v vs %v", name, i+1, a.Attr[name][i], b.Attr[name][i])
			}
		}
	}
	// PROVENANCE.md: alpha = 255 everywhere.
	for i, v := range a.Attr["alpha"] {
		if v != 255 {
			t.Fatalf("alpha of point %d: got %v, want 255", i+1, v)
		}
	}
}
