package deviation

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

func TestLoadDesign(t *testing.T) {
	path := filepath.Join("testdata", "design_canopy.yaml")
	d, err := LoadDesign(path)
	if err != nil {
		t.Fatal(err)
	}
	data, _ := os.ReadFile(path)
	sum := sha256.Sum256(data)
	if d.SHA256 != hex.EncodeToString(sum[:]) || d.Path != path {
		t.Errorf("SHA256 %s path %s", d.SHA256, d.Path)
	}
	if d.Structure != "Demonstration canopy, bay 1" || !d.NormalUp || d.MarginM != 0.05 || d.Unit.Name != "m" {
		t.Errorf("header: %+v", d)
	}
	kinds := []string{}
	for _, p := range d.Patches {
		kinds = append(kinds, p.ID+":"+p.Kind)
	}
	if got, want := strings.Join(kinds, " "), "NE:corners SW:saddle FLAT:plane"; got != want {
		t.Errorf("patches %q, want %q", got, want)
	}
	if len(d.Warnings) != 1 || !strings.Contains(d.Warnings[0], "coplanar") || !strings.Contains(d.Warnings[0], "line 14") {
		t.Errorf("warnings %q", d.Warnings)
	}
	tol := d.Tolerance
	if tol.LimitM != 0.010 || tol.MinShare != 0.95 || tol.MaxAbsM != 0.025 || tol.FarM != 0.150 || len(tol.BandsM) != 3 || tol.BandsM[2] != 0.020 {
		t.Errorf("tolerance %+v", tol)
	}
	// The NE patch is the worked example scaled by 10 m with a 2 m rise:
	// z − 10 = 0.02·(x − 1000)(y − 2000), so K1 = −K2 = 0.01 (FIELD.md §4.3).
	ne := d.Patches[0].Surface.(*BilinearPatch)
	if math.Abs(ne.Saddle.K1-0.01) > 1e-12 || math.Abs(ne.Saddle.K2+0.01) > 1e-12 {
		t.Errorf("NE saddle %+v", ne.Saddle)
	}
}

func TestParseDesignUnits(t *testing.T) {
	// 1 ft = 0.3048 m exactly (cloud.Foot); a coefficient k in 1/ft is
	// k/0.3048 in 1/m (z = k·x² with z, x in feet).
	src := `units: ft
normal: down
offset_mm: -40
patches:
  - id: S
    saddle: {k1: 0.03, k2: -0.01, origin: [100, 200, 30], axes: [[0, 1, 0], [1, 0, 0], [0, 0, -1]]}
    corners: [[90, 190, 0], [110, 190, 0], [110, 210, 0], [90, 210, 0]]
tolerance: {source: "s", limit_mm: 6}
`
	d, err := ParseDesign("ft.yaml", []byte(src), ".")
	if err != nil {
		t.Fatal(err)
	}
	s := d.Patches[0].Surface.(*SaddlePatch).Saddle
	if math.Abs(s.K1-0.03/0.3048) > 1e-15 || s.Origin != (r3.Vec{X: 30.48, Y: 60.96, Z: 9.144}) || d.NormalUp || d.OffsetM != -0.040 {
		t.Errorf("saddle %+v offset %g", s, d.OffsetM)
	}
	if d.Tolerance.MinShare != 1 || d.Tolerance.FarM != DefaultFarM || len(d.Tolerance.BandsM) != 3 {
		t.Errorf("defaults %+v", d.Tolerance)
	}
}

