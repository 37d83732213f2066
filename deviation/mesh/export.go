package mesh

import (
	"bufio"
	"fmt"
	"math"
	"os"
	"path/filepath"

	"github.com/hschendel/stl"
	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

// Parametric is an analytic patch: Param maps [0, 1]² onto the patch
// (site frame, metres) and Project measures a point against it.
type Parametric interface {
	Param(u, v float64) r3.Vec
	Project(p r3.Vec) deviation.Projection
}

// Tessellation limits.
const (
	// maxGrid is the largest number of cells per side Tessellate tries
	// (2·4096² ≈ 3.4e7 triangles).
	maxGrid = 4096
	// fdStep is the (u, v) step of the second-difference estimate; a
	// power of two so that u ± fdStep is exact. Central second
	// differences are exact for quadratic polynomials.
	fdStep = 1.0 / 64
)

// Tessellate returns a uniform n×n grid of triangles (two per (u, v)
// cell) over s whose distance from the true surface is at most chordM
// metres at every triangle centroid and edge midpoint, with n chosen
// from a sag bound and then refined by those checks.
//
// Sag bound. The linear interpolant L of S over a triangle whose
// smallest enclosing disc in (u, v) has radius R satisfies
//
//	|S(x) − L(x)| ≤ ½·R²·λ,   λ = max over unit directions d of |D²S[d, d]|
//
// (Waldron 1998, the simplex interpolation bound, from memory; in one
// dimension it is the familiar h²/8·max|f″|). Here λ is bounded by the
// largest eigenvalue of [[|S_uu|, |S_uv|], [|S_uv|, |S_vv|]], estimated
// by central second differences at nine (u, v) samples. For a half cell
// of side 1/n, R² = 1/(2n²), so n = ⌈√(λ / (4·chordM))⌉. For a quadric
// patch written as a polynomial of degree ≤ 2 in (u, v) (the bilinear
// hypar through four corners, z = K₁x² + K₂y² over an affine (x, y)) the
// second derivatives are constant, the differences exact and the bound
// rigorous; otherwise it is an estimate and the checks decide: while the
// largest |Project(q).D| over centroids and edge midpoints exceeds chordM,
// n grows by a quarter.
//
// Each triangle is wound so that its normal agrees with s.Project's
// Normal at its centroid (the patch's positive side). Tessellate fails
// with ErrChord when chordM is not positive or would need more than
// 4096 cells per side, and with ErrNonFinite when Param is not finite.
func Tessellate(s Parametric, chordM float64) ([]r3.Vec, [][3]int32, error) {
	if !(chordM > 0) || math.IsInf(chordM, 0) {
		return nil, nil, fmt.Errorf("%w: chord %v m", ErrChord, chordM)
	}
	lambda := 0.0
	for _, u := range []float64{fdStep, 0.5, 1 - fdStep} {
		for _, v := range []float64{fdStep, 0.5, 1 - fdStep} {
			c := s.Param(u, v)
			h2 := fdStep * fdStep
			suu := r3.Norm(r3.Sub(r3.Add(s.Param(u+fdStep, v), s.Param(u-fdStep, v)), r3.Scale(2, c))) / h2
			svv := r3.Norm(r3.Sub(r3.Add(s.Param(u, v+fdStep), s.Param(u, v-fdStep)), r3.Scale(2, c))) / h2
			suv := r3.Norm(r3.Sub(r3.Add(s.Param(u+fdStep, v+fdStep), s.Param(u-fdStep, v-fdStep)),
				r3.Add(s.Param(u+fdStep, v-fdStep), s.Param(u-fdStep, v+fdStep)))) / (4 * h2)
			// Largest eigenvalue of the symmetric 2×2 [[suu, suv], [suv, svv]].
			l := (suu+svv)/2 + math.Hypot((suu-svv)/2, suv)
			if math.IsNaN(l) || math.IsInf(l, 0) {
				return nil, nil, fmt.Errorf("%w: Param(%v, %v) and its neighbours", ErrNonFinite, u, v)
			}
			lambda = math.Max(lambda, l)
		}
	}
	n := max(1, int(math.Ceil(math.Sqrt(lambda/(4*chordM)))))
	for n <= maxGrid {
		verts, tris, worst, err := grid2(s, n)
		if err != nil {
			return nil, nil, err
		}
		if worst <= chordM {
			return verts, tris, nil
		}
		n = n + n/4 + 1
	}
	return nil, nil, fmt.Errorf("%w: %v m needs more than %d cells per side", ErrChord, chordM, maxGrid)
}

// grid2 builds the n×n grid, orients it and returns the largest distance
// to s at triangle centroids and edge midpoints.
func grid2(s Parametric, n int) ([]r3.Vec, [][3]int32, float64, error) {
	verts := make([]r3.Vec, 0, (n+1)*(n+1))
	for i := 0; i <= n; i++ {
		for j := 0; j <= n; j++ {
			p := s.Param(float64(i)/float64(n), float64(j)/float64(n))
			if !finite(p.X) || !finite(p.Y) || !finite(p.Z) {
				return nil, nil, 0, fmt.Errorf("%w: Param(%d/%d, %d/%d) = %v", ErrNonFinite, i, n, j, n, p)
			}
			verts = append(verts, p)
		}
	}
	id := func(i, j int) int32 { return int32(i*(n+1) + j) }
	tris := make([][3]int32, 0, 2*n*n)
	worst := 0.0
	for i := range n {
		for j := range n {
			for _, t := range [2][3]int32{{id(i, j), id(i+1, j), id(i+1, j+1)}, {id(i, j), id(i+1, j+1), id(i, j+1)}} {
				a, b, c := verts[t[0]], verts[t[1]], verts[t[2]]
				cen := r3.Scale(1.0/3, r3.Add(a, r3.Add(b, c)))
				pr := s.Project(cen)
				worst = math.Max(worst, math.Abs(pr.D))
				for _, m := range [3]r3.Vec{r3.Add(a, b), r3.Add(b, c), r3.Add(c, a)} {
					worst = math.Max(worst, math.Abs(s.Project(r3.Scale(0.5, m)).D))
				}
				if r3.Dot(r3.Cross(r3.Sub(b, a), r3.Sub(c, a)), pr.Normal) < 0 {
					t[1], t[2] = t[2], t[1]
				}
				tris = append(tris, t)
			}
		}
	}
	return verts, tris, worst, nil
}

// WriteSTL writes the triangles as a binary STL at path, with vertex
// coordinates relative to origin (site frame, metres; the file stores
// v − origin in float32 and names the origin in its 80-byte header).
// Facet normals are computed in float64 from the site vertices. The file
// is written under a temporary name in the same directory and renamed
// when complete, so a reader never sees a partial file.
//
// WriteSTL fails with ErrIndex for a bad triangle, ErrNonFinite for a bad
// vertex, and ErrPrecision when a relative coordinate is so large that
// float32 spacing exceeds 0.1 mm (choose an origin nearer the mesh).
func WriteSTL(path string, origin r3.Vec, verts []r3.Vec, tris [][3]int32) (err error) {
	solid := &stl.Solid{Triangles: make([]stl.Triangle, len(tris))}
	header := fmt.Sprintf("saddlecheck mesh; metres; origin %.3f %.3f %.3f", origin.X, origin.Y, origin.Z)
	solid.BinaryHeader = make([]byte, 80)
	copy(solid.BinaryHeader, header)
	for t, f := range tris {
		var tri stl.Triangle
		var p [3]r3.Vec
		for k, i := range f {
			if i < 0 || int(i) >= len(verts) {
				return fmt.Errorf("%w: triangle %d uses vertex %d of %d", ErrIndex, t, i, len(verts))
			}
			v := verts[i]
			if !finite(v.X) || !finite(v.Y) || !finite(v.Z) {
				return fmt.Errorf("%w: vertex %d is %v", ErrNonFinite, i, v)
			}
			p[k] = v
			d := r3.Sub(v, origin)
			if big := math.Max(math.Abs(d.X), math.Max(math.Abs(d.Y), math.Abs(d.Z))); big/(1<<23) > precisionLimitM {
				return fmt.Errorf("%w: vertex %d is %.0f m from the origin", ErrPrecision, i, big)
			}
			tri.Vertices[k] = stl.Vec3{float32(d.X), float32(d.Y), float32(d.Z)}
		}
		n := r3.Unit(r3.Cross(r3.Sub(p[1], p[0]), r3.Sub(p[2], p[0])))
		tri.Normal = stl.Vec3{float32(n.X), float32(n.Y), float32(n.Z)}
		solid.Triangles[t] = tri
	}
	tmp, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".*.tmp")
	if err != nil {
		return err
	}
	defer func() {
		if err != nil {
			tmp.Close()
			os.Remove(tmp.Name())
		}
	}()
	if err = tmp.Chmod(0o644); err != nil { // CreateTemp makes 0600
		return err
	}
	bw := bufio.NewWriter(tmp)
	if err = solid.WriteAll(bw); err != nil {
		return err
	}
	if err = bw.Flush(); err != nil {
		return err
	}
	if err = tmp.Close(); err != nil {
		return err
	}
	return os.Rename(tmp.Name(), path)
}
