package mesh

import (
	"fmt"
	"io"
	"math"
	"os"

	"github.com/hschendel/stl"
	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

func init() {
	deviation.RegisterMeshLoader("stl", LoadSTL)
}

// precisionLimitM is the float32 coordinate spacing above which the STL
// loader warns: 0.1 mm, a tenth of the finest deviation class a report
// prints (common practice). Float32 spacing at magnitude m is m·2⁻²³
// (IEEE 754 binary32, 24-bit significand), so the limit is reached at
// about 839 m in metre units.
const precisionLimitM = 1e-4

// maxPrealloc caps the triangle capacity reserved from a file's own count.
const maxPrealloc = 1 << 20

// LoadSTL opens the STL file of spec (ASCII or binary), converts it with
// spec.UnitMetres, offsets it by spec.Origin and builds the mesh with
// spec's side and margin. It is the "stl" loader of package deviation.
func LoadSTL(spec deviation.MeshSpec) (*deviation.LoadedMesh, error) {
	f, err := os.Open(spec.Path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	m, rep, err := ReadSTL(f, spec.UnitMetres, spec.Origin, Options{NormalUp: spec.NormalUp, MarginM: spec.MarginM})
	if err != nil {
		return nil, fmt.Errorf("%s: %w", spec.Path, err)
	}
	rep.note("mesh origin (%.3f, %.3f, %.3f) m, unit %g m", spec.Origin.X, spec.Origin.Y, spec.Origin.Z, spec.UnitMetres)
	return &deviation.LoadedMesh{Surface: m, Triangles: m.Triangles(), Notes: rep.Notes, Warnings: rep.Warnings}, nil
}

// ReadSTL reads an ASCII or binary STL from r (which must be at its
// start), welds vertices with bit-identical float32 coordinates, converts
// them to site metres as v·unitMetres + origin in float64, and builds the
// mesh with New. The report adds the welding count and the float32
// precision of the source, with a warning when its spacing exceeds 0.1 mm.
//
// Errors from the STL decoder are returned wrapped; ErrUnit when
// unitMetres is not positive and finite; then those of New.
func ReadSTL(r io.ReadSeeker, unitMetres float64, origin r3.Vec, opt Options) (*Mesh, *Report, error) {
	if !(unitMetres > 0) || math.IsInf(unitMetres, 0) {
		return nil, &Report{}, fmt.Errorf("%w: got %v", ErrUnit, unitMetres)
	}
	w := &welder{index: map[stl.Vec3]int32{}}
	if err := stl.CopyAll(r, w); err != nil {
		return nil, &Report{}, fmt.Errorf("reading STL: %w", err)
	}
	verts := make([]r3.Vec, len(w.raw))
	big := 0.0
	for i, v := range w.raw {
		for _, c := range v {
			big = math.Max(big, math.Abs(float64(c)))
		}
		verts[i] = r3.Vec{
			X: float64(v[0])*unitMetres + origin.X,
			Y: float64(v[1])*unitMetres + origin.Y,
			Z: float64(v[2])*unitMetres + origin.Z,
		}
	}
	m, rep, err := New(verts, w.tris, opt)
	rep.Welded = 3*len(w.tris) - len(w.raw)
	rep.Float32SpacingM = big * unitMetres / (1 << 23)
	if err != nil {
		return nil, rep, err
	}
	if rep.Float32SpacingM > precisionLimitM {
		rep.warn("STL coordinates reach %.6g file units, where float32 spacing is %.3g mm: give the mesh relative to an `origin` near it to keep sub-0.1 mm precision",
			big, 1e3*rep.Float32SpacingM)
	}
	if w.ascii {
		rep.note("ASCII STL (read as float32, like binary)")
	}
	return m, rep, nil
}

// welder receives the decoder's triangles and welds bit-identical
// vertices (STL repeats every shared vertex verbatim, so exact float32
// equality is the weld criterion). It implements stl.Writer.
type welder struct {
	index map[stl.Vec3]int32
	raw   []stl.Vec3
	tris  [][3]int32
	ascii bool
}

func (w *welder) SetName(string)         {}
func (w *welder) SetBinaryHeader([]byte) {}
func (w *welder) SetASCII(a bool)        { w.ascii = a }

func (w *welder) SetTriangleCount(n uint32) {
	// The binary decoder only reaches here when the count matches the
	// file size; cap anyway.
	c := min(int(n), maxPrealloc)
	w.tris = make([][3]int32, 0, c)
	w.raw = make([]stl.Vec3, 0, c/2+3)
}

func (w *welder) AppendTriangle(t stl.Triangle) {
	var f [3]int32
	for k, v := range t.Vertices {
		// −0 and +0 are the same point.
		for c := range v {
			if v[c] == 0 {
				v[c] = 0
			}
		}
		i, ok := w.index[v]
		if !ok {
			i = int32(len(w.raw))
			w.raw = append(w.raw, v)
			w.index[v] = i
		}
		f[k] = i
	}
	w.tris = append(w.tris, f)
}
