package mesh

import (
	"bufio"
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/hschendel/stl"
	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

// TestOpen3DReference compares Project with Open3D 0.16.1 (Debian
// python3-open3d 0.16.1+ds-2+b4) closest-point distances, signed by the
// closest triangle's normal, on saddle_patch.stl (testdata/README.md,
// open3d_reference.py). Open3D's scene is float32 on coordinates shifted
// by the mesh minimum (≤ 10 m), about 1e-6 m; the test allows 0.01 mm.
// The sign is compared where |d| > 0.01 mm.
func TestOpen3DReference(t *testing.T) {
	const tol = 1e-5
	origin := fixtureSaddle.Offset
	f, err := os.Open(filepath.Join("testdata", "saddle_patch.stl"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	m, _, err := ReadSTL(f, 1, origin, Options{NormalUp: true})
	if err != nil {
		t.Fatal(err)
	}
	rows := readCSV(t, filepath.Join("testdata", "open3d_reference.csv"))
	if len(rows) != 200 {
		t.Fatalf("got %d reference rows, want 200", len(rows))
	}
	outside := 0
	for i, r := range rows {
		p := r3.Add(origin, r3.Vec{X: r[0], Y: r[1], Z: r[2]})
		pr := m.Project(p)
		if math.Abs(pr.D-r[3]) > tol {
			t.Errorf("row %d: got D %.9f, want %.9f (Open3D) within %v", i, pr.D, r[3], tol)
		}
		if !pr.Inside {
			outside++
		}
	}
	// The last 20 rows lie beyond the patch edges (open3d_reference.py).
	if outside < 20 {
		t.Errorf("got %d points outside the extent, want at least the 20 beyond the edges", outside)
	}
}

func readCSV(t *testing.T, path string) [][4]float64 {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var rows [][4]float64
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := sc.Text()
		if strings.HasPrefix(line, "#") || strings.HasPrefix(line, "x,") {
			continue
		}
		var r [4]float64
		fs := strings.Split(line, ",")
		if len(fs) != 4 {
			t.Fatalf("%s: line %q: got %d fields, want 4", path, line, len(fs))
		}
		for k, s := range fs {
			if r[k], err = strconv.ParseFloat(s, 64); err != nil {
				t.Fatalf("%s: %v", path, err)
			}
		}
		rows = append(rows, r)
	}
	return rows
}

// repoRoot walks up to the directory holding go.mod.
func repoRoot(t *testing.T) string {
	t.Helper()
	dir, err := os.Getwd()
	if err != nil {
		t.Fatal(err)
	}
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			return dir
		}
		up := filepath.Dir(dir)
		if up == dir {
			t.Fatal("go.mod not found above the test directory")
		}
		dir = up
	}
}

// readPosColorPLY parses the binary little-endian PLY of the shared
// reference test_pos_color.ply: element vertex (float x y z, uchar
// red green blue alpha) then element face (list uchar int
// vertex_indices), as its PROVENANCE.md records.
func readPosColorPLY(t *testing.T, path string) ([]r3.Vec, [][3]int32) {
	t.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	end := bytes.Index(data, []byte("end_header\n"))
	if end < 0 {
		t.Fatalf("%s: no end_header", path)
	}
	var nv, nf int
	for _, line := range strings.Split(string(data[:end]), "\n") {
		fmt.Sscanf(line, "element vertex %d", &nv)
		fmt.Sscanf(line, "element face %d", &nf)
	}
	if !bytes.Contains(data[:end], []byte("format binary_little_endian 1.0")) || nv == 0 || nf == 0 {
		t.Fatalf("%s: not the recorded layout", path)
	}
	body := data[end+len("end_header\n"):]
	if len(body) != nv*16+nf*13 {
		t.Fatalf("%s: got %d body bytes, want %d", path, len(body), nv*16+nf*13)
	}
	v := make([]r3.Vec, nv)
	for i := range v {
		rec := body[16*i:]
		c := func(k int) float64 { return float64(math.Float32frombits(binary.LittleEndian.Uint32(rec[4*k:]))) }
		v[i] = r3.Vec{X: c(0), Y: c(1), Z: c(2)}
	}
	body = body[16*nv:]
	f := make([][3]int32, nf)
	for i := range f {
		rec := body[13*i:]
		if rec[0] != 3 {
			t.Fatalf("%s: face %d has %d corners, want 3", path, i, rec[0])
		}
		for k := range 3 {
			f[i][k] = int32(binary.LittleEndian.Uint32(rec[1+4*k:]))
		}
	}
	return v, f
}

