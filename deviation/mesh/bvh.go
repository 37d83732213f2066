package mesh

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// node is one bounding box of the hierarchy, 32 bytes. The boxes are
// float32, rounded outward after padding by boxPad·extent, so they
// contain their triangles' float64 coordinates with a margin far above
// float64 rounding; a box distance is therefore a strict lower bound of
// the computed distance of every triangle inside, and pruning never
// changes the answer (the BVH agrees bit for bit with a scan of all
// triangles).
type node struct {
	lo, hi [3]float32
	// first is the first triangle of a leaf, or the left child of an
	// internal node (the right child is first+1).
	first int32
	// count is the number of triangles of a leaf, 0 for an internal node.
	count int32
}

// Build parameters.
const (
	sahBins = 16 // bins per axis (Wald 2007 uses 8–32; common practice)
	// maxLeaf forces a split of larger leaves; SAH may stop earlier.
	maxLeaf = 8
	// sahTraversal is the cost of visiting a node relative to one
	// triangle test. A node visit is mostly a cache miss while the
	// triangles of a leaf are contiguous, so 3 (measured: leaves of about
	// five triangles, fewer nodes and misses than with 1).
	sahTraversal = 3.0
	// maxDepth bounds the build depth: below it splits fall back to the
	// median of the longest centroid axis, which halves the count, so the
	// depth never exceeds maxDepth + 32 < stackSize.
	maxDepth  = 40
	stackSize = 80
	// boxPad pads boxes by this fraction of the mesh extent before the
	// outward float32 rounding (see node).
	boxPad = 1e-9
)

type buildTri struct {
	lo, hi, c r3.Vec
}

// buildHierarchy orders the triangles for the hierarchy and fills
// m.vert, m.vid and m.nodes. Vertices are renumbered in order of first
// use by the ordered triangles, so a leaf's corners are mostly adjacent
// in memory.
func (m *Mesh) buildHierarchy(local []r3.Vec, tris [][3]int32) {
	bt := make([]buildTri, len(tris))
	ext := 0.0
	for i, f := range tris {
		a, b, c := local[f[0]], local[f[1]], local[f[2]]
		lo, hi := minVec(a, minVec(b, c)), maxVec(a, maxVec(b, c))
		bt[i] = buildTri{lo, hi, r3.Scale(0.5, r3.Add(lo, hi))}
		ext = math.Max(ext, math.Max(math.Abs(lo.X), math.Max(math.Abs(lo.Y), math.Abs(lo.Z))))
		ext = math.Max(ext, math.Max(math.Abs(hi.X), math.Max(math.Abs(hi.Y), math.Abs(hi.Z))))
	}
	idx := make([]int32, len(tris))
	for i := range idx {
		idx[i] = int32(i)
	}
	b := builder{bt: bt, idx: idx, pad: boxPad * (ext + 1)}
	// Node 1 is unused padding: sibling pairs then start at even
	// indices, so each pair is one 64-byte cache line.
	b.nodes = make([]node, 2, 2*len(tris)/3+2)
	b.split(0, 0, int32(len(tris)), 0)
	m.nodes = b.nodes
	m.vid = make([][3]int32, len(tris))
	renum := make([]int32, len(local))
	for i := range renum {
		renum[i] = -1
	}
	m.vert = make([]r3.Vec, 0, len(tris)/2+3)
	for j, i := range idx {
		for k, v := range tris[i] {
			if renum[v] < 0 {
				renum[v] = int32(len(m.vert))
				m.vert = append(m.vert, local[v])
			}
			m.vid[j][k] = renum[v]
		}
	}
	m.disks = make([]disk, len(m.nodes))
	m.nodeDisks(0, b.pad)
}

type builder struct {
	bt    []buildTri
	idx   []int32
	nodes []node
	pad   float64
}

type bin struct {
	lo, hi r3.Vec
	n      int
}

func emptyBox() (r3.Vec, r3.Vec) {
	inf := math.Inf(1)
	return r3.Vec{X: inf, Y: inf, Z: inf}, r3.Vec{X: -inf, Y: -inf, Z: -inf}
}

func halfArea(lo, hi r3.Vec) float64 {
	d := r3.Sub(hi, lo)
	return d.X*d.Y + d.Y*d.Z + d.Z*d.X
}

func comp(v r3.Vec, k int) float64 {
	switch k {
	case 0:
		return v.X
	case 1:
		return v.Y
	}
	return v.Z
}

