package geojson

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strconv"
	"unicode/utf8"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/report"
)

// DefaultMaxPoints is the number of points written as individual features
// unless Options.MaxPoints says otherwise; beyond it the writer switches to
// aggregated cells. At about 200 bytes per feature it keeps the file near
// 40 MB, which browsers' map viewers still open (common practice).
const DefaultMaxPoints = 200000

// DefaultCells is the number of cells aimed at over the extent of the
// buffered points when the writer switches to cells and Options.CellM is 0.
const DefaultCells = 20000

// Caveat is the text written under metadata.crs when the site grid's CRS
// is not known.
const Caveat = "coordinates are local site-grid easting/northing in metres, not WGS 84 as RFC 7946 requires; do not overlay on web maps without transformation"

// Options controls a Writer. The zero value gives the documented defaults.
type Options struct {
	// MaxPoints is the number of points kept as Point features; 0 means
	// DefaultMaxPoints. When more are added the writer folds all of them
	// into square cells.
	MaxPoints int
	// CellM is the side of an aggregation cell in metres; 0 means choose
	// a round value (1, 2 or 5 × 10ⁿ m) giving about DefaultCells cells over
	// the extent of the points buffered when the switch happens.
	CellM float64
	// CRS names the site grid's coordinate reference system, if known
	// (e.g. "EPSG:32633"). No transformation is done either way; "" writes
	// Caveat.
	CRS string
	// Name is written as the collection's "name" property, if not "".
	Name string
}

// Point is one measured point.
type Point struct {
	ID string
	// P is the site position: X easting, Y northing, Z elevation, metres.
	P r3.Vec
	// DeviationMM is the signed deviation in millimetres, NaN if none.
	DeviationMM float64
	Band        string // tolerance band label, or ""
	Patch       string // patch id, or ""
	Status      string // "used", "outside", "far", "rejected"
}

// cell accumulates the points of one map cell.
type cell struct {
	count, used, far, outside int64
	sum, min, max             float64 // deviations of used points, mm
}

type patch struct {
	id    string
	rings [][]r3.Vec
}

// Writer collects points and patch outlines and writes the collection on
// Close. It is not safe for concurrent use.
type Writer struct {
	f        *report.File
	opt      Options
	max      int
	pts      []Point
	cells    map[[2]int64]*cell
	cellM    float64
	patches  []patch
	total    int64
	rejected int64
	buf      []byte
	closed   bool
}

// Create starts a GeoJSON file at path (nothing appears there until Close).
// A nil opt means the zero Options.
func Create(path string, opt *Options) (*Writer, error) {
	w := &Writer{}
	if opt != nil {
		w.opt = *opt
	}
	w.max = w.opt.MaxPoints
	if w.max <= 0 {
		w.max = DefaultMaxPoints
	}
	if c := w.opt.CellM; c < 0 || math.IsNaN(c) || math.IsInf(c, 0) {
		return nil, fmt.Errorf("geojson: cell size %v m is not a positive number", c)
	}
	f, err := report.Create(path)
	if err != nil {
		return nil, err
	}
	w.f = f
	return w, nil
}

// ErrRing reports a patch ring that cannot be written.
var ErrRing = errors.New("geojson: ring needs at least 3 distinct positions and a non-zero area")

// AddPatch adds the outline of a patch: the exterior ring first, then any
// holes, each as site positions in order (closed or not). The writer closes
// the rings and orients them by the right-hand rule.
func (w *Writer) AddPatch(id string, rings ...[]r3.Vec) error {
	var out [][]r3.Vec
	for i, r := range rings {
		r = closeRing(r)
		a := signedArea(r)
		if len(r) < 4 || a == 0 || math.IsNaN(a) {
			return fmt.Errorf("patch %s ring %d: %w", id, i+1, ErrRing)
		}
		if (i == 0) != (a > 0) { // exterior counter-clockwise, holes clockwise
			r = reversed(r)
		}
		out = append(out, r)
	}
	if len(out) == 0 {
		return fmt.Errorf("patch %s: %w", id, ErrRing)
	}
	w.patches = append(w.patches, patch{id: id, rings: out})
	return nil
}

