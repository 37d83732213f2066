package change

import (
	"math"
	"sync/atomic"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/spatial/r3"
)

// EstimateNormals replaces, for comparisons without a design surface, the
// normal of every core point by the normal of the least-squares plane of
// the points pts (the reference epoch) within plan distance s.NormalScale
// of it, oriented upwards (n_z ≥ 0), and moves the core point onto that
// plane along the new normal. The plane normal is the eigenvector of the
// smallest eigenvalue of the neighbourhood's covariance matrix (total least
// squares; Lague, Brodu & Leroux 2013, §3.2, as in most point-cloud
// software). Cores with fewer than three neighbours, or a degenerate
// neighbourhood (a line), keep their normal; the count of those is returned.
func EstimateNormals(cores []Core, pts []r3.Vec, s *Settings) int {
	set := s.withDefaults()
	ix := newPlanIndex(pts, set.NormalScale)
	var failed atomic.Int64
	parallel(len(cores), set.Workers, func(k int, scratch []float64) []float64 {
		if !fitNormal(ix, &cores[k], set.NormalScale) {
			failed.Add(1)
		}
		return scratch
	})
	return int(failed.Load())
}

// maxNormalSample caps the points a normal is fitted to: the candidate
// points (those in the covering cells) are taken with a fixed stride so that
// about this many remain. The normal of a plane fitted to m points of
// roughness σ over a disk of radius R has an angular standard error of about
// 2σ/(R·√m) (common practice); with m ≈ 4096 /(area share ≈ 0.35) ≈ 1400 in
// the disk, σ = 2 mm and R = 1 m that is 0.1 mrad, far below what moves a
// millimetre-level distance.
const maxNormalSample = 4096

// fitNormal fits the plane of the indexed points within plan radius r of
// c.P and updates c; it reports success.
func fitNormal(ix *planIndex, c *Core, r float64) bool {
	i0, i1, j0, j1 := ix.cellRange(c.P.X, c.P.Y, r)
	r2 := r * r
	total := 0
	for j := j0; j <= j1; j++ {
		row := j * ix.nx
		total += int(ix.start[row+i1+1] - ix.start[row+i0])
	}
	stride := max(1, total/maxNormalSample)
	var n int
	var sx, sy, sz float64
	var sxx, sxy, sxz, syy, syz, szz float64
	for j := j0; j <= j1; j++ {
		row := j * ix.nx
		run := ix.pts[ix.start[row+i0]:ix.start[row+i1+1]]
		for k := 0; k < len(run); k += stride {
			q := run[k]
			// Centred on the core point: values of metres, not site
			// magnitudes, before any products.
			dx, dy, dz := q.X-c.P.X, q.Y-c.P.Y, q.Z-c.P.Z
			if dx*dx+dy*dy > r2 {
				continue
			}
			n++
			sx, sy, sz = sx+dx, sy+dy, sz+dz
			sxx, sxy, sxz = sxx+dx*dx, sxy+dx*dy, sxz+dx*dz
			syy, syz, szz = syy+dy*dy, syz+dy*dz, szz+dz*dz
		}
	}
	if n < 3 {
		return false
	}
	fn := float64(n)
	mx, my, mz := sx/fn, sy/fn, sz/fn
	cov := mat.NewSymDense(3, []float64{
		sxx/fn - mx*mx, sxy/fn - mx*my, sxz/fn - mx*mz,
		sxy/fn - mx*my, syy/fn - my*my, syz/fn - my*mz,
		sxz/fn - mx*mz, syz/fn - my*mz, szz/fn - mz*mz,
	})
	var eig mat.EigenSym
	if !eig.Factorize(cov, true) {
		return false
	}
	vals := eig.Values(nil) // ascending
	if !(vals[1] > 1e-12*math.Max(vals[2], 1e-300)) {
		return false // collinear neighbourhood: no plane
	}
	var v mat.Dense
	eig.VectorsTo(&v)
	nrm := r3.Unit(r3.Vec{X: v.At(0, 0), Y: v.At(1, 0), Z: v.At(2, 0)})
	if nrm.Z < 0 {
		nrm = r3.Scale(-1, nrm)
	}
	// Move P onto the plane through the centroid.
	off := mx*nrm.X + my*nrm.Y + mz*nrm.Z
	c.P = r3.Add(c.P, r3.Scale(off, nrm))
	c.N = nrm
	return true
}