// split makes node ni cover idx[s:e], splitting it by the binned surface
// area heuristic (Wald 2007) while that is cheaper than a leaf.
func (b *builder) split(ni int, s, e int32, depth int) {
	lo, hi := emptyBox()
	clo, chi := emptyBox()
	for _, i := range b.idx[s:e] {
		t := &b.bt[i]
		lo, hi = minVec(lo, t.lo), maxVec(hi, t.hi)
		clo, chi = minVec(clo, t.c), maxVec(chi, t.c)
	}
	b.setBox(ni, lo, hi)
	n := e - s
	if n <= 2 {
		b.nodes[ni].first, b.nodes[ni].count = s, n
		return
	}
	axis, cut := -1, 0.0
	if depth < maxDepth {
		axis, cut = b.sahCut(s, e, clo, chi, halfArea(lo, hi))
	}
	if axis == -2 { // SAH prefers a leaf
		b.nodes[ni].first, b.nodes[ni].count = s, n
		return
	}
	mid := int32(-1)
	if axis >= 0 {
		if mid = b.partition(s, e, axis, cut); mid == s || mid == e {
			mid = -1
		}
	}
	if mid < 0 {
		if n <= maxLeaf {
			b.nodes[ni].first, b.nodes[ni].count = s, n
			return
		}
		mid = b.median(s, e, clo, chi)
	}
	l := int32(len(b.nodes))
	b.nodes = append(b.nodes, node{}, node{})
	b.nodes[ni].first, b.nodes[ni].count = l, 0
	b.split(int(l), s, mid, depth+1)
	b.split(int(l)+1, mid, e, depth+1)
}

// sahCut returns the best split plane (axis, coordinate), −2 when a leaf
// is cheaper than any split of at most maxLeaf triangles, or −1 when the
// centroids do not spread. One pass over the triangles fills the bins of
// all three axes.
func (b *builder) sahCut(s, e int32, clo, chi r3.Vec, area float64) (int, float64) {
	n := e - s
	var bins [3][sahBins]bin
	var c0, scale [3]float64
	spread := false
	for axis := range 3 {
		lo, hi := comp(clo, axis), comp(chi, axis)
		if hi > lo {
			c0[axis], scale[axis] = lo, sahBins/(hi-lo)
			spread = true
		}
		for k := range sahBins {
			bins[axis][k].lo, bins[axis][k].hi = emptyBox()
		}
	}
	if !spread {
		return -1, 0
	}
	for _, i := range b.idx[s:e] {
		t := &b.bt[i]
		c := [3]float64{t.c.X, t.c.Y, t.c.Z}
		for axis := range 3 {
			k := min(int((c[axis]-c0[axis])*scale[axis]), sahBins-1)
			bn := &bins[axis][k]
			bn.lo, bn.hi = minVec(bn.lo, t.lo), maxVec(bn.hi, t.hi)
			bn.n++
		}
	}
	bestCost, bestAxis, bestCut := math.Inf(1), -1, 0.0
	var rightArea [sahBins]float64
	var rightN [sahBins]int
	for axis := range 3 {
		if scale[axis] == 0 {
			continue
		}
		bs := &bins[axis]
		lo, hi := emptyBox()
		cnt := 0
		for k := sahBins - 1; k > 0; k-- {
			lo, hi = minVec(lo, bs[k].lo), maxVec(hi, bs[k].hi)
			cnt += bs[k].n
			rightN[k], rightArea[k] = cnt, 0
			if cnt > 0 {
				rightArea[k] = halfArea(lo, hi)
			}
		}
		lo, hi = emptyBox()
		cnt = 0
		for k := 0; k < sahBins-1; k++ {
			lo, hi = minVec(lo, bs[k].lo), maxVec(hi, bs[k].hi)
			cnt += bs[k].n
			if cnt == 0 || rightN[k+1] == 0 {
				continue
			}
			cost := float64(cnt)*halfArea(lo, hi) + float64(rightN[k+1])*rightArea[k+1]
			if cost < bestCost {
				bestCost, bestAxis, bestCut = cost, axis, c0[axis]+float64(k+1)/scale[axis]
			}
		}
	}
	if bestAxis < 0 {
		return -1, 0
	}
	if n <= maxLeaf && area > 0 && sahTraversal+bestCost/area >= float64(n) {
		return -2, 0
	}
	return bestAxis, bestCut
}

// partition moves the triangles with centroid below cut on axis to the
// front of idx[s:e] and returns the first index of the rest.
func (b *builder) partition(s, e int32, axis int, cut float64) int32 {
	i, j := s, e-1
	for i <= j {
		if comp(b.bt[b.idx[i]].c, axis) < cut {
			i++
		} else {
			b.idx[i], b.idx[j] = b.idx[j], b.idx[i]
			j--
		}
	}
	return i
}