func TestParseDesignErrors(t *testing.T) {
	const head = "units: m\nnormal: up\n"                    // lines 1–2
	const tol = "tolerance: {source: \"s\", limit_mm: 10}\n" // one line
	const okPatch = "patches:\n  - id: A\n    corners: [[0, 0, 0], [1, 0, 0], [1, 1, 1], [0, 1, 0]]\n"
	tests := []struct {
		name string
		src  string
		want []string // substrings of the error
	}{
		{"empty", "", []string{"t.yaml:1:", "empty"}},
		{"syntax", "units: m\nnormal: [up\n", []string{"t.yaml:", "YAML syntax"}},
		{"not a mapping", "- 1\n", []string{"t.yaml:1:", "mapping"}},
		{"unknown top key", head + "tolerence: {}\n" + okPatch + tol, []string{"t.yaml:3:", `did you mean "tolerance"`}},
		{"unknown patch key", head + "patches:\n  - id: A\n    corner: [[0, 0, 0], [1, 0, 0], [1, 1, 1], [0, 1, 0]]\n" + tol, []string{"t.yaml:5:", `did you mean "corners"`}},
		{"missing tolerance", head + okPatch, []string{"t.yaml:1:", `missing key "tolerance"`}},
		{"missing limit", head + okPatch + "tolerance:\n  source: x\n", []string{"t.yaml:7:", `missing key "limit_mm"`}},
		{"missing source", head + okPatch + "tolerance:\n  limit_mm: 5\n", []string{"t.yaml:7:", `missing key "source"`}},
		{"empty source", head + okPatch + "tolerance:\n  source: \"  \"\n  limit_mm: 5\n", []string{"t.yaml:7:", "source is empty"}},
		{"negative limit", head + okPatch + "tolerance:\n  source: x\n  limit_mm: -5\n", []string{"t.yaml:8:", "must be > 0"}},
		{"nan limit", head + okPatch + "tolerance:\n  source: x\n  limit_mm: .nan\n", []string{"t.yaml:8:", "not a finite number"}},
		{"inf coordinate", head + "patches:\n  - id: A\n    corners: [[0, 0, 0], [1, 0, .inf], [1, 1, 1], [0, 1, 0]]\n" + tol, []string{"t.yaml:5:", "not a finite number"}},
		{"NaN word", head + "patches:\n  - id: A\n    corners: [[0, 0, 0], [1, 0, NaN], [1, 1, 1], [0, 1, 0]]\n" + tol, []string{"t.yaml:5:", "not a finite number"}},
		{"three corners", head + "patches:\n  - id: A\n    corners: [[0, 0, 0], [1, 0, 0], [1, 1, 1]]\n" + tol, []string{"t.yaml:5:", "corners needs 4 points of 3 numbers"}},
		{"two numbers", head + "patches:\n  - id: A\n    corners: [[0, 0], [1, 0, 0], [1, 1, 1], [0, 1, 0]]\n" + tol, []string{"t.yaml:5:", "corners needs 4 points of 3 numbers"}},
		{"bad unit", "units: furlong\nnormal: up\n" + okPatch + tol, []string{"t.yaml:1:", "furlong"}},
		{"bad normal", "units: m\nnormal: sideways\n" + okPatch + tol, []string{"t.yaml:2:", "up (+Z) or down"}},
		{"duplicate id", head + okPatch + "  - id: A\n    corners: [[0, 0, 0], [1, 0, 0], [1, 1, 1], [0, 1, 0]]\n" + tol, []string{"t.yaml:6:", "duplicate patch id", "line 4"}},
		{"duplicate key", head + "normal: up\n" + okPatch + tol, []string{"t.yaml:3:", "duplicate key"}},
		{"no patches", head + "patches: []\n" + tol, []string{"t.yaml:3:", "at least one patch"}},
		{"patch without geometry", head + "patches:\n  - id: A\n" + tol, []string{"t.yaml:4:", "needs corners"}},
		{"saddle z down", head + "patches:\n  - id: S\n    saddle: {k1: 0.02, k2: -0.01, origin: [0, 0, 0], axes: [[1, 0, 0], [0, -1, 0], [0, 0, -1]]}\n    corners: [[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0]]\n" + tol,
			[]string{"t.yaml:5:", "z axis points away from the normal side (normal: up)"}},
		{"saddle not orthonormal", head + "patches:\n  - id: S\n    saddle: {k1: 0.02, k2: -0.01, origin: [0, 0, 0], axes: [[1, 0.1, 0], [0, 1, 0], [0, 0, 1]]}\n    corners: [[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0]]\n" + tol,
			[]string{"t.yaml:5:", "axes not orthonormal"}},
		{"saddle k sign", head + "patches:\n  - id: S\n    saddle: {k1: -0.02, k2: -0.01, origin: [0, 0, 0], axes: [[1, 0, 0], [0, 1, 0], [0, 0, 1]]}\n    corners: [[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0]]\n" + tol,
			[]string{"t.yaml:5:", "k1 >= 0 >= k2"}},
		{"saddle missing k2", head + "patches:\n  - id: S\n    saddle: {k1: 0.02, origin: [0, 0, 0], axes: [[1, 0, 0], [0, 1, 0], [0, 0, 1]]}\n    corners: [[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0]]\n" + tol,
			[]string{"t.yaml:5:", `missing key "k2"`}},
		{"saddle without corners", head + "patches:\n  - id: S\n    saddle: {k1: 0.02, k2: -0.01, origin: [0, 0, 0], axes: [[1, 0, 0], [0, 1, 0], [0, 0, 1]]}\n" + tol,
			[]string{"t.yaml:4:", "needs corners"}},
		{"mesh unknown kind", head + "patches:\n  - id: M\n    mesh: beam.obj\n" + tol, []string{"t.yaml:5:", ".stl or LandXML"}},
		{"mesh with corners", head + "patches:\n  - id: M\n    mesh: beam.stl\n    corners: [[0, 0, 0], [1, 0, 0], [1, 1, 1], [0, 1, 0]]\n" + tol, []string{"t.yaml:5:", "no corners"}},
		{"bands descending", head + okPatch + "tolerance:\n  source: x\n  limit_mm: 5\n  bands_mm: [10, 5]\n", []string{"t.yaml:9:", "ascending"}},
		{"max below limit", head + okPatch + "tolerance:\n  source: x\n  limit_mm: 5\n  max_abs_mm: 4\n", []string{"t.yaml:9:", ">= limit_mm"}},
		{"far below limit", head + okPatch + "tolerance:\n  source: x\n  limit_mm: 5\n  far_mm: 4\n", []string{"t.yaml:9:", "far 4 mm must exceed"}},
		{"share above one", head + okPatch + "tolerance:\n  source: x\n  limit_mm: 5\n  min_share: 95\n", []string{"t.yaml:9:", "(0, 1]"}},
		{"alias", "units: &u m\nnormal: up\n" + okPatch + tol, []string{"t.yaml:1:", "aliases"}},
		{"negative margin", head + "margin_m: -1\n" + okPatch + tol, []string{"t.yaml:3:", ">= 0"}},
		{"bow tie", head + "patches:\n  - id: A\n    corners: [[0, 0, 0], [1, 1, 1], [1, 0, 0], [0, 1, 0]]\n" + tol, []string{"t.yaml:5:", "not in order around the edge"}},
		{"origin on corners patch", head + "patches:\n  - id: A\n    origin: [0, 0, 0]\n    corners: [[0, 0, 0], [1, 0, 0], [1, 1, 1], [0, 1, 0]]\n" + tol, []string{"t.yaml:5:", "mesh patches"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := ParseDesign("t.yaml", []byte(tt.src), t.TempDir())
			if err == nil {
				t.Fatalf("got nil error, want %q", tt.want)
			}
			var de *DesignError
			if !errors.As(err, &de) || de.Line < 1 {
				t.Errorf("error %v is not a *DesignError with a line", err)
			}
			for _, w := range tt.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("got %q, want it to contain %q", err, w)
				}
			}
		})
	}
}