// TestReferencePLYSphere uses ../shared/reference/ply/test_pos_color.ply
// (google/draco testdata, Apache-2.0; PROVENANCE.md): a closed,
// watertight mesh of 114 vertices and 224 faces, every edge used twice,
// every vertex on the unit sphere to ±2e-8. So a vertex is at distance 0,
// the centre is inside, and distances agree with |p| − 1 within the
// inscribed mesh's sag (sphereSag) plus the vertices' radial scatter.
func TestReferencePLYSphere(t *testing.T) {
	path := filepath.Join(repoRoot(t), "..", "shared", "reference", "ply", "test_pos_color.ply")
	if _, err := os.Stat(path); err != nil {
		t.Skipf("shared reference %s absent: %v", path, err)
	}
	v, f := readPosColorPLY(t, path)
	for i := range v {
		v[i] = r3.Add(v[i], siteOffset)
	}
	m, rep := mustNew(t, v, f, Options{NormalUp: true})
	if rep.Triangles != 224 || rep.Vertices != 114 || rep.BoundaryEdges != 0 || rep.NonManifoldEdges != 0 || rep.ClosedComponents != 1 {
		t.Fatalf("got report %+v, want 224 triangles, 114 vertices, closed, manifold", rep)
	}
	const scatter = 2e-8 // |v| ∈ [0.99999996, 1.00000002] (PROVENANCE.md)
	sag := sphereSag(v, f, 1, siteOffset) + scatter
	for i, p := range v {
		if d := m.Project(p).D; d != 0 {
			t.Errorf("vertex %d: got D %v, want 0", i, d)
		}
	}
	if d := m.Project(siteOffset).D; d >= 0 {
		t.Errorf("centre: got D %v, want negative (inside)", d)
	}
	g := lcg(114)
	for i := range 2000 {
		dir := g.unit()
		rho := g.in(0.2, 2)
		pr := m.Project(r3.Add(siteOffset, r3.Scale(rho, dir)))
		if want := rho - 1; math.Abs(pr.D-want) > sag+siteTol {
			t.Fatalf("point %d: got D %v, want %v within %v", i, pr.D, want, sag)
		}
	}
}

// TestLoadMeshRegistered goes through deviation.LoadMesh("stl", …).
func TestLoadMeshRegistered(t *testing.T) {
	spec := deviation.MeshSpec{Path: filepath.Join("testdata", "saddle_patch.stl"), UnitMetres: 1,
		Origin: fixtureSaddle.Offset, NormalUp: true}
	lm, err := deviation.LoadMesh("stl", spec)
	if err != nil {
		t.Fatal(err)
	}
	if lm.Triangles != 162 || len(lm.Warnings) != 0 || len(lm.Notes) == 0 {
		t.Fatalf("got %d triangles, warnings %q, notes %q; want 162, none, some", lm.Triangles, lm.Warnings, lm.Notes)
	}
	// Analytic truth: a point 0.1 m above the patch's centre.
	s := &fixtureSaddle
	c := s.Param(0.5, 0.5)
	n := s.Project(c).Normal
	if d := lm.Surface.Project(r3.Add(c, r3.Scale(0.1, n))).D; math.Abs(d-0.1) > fixtureChord {
		t.Errorf("got D %v, want 0.1 within the chord %v", d, fixtureChord)
	}
	spec.Path = filepath.Join("testdata", "missing.stl")
	if _, err := deviation.LoadMesh("stl", spec); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing file: got %v, want %v", err, os.ErrNotExist)
	}
}