// median splits idx[s:e] in halves along the longest centroid axis (by
// index when all centroids coincide).
func (b *builder) median(s, e int32, clo, chi r3.Vec) int32 {
	d := r3.Sub(chi, clo)
	axis := 0
	if d.Y > d.X {
		axis = 1
	}
	if d.Z > math.Max(d.X, d.Y) {
		axis = 2
	}
	mid := s + (e-s)/2
	// Quickselect of the median centroid.
	lo, hi := s, e-1
	for lo < hi {
		pv := comp(b.bt[b.idx[(lo+hi)/2]].c, axis)
		i, j := lo, hi
		for i <= j {
			for comp(b.bt[b.idx[i]].c, axis) < pv {
				i++
			}
			for comp(b.bt[b.idx[j]].c, axis) > pv {
				j--
			}
			if i <= j {
				b.idx[i], b.idx[j] = b.idx[j], b.idx[i]
				i++
				j--
			}
		}
		if mid <= j {
			hi = j
		} else if mid >= i {
			lo = i
		} else {
			break
		}
	}
	return mid
}

func (b *builder) setBox(ni int, lo, hi r3.Vec) {
	nd := &b.nodes[ni]
	nd.lo = [3]float32{down32(lo.X - b.pad), down32(lo.Y - b.pad), down32(lo.Z - b.pad)}
	nd.hi = [3]float32{up32(hi.X + b.pad), up32(hi.Y + b.pad), up32(hi.Z + b.pad)}
}

// down32 is the largest float32 ≤ x; up32 the smallest ≥ x.
func down32(x float64) float32 {
	f := float32(x)
	if float64(f) > x {
		f = math.Nextafter32(f, float32(math.Inf(-1)))
	}
	return f
}

func up32(x float64) float32 {
	f := float32(x)
	if float64(f) < x {
		f = math.Nextafter32(f, float32(math.Inf(1)))
	}
	return f
}

// gap2 is the squared distance from x to the interval [lo, hi].
func gap2(lo, hi, x float64) float64 {
	v := lo - x
	if w := x - hi; w > v {
		v = w
	}
	if v < 0 {
		return 0
	}
	return v * v
}

// noTriangle marks a hit not yet found; larger than any index, so the
// first candidate wins a tie even at infinite distance.
const noTriangle = math.MaxInt32

// hit is the closest triangle found so far.
type hit struct {
	d2   float64
	foot r3.Vec
	tri  int32
	feat int8
}

// consider orders candidates by distance, then by triangle index, so that
// the answer does not depend on the visiting order.
func (h *hit) consider(q r3.Vec, t int32, m *Mesh) {
	f3 := &m.vid[t]
	c, f := closestOnTriangle(q, m.vert[f3[0]], m.vert[f3[1]], m.vert[f3[2]])
	d2 := dist2(q, c)
	if d2 < h.d2 || d2 == h.d2 && t < h.tri {
		*h = hit{d2, c, t, f}
	}
}

// nearest finds the closest triangle to the local point q by a
// nearest-first descent: at each node the nearer child is entered and the
// farther one stacked with its box distance; stacked nodes farther than
// the best distance so far are skipped, and so are stacked nodes and
// leaves whose bounding disk is farther (see disk). Every bound is a
// padded lower bound, and candidates are compared with ≤ and ordered by
// (distance, index), so the result is bit for bit that of nearestBrute.
func (m *Mesh) nearest(q r3.Vec) hit {
	type entry struct {
		n  int32
		d2 float64
	}
	var stack [stackSize]entry
	sp := 0
	best := hit{d2: math.Inf(1), tri: noTriangle, feat: noFeature}
	n := int32(0)
	for {
		nd := &m.nodes[n]
		if nd.count > 0 {
			// The first leaf reached is always searched: no need to load
			// its disk.
			if best.tri == noTriangle || m.disks[n].dist2(q) <= best.d2 {
				for t := nd.first; t < nd.first+nd.count; t++ {
					best.consider(q, t, m)
				}
			}
		} else {
			pair := (*[2]node)(m.nodes[nd.first : nd.first+2])
			a, b := &pair[0], &pair[1]
			// boxDist2 of both children, written out so that it inlines.
			dl := gap2(float64(a.lo[0]), float64(a.hi[0]), q.X) + gap2(float64(a.lo[1]), float64(a.hi[1]), q.Y) + gap2(float64(a.lo[2]), float64(a.hi[2]), q.Z)
			dr := gap2(float64(b.lo[0]), float64(b.hi[0]), q.X) + gap2(float64(b.lo[1]), float64(b.hi[1]), q.Y) + gap2(float64(b.lo[2]), float64(b.hi[2]), q.Z)
			l, r := nd.first, nd.first+1
			if dr < dl {
				l, r, dl, dr = r, l, dr, dl
			}
			if dl <= best.d2 {
				if dr <= best.d2 {
					stack[sp] = entry{r, dr}
					sp++
				}
				n = l
				continue
			}
		}
		for {
			if sp == 0 {
				return best
			}
			sp--
			if e := stack[sp]; e.d2 <= best.d2 && m.disks[e.n].dist2(q) <= best.d2 {
				n = e.n
				break
			}
		}
	}
}

