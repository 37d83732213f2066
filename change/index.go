package change

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// maxCellsPerPoint caps the plan grid at this many cells per indexed point
// (plus a constant), so that a few far outliers cannot blow up the cell
// table; the cell size grows instead. Four cells per point keeps the table
// below 4·n·4 bytes (common practice for uniform grids).
const maxCellsPerPoint = 4

// planIndex is a uniform grid over the x, y coordinates of a point set: the
// points are copied in cell order (a counting sort), so that the points of
// one cell are contiguous.
type planIndex struct {
	x0, y0 float64 // lower-left corner of cell (0, 0)
	cell   float64 // cell size, m
	inv    float64 // 1/cell
	nx, ny int
	start  []int32  // start[c] .. start[c+1] index pts of cell c
	pts    []r3.Vec // points in cell order (non-finite points left out)
}

// newPlanIndex builds the index of pts with cells of (at least) size cell.
// It allocates three slices, never per point.
func newPlanIndex(pts []r3.Vec, cell float64) *planIndex {
	ix := &planIndex{}
	minX, minY := math.Inf(1), math.Inf(1)
	maxX, maxY := math.Inf(-1), math.Inf(-1)
	n := 0
	for _, p := range pts {
		if !finiteVec(p) {
			continue
		}
		n++
		minX, maxX = math.Min(minX, p.X), math.Max(maxX, p.X)
		minY, maxY = math.Min(minY, p.Y), math.Max(maxY, p.Y)
	}
	if n == 0 {
		ix.cell, ix.inv, ix.nx, ix.ny = cell, 1/cell, 1, 1
		ix.start = make([]int32, 2)
		return ix
	}
	wx, wy := maxX-minX, maxY-minY
	limit := float64(maxCellsPerPoint*n + 1024)
	for (math.Floor(wx/cell)+1)*(math.Floor(wy/cell)+1) > limit {
		cell *= 1.5
	}
	ix.x0, ix.y0, ix.cell, ix.inv = minX, minY, cell, 1/cell
	ix.nx = int(wx*ix.inv) + 1
	ix.ny = int(wy*ix.inv) + 1
	ix.start = make([]int32, ix.nx*ix.ny+1)
	for _, p := range pts {
		if c := ix.cellOf(p); c >= 0 {
			ix.start[c+1]++
		}
	}
	for c := 1; c < len(ix.start); c++ {
		ix.start[c] += ix.start[c-1]
	}
	ix.pts = make([]r3.Vec, n)
	fill := make([]int32, ix.nx*ix.ny)
	copy(fill, ix.start[:len(fill)])
	for _, p := range pts {
		if c := ix.cellOf(p); c >= 0 {
			ix.pts[fill[c]] = p
			fill[c]++
		}
	}
	return ix
}

// cellOf returns the cell of p, or -1 for a non-finite point.
func (ix *planIndex) cellOf(p r3.Vec) int {
	if !finiteVec(p) {
		return -1
	}
	i := int((p.X - ix.x0) * ix.inv)
	j := int((p.Y - ix.y0) * ix.inv)
	i = min(max(i, 0), ix.nx-1)
	j = min(max(j, 0), ix.ny-1)
	return j*ix.nx + i
}

// cellRange returns the cell rows and columns that cover the plan disk of
// radius r around (x, y), clipped to the grid; empty when it misses.
func (ix *planIndex) cellRange(x, y, r float64) (i0, i1, j0, j1 int) {
	fi0 := math.Floor((x - r - ix.x0) * ix.inv)
	fi1 := math.Floor((x + r - ix.x0) * ix.inv)
	fj0 := math.Floor((y - r - ix.y0) * ix.inv)
	fj1 := math.Floor((y + r - ix.y0) * ix.inv)
	if fi1 < 0 || fj1 < 0 || fi0 >= float64(ix.nx) || fj0 >= float64(ix.ny) {
		return 0, -1, 0, -1
	}
	i0 = int(math.Max(fi0, 0))
	j0 = int(math.Max(fj0, 0))
	i1 = int(math.Min(fi1, float64(ix.nx-1)))
	j1 = int(math.Min(fj1, float64(ix.ny-1)))
	return i0, i1, j0, j1
}