func TestParseDesignMeshLoader(t *testing.T) {
	var got MeshSpec
	RegisterMeshLoader("stl", func(spec MeshSpec) (*LoadedMesh, error) {
		got = spec
		s := Saddle{K1: 0.01, K2: -0.01, Axes: [3]r3.Vec{{X: 1}, {Y: 1}, {Z: 1}}}
		return &LoadedMesh{Surface: &s, Triangles: 2, Notes: []string{"2 triangles"}}, nil
	})
	defer func() { meshMu.Lock(); delete(meshLoaders, "stl"); meshMu.Unlock() }()
	src := "units: mm\nnormal: up\npatches:\n  - id: EB\n    mesh: sub/beam.stl\n    origin: [1000, 2000, 3000]\ntolerance: {source: s, limit_mm: 5}\n"
	d, err := ParseDesign("t.yaml", []byte(src), "dir")
	if err != nil {
		t.Fatal(err)
	}
	want := MeshSpec{Path: filepath.Join("dir", "sub/beam.stl"), UnitMetres: 0.001, Origin: r3.Vec{X: 1, Y: 2, Z: 3}, NormalUp: true, MarginM: DefaultMarginM}
	if got != want || d.Patches[0].Kind != "mesh" || d.Patches[0].Notes[0] != "2 triangles" {
		t.Errorf("spec %+v, want %+v; patch %+v", got, want, d.Patches[0])
	}
}

// boundedPatch is a SaddlePatch with a Bounds method, standing in for a
// mesh surface (whose closest points lie in its vertex box).
type boundedPatch struct{ *SaddlePatch }

func (b boundedPatch) Bounds() (lo, hi r3.Vec) {
	lo, hi, _ = b.SaddlePatch.bounds()
	return lo, hi
}

