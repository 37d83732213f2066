package report

import (
	"math"
	"strconv"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/cloud"
	"saddlecheck/fit"
	"saddlecheck/uncert"
)

// ResidualCSV writes residuals.csv of `saddlecheck fit`: every input record
// measured against the fitted surface as the reference (no design), with
// its standard uncertainty.
//
// Columns: id, x, y, z (site metres), residual_mm (signed orthogonal
// distance from the fitted saddle, positive on its up side), u_fit_mm (the
// fit's own uncertainty there, fit.SaddleResult.PointU), u_instrument_mm
// (from the instrument model, empty without one), u_mm (the two combined
// in quadrature: u² = u_instrument² + u_fit², JCGM 100:2008 for
// uncorrelated components), outlier (|residual| beyond the fit's inlier
// threshold), status (used or rejected), reason, file, line.
type ResidualCSV struct {
	f     *File
	r     *fit.SaddleResult
	setup *uncert.Setup
	buf   []byte
}

// NewResidualCSV creates path for the fit r; setup is the instrument model
// (nil for none).
func NewResidualCSV(path string, r *fit.SaddleResult, setup *uncert.Setup) (*ResidualCSV, error) {
	f, err := Create(path)
	if err != nil {
		return nil, err
	}
	w := &ResidualCSV{f: f, r: r, setup: setup}
	_, err = f.WriteString("id,x,y,z,residual_mm,u_fit_mm,u_instrument_mm,u_mm,outlier,status,reason,file,line\n")
	return w, err
}

// Add writes the records of one chunk of the file named file.
func (w *ResidualCSV) Add(c *cloud.Chunk, file string) error {
	s := &w.r.Saddle
	b := w.buf[:0]
	for i, n := 0, c.Len(); i < n; i++ {
		b = appendField(b, c.PointID(i))
		if c.Reject[i] != "" {
			b = append(b, ",,,,,,,,,rejected,"...)
			b = appendField(b, c.Reject[i])
		} else {
			p := c.P[i]
			foot, d := s.ClosestLocal(s.ToLocal(p))
			uf := w.r.PointU(p)
			ui := math.NaN()
			if w.setup != nil {
				nl := r3.Unit(r3.Vec{X: -2 * s.K1 * foot.X, Y: -2 * s.K2 * foot.Y, Z: 1})
				ns := r3.Add(r3.Add(r3.Scale(nl.X, s.Axes[0]), r3.Scale(nl.Y, s.Axes[1])), r3.Scale(nl.Z, s.Axes[2]))
				ui = w.setup.NormalU(p, ns)
			}
			b = append(b, ',')
			b = appendFixed(b, p.X, 4)
			b = append(b, ',')
			b = appendFixed(b, p.Y, 4)
			b = append(b, ',')
			b = appendFixed(b, p.Z, 4)
			b = append(b, ',')
			b = appendFixed(b, d*1000, 2)
			b = append(b, ',')
			if !math.IsNaN(uf) {
				b = appendFixed(b, uf*1000, 3)
			}
			b = append(b, ',')
			u := uf
			if !math.IsNaN(ui) {
				b = appendFixed(b, ui*1000, 3)
				u = math.Hypot(ui, uf)
			}
			b = append(b, ',')
			if !math.IsNaN(u) {
				b = appendFixed(b, u*1000, 3)
			}
			b = append(b, ',')
			if math.Abs(d) > w.r.Threshold {
				b = append(b, "yes"...)
			} else {
				b = append(b, "no"...)
			}
			b = append(b, ",used,"...)
		}
		b = append(b, ',')
		b = appendField(b, file)
		b = append(b, ',')
		b = strconv.AppendInt(b, c.Line[i], 10)
		b = append(b, '\n')
	}
	w.buf = b
	_, err := w.f.Write(b)
	return err
}

// Commit finishes the file.
func (w *ResidualCSV) Commit() error { return w.f.Commit() }

// Abort discards the file.
func (w *ResidualCSV) Abort() { w.f.Abort() }
