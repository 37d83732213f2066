package fit

import (
	"math"

	"saddlecheck/deviation"
)

// AsBuilt holds the as-built fits of a design's patches (nil where a patch
// has no fit) and is the deviation.Enricher that adds to every point its
// residual from its patch's as-built surface and the fit's outlier flag.
//
// The outlier rule is the fit's own: a point is an outlier where its
// |orthogonal residual| from the fitted saddle exceeds the fit's inlier
// threshold (SaddleResult.Threshold). A fit made on a sample of a patch's
// points thereby classifies every point of the patch, sampled or not.
type AsBuilt struct {
	Fits []*SaddleResult
}

var _ deviation.Enricher = (*AsBuilt)(nil)

// Prepare makes r carry residuals and outlier flags.
func (a *AsBuilt) Prepare(r *deviation.Result, n int) {
	if r.Resid == nil {
		r.Resid = make([]float64, 0, n)
	}
	if r.Outlier == nil {
		r.Outlier = make([]bool, 0, n)
	}
}

// Enrich fills r.Resid and r.Outlier. It does not allocate.
func (a *AsBuilt) Enrich(r *deviation.Result) {
	c := r.Chunk
	nan := math.NaN()
	for i, n := 0, c.Len(); i < n; i++ {
		k := r.Patch[i]
		if k < 0 || int(k) >= len(a.Fits) || a.Fits[k] == nil || r.Status[i] == deviation.StatusRejected {
			r.Resid[i] = nan
			r.Outlier[i] = false
			continue
		}
		f := a.Fits[k]
		_, d := f.Saddle.ClosestLocal(f.Saddle.ToLocal(c.P[i]))
		r.Resid[i] = d
		r.Outlier[i] = math.Abs(d) > f.Threshold
	}
}