// closeRing returns r with its first position repeated at the end if it is
// not already, and without consecutive duplicates.
func closeRing(r []r3.Vec) []r3.Vec {
	var out []r3.Vec
	for _, p := range r {
		if len(out) == 0 || p != out[len(out)-1] {
			out = append(out, p)
		}
	}
	if len(out) > 0 && out[0] != out[len(out)-1] {
		out = append(out, out[0])
	}
	return out
}

// signedArea is the shoelace area of a closed ring in the x–y plane,
// positive when counter-clockwise with x east and y north. Positions are
// taken relative to the first one so that site magnitudes do not cancel.
func signedArea(r []r3.Vec) float64 {
	if len(r) == 0 {
		return 0
	}
	o := r[0]
	var a float64
	for i := 0; i+1 < len(r); i++ {
		p, q := r3.Sub(r[i], o), r3.Sub(r[i+1], o)
		a += p.X*q.Y - q.X*p.Y
	}
	return a / 2
}

func reversed(r []r3.Vec) []r3.Vec {
	out := make([]r3.Vec, len(r))
	for i, p := range r {
		out[len(r)-1-i] = p
	}
	return out
}

// Add adds one point. Rejected points (and any without finite
// coordinates) have no position and are only counted.
func (w *Writer) Add(p Point) {
	if p.Status == "rejected" || !finite(p.P.X) || !finite(p.P.Y) || !finite(p.P.Z) {
		w.rejected++
		return
	}
	w.total++
	if w.cells != nil {
		w.fold(p)
		return
	}
	if len(w.pts) < w.max {
		w.pts = append(w.pts, p)
		return
	}
	// Over the limit: switch to cells and fold everything buffered.
	w.cellM = w.opt.CellM
	if w.cellM == 0 {
		w.cellM = autoCell(w.pts)
	}
	w.cells = map[[2]int64]*cell{}
	for _, q := range w.pts {
		w.fold(q)
	}
	w.pts = nil
	w.fold(p)
}

// folding reports whether the writer has switched to cells.
func (w *Writer) folding() bool { return w.cells != nil }

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// autoCell picks a round cell side giving about DefaultCells cells over the
// extent of pts.
func autoCell(pts []Point) float64 {
	lo, hi := pts[0].P, pts[0].P
	for _, p := range pts {
		lo.X, lo.Y = math.Min(lo.X, p.P.X), math.Min(lo.Y, p.P.Y)
		hi.X, hi.Y = math.Max(hi.X, p.P.X), math.Max(hi.Y, p.P.Y)
	}
	area := math.Max(hi.X-lo.X, 1e-3) * math.Max(hi.Y-lo.Y, 1e-3)
	s := math.Sqrt(area / DefaultCells)
	e := math.Pow(10, math.Floor(math.Log10(s)))
	for _, m := range []float64{1, 2, 5, 10} {
		if m*e >= s {
			return m * e
		}
	}
	return 10 * e
}

func (w *Writer) fold(p Point) {
	k := [2]int64{int64(math.Floor(p.P.X / w.cellM)), int64(math.Floor(p.P.Y / w.cellM))}
	c := w.cells[k]
	if c == nil {
		c = &cell{min: math.Inf(1), max: math.Inf(-1)}
		w.cells[k] = c
	}
	c.count++
	switch p.Status {
	case "far":
		c.far++
	case "outside":
		c.outside++
	}
	if p.Status == "used" && finite(p.DeviationMM) {
		c.used++
		c.sum += p.DeviationMM
		c.min = math.Min(c.min, p.DeviationMM)
		c.max = math.Max(c.max, p.DeviationMM)
	}
}

