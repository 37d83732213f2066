package deviation

import "gonum.org/v1/gonum/spatial/r3"

// Projection is the result of projecting one point onto a surface.
type Projection struct {
	// D is the signed orthogonal distance in metres, positive on the
	// surface's positive (normal) side.
	D float64
	// Foot is the closest point on the surface, in site coordinates.
	Foot r3.Vec
	// Normal is the unit surface normal at Foot, on the positive side.
	Normal r3.Vec
	// Inside reports whether Foot lies within the patch extent (with the
	// patch's margin). A point whose foot is outside belongs to no patch.
	Inside bool
}

// Surface is a bounded design or as-built surface that points are measured
// against. Implementations: *SaddlePatch (analytic hyperbolic paraboloid),
// *PlanePatch, and the triangle mesh of package deviation/mesh.
//
// Project must be safe for concurrent use and must not allocate.
type Surface interface {
	// Project returns the projection of p (site coordinates, metres).
	Project(p r3.Vec) Projection
}
