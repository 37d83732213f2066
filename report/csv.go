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
	slot    int
	files   []string
	patches []string
	bands   []string
	tol     deviation.Tolerance // only its bands are used
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
//
// The rows of a chunk are formatted by Enrich on the pipeline's workers,
// into the Result.Encoded slot given; Consume only writes them in order.
// Pass the writer both as an Enricher (last) and as a Sink.
func NewPointCSV(path string, slot int, files, patches []string, bandsM []float64, opt PointCSVOptions) (*PointCSV, error) {
	f, err := Create(path)
	if err != nil {
		return nil, err
	}
	return &PointCSV{f: f, slot: slot, files: files, patches: patches, tol: deviation.Tolerance{BandsM: bandsM}, bands: BandLabels(bandsM),
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

// Prepare implements deviation.Enricher; the CSV needs no extra slices.
func (w *PointCSV) Prepare(r *deviation.Result, n int) {}

// Enrich formats the rows of r into r.Encoded[slot]. It runs on the
// workers, concurrently for different chunks, and only reads w.
func (w *PointCSV) Enrich(r *deviation.Result) {
	r.Encoded[w.slot] = w.format(r.Encoded[w.slot][:0], r)
}

// Consume writes the rows of r, formatted by Enrich, in input order.
func (w *PointCSV) Consume(r *deviation.Result) error {
	if !w.started {
		w.started = true
		w.header()
		if _, err := w.f.Write(w.buf); err != nil {
			return err
		}
		w.buf = w.buf[:0]
	}
	w.rows += int64(r.Chunk.Len())
	_, err := w.f.Write(r.Encoded[w.slot])
	return err
}

func (w *PointCSV) format(b []byte, r *deviation.Result) []byte {
	c := r.Chunk
	file := ""
	if c.Source < len(w.files) {
		file = w.files[c.Source]
	}
	for i := 0; i < c.Len(); i++ {
		b = appendField(b, c.PointID(i))
		st := r.Status[i]
		if st == deviation.StatusRejected {
			b = append(b, ",,,,,,"...)
		} else {
			p := c.P[i]
			b = append(b, ',')
			b = appendFixed(b, p.X, 4)
			b = append(b, ',')
			b = appendFixed(b, p.Y, 4)
			b = append(b, ',')
			b = appendFixed(b, p.Z, 4)
			b = append(b, ',')
			if k := r.Patch[i]; k >= 0 && int(k) < len(w.patches) {
				b = appendField(b, w.patches[k])
			}
			b = append(b, ',')
			if d := r.Dev[i]; !math.IsNaN(d) {
				b = appendFixed(b, d*1000, 2)
			}
			b = append(b, ',')
			if st == deviation.StatusUsed {
				b = append(b, w.bands[w.tol.Band(r.Dev[i])]...)
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
				b = appendFixed(b, r.U[i]*1000, 2)
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
				b = appendFixed(b, r.Resid[i]*1000, 2)
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
	}
	return b
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

var pow10 = [...]float64{1, 10, 100, 1000, 1e4, 1e5, 1e6}

// appendFixed appends v with exactly dec decimals (dec <= 6), rounded half
// away from zero from v·10^dec in float64. For |v·10^dec| < 2^53 this is
// the decimal rounding of v except at exact binary ties, far below the
// last printed digit's meaning; larger or non-finite values fall back to
// strconv.
func appendFixed(b []byte, v float64, dec int) []byte {
	s := v * pow10[dec]
	if !(math.Abs(s) < 1<<53) {
		return strconv.AppendFloat(b, v, 'f', dec, 64)
	}
	n := int64(math.Round(s))
	if n < 0 {
		b = append(b, '-')
		n = -n
	} else if v < 0 && n == 0 {
		// keep the sign of values that round to zero, as strconv does
		b = append(b, '-')
	}
	ip, fp := n/int64(pow10[dec]), n%int64(pow10[dec])
	b = strconv.AppendInt(b, ip, 10)
	if dec > 0 {
		b = append(b, '.')
		var digits [6]byte
		for k := dec - 1; k >= 0; k-- {
			digits[k] = byte('0' + fp%10)
			fp /= 10
		}
		b = append(b, digits[:dec]...)
	}
	return b
}