// Abort discards the file.
func (w *Writer) Abort() {
	if !w.closed {
		w.closed = true
		w.f.Abort()
	}
}

// Close writes the collection and renames the file to its final name.
func (w *Writer) Close() error {
	if w.closed {
		return errors.New("geojson: writer already closed")
	}
	w.closed = true
	b := w.buf[:0]
	// RFC 7946 §7.1 forbids a "properties" member on a FeatureCollection,
	// so the collection's facts go in the foreign member "metadata" (§6.1).
	b = append(b, `{"type":"FeatureCollection","metadata":{`...)
	if w.opt.Name != "" {
		b = append(b, `"name":`...)
		b = appendString(b, w.opt.Name)
		b = append(b, ',')
	}
	crs := Caveat
	if w.opt.CRS != "" {
		crs = "coordinates are easting/northing in metres of " + w.opt.CRS + ", not WGS 84 as RFC 7946 requires (no transformation is done); do not overlay on web maps without transformation"
	}
	b = append(b, `"crs":`...)
	b = appendString(b, crs)
	b = append(b, `,"units":"m","deviation_units":"mm","positions":"[easting, northing, elevation]","mode":`...)
	if w.cells != nil {
		b = append(b, `"cells","cell_m":`...)
		b = appendFloat(b, w.cellM)
	} else {
		b = append(b, `"points"`...)
	}
	b = append(b, `,"points":`...)
	b = strconv.AppendInt(b, w.total, 10)
	b = append(b, `,"rejected":`...)
	b = strconv.AppendInt(b, w.rejected, 10)
	b = append(b, `},"features":[`...)
	n := 0
	sep := func() {
		if n > 0 {
			b = append(b, ',')
		}
		n++
		b = append(b, '\n')
	}
	flush := func() error {
		if len(b) < 1<<16 {
			return nil
		}
		_, err := w.f.Write(b)
		b = b[:0]
		return err
	}
	for _, p := range w.patches {
		sep()
		b = append(b, `{"type":"Feature","geometry":{"type":"Polygon","coordinates":[`...)
		for i, r := range p.rings {
			if i > 0 {
				b = append(b, ',')
			}
			b = appendRing(b, r)
		}
		b = append(b, `]},"properties":{"kind":"patch","patch":`...)
		b = appendString(b, p.id)
		b = append(b, `}}`...)
		if err := flush(); err != nil {
			w.f.Abort()
			return err
		}
	}
	for _, p := range w.pts {
		sep()
		b = appendPoint(b, p)
		if err := flush(); err != nil {
			w.f.Abort()
			return err
		}
	}
	keys := make([][2]int64, 0, len(w.cells))
	for k := range w.cells {
		keys = append(keys, k)
	}
	sort.Slice(keys, func(i, j int) bool {
		if keys[i][1] != keys[j][1] {
			return keys[i][1] < keys[j][1]
		}
		return keys[i][0] < keys[j][0]
	})
	for _, k := range keys {
		sep()
		b = w.appendCell(b, k, w.cells[k])
		if err := flush(); err != nil {
			w.f.Abort()
			return err
		}
	}
	b = append(b, "\n]}\n"...)
	if _, err := w.f.Write(b); err != nil {
		w.f.Abort()
		return err
	}
	w.buf = b[:0]
	return w.f.Commit()
}

func appendPoint(b []byte, p Point) []byte {
	b = append(b, `{"type":"Feature","id":`...)
	b = appendString(b, p.ID)
	b = append(b, `,"geometry":{"type":"Point","coordinates":`...)
	b = appendPos(b, p.P)
	b = append(b, `},"properties":{"kind":"point","id":`...)
	b = appendString(b, p.ID)
	b = append(b, `,"deviation_mm":`...)
	b = appendFloat(b, p.DeviationMM)
	b = append(b, `,"band":`...)
	b = appendString(b, p.Band)
	b = append(b, `,"patch":`...)
	b = appendString(b, p.Patch)
	b = append(b, `,"status":`...)
	b = appendString(b, p.Status)
	return append(b, `}}`...)
}