// stlBytes encodes triangles as an STL file of the given kind.
func stlBytes(t testing.TB, ascii bool, tris ...[3][3]float32) []byte {
	t.Helper()
	s := stl.Solid{Name: "test", IsAscii: ascii}
	for _, tr := range tris {
		s.Triangles = append(s.Triangles, stl.Triangle{Vertices: [3]stl.Vec3{tr[0], tr[1], tr[2]}})
	}
	var buf bytes.Buffer
	if err := s.WriteAll(&buf); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

func TestReadSTL(t *testing.T) {
	sq := [][3][3]float32{{{0, 0, 0}, {1, 0, 0}, {1, 1, 0}}, {{0, 0, 0}, {1, 1, 0}, {0, 1, 0}}}
	far := [][3][3]float32{{{6e5, 0, 0}, {6e5 + 1, 0, 0}, {6e5 + 1, 1, 0}}}
	for _, tc := range []struct {
		name    string
		data    []byte
		unit    float64
		err     error
		errText string
		warning string
		tris    int
	}{
		{name: "ascii", data: stlBytes(t, true, sq...), unit: 1, tris: 2},
		{name: "binary", data: stlBytes(t, false, sq...), unit: 1, tris: 2},
		{name: "millimetres", data: stlBytes(t, false, sq...), unit: 1e-3, tris: 2},
		{name: "far from origin", data: stlBytes(t, false, far...), unit: 1, tris: 1, warning: "origin"},
		{name: "bad unit", data: stlBytes(t, false, sq...), unit: 0, err: ErrUnit},
		{name: "empty binary", data: stlBytes(t, false), unit: 1, err: ErrEmpty},
		{name: "truncated ascii", data: []byte("solid x\nfacet normal 0 0 1\nouter loop\nvertex 0 0"), unit: 1, errText: "reading STL"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			m, rep, err := ReadSTL(bytes.NewReader(tc.data), tc.unit, siteOffset, Options{NormalUp: true})
			switch {
			case tc.err != nil || tc.errText != "":
				if err == nil || tc.err != nil && !errors.Is(err, tc.err) || !strings.Contains(err.Error(), tc.errText) {
					t.Fatalf("got error %v, want %v %q", err, tc.err, tc.errText)
				}
				return
			case err != nil:
				t.Fatalf("got error %v", err)
			}
			if m.Triangles() != tc.tris || rep.Vertices != 2+tc.tris {
				t.Fatalf("got %d triangles, %d vertices, want %d, %d", m.Triangles(), rep.Vertices, tc.tris, 2+tc.tris)
			}
			if got := strings.Join(rep.Warnings, "\n"); tc.warning == "" && got != "" || !strings.Contains(got, tc.warning) {
				t.Fatalf("got warnings %q, want %q", rep.Warnings, tc.warning)
			}
			// Unit and origin: corner (1, 1, 0) in file units.
			if tc.tris == 2 {
				corner := r3.Add(siteOffset, r3.Vec{X: tc.unit, Y: tc.unit})
				if pr := m.Project(r3.Add(corner, r3.Vec{Z: 0.25})); pr.Foot != corner || pr.D != 0.25 {
					t.Errorf("got foot %v, D %v; want %v, 0.25", pr.Foot, pr.D, corner)
				}
			}
		})
	}
}

// FuzzLoadSTL feeds arbitrary bytes through decoding and validation: no
// panic, an accepted mesh answers a query with a finite distance, and
// read → Export → WriteSTL → read keeps every triangle but those that
// float32 rounding turns degenerate or duplicate (and the check is
// skipped when coordinates are too large for float32 about the centre).
// Seeds: testdata/fuzz/FuzzLoadSTL (small on purpose: a 20 KB seed slows
// the mutator to a crawl).
func FuzzLoadSTL(f *testing.F) {
	f.Fuzz(func(t *testing.T, data []byte) {
		m, _, err := ReadSTL(bytes.NewReader(data), 1, r3.Vec{}, Options{NormalUp: true})
		if err != nil {
			return
		}
		lo, hi := m.Bounds()
		p := r3.Add(r3.Scale(0.5, r3.Add(lo, hi)), r3.Vec{Z: 1})
		if d := m.Project(p).D; math.IsNaN(d) || math.IsInf(d, 0) {
			t.Fatalf("got D %v for an accepted mesh", d)
		}
		v, tris := m.Export()
		path := filepath.Join(t.TempDir(), "round.stl")
		if err := WriteSTL(path, m.Centre(), v, tris); errors.Is(err, ErrPrecision) {
			return
		} else if err != nil {
			t.Fatalf("WriteSTL: %v", err)
		}
		fh, err := os.Open(path)
		if err != nil {
			t.Fatal(err)
		}
		defer fh.Close()
		// float32 rounding may collapse slivers or weld near vertices:
		// those triangles come back as degenerate or duplicate.
		m2, rep2, err := ReadSTL(fh, 1, m.Centre(), Options{NormalUp: true})
		switch {
		case errors.Is(err, ErrNonOrientable):
			return
		case errors.Is(err, ErrEmpty):
			if rep2.Degenerate+rep2.Duplicate != m.Triangles() {
				t.Fatalf("reading back: %v with %d degenerate, %d duplicate of %d", err, rep2.Degenerate, rep2.Duplicate, m.Triangles())
			}
		case err != nil:
			t.Fatalf("reading back: %v", err)
		case m2.Triangles()+rep2.Degenerate+rep2.Duplicate != m.Triangles():
			t.Fatalf("read back %d triangles (+%d degenerate, %d duplicate), want %d", m2.Triangles(), rep2.Degenerate, rep2.Duplicate, m.Triangles())
		}
	})
}