// nearestBrute scans every triangle (the test reference for nearest).
func (m *Mesh) nearestBrute(q r3.Vec) hit {
	best := hit{d2: math.Inf(1), tri: noTriangle, feat: noFeature}
	for t := range m.vid {
		best.consider(q, int32(t), m)
	}
	return best
}

// disk is a flat cylinder containing the triangles of a leaf: centre c,
// unit axis n (the leaf's mean normal), radius r about the axis and
// half-thickness t along it. For a nearly flat leaf t is the sag, far
// thinner than an axis-aligned box of a sloping surface, so points off
// the surface (outliers) skip neighbouring leaves that their boxes admit.
type disk struct {
	c, n [3]float32
	r, t float32
}

// maxDiskTris is the largest subtree given a bounding disk: higher up
// the sag of a curved surface makes the disk no tighter than the box,
// and skipping them keeps the build O(N·log(maxDiskTris)).
const maxDiskTris = 256

// nodeDisks fills m.disks for the subtree at node i and returns the
// triangle range it covers.
func (m *Mesh) nodeDisks(i int32, pad float64) (s, e int32) {
	nd := &m.nodes[i]
	if nd.count > 0 {
		s, e = nd.first, nd.first+nd.count
	} else {
		s, _ = m.nodeDisks(nd.first, pad)
		_, e = m.nodeDisks(nd.first+1, pad)
	}
	if e-s <= maxDiskTris {
		m.disks[i] = m.leafDisk(s, e, pad)
	} else {
		inf := float32(math.Inf(1))
		m.disks[i] = disk{r: inf, t: inf} // bounds nothing
	}
	return s, e
}

// leafDisk bounds triangles [s, e). c and n are rounded to float32 first
// and r, t computed from the rounded values, padded by pad and rounded
// up, so the stored cylinder contains the float64 corners with margin.
func (m *Mesh) leafDisk(s, e int32, pad float64) disk {
	var c, n r3.Vec
	cnt := 0.0
	for t := s; t < e; t++ {
		p := m.corners(t)
		n = r3.Add(n, r3.Cross(r3.Sub(p[1], p[0]), r3.Sub(p[2], p[0])))
		for _, v := range p {
			c = r3.Add(c, v)
			cnt++
		}
	}
	c = r3.Scale(1/cnt, c)
	if norm(n) == 0 {
		n = r3.Vec{Z: 1}
	}
	n = unit(n)
	var d disk
	d.c = [3]float32{float32(c.X), float32(c.Y), float32(c.Z)}
	d.n = [3]float32{float32(n.X), float32(n.Y), float32(n.Z)}
	c = r3.Vec{X: float64(d.c[0]), Y: float64(d.c[1]), Z: float64(d.c[2])}
	n = r3.Vec{X: float64(d.n[0]), Y: float64(d.n[1]), Z: float64(d.n[2])}
	n = r3.Scale(1/math.Sqrt(r3.Dot(n, n)), n) // as dist2 normalises it
	rr, tt := 0.0, 0.0
	for t := s; t < e; t++ {
		for _, v := range m.corners(t) {
			w := r3.Sub(v, c)
			z := r3.Dot(w, n)
			tt = max(tt, math.Abs(z))
			rr = max(rr, norm(r3.Sub(w, r3.Scale(z, n))))
		}
	}
	d.r, d.t = up32(rr*(1+1e-6)+pad), up32(tt*(1+1e-6)+pad)
	return d
}

// dist2 is the squared distance from q to the solid cylinder,
//
//	max(0, ρ − r)² + max(0, |z| − t)²,   z = n̂·(q − c),  ρ = |(q − c) − z·n̂|,
//
// a lower bound of the distance to anything inside it. ρ is taken from
// the tangential vector itself rather than from |q − c|² − z², which
// would cancel catastrophically for points far along the axis.
func (d *disk) dist2(q r3.Vec) float64 {
	wx, wy, wz := q.X-float64(d.c[0]), q.Y-float64(d.c[1]), q.Z-float64(d.c[2])
	nx, ny, nz := float64(d.n[0]), float64(d.n[1]), float64(d.n[2])
	inv := 1 / math.Sqrt(nx*nx+ny*ny+nz*nz)
	nx, ny, nz = nx*inv, ny*inv, nz*inv
	z := wx*nx + wy*ny + wz*nz
	tx, ty, tz := wx-z*nx, wy-z*ny, wz-z*nz
	rho := math.Sqrt(tx*tx + ty*ty + tz*tz)
	out := 0.0
	if v := rho - float64(d.r); v > 0 {
		out = v * v
	}
	if v := math.Abs(z) - float64(d.t); v > 0 {
		out += v * v
	}
	return out
}
