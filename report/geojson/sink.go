package geojson

import (
	"math"

	"saddlecheck/deviation"
	"saddlecheck/report"
)

// Sink feeds a Writer from the result stream of a check; it is a
// deviation.Sink, so the command can add it beside the CSV writer.
type Sink struct {
	w       *Writer
	patches []string
	tol     deviation.Tolerance // only its bands are used
	bands   []string
}

var _ deviation.Sink = (*Sink)(nil)

// NewSink returns a Sink writing to w, naming patches by index in patches
// and labelling |deviation| bands with bandsM (metres) as report.BandLabels
// does.
func NewSink(w *Writer, patches []string, bandsM []float64) *Sink {
	return &Sink{w: w, patches: patches, tol: deviation.Tolerance{BandsM: bandsM}, bands: report.BandLabels(bandsM)}
}

// Consume adds the records of r: used, far and outside points with their
// position and deviation, rejected records as a count. Band labels are
// given to used points only, as in deviations.csv.
func (s *Sink) Consume(r *deviation.Result) error {
	c := r.Chunk
	for i := 0; i < c.Len(); i++ {
		st := r.Status[i]
		if st == deviation.StatusRejected {
			s.w.Add(Point{Status: st.String(), P: c.P[i], DeviationMM: math.NaN()})
			continue
		}
		p := Point{P: c.P[i], DeviationMM: r.Dev[i] * 1000, Status: st.String()}
		if !s.w.folding() {
			p.ID = c.PointID(i) // cells keep no ids
		}
		if k := r.Patch[i]; k >= 0 && int(k) < len(s.patches) {
			p.Patch = s.patches[k]
		}
		if st == deviation.StatusUsed && !math.IsNaN(r.Dev[i]) {
			p.Band = s.bands[s.tol.Band(r.Dev[i])]
		}
		s.w.Add(p)
	}
	return nil
}
