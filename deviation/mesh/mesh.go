package mesh

import (
	"cmp"
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

var _ deviation.Surface = (*Mesh)(nil)

// Options control how New validates and orients a mesh.
type Options struct {
	// NormalUp picks the positive side of open components: true makes the
	// area-weighted mean normal point to +Z, false to −Z. Closed
	// components are always oriented outward.
	NormalUp bool
	// MarginM is the containment margin in metres: a point whose closest
	// point is on the mesh boundary still counts as Inside when its
	// offset along the surface beyond the boundary is below MarginM.
	// Zero means the boundary itself is outside.
	MarginM float64
}

// Report says what New found and changed. Counts refer to the triangles
// given to New (after the loader's vertex welding).
type Report struct {
	Vertices, Triangles int // kept after validation
	Degenerate          int // zero-area triangles dropped
	Duplicate           int // triangles with the same three vertices as an earlier one, dropped
	BoundaryEdges       int // edges used by exactly one triangle
	NonManifoldEdges    int // edges used by more than two triangles
	Components          int // components connected through edges shared by exactly two triangles
	ClosedComponents    int // components without boundary edges
	Reoriented          int // triangles whose winding was reversed
	Welded              int // vertices merged by the loader (0 from New)
	// Float32SpacingM is the largest float32 coordinate spacing of the
	// source in metres (set by the STL loader, 0 otherwise).
	Float32SpacingM  float64
	Min, Max, Centre r3.Vec // site bounding box and internal origin
	// BytesPerTriangle is the memory held by the Mesh divided by Triangles.
	BytesPerTriangle float64
	Notes, Warnings  []string
}

func (r *Report) note(format string, args ...any) {
	r.Notes = append(r.Notes, fmt.Sprintf(format, args...))
}

func (r *Report) warn(format string, args ...any) {
	r.Warnings = append(r.Warnings, fmt.Sprintf(format, args...))
}

// Mesh is a validated, consistently oriented triangle mesh with a bounding
// volume hierarchy, ready for closest-point queries. It is immutable after
// New and safe for concurrent use.
type Mesh struct {
	centre r3.Vec
	margin float64
	// Per triangle, in hierarchy leaf order.
	vid [][3]int32 // vertex indices
	// ring[3t+k] is the next half-edge around the undirected edge of
	// half-edge k of triangle t (from vertex k to vertex k+1); a boundary
	// half-edge points to itself.
	ring []int32
	// Per vertex.
	vert   []r3.Vec // relative to centre, in order of first use
	vnorm  []r3.Vec // unit angle-weighted pseudonormal
	vbound []bool   // on a boundary edge
	nodes  []node
	disks  []disk // per node, set for leaves
	min    r3.Vec
	max    r3.Vec
}

// Triangles returns the number of triangles.
func (m *Mesh) Triangles() int { return len(m.vid) }

// Bounds returns the site bounding box of the mesh.
func (m *Mesh) Bounds() (min, max r3.Vec) { return m.min, m.max }

// Centre returns the internal origin (site frame).
func (m *Mesh) Centre() r3.Vec { return m.centre }

// Export returns the mesh as validated and oriented: vertices in the
// site frame and triangles wound towards the positive side (in the
// hierarchy's order), ready for WriteSTL.
func (m *Mesh) Export() ([]r3.Vec, [][3]int32) {
	v := make([]r3.Vec, len(m.vert))
	for i, p := range m.vert {
		v[i] = r3.Add(p, m.centre)
	}
	return v, slices.Clone(m.vid)
}

// SizeBytes returns the memory held by the mesh's slices.
func (m *Mesh) SizeBytes() int {
	return len(m.vert)*24 + len(m.vid)*12 + len(m.ring)*4 +
		len(m.vnorm)*24 + len(m.vbound) + len(m.nodes)*32 + len(m.disks)*32
}

// degenerateRel is the relative area below which a triangle counts as
// degenerate: |AB × AC| ≤ degenerateRel·ℓ², ℓ its longest edge. 1e-12
// corresponds to an altitude of 1e-12·ℓ (a micrometre on a megametre
// edge), far below survey resolution yet above float64 rounding of the
// cross product of centred coordinates (≈ 1e-16·ℓ²). Common practice.
const degenerateRel = 1e-12

// New builds a mesh from vertices (site frame, metres, already offset)
// and triangles given as vertex indices. It drops degenerate and
// duplicate triangles, counts boundary and non-manifold edges, makes the
// winding consistent within each edge-connected component by propagation
// (breadth first) across edges shared by exactly two triangles, and turns
// each component towards the side chosen by opt (see the package doc).
// Vertices are used as given: callers weld coincident vertices first.
//
// New fails with ErrIndex, ErrNonFinite, ErrEmpty or ErrNonOrientable.
func New(vertices []r3.Vec, tris [][3]int32, opt Options) (*Mesh, *Report, error) {
	rep := &Report{}
	if len(tris) == 0 {
		return nil, rep, fmt.Errorf("%w: the mesh has no triangles", ErrEmpty)
	}
	lo := r3.Vec{X: math.Inf(1), Y: math.Inf(1), Z: math.Inf(1)}
	hi := r3.Scale(-1, lo)
	for i, v := range vertices {
		if !finite(v.X) || !finite(v.Y) || !finite(v.Z) {
			return nil, rep, fmt.Errorf("%w: vertex %d is %v", ErrNonFinite, i, v)
		}
	}
	for t, f := range tris {
		for _, i := range f {
			if i < 0 || int(i) >= len(vertices) {
				return nil, rep, fmt.Errorf("%w: triangle %d uses vertex %d of %d", ErrIndex, t, i, len(vertices))
			}
			lo, hi = minVec(lo, vertices[i]), maxVec(hi, vertices[i])
		}
	}
	centre := r3.Scale(0.5, r3.Add(lo, hi))
	local := make([]r3.Vec, len(vertices))
	for i, v := range vertices {
		local[i] = r3.Sub(v, centre)
	}

	kept := keepValid(local, tris, rep)
	if len(kept) == 0 {
		return nil, rep, fmt.Errorf("%w: all %d triangles are degenerate", ErrEmpty, len(tris))
	}
	if err := orient(local, kept, opt.NormalUp, rep); err != nil {
		return nil, rep, err
	}

	m := &Mesh{centre: centre, margin: opt.MarginM, min: lo, max: hi}
	m.buildHierarchy(local, kept)
	m.ring = buildRing(m.vid)
	m.vertexNormals()

	rep.Triangles = len(m.vid)
	rep.Vertices = len(m.vert)
	rep.Min, rep.Max, rep.Centre = lo, hi, centre
	rep.BytesPerTriangle = float64(m.SizeBytes()) / float64(len(m.vid))
	rep.note("%d triangles, %d vertices, %d component(s) (%d closed)", rep.Triangles, rep.Vertices, rep.Components, rep.ClosedComponents)
	rep.note("bounding box (%.3f, %.3f, %.3f)–(%.3f, %.3f, %.3f) m", lo.X, lo.Y, lo.Z, hi.X, hi.Y, hi.Z)
	if rep.BoundaryEdges > 0 {
		rep.note("%d boundary edges: points beyond them are outside the patch", rep.BoundaryEdges)
	}
	if rep.Reoriented > 0 {
		rep.note("%d triangles had their winding reversed (consistent orientation, towards the positive side)", rep.Reoriented)
	}
	if rep.Degenerate > 0 {
		rep.warn("%d degenerate (zero-area) triangles dropped", rep.Degenerate)
	}
	if rep.Duplicate > 0 {
		rep.warn("%d duplicate triangles dropped", rep.Duplicate)
	}
	if rep.NonManifoldEdges > 0 {
		rep.warn("%d non-manifold edges (used by more than two triangles): distances near them may have the wrong sign", rep.NonManifoldEdges)
	}
	return m, rep, nil
}

func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

// minVec and maxVec are componentwise; the inputs are finite (New
// checks), so the builtin min and max need no NaN care.
func minVec(a, b r3.Vec) r3.Vec {
	return r3.Vec{X: min(a.X, b.X), Y: min(a.Y, b.Y), Z: min(a.Z, b.Z)}
}

func maxVec(a, b r3.Vec) r3.Vec {
	return r3.Vec{X: max(a.X, b.X), Y: max(a.Y, b.Y), Z: max(a.Z, b.Z)}
}

// keepValid returns the triangles that are neither degenerate nor a
// repeat (same vertex set, either winding) of an earlier one.
func keepValid(local []r3.Vec, tris [][3]int32, rep *Report) [][3]int32 {
	type key struct {
		s [3]int32
		i int32
	}
	keys := make([]key, 0, len(tris))
	for i, f := range tris {
		a, b, c := local[f[0]], local[f[1]], local[f[2]]
		l2 := math.Max(r3.Norm2(r3.Sub(b, a)), math.Max(r3.Norm2(r3.Sub(c, b)), r3.Norm2(r3.Sub(a, c))))
		if f[0] == f[1] || f[1] == f[2] || f[2] == f[0] || !(norm(r3.Cross(r3.Sub(b, a), r3.Sub(c, a))) > degenerateRel*l2) {
			rep.Degenerate++
			continue
		}
		s := f
		slices.Sort(s[:])
		keys = append(keys, key{s, int32(i)})
	}
	slices.SortFunc(keys, func(x, y key) int {
		for k := range 3 {
			if c := cmp.Compare(x.s[k], y.s[k]); c != 0 {
				return c
			}
		}
		return cmp.Compare(x.i, y.i)
	})
	keep := make([]bool, len(tris))
	for j, k := range keys {
		if j > 0 && keys[j-1].s == k.s {
			rep.Duplicate++
			continue
		}
		keep[k.i] = true
	}
	out := make([][3]int32, 0, len(keys))
	for i, f := range tris {
		if keep[i] {
			out = append(out, f)
		}
	}
	return out
}

// halfEdge is an edge of a triangle keyed by its undirected vertex pair.
type halfEdge struct {
	key uint64 // min vertex << 32 | max vertex
	h   int32  // 3·triangle + slot
}

// halfEdges returns every half-edge sorted by undirected key, so that the
// half-edges of one edge are adjacent.
func halfEdges(vid [][3]int32) []halfEdge {
	he := make([]halfEdge, 3*len(vid))
	for t, f := range vid {
		for k := range 3 {
			a, b := f[k], f[(k+1)%3]
			if a > b {
				a, b = b, a
			}
			he[3*t+k] = halfEdge{uint64(a)<<32 | uint64(b), int32(3*t + k)}
		}
	}
	return radixSort(he)
}

// radixSort sorts half-edges by key, least significant byte first
// (stable, so equal keys keep their half-edge order), skipping bytes
// that all keys share. O(n) per pass against O(n log n) comparisons.
func radixSort(a []halfEdge) []halfEdge {
	var or, and uint64 = 0, ^uint64(0)
	for _, e := range a {
		or |= e.key
		and &= e.key
	}
	tmp := make([]halfEdge, len(a))
	for shift := uint(0); shift < 64; shift += 8 {
		if (or^and)>>shift&0xff == 0 {
			continue // every key has the same byte here
		}
		var count [257]int
		for _, e := range a {
			count[e.key>>shift&0xff+1]++
		}
		for i := 1; i < len(count); i++ {
			count[i] += count[i-1]
		}
		for _, e := range a {
			b := e.key >> shift & 0xff
			tmp[count[b]] = e
			count[b]++
		}
		a, tmp = tmp, a
	}
	return a
}

// buildRing links the half-edges of each undirected edge in a cycle.
func buildRing(vid [][3]int32) []int32 {
	he := halfEdges(vid)
	ring := make([]int32, len(he))
	for i := 0; i < len(he); {
		j := i + 1
		for j < len(he) && he[j].key == he[i].key {
			j++
		}
		for k := i; k < j; k++ {
			next := k + 1
			if next == j {
				next = i
			}
			ring[he[k].h] = he[next].h
		}
		i = j
	}
	return ring
}

// orient makes the winding consistent per component and turns each
// component to the requested side, in place.
func orient(local []r3.Vec, tris [][3]int32, up bool, rep *Report) error {
	he := halfEdges(tris)
	// nb[h] is the half-edge across a manifold edge, or −1.
	nb := make([]int32, len(he))
	for i := range nb {
		nb[i] = -1
	}
	for i := 0; i < len(he); {
		j := i + 1
		for j < len(he) && he[j].key == he[i].key {
			j++
		}
		switch j - i {
		case 1:
			rep.BoundaryEdges++
		case 2:
			nb[he[i].h], nb[he[i+1].h] = he[i+1].h, he[i].h
		default:
			rep.NonManifoldEdges++
		}
		i = j
	}
	boundary := make([]bool, len(tris))
	for i := 0; i < len(he); {
		j := i + 1
		for j < len(he) && he[j].key == he[i].key {
			j++
		}
		if j-i == 1 {
			boundary[he[i].h/3] = true
		}
		i = j
	}

	comp := make([]int32, len(tris))
	for i := range comp {
		comp[i] = -1
	}
	flip := make([]bool, len(tris)) // relative to the seed of its component
	queue := make([]int32, 0, 64)
	var members []int32
	for seed := range tris {
		if comp[seed] >= 0 {
			continue
		}
		c := int32(rep.Components)
		rep.Components++
		comp[seed] = c
		queue = append(queue[:0], int32(seed))
		members = members[:0]
		for len(queue) > 0 {
			t := queue[0]
			queue = queue[1:]
			members = append(members, t)
			for k := range int32(3) {
				o := nb[3*t+k]
				if o < 0 {
					continue
				}
				u := o / 3
				// Same direction of the shared edge in both (after the
				// flips so far) means u must be flipped relative to t.
				same := tris[t][k] == tris[u][o%3]
				want := flip[t] != same
				if comp[u] < 0 {
					comp[u] = c
					flip[u] = want
					queue = append(queue, u)
				} else if flip[u] != want {
					return fmt.Errorf("%w: component %d (triangle %d and its neighbour %d cannot agree)", ErrNonOrientable, c, t, u)
				}
			}
		}
		// Decide the side of the whole component.
		var area r3.Vec
		var vol float64
		closed := true
		for _, t := range members {
			f := tris[t]
			a, b, cc := local[f[0]], local[f[1]], local[f[2]]
			n := r3.Cross(r3.Sub(b, a), r3.Sub(cc, a))
			v := r3.Dot(a, r3.Cross(b, cc))
			if flip[t] {
				n, v = r3.Scale(-1, n), -v
			}
			area = r3.Add(area, n)
			vol += v
			if boundary[t] {
				closed = false
			}
		}
		var reverse bool
		if closed {
			rep.ClosedComponents++
			reverse = vol < 0
		} else {
			reverse = (area.Z < 0) == up
			if math.Abs(area.Z) <= 1e-6*norm(area) {
				rep.warn("component %d has no clear up or down side (mean normal horizontal): its file orientation is kept", c)
				reverse = false
			}
		}
		for _, t := range members {
			if flip[t] != reverse {
				tris[t][1], tris[t][2] = tris[t][2], tris[t][1]
				rep.Reoriented++
			}
		}
	}
	return nil
}

// vertexNormals computes the angle-weighted pseudonormal of every vertex
// (Bærentzen & Aanæs 2005, eq. 2: Σ αᵢ nᵢ over the incident faces, αᵢ the
// face's interior angle at the vertex) and marks boundary vertices.
func (m *Mesh) vertexNormals() {
	m.vnorm = make([]r3.Vec, len(m.vert))
	m.vbound = make([]bool, len(m.vert))
	for t := range m.vid {
		p := m.corners(int32(t))
		n := m.faceNormal(int32(t))
		for k := range 3 {
			e1 := r3.Sub(p[(k+1)%3], p[k])
			e2 := r3.Sub(p[(k+2)%3], p[k])
			alpha := math.Atan2(norm(r3.Cross(e1, e2)), r3.Dot(e1, e2))
			i := m.vid[t][k]
			m.vnorm[i] = r3.Add(m.vnorm[i], r3.Scale(alpha, n))
			if m.ring[3*t+k] == int32(3*t+k) {
				m.vbound[i] = true
				m.vbound[m.vid[t][(k+1)%3]] = true
			}
		}
	}
	for i, v := range m.vnorm {
		if l := norm(v); l > 0 {
			m.vnorm[i] = r3.Scale(1/l, v)
		}
	}
}

// norm is |v| (r3.Norm goes through math.Hypot, several times slower;
// mesh coordinates are centred and far from overflow).
func norm(v r3.Vec) float64 { return math.Sqrt(v.X*v.X + v.Y*v.Y + v.Z*v.Z) }

// unit is v/|v|, or v when it is zero.
func unit(v r3.Vec) r3.Vec {
	if n := norm(v); n > 0 {
		return r3.Scale(1/n, v)
	}
	return v
}

// corners returns the corners of triangle t relative to the centre.
func (m *Mesh) corners(t int32) [3]r3.Vec {
	f := &m.vid[t]
	return [3]r3.Vec{m.vert[f[0]], m.vert[f[1]], m.vert[f[2]]}
}

// faceNormal returns the unit normal of triangle t (right-hand rule).
func (m *Mesh) faceNormal(t int32) r3.Vec {
	p := m.corners(t)
	return unit(r3.Cross(r3.Sub(p[1], p[0]), r3.Sub(p[2], p[0])))
}
