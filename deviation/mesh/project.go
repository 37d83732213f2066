package mesh

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

// Project returns the closest point of the mesh to p (site frame, metres)
// and the signed distance to it.
//
// |D| is the exact Euclidean distance to the closest mesh point (up to
// float64 rounding in coordinates relative to the mesh centre). Its sign
// is that of (p − Foot)·n, where n is the angle-weighted pseudonormal of
// the feature holding Foot: the face normal in a face interior, the sum of
// the incident face normals on an edge, the angle-weighted vertex normal
// at a vertex (Bærentzen & Aanæs 2005, theorem 1: for a closed, or
// locally manifold, surface this sign is the inside/outside sign).
//
// Normal is (p − Foot)/D when the closest point is on an edge or vertex
// and |D| > 0 (so that p = Foot + D·Normal exactly as in the face case),
// the face normal in a face interior, and the unit pseudonormal when p is
// on the mesh. Inside is false when Foot is on a boundary edge or vertex,
// unless the part of p − Foot tangential to the closest triangle is
// shorter than Options.MarginM.
//
// A NaN coordinate gives D = NaN and Inside = false. Project allocates
// nothing and is safe for concurrent use.
func (m *Mesh) Project(p r3.Vec) deviation.Projection {
	q := r3.Sub(p, m.centre)
	h := m.nearest(q)
	return m.projection(q, h)
}

func (m *Mesh) projection(q r3.Vec, h hit) deviation.Projection {
	if h.tri == noTriangle { // q is NaN
		nan := math.NaN()
		v := r3.Vec{X: nan, Y: nan, Z: nan}
		return deviation.Projection{D: nan, Foot: v, Normal: v}
	}
	t := h.tri
	nf := m.faceNormal(t)
	diff := r3.Sub(q, h.foot)
	dist := math.Sqrt(h.d2)
	var pn r3.Vec
	boundary := false
	switch {
	case h.feat == featFace:
		pn = nf
	case h.feat < featVert:
		he := 3*t + int32(h.feat-featEdge)
		if m.ring[he] == he {
			boundary = true
			pn = nf
		} else {
			pn = nf
			for o := m.ring[he]; o != he; o = m.ring[o] {
				pn = r3.Add(pn, m.faceNormal(o/3))
			}
		}
	default:
		v := m.vid[t][h.feat-featVert]
		pn = m.vnorm[v]
		boundary = m.vbound[v]
	}
	d := dist
	if r3.Dot(diff, pn) < 0 {
		d = -dist
	}
	var n r3.Vec
	switch {
	case h.feat == featFace:
		n = nf
	case dist > 0:
		n = r3.Scale(1/d, diff)
	default:
		n = unit(pn)
	}
	inside := true
	if boundary {
		tang := r3.Sub(diff, r3.Scale(r3.Dot(diff, nf), nf))
		inside = norm(tang) < m.margin
	}
	return deviation.Projection{D: d, Foot: r3.Add(h.foot, m.centre), Normal: n, Inside: inside}
}

// ProjectAll sets dst[i] = m.Project(pts[i]) for every point (dst must be
// at least as long as pts; it panics otherwise). It visits the points bucket by bucket over a
// plan grid of the mesh's two longest box axes (a counting sort, O(n)),
// so that consecutive queries share the same parts of the hierarchy in
// cache: on shuffled scans this is markedly faster than calling Project
// in input order. The answers are identical. It allocates scratch of
// about 4 bytes per point and per bucket, never per point individually,
// and is safe for concurrent use on disjoint dst.
func (m *Mesh) ProjectAll(dst []deviation.Projection, pts []r3.Vec) {
	if len(dst) < len(pts) {
		panic("mesh: ProjectAll destination shorter than the points")
	}
	if len(pts) < 64 {
		for i, p := range pts {
			dst[i] = m.Project(p)
		}
		return
	}
	// Plan axes: the two longest sides of the box.
	ext := r3.Sub(m.max, m.min)
	e := [3]float64{ext.X, ext.Y, ext.Z}
	a0, a1 := 0, 1
	switch {
	case e[2] > e[0] && e[1] >= e[0]:
		a0, a1 = 1, 2
	case e[2] > e[1]:
		a0, a1 = 0, 2
	}
	lo := [3]float64{m.min.X, m.min.Y, m.min.Z}
	// About eight triangles per bucket, at most 1024 per side.
	g := int(math.Sqrt(float64(len(m.vid)) / 8))
	g = max(1, min(g, 1024, int(math.Sqrt(float64(len(pts))))+1))
	s0, s1 := float64(g)/max(e[a0], 1e-300), float64(g)/max(e[a1], 1e-300)
	clamp := func(x float64) int { // NaN and below 0 go to 0
		if !(x >= 0) {
			return 0
		}
		return int(min(x, float64(g-1)))
	}
	cell := func(p r3.Vec) int {
		c := [3]float64{p.X, p.Y, p.Z}
		return clamp((c[a0]-lo[a0])*s0)*g + clamp((c[a1]-lo[a1])*s1)
	}
	start := make([]int32, g*g+1)
	for _, p := range pts {
		start[cell(p)+1]++
	}
	for k := 1; k < len(start); k++ {
		start[k] += start[k-1]
	}
	order := make([]int32, len(pts))
	for i, p := range pts {
		c := cell(p)
		order[start[c]] = int32(i)
		start[c]++
	}
	for _, i := range order {
		dst[i] = m.Project(pts[i])
	}
}
