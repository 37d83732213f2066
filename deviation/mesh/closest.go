package mesh

import "gonum.org/v1/gonum/spatial/r3"

// Closest-point features of a triangle (a, b, c). Edge k runs from corner
// k to corner k+1 (AB, BC, CA), matching the half-edge slots of Mesh.ring.
const (
	featFace  = 0
	featEdge  = 1 // featEdge + k for edge k
	featVert  = 4 // featVert + k for corner k
	noFeature = -1
)

// closestOnTriangle returns the point of triangle (a, b, c) closest to p
// and the feature (face interior, edge or corner) that holds it.
//
// The method is the Voronoi-region test of Ericson, Real-Time Collision
// Detection (2005), §5.1.5: with ab = b−a, ac = c−a and the dot products
//
//	d1 = ab·(p−a)  d2 = ac·(p−a)
//	d3 = ab·(p−b)  d4 = ac·(p−b)
//	d5 = ab·(p−c)  d6 = ac·(p−c)
//
// p projects onto corner a when d1 ≤ 0 and d2 ≤ 0, onto b when d3 ≥ 0 and
// d4 ≤ d3, onto c when d6 ≥ 0 and d5 ≤ d6; onto edge ab when
// vc = d1·d4 − d3·d2 ≤ 0, d1 ≥ 0, d3 ≤ 0; onto ca when vb = d5·d2 − d1·d6 ≤ 0,
// d2 ≥ 0, d6 ≤ 0; onto bc when va = d3·d6 − d5·d4 ≤ 0, d4 ≥ d3, d5 ≥ d6;
// otherwise onto the face at barycentric (va, vb, vc)/(va+vb+vc). The
// regions are exact partitions, so the answer is the exact closest point
// up to float64 rounding of the dot products. The triangle must not be
// degenerate (New drops those).
func closestOnTriangle(p, a, b, c r3.Vec) (r3.Vec, int8) {
	abx, aby, abz := b.X-a.X, b.Y-a.Y, b.Z-a.Z
	acx, acy, acz := c.X-a.X, c.Y-a.Y, c.Z-a.Z
	d1, d2 := dots(abx, aby, abz, acx, acy, acz, p, a)
	if d1 <= 0 && d2 <= 0 {
		return a, featVert
	}
	d3, d4 := dots(abx, aby, abz, acx, acy, acz, p, b)
	if d3 >= 0 && d4 <= d3 {
		return b, featVert + 1
	}
	vc := d1*d4 - d3*d2
	if vc <= 0 && d1 >= 0 && d3 <= 0 {
		v := d1 / (d1 - d3)
		return r3.Vec{X: a.X + v*abx, Y: a.Y + v*aby, Z: a.Z + v*abz}, featEdge
	}
	d5, d6 := dots(abx, aby, abz, acx, acy, acz, p, c)
	if d6 >= 0 && d5 <= d6 {
		return c, featVert + 2
	}
	vb := d5*d2 - d1*d6
	if vb <= 0 && d2 >= 0 && d6 <= 0 {
		w := d2 / (d2 - d6)
		return r3.Vec{X: a.X + w*acx, Y: a.Y + w*acy, Z: a.Z + w*acz}, featEdge + 2
	}
	va := d3*d6 - d5*d4
	if va <= 0 && d4-d3 >= 0 && d5-d6 >= 0 {
		w := (d4 - d3) / ((d4 - d3) + (d5 - d6))
		return r3.Vec{X: b.X + w*(c.X-b.X), Y: b.Y + w*(c.Y-b.Y), Z: b.Z + w*(c.Z-b.Z)}, featEdge + 1
	}
	denom := 1 / (va + vb + vc)
	v, w := vb*denom, vc*denom
	return r3.Vec{X: a.X + abx*v + acx*w, Y: a.Y + aby*v + acy*w, Z: a.Z + abz*v + acz*w}, featFace
}

// dots returns ab·(p − v) and ac·(p − v).
func dots(abx, aby, abz, acx, acy, acz float64, p, v r3.Vec) (float64, float64) {
	x, y, z := p.X-v.X, p.Y-v.Y, p.Z-v.Z
	return abx*x + aby*y + abz*z, acx*x + acy*y + acz*z
}

// dist2 is |p − q|².
func dist2(p, q r3.Vec) float64 {
	dx, dy, dz := p.X-q.X, p.Y-q.Y, p.Z-q.Z
	return dx*dx + dy*dy + dz*dz
}