func TestMeshPatchBounds(t *testing.T) {
	s := Saddle{K1: 0.02, K2: -0.02, Origin: r3.Vec{X: 1040, Y: 2000, Z: 10}, Axes: [3]r3.Vec{{X: 1}, {Y: 1}, {Z: 1}}}
	c := [4]r3.Vec{{X: 1035, Y: 1995}, {X: 1045, Y: 1995}, {X: 1045, Y: 2005}, {X: 1035, Y: 2005}}
	sp, err := NewSaddlePatch(s, c, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	RegisterMeshLoader("stl", func(MeshSpec) (*LoadedMesh, error) { return &LoadedMesh{Surface: boundedPatch{sp}}, nil })
	defer func() { meshMu.Lock(); delete(meshLoaders, "stl"); meshMu.Unlock() }()
	data, err := os.ReadFile(filepath.Join("testdata", "design_canopy.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	src := strings.Replace(string(data), "tolerance:", "  - id: M\n    mesh: m.stl\ntolerance:", 1)
	d, err := ParseDesign("t.yaml", []byte(src), ".")
	if err != nil {
		t.Fatal(err)
	}
	m := d.Patches[len(d.Patches)-1]
	if m.Kind != "mesh" || !m.hasBox {
		t.Fatalf("mesh patch %+v has no box", m)
	}
	if _, hi, _ := d.Extent(); hi.X < 1045 {
		t.Errorf("extent ends at %v, want the mesh included", hi)
	}
	rng := rand.New(rand.NewPCG(23, 24))
	for i := 0; i < 2000; i++ {
		x := r3.Vec{X: 995 + 55*rng.Float64(), Y: 1975 + 40*rng.Float64(), Z: 8 + 5*rng.Float64()}
		k1, p1, s1 := d.Classify(x)
		k2, p2, s2 := classifyAll(d, x)
		if k1 != k2 || s1 != s2 || p1 != p2 {
			t.Fatalf("x=%v: Classify %d %v, all patches %d %v", x, k1, s1, k2, s2)
		}
	}
}

// classifyAll is Classify without the bounding-box shortcut: the
// reference the shortcut must reproduce exactly.
func classifyAll(d *Design, x r3.Vec) (int, Projection, Status) {
	best, near := -1, -1
	var bp, np Projection
	for i := range d.Patches {
		p := d.Patches[i].Surface.Project(x)
		if p.Inside && (best < 0 || math.Abs(p.D) < math.Abs(bp.D)) {
			best, bp = i, p
		}
		if near < 0 || math.Abs(p.D) < math.Abs(np.D) {
			near, np = i, p
		}
	}
	if best < 0 {
		np.D -= d.OffsetM
		return -1, np, StatusOutside
	}
	bp.D -= d.OffsetM
	if math.Abs(bp.D) > d.Tolerance.FarM {
		return best, bp, StatusFar
	}
	return best, bp, StatusUsed
}

func TestClassify(t *testing.T) {
	d, err := LoadDesign(filepath.Join("testdata", "design_canopy.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	ne := d.Patches[0].Surface.(*BilinearPatch)
	tests := []struct {
		name  string
		p     r3.Vec
		patch int
		st    Status
		dev   float64
	}{
		{"on NE", r3.Add(ne.Param(0.5, 0.5), r3.Vec{Z: 0.004}), 0, StatusUsed, math.NaN()},
		{"on FLAT", r3.Vec{X: 1005, Y: 1985, Z: 9.012}, 2, StatusUsed, 0.012},
		{"below FLAT", r3.Vec{X: 1005, Y: 1985, Z: 8.99}, 2, StatusUsed, -0.010},
		{"far above FLAT", r3.Vec{X: 1005, Y: 1985, Z: 9.2}, 2, StatusFar, 0.2},
		{"off the design", r3.Vec{X: 900, Y: 1985, Z: 9}, -1, StatusOutside, math.NaN()},
		{"on SW saddle point", r3.Vec{X: 1020, Y: 2000, Z: 10.003}, 1, StatusUsed, 0.003},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			k, pr, st := d.Classify(tt.p)
			if k != tt.patch || st != tt.st || (!math.IsNaN(tt.dev) && math.Abs(pr.D-tt.dev) > 1e-9) {
				t.Errorf("got patch %d %v D %g, want %d %v %g", k, st, pr.D, tt.patch, tt.st, tt.dev)
			}
		})
	}
	// The bounding-box shortcut gives the same answer as projecting on
	// every patch, for points scattered over and around the design.
	rng := rand.New(rand.NewPCG(21, 22))
	d.OffsetM = 0.02
	for i := 0; i < 3000; i++ {
		x := r3.Vec{X: 990 + 45*rng.Float64(), Y: 1975 + 40*rng.Float64(), Z: 8 + 5*rng.Float64()}
		if i%2 == 0 { // near a surface
			j := rng.IntN(len(d.Patches))
			x = r3.Add(d.Patches[j].Surface.(interface{ Param(u, v float64) r3.Vec }).Param(rng.Float64()*1.2-0.1, rng.Float64()*1.2-0.1), r3.Vec{Z: rng.NormFloat64() * 0.1})
		}
		k1, p1, s1 := d.Classify(x)
		k2, p2, s2 := classifyAll(d, x)
		if k1 != k2 || s1 != s2 || p1 != p2 {
			t.Fatalf("x=%v: Classify %d %v %+v, all patches %d %v %+v", x, k1, s1, p1, k2, s2, p2)
		}
	}
	if n := testing.AllocsPerRun(100, func() { d.Classify(r3.Vec{X: 1005, Y: 1985, Z: 9}) }); n != 0 {
		t.Errorf("Classify allocates %v times", n)
	}
}

func TestClassifyConcurrent(t *testing.T) {
	// Classify is documented safe for concurrent use: four goroutines must
	// reproduce the serial results (run with -race to check for writes).
	d, err := LoadDesign(filepath.Join("testdata", "design_canopy.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(61, 62))
	pts := make([]r3.Vec, 2000)
	want := make([]float64, len(pts))
	for i := range pts {
		pts[i] = r3.Vec{X: 995 + 35*rng.Float64(), Y: 1975 + 40*rng.Float64(), Z: 8 + 5*rng.Float64()}
		_, pr, _ := d.Classify(pts[i])
		want[i] = pr.D
	}
	errs := make(chan string, 4)
	for g := 0; g < 4; g++ {
		go func() {
			for i, p := range pts {
				if _, pr, _ := d.Classify(p); pr.D != want[i] {
					errs <- fmt.Sprintf("point %d: %g, serial %g", i, pr.D, want[i])
					return
				}
			}
			errs <- ""
		}()
	}
	for g := 0; g < 4; g++ {
		if e := <-errs; e != "" {
			t.Error(e)
		}
	}
}

// FuzzDesign checks that ParseDesign never panics and that every error is
// a *DesignError with a line.
func FuzzDesign(f *testing.F) {
	seeds, _ := filepath.Glob(filepath.Join("testdata", "fuzz", "*.yaml"))
	for _, s := range seeds {
		b, err := os.ReadFile(s)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		d, err := ParseDesign("f.yaml", data, filepath.Join("testdata", "no-such-dir"))
		if err != nil {
			var de *DesignError
			if !errors.As(err, &de) || de.Line < 1 || !strings.HasPrefix(err.Error(), "f.yaml:") {
				t.Fatalf("error without a line: %v", err)
			}
			return
		}
		if len(d.Patches) == 0 || d.Tolerance.Validate() != nil {
			t.Fatalf("accepted an unusable design: %+v", d)
		}
	})
}

// BenchmarkClassify measures Design.Classify on points near the patches of
// the demonstration design (three patches, bounding boxes in use).
func BenchmarkClassify(b *testing.B) {
	d, err := LoadDesign(filepath.Join("testdata", "design_canopy.yaml"))
	if err != nil {
		b.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(41, 42))
	pts := make([]r3.Vec, 1<<12)
	for i := range pts {
		pt := d.Patches[i%len(d.Patches)].Surface.(interface{ Param(u, v float64) r3.Vec })
		pts[i] = r3.Add(pt.Param(rng.Float64(), rng.Float64()), r3.Vec{Z: 0.01 * rng.NormFloat64()})
	}
	b.ReportAllocs()
	b.ResetTimer()
	c0, ok := processCPU()
	var sum float64
	for i := 0; i < b.N; i++ {
		_, pr, _ := d.Classify(pts[i&(len(pts)-1)])
		sum += pr.D
	}
	sinkD = sum
	reportRates(b, c0, ok, b.N)
}

func ExampleParseDesign() {
	src := `structure: Demonstration roof
units: mm
normal: up
offset_mm: 0
patches:
  - id: A
    corners: [[0, 0, 0], [10000, 0, 0], [10000, 10000, 2000], [0, 10000, 0]]
tolerance:
  source: "Demonstration only"
  limit_mm: 10
  min_share: 0.95
`
	d, err := ParseDesign("roof.yaml", []byte(src), ".")
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(d.Patches[0].Kind, d.Patches[0].Notes[0])
	// z = 0.02·x·y: a point 12 mm vertically above the surface at
	// (5 m, 5 m), where the slope is 0.1 along x and y, lies
	// 12/√1.02 = 11.9 mm from it along the normal.
	k, pr, st := d.Classify(r3.Vec{X: 5, Y: 5, Z: 0.5 + 0.012})
	fmt.Printf("patch %s: %v, deviation %+.1f mm\n", d.Patches[k].ID, st, pr.D*1000)
	// Output:
	// corners saddle z = 0.01 x² -0.01 y² (1/m), saddle point (0.000, 0.000, 0.000) m
	// patch A: used, deviation +11.9 mm
}