func (w *Writer) appendCell(b []byte, k [2]int64, c *cell) []byte {
	x0, y0 := float64(k[0])*w.cellM, float64(k[1])*w.cellM
	x1, y1 := float64(k[0]+1)*w.cellM, float64(k[1]+1)*w.cellM
	ring := []r3.Vec{{X: x0, Y: y0}, {X: x1, Y: y0}, {X: x1, Y: y1}, {X: x0, Y: y1}, {X: x0, Y: y0}} // counter-clockwise
	b = append(b, `{"type":"Feature","geometry":{"type":"Polygon","coordinates":[`...)
	b = appendRing2(b, ring)
	b = append(b, `]},"properties":{"kind":"cell","count":`...)
	b = strconv.AppendInt(b, c.count, 10)
	b = append(b, `,"used":`...)
	b = strconv.AppendInt(b, c.used, 10)
	b = append(b, `,"far":`...)
	b = strconv.AppendInt(b, c.far, 10)
	b = append(b, `,"outside":`...)
	b = strconv.AppendInt(b, c.outside, 10)
	mean, lo, hi := math.NaN(), math.NaN(), math.NaN()
	if c.used > 0 {
		mean, lo, hi = c.sum/float64(c.used), c.min, c.max
	}
	b = append(b, `,"mean_mm":`...)
	b = appendFloat(b, mean)
	b = append(b, `,"min_mm":`...)
	b = appendFloat(b, lo)
	b = append(b, `,"max_mm":`...)
	b = appendFloat(b, hi)
	return append(b, `}}`...)
}

// appendRing writes a ring of [x, y, z] positions.
func appendRing(b []byte, r []r3.Vec) []byte {
	b = append(b, '[')
	for i, p := range r {
		if i > 0 {
			b = append(b, ',')
		}
		b = appendPos(b, p)
	}
	return append(b, ']')
}

// appendRing2 writes a ring of [x, y] positions.
func appendRing2(b []byte, r []r3.Vec) []byte {
	b = append(b, '[')
	for i, p := range r {
		if i > 0 {
			b = append(b, ',')
		}
		b = append(b, '[')
		b = appendFloat(b, p.X)
		b = append(b, ',')
		b = appendFloat(b, p.Y)
		b = append(b, ']')
	}
	return append(b, ']')
}

func appendPos(b []byte, p r3.Vec) []byte {
	b = append(b, '[')
	b = appendFloat(b, p.X)
	b = append(b, ',')
	b = appendFloat(b, p.Y)
	b = append(b, ',')
	b = appendFloat(b, p.Z)
	return append(b, ']')
}

// appendFloat writes v in the shortest form that reads back exactly, or
// null for NaN and ±Inf (JSON has no such numbers).
func appendFloat(b []byte, v float64) []byte {
	if !finite(v) {
		return append(b, "null"...)
	}
	return strconv.AppendFloat(b, v, 'f', -1, 64)
}

// appendString writes s as a JSON string (RFC 8259 §7): quotes, backslash
// and control characters escaped, invalid UTF-8 replaced by U+FFFD.
func appendString(b []byte, s string) []byte {
	const hex = "0123456789abcdef"
	b = append(b, '"')
	for i := 0; i < len(s); {
		c := s[i]
		if c < utf8.RuneSelf {
			switch {
			case c == '"' || c == '\\':
				b = append(b, '\\', c)
			case c < 0x20:
				b = append(b, '\\', 'u', '0', '0', hex[c>>4], hex[c&15])
			default:
				b = append(b, c)
			}
			i++
			continue
		}
		r, n := utf8.DecodeRuneInString(s[i:])
		if r == utf8.RuneError && n == 1 {
			b = append(b, `\ufffd`...)
		} else {
			b = append(b, s[i:i+n]...)
		}
		i += n
	}
	return append(b, '"')
}
