package mesh

import (
	"errors"
	"flag"
	"math"
	"os"
	"path/filepath"
	"testing"

	"github.com/hschendel/stl"
	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

var update = flag.Bool("update", false, "rewrite testdata/saddle_patch.stl")

// testSaddle is the hyperbolic paraboloid z = α·x² − β·y² (α, β > 0) in a
// frame translated by Offset, over x ∈ [X0, X1], y ∈ [Y0, Y1]; the positive
// side is +z. Its closest point follows FIELD.md §4.4: X − P = −t·∇f(X)
// with f = αx² − βy² − z gives x = Pₓ/(1 + 2αt), y = P_y/(1 − 2βt),
// z = P_z + t, where t is the unique root in (−1/(2α), 1/(2β)) of the
// decreasing F(t) = αPₓ²/(1 + 2αt)² − βP_y²/(1 − 2βt)² − P_z − t, found here
// by bisection to the last bit. Then D = −t·|∇f(X)|.
type testSaddle struct {
	Alpha, Beta    float64
	X0, X1, Y0, Y1 float64
	Offset         r3.Vec
}

func (s *testSaddle) Param(u, v float64) r3.Vec {
	x, y := s.X0+u*(s.X1-s.X0), s.Y0+v*(s.Y1-s.Y0)
	return r3.Add(s.Offset, r3.Vec{X: x, Y: y, Z: s.Alpha*x*x - s.Beta*y*y})
}

func (s *testSaddle) Project(p r3.Vec) deviation.Projection {
	q := r3.Sub(p, s.Offset)
	a, b := s.Alpha, s.Beta
	F := func(t float64) float64 {
		x, y := q.X/(1+2*a*t), q.Y/(1-2*b*t)
		return a*x*x - b*y*y - q.Z - t
	}
	lo, hi := -1/(2*a), 1/(2*b)
	for range 200 {
		mid := 0.5 * (lo + hi)
		if mid <= lo || mid >= hi {
			break
		}
		if F(mid) > 0 {
			lo = mid
		} else {
			hi = mid
		}
	}
	t := 0.5 * (lo + hi)
	x, y := q.X/(1+2*a*t), q.Y/(1-2*b*t)
	foot := r3.Vec{X: x, Y: y, Z: a*x*x - b*y*y}
	n := r3.Unit(r3.Vec{X: -2 * a * x, Y: 2 * b * y, Z: 1})
	d := r3.Dot(r3.Sub(q, foot), n)
	inside := x >= s.X0 && x <= s.X1 && y >= s.Y0 && y <= s.Y1
	return deviation.Projection{D: d, Foot: r3.Add(foot, s.Offset), Normal: n, Inside: inside}
}

// testCap is a spherical cap of radius R about C: longitude u·π/2,
// co-latitude π/12 + v·π/4; its closest point is radial, D = |p − C| − R.
type testCap struct {
	R float64
	C r3.Vec
}

func (s *testCap) Param(u, v float64) r3.Vec {
	lon, col := u*math.Pi/2, math.Pi/12+v*math.Pi/4
	return r3.Add(s.C, r3.Scale(s.R, r3.Vec{X: math.Sin(col) * math.Cos(lon), Y: math.Sin(col) * math.Sin(lon), Z: math.Cos(col)}))
}

func (s *testCap) Project(p r3.Vec) deviation.Projection {
	d := r3.Sub(p, s.C)
	n := r3.Unit(d)
	return deviation.Projection{D: r3.Norm(d) - s.R, Foot: r3.Add(s.C, r3.Scale(s.R, n)), Normal: n, Inside: true}
}

// fixtureSaddle is the patch of testdata/saddle_patch.stl: α = 1/144,
// β = 1/81 (a = 12 m, b = 9 m in z = x²/a² − y²/b²), 10 m × 8 m, at a
// site-like offset that is also the STL origin.
var fixtureSaddle = testSaddle{Alpha: 1.0 / 144, Beta: 1.0 / 81, X0: 3, X1: 13, Y0: -4, Y1: 4,
	Offset: r3.Vec{X: 5000, Y: 3000, Z: 100}}

const fixtureChord = 0.005

// onMesh returns a uniform random point of triangle (a, b, c)
// (barycentric sampling by reflection of the unit square).
func onMesh(g *lcg, a, b, c r3.Vec) r3.Vec {
	u, v := g.float(), g.float()
	if u+v > 1 {
		u, v = 1-u, 1-v
	}
	return r3.Add(a, r3.Add(r3.Scale(u, r3.Sub(b, a)), r3.Scale(v, r3.Sub(c, a))))
}

func TestTessellateChord(t *testing.T) {
	big := fixtureSaddle
	big.X0, big.X1, big.Y0, big.Y1 = 3, 33, -9, 21 // 30 m × 30 m
	for _, tc := range []struct {
		name  string
		s     Parametric
		chord float64
	}{
		{"saddle 10 m, 5 mm", &fixtureSaddle, 0.005},
		{"saddle 30 m, 1 mm", &big, 0.001},
		{"sphere cap, 1 mm", &testCap{R: 5, C: r3.Vec{X: 1e5, Y: 2e5}}, 0.001},
	} {
		t.Run(tc.name, func(t *testing.T) {
			v, f, err := Tessellate(tc.s, tc.chord)
			if err != nil {
				t.Fatalf("Tessellate: %v", err)
			}
			g := lcg(len(f))
			worst := 0.0
			for i := range 20000 {
				tr := f[i%len(f)]
				p := onMesh(&g, v[tr[0]], v[tr[1]], v[tr[2]])
				worst = math.Max(worst, math.Abs(tc.s.Project(p).D))
			}
			if worst > tc.chord {
				t.Fatalf("%d triangles: got max distance %v m from the analytic surface, want ≤ %v", len(f), worst, tc.chord)
			}
			// Winding follows the analytic positive side.
			for _, tr := range f[:10] {
				a, b, c := v[tr[0]], v[tr[1]], v[tr[2]]
				n := r3.Cross(r3.Sub(b, a), r3.Sub(c, a))
				if r3.Dot(n, tc.s.Project(a).Normal) <= 0 {
					t.Fatalf("triangle %v wound against the surface normal", tr)
				}
			}
			t.Logf("%d triangles, max sampled distance %.3g mm", len(f), 1e3*worst)
		})
	}
	if _, _, err := Tessellate(&fixtureSaddle, 0); !errors.Is(err, ErrChord) {
		t.Errorf("chord 0: got %v, want %v", err, ErrChord)
	}
	if _, _, err := Tessellate(&fixtureSaddle, 1e-12); !errors.Is(err, ErrChord) {
		t.Errorf("chord 1e-12 m: got %v, want %v", err, ErrChord)
	}
}

// TestWriteSTLReadBack writes an exported patch, reads it back with the
// STL library (same triangle count) and with ReadSTL (vertices on the
// analytic surface to float32 resolution of coordinates relative to the
// origin).
func TestWriteSTLReadBack(t *testing.T) {
	s := &fixtureSaddle
	v, f, err := Tessellate(s, fixtureChord)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "patch.stl")
	if err := WriteSTL(path, s.Offset, v, f); err != nil {
		t.Fatalf("WriteSTL: %v", err)
	}
	solid, err := stl.ReadFile(path)
	if err != nil {
		t.Fatalf("stl.ReadFile: %v", err)
	}
	if len(solid.Triangles) != len(f) || solid.IsAscii {
		t.Fatalf("got %d triangles (ascii %v), want %d binary", len(solid.Triangles), solid.IsAscii, len(f))
	}
	entries, _ := os.ReadDir(filepath.Dir(path))
	if len(entries) != 1 {
		t.Errorf("got %d files in the directory, want 1 (no temporary left)", len(entries))
	}
	fh, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	m, rep, err := ReadSTL(fh, 1, s.Offset, Options{NormalUp: true})
	if err != nil {
		t.Fatalf("ReadSTL: %v", err)
	}
	if m.Triangles() != len(f) || rep.Vertices != len(v) || rep.Reoriented != 0 || len(rep.Warnings) != 0 {
		t.Fatalf("got %d triangles, %d vertices, %d reoriented, warnings %q; want %d, %d, 0, none",
			m.Triangles(), rep.Vertices, rep.Reoriented, rep.Warnings, len(f), len(v))
	}
	// float32 spacing at the largest relative coordinate 13 m is
	// 13·2⁻²⁴ (half a spacing after rounding) ≈ 7.7e-7 m per coordinate.
	const f32Tol = 3 * 13.0 / (1 << 24)
	for i, p := range v {
		if d := m.Project(p).D; math.Abs(d) > f32Tol {
			t.Fatalf("vertex %d: got distance %v from the read-back mesh, want ≤ %v", i, d, f32Tol)
		}
	}
	if *update {
		if err := WriteSTL(filepath.Join("testdata", "saddle_patch.stl"), s.Offset, v, f); err != nil {
			t.Fatal(err)
		}
	}
}

func TestWriteSTLErrors(t *testing.T) {
	dir := t.TempDir()
	v := []r3.Vec{{X: 5e5}, {X: 5e5 + 1}, {X: 5e5, Y: 1}}
	for _, tc := range []struct {
		name   string
		origin r3.Vec
		f      [][3]int32
		want   error
	}{
		{"precision", r3.Vec{}, [][3]int32{{0, 1, 2}}, ErrPrecision},
		{"index", r3.Vec{X: 5e5}, [][3]int32{{0, 1, 3}}, ErrIndex},
	} {
		if err := WriteSTL(filepath.Join(dir, tc.name+".stl"), tc.origin, v, tc.f); !errors.Is(err, tc.want) {
			t.Errorf("%s: got %v, want %v", tc.name, err, tc.want)
		}
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 0 {
		t.Errorf("got %d files after failed writes, want 0", len(entries))
	}
}
