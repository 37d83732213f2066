package deviation

import "gonum.org/v1/gonum/spatial/r3"

// ProjectAll projects every point (BatchSurface): the loop calls the
// concrete Project directly, which spares the per-point dispatch and the
// multi-patch bookkeeping of Design.Classify for one-patch designs.
func (p *SaddlePatch) ProjectAll(dst []Projection, pts []r3.Vec) {
	for i, x := range pts {
		dst[i] = p.Project(x)
	}
}

// ProjectAll projects every point (BatchSurface).
func (p *BilinearPatch) ProjectAll(dst []Projection, pts []r3.Vec) {
	for i, x := range pts {
		dst[i] = p.Project(x)
	}
}

// ProjectAll projects every point (BatchSurface).
func (p *PlanePatch) ProjectAll(dst []Projection, pts []r3.Vec) {
	for i, x := range pts {
		dst[i] = p.Project(x)
	}
}

var (
	_ BatchSurface = (*SaddlePatch)(nil)
	_ BatchSurface = (*BilinearPatch)(nil)
	_ BatchSurface = (*PlanePatch)(nil)
)
