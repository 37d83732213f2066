package report

import (
	"math"
	"strconv"
	"strings"

	"saddlecheck/deviation"
)

// PointCSV writes deviations.csv: one row per input record, in input order,
// with its status and reason. It is a deviation.Sink.
//
// Columns: id, x, y, z (site coordinates, metres), patch, deviation_mm,
// band, status (used | outside | far | rejected), reason, file, line; then,
// when present, u_mm and zone (uncertainty), asbuilt_residual_mm and
// fit_outlier (as-built fit).
//
// Rows are formatted by appending into one buffer rather than through
// encoding/csv, which would allocate a string per field (ten per point, a
// hundred million for a 10-million-point scan); fields are quoted exactly as
// RFC 4180 and encoding/csv require, and a test reads the output back with
// encoding/csv.
type PointCSV struct {
	f       *File
	files   []string
	patches []string
	bands   []string
	bandsM  []float64
	uncert  bool
	fit     bool
	zone    func(d, u float64) string
	buf     []byte
	rows    int64
	started bool
}

// PointCSVOptions selects the optional columns.
type PointCSVOptions struct {
	Uncertainty bool
	Fit         bool
	// Zone names the decision zone of a deviation d with standard
	// uncertainty u (metres); used when Uncertainty is set.
	Zone func(d, u float64) string
}

// NewPointCSV creates path (atomically: nothing appears there until Commit)
// for the given input file names, patch ids and tolerance bands (metres).
func NewPointCSV(path string, files, patches []string, bandsM []float64, opt PointCSVOptions) (*PointCSV, error) {
	f, err := Create(path)
	if err != nil {
		return nil, err
	}
	return &PointCSV{f: f, files: files, patches: patches, bandsM: bandsM, bands: BandLabels(bandsM),
		uncert: opt.Uncertainty, fit: opt.Fit, zone: opt.Zone}, nil
}

func (w *PointCSV) header() {
	w.buf = append(w.buf, "id,x,y,z,patch,deviation_mm,band,status,reason,file,line"...)
	if w.uncert {
		w.buf = append(w.buf, ",u_mm,zone"...)
	}
	if w.fit {
		w.buf = append(w.buf, ",asbuilt_residual_mm,fit_outlier"...)
	}
	w.buf = append(w.buf, '\n')
}

// Consume writes the rows of r.
func (w *PointCSV) Consume(r *deviation.Result) error {
	if !w.started {
		w.started = true
		w.header()
	}
	c := r.Chunk
	file := ""
	if c.Source < len(w.files) {
		file = w.files[c.Source]
	}
	for i := 0; i < c.Len(); i++ {
		b := w.buf
		b = appendField(b, c.PointID(i))
		st := r.Status[i]
		if st == deviation.StatusRejected {
			b = append(b, ",,,,,,"...)
		} else {
			p := c.P[i]
			b = append(b, ',')
			b = strconv.AppendFloat(b, p.X, 'f', 4, 64)
			b = append(b, ',')
			b = strconv.AppendFloat(b, p.Y, 'f', 4, 64)
			b = append(b, ',')
			b = strconv.AppendFloat(b, p.Z, 'f', 4, 64)
			b = append(b, ',')
			if k := r.Patch[i]; k >= 0 && int(k) < len(w.patches) {
				b = appendField(b, w.patches[k])
			}
			b = append(b, ',')
			if d := r.Dev[i]; !math.IsNaN(d) {
				b = strconv.AppendFloat(b, d*1000, 'f', 2, 64)
			}
			b = append(b, ',')
			if st == deviation.StatusUsed {
				b = append(b, w.bands[BandIndex(w.bandsM, r.Dev[i])]...)
			}
		}
		b = append(b, ',')
		b = append(b, st.String()...)
		b = append(b, ',')
		b = appendField(b, c.Reject[i])
		b = append(b, ',')
		b = appendField(b, file)
		b = append(b, ',')
		b = strconv.AppendInt(b, c.Line[i], 10)
		if w.uncert {
			b = append(b, ',')
			if r.U != nil && st != deviation.StatusRejected && !math.IsNaN(r.U[i]) {
				b = strconv.AppendFloat(b, r.U[i]*1000, 'f', 2, 64)
				b = append(b, ',')
				if st == deviation.StatusUsed && w.zone != nil {
					b = append(b, w.zone(r.Dev[i], r.U[i])...)
				}
			} else {
				b = append(b, ',')
			}
		}
		if w.fit {
			b = append(b, ',')
			if r.Resid != nil && !math.IsNaN(r.Resid[i]) {
				b = strconv.AppendFloat(b, r.Resid[i]*1000, 'f', 2, 64)
			}
			b = append(b, ',')
			if r.Outlier != nil && r.Resid != nil && !math.IsNaN(r.Resid[i]) {
				if r.Outlier[i] {
					b = append(b, "yes"...)
				} else {
					b = append(b, "no"...)
				}
			}
		}
		b = append(b, '\n')
		w.buf = b
		w.rows++
		if len(w.buf) > 1<<16 {
			if _, err := w.f.Write(w.buf); err != nil {
				return err
			}
			w.buf = w.buf[:0]
		}
	}
	return nil
}

// Rows returns the number of data rows written so far.
func (w *PointCSV) Rows() int64 { return w.rows }

// Commit finishes the file and renames it into place.
func (w *PointCSV) Commit() error {
	if !w.started {
		w.started = true
		w.header()
	}
	if _, err := w.f.Write(w.buf); err != nil {
		w.f.Abort()
		return err
	}
	return w.f.Commit()
}

// Abort discards the file.
func (w *PointCSV) Abort() { w.f.Abort() }

// appendField appends s as one CSV field, quoted as RFC 4180 requires when
// it holds a comma, a quote, a CR/LF or leading/trailing space.
func appendField(b []byte, s string) []byte {
	if s == "" {
		return b
	}
	if !strings.ContainsAny(s, ",\"\r\n") && s[0] != ' ' && s[len(s)-1] != ' ' {
		return append(b, s...)
	}
	b = append(b, '"')
	for i := 0; i < len(s); i++ {
		if s[i] == '"' {
			b = append(b, '"')
		}
		b = append(b, s[i])
	}
	return append(b, '"')
}
