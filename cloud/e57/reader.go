package e57

import (
	"fmt"
	"io"
	"math"
	"os"
	"runtime/debug"
	"strings"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/cloud"
	"saddlecheck/cloud/internal/mapped"
)

func init() {
	cloud.RegisterFormat(cloud.Format{Name: "e57", Match: Match, Open: open})
}

// Match reports whether head starts with the E57 signature "ASTM-E57".
func Match(head []byte) bool { return len(head) >= 8 && string(head[:8]) == "ASTM-E57" }

func open(path string, opt cloud.Options) (cloud.Reader, error) { return Open(path, opt) }

// Attribute names, in the order they appear in Chunk.Attr (the colour and
// intensity ones only where some scan's prototype has the field).
const (
	AttrScan      = "scan"
	AttrIntensity = "intensity"
	AttrRed       = "color_red"
	AttrGreen     = "color_green"
	AttrBlue      = "color_blue"
)

var optionalAttrs = []struct{ attr, field string }{
	{AttrIntensity, "intensity"}, {AttrRed, "colorRed"}, {AttrGreen, "colorGreen"}, {AttrBlue, "colorBlue"},
}

// Reader streams the points of every scan of one E57 file. It implements
// cloud.Reader.
type Reader struct {
	mf    *mapped.File
	p     *pager
	hdr   header
	scans []Scan
	names []string // attribute names
	unit  float64
	info  cloud.Info

	cur    int     // index of the scan being read
	vec    *vector // its section reader, nil before the first Read of it
	record int64   // records returned so far
	tmp    [][]float64
	mm     []byte // the file mapped by Open, or nil
	closed bool
}

// Open opens the E57 file at path. Options.Unit is applied only when it is
// a non-metre unit; Options.Columns is ignored.
func Open(path string, opt cloud.Options) (*Reader, error) {
	mf, err := mapped.Open(path)
	if err != nil {
		return nil, err
	}
	r, err := NewReader(mf, mf.Size, opt)
	if err != nil {
		mf.Close()
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	r.mf = mf
	r.info.Path = path
	if mf.Data != nil {
		r.mm = mf.Data
		r.p.mm, r.p.first = mf.Data, -1
	}
	return r, nil
}

// NewReader reads the header and XML section of the E57 file of the given
// size in r, verifying the checksum of every page it reads.
func NewReader(r io.ReaderAt, size int64, opt cloud.Options) (*Reader, error) {
	p := newPager(r, size)
	h, err := readHeader(p, size)
	if err != nil {
		return nil, err
	}
	xl, _ := toLogical(int64(h.XMLOffset))
	xmlData := make([]byte, h.XMLLength)
	if err := p.readAt(xmlData, xl); err != nil {
		return nil, err
	}
	root, scans, err := parseXML(xmlData, int64(h.XMLOffset))
	if err != nil {
		return nil, err
	}
	er := &Reader{p: p, hdr: h, scans: scans, unit: 1}
	if m := opt.Unit.Metres; m != 0 && m != 1 {
		er.unit = m
	}
	var total int64
	for _, s := range scans {
		if s.Records > math.MaxInt64-total {
			return nil, &FormatError{Offset: int64(h.XMLOffset), Msg: "record counts overflow"}
		}
		total += s.Records
	}
	// Distrust counts: every record takes at least one bit in some stream,
	// so the records cannot outnumber the bits of the file's data bytes.
	if total > p.pages*pageData*8 {
		return nil, &FormatError{Offset: int64(h.XMLOffset), Msg: fmt.Sprintf("scans announce %d records, more than the file can hold", total)}
	}
	er.names = []string{AttrScan}
	for _, o := range optionalAttrs {
		for _, s := range scans {
			if s.field(o.field) >= 0 {
				er.names = append(er.names, o.attr)
				break
			}
		}
	}
	er.info = er.makeInfo(root, total, opt)
	return er, nil
}

// Scans describes the scans of the file, in file order.
func (r *Reader) Scans() []Scan { return r.scans }

// PagesVerified returns how many page checksums have been verified so far
// (a page read again after its block was evicted counts again).
func (r *Reader) PagesVerified() int64 { return r.p.verified }

// Info describes the file from its header and XML section.
func (r *Reader) Info() cloud.Info { return r.info }

// Close closes the file opened by Open.
func (r *Reader) Close() error {
	if r.closed {
		return nil
	}
	r.closed = true
	r.vec = nil
	if r.mm != nil {
		r.p.mm, r.p.block, r.p.first = nil, nil, -1
		r.mm = nil
	}
	if r.mf != nil {
		return r.mf.Close()
	}
	return nil
}

// field returns the index of the prototype field named name, or -1.
func (s *Scan) field(name string) int {
	for i := range s.Fields {
		if s.Fields[i].Name == name {
			return i
		}
	}
	return -1
}

// decoded reports whether the reader decodes field name of scan s; emit
// must decode exactly these, so that every used stream advances.
func (s *Scan) decoded(name string) bool {
	switch name {
	case "cartesianX", "cartesianY", "cartesianZ", "cartesianInvalidState":
		return !s.Spherical
	case "sphericalRange", "sphericalAzimuth", "sphericalElevation", "sphericalInvalidState":
		return s.Spherical
	case "intensity", "colorRed", "colorGreen", "colorBlue":
		return true
	}
	return false
}

// Read resets c and fills it with up to max records (max <= 0 means
// cloud.DefaultChunk), moving on from one scan to the next. It returns
// io.EOF with c empty after the last record.
func (r *Reader) Read(c *cloud.Chunk, max int) (err error) {
	c.Reset()
	if r.closed {
		return os.ErrClosed
	}
	if r.mm != nil {
		// A mapped file truncated by another program faults on access:
		// make that a *FormatError, not a crash.
		defer debug.SetPanicOnFault(debug.SetPanicOnFault(true))
		defer func() {
			if e := recover(); e != nil {
				if _, ok := e.(interface{ Addr() uintptr }); !ok {
					panic(e)
				}
				c.Reset()
				r.vec, r.p.first = nil, -1
				err = &FormatError{Offset: -1, Msg: "the file changed (was truncated) while it was being read", Err: io.ErrUnexpectedEOF}
			}
		}()
	}
	if max <= 0 {
		max = cloud.DefaultChunk
	}
	r.prepare(c)
	for c.Len() < max && r.cur < len(r.scans) {
		s := &r.scans[r.cur]
		if r.vec == nil {
			v, err := newVector(r.p, s, s.decoded)
			if err != nil {
				return err
			}
			r.vec = v
		}
		err := r.vec.fill()
		if err == io.EOF {
			r.cur++
			r.vec = nil
			continue
		}
		if err != nil {
			return err
		}
		n := min(r.vec.ready(), int64(max-c.Len()))
		r.emit(c, s, int(n))
	}
	if c.Len() == 0 {
		return io.EOF
	}
	return nil
}

// prepare sets the chunk's attribute names.
func (r *Reader) prepare(c *cloud.Chunk) {
	ok := len(c.Attr) == len(r.names)
	for i := 0; ok && i < len(r.names); i++ {
		ok = c.Attr[i].Name == r.names[i]
	}
	if !ok {
		c.Attr = make([]cloud.Attr, len(r.names))
		for i, name := range r.names {
			c.Attr[i].Name = name
		}
	}
	c.ID, c.Code = nil, nil
}

// emit decodes n records of scan s from r.vec and appends them to c.
func (r *Reader) emit(c *cloud.Chunk, s *Scan, n int) {
	v := r.vec
	for len(r.tmp) < len(v.streams) {
		r.tmp = append(r.tmp, nil)
	}
	col := func(name string) []float64 {
		i := s.field(name)
		if i < 0 {
			return nil
		}
		if cap(r.tmp[i]) < n {
			r.tmp[i] = make([]float64, n)
		}
		d := r.tmp[i][:n]
		v.streams[i].decode(d)
		return d
	}
	var a, b, cc, bad []float64
	if s.Spherical {
		a, b, cc, bad = col("sphericalRange"), col("sphericalAzimuth"), col("sphericalElevation"), col("sphericalInvalidState")
	} else {
		a, b, cc, bad = col("cartesianX"), col("cartesianY"), col("cartesianZ"), col("cartesianInvalidState")
	}
	attrs := make([][]float64, len(r.names))
	for k, name := range r.names {
		for _, o := range optionalAttrs {
			if o.attr == name {
				attrs[k] = col(o.field)
			}
		}
	}
	q, t := s.Rotation, s.Translation
	identity := q == [4]float64{1, 0, 0, 0} && t == (r3.Vec{})
	m := rotation(q)
	base := c.Len()
	c.P = grow(c.P, base+n)
	c.Line = grow(c.Line, base+n)
	c.Reject = grow(c.Reject, base+n)
	pts, lines, rejects := c.P[base:], c.Line[base:], c.Reject[base:]
	// Simple passes, each a tight loop: positions, pose, unit, record
	// numbers, then validity.
	if s.Spherical {
		// E57 sphericalRange, sphericalAzimuth, sphericalElevation (radians).
		a, b, cc := a[:len(pts)], b[:len(pts)], cc[:len(pts)]
		for i := range pts {
			sa, ca := math.Sincos(b[i])
			se, ce := math.Sincos(cc[i])
			pts[i] = r3.Vec{X: a[i] * ce * ca, Y: a[i] * ce * sa, Z: a[i] * se}
		}
	} else {
		a, b, cc := a[:len(pts)], b[:len(pts)], cc[:len(pts)]
		for i := range pts {
			pts[i] = r3.Vec{X: a[i], Y: b[i], Z: cc[i]}
		}
	}
	if !identity {
		for i, p := range pts {
			pts[i] = r3.Vec{
				X: m[0]*p.X + m[1]*p.Y + m[2]*p.Z + t.X,
				Y: m[3]*p.X + m[4]*p.Y + m[5]*p.Z + t.Y,
				Z: m[6]*p.X + m[7]*p.Y + m[8]*p.Z + t.Z,
			}
		}
	}
	if u := r.unit; u != 1 {
		for i, p := range pts {
			pts[i] = r3.Scale(u, p)
		}
	}
	for i := range lines {
		lines[i] = r.record + 1 + int64(i)
	}
	r.record += int64(n)
	clear(rejects)
	rejected := false
	if bad != nil {
		bad := bad[:len(pts)]
		for i := range pts {
			if bad[i] != 0 {
				rejects[i] = invalidReason(bad[i])
				rejected = true
			}
		}
	}
	// The comparisons fail for NaN too, so they catch NaN, ±Inf and
	// magnitudes beyond cloud.MaxCoord; the reason is worked out only then.
	const lim = cloud.MaxCoord
	for i, p := range pts {
		if !(math.Abs(p.X) <= lim && math.Abs(p.Y) <= lim && math.Abs(p.Z) <= lim) && rejects[i] == "" {
			rejects[i] = badValue(p)
			rejected = true
		}
	}
	if rejected {
		for i := range pts {
			if rejects[i] != "" {
				pts[i] = r3.Vec{} // a rejected record's P is the zero vector
			}
		}
	}
	scanNo := float64(r.cur + 1)
	for k := range c.Attr {
		vals := grow(c.Attr[k].Values, base+n)
		c.Attr[k].Values = vals
		dst := vals[base:]
		switch {
		case k == 0:
			for i := range dst {
				dst[i] = scanNo
			}
		case attrs[k] != nil:
			copy(dst, attrs[k])
		default:
			for i := range dst {
				dst[i] = math.NaN()
			}
		}
	}
	v.left -= int64(n)
}

// invalidReason names an E57 invalid state (ASTM E2807, from memory: 0 valid, 1 the
// direction is meaningful but not the range, 2 no meaningful value).
func invalidReason(state float64) string {
	switch state {
	case 1:
		return "E57 invalid state 1: direction only, no valid range"
	case 2:
		return "E57 invalid state 2: no valid coordinates"
	}
	return "E57 invalid state out of range"
}

// badValue gives the reject reason of a point with a NaN or infinite
// coordinate or one beyond cloud.MaxCoord.
func badValue(p r3.Vec) string {
	m := max(math.Abs(p.X), math.Abs(p.Y), math.Abs(p.Z))
	if math.IsNaN(m) || math.IsInf(m, 0) {
		return fmt.Sprintf("not finite (%g, %g, %g)", p.X, p.Y, p.Z)
	}
	return fmt.Sprintf("out of range (|v| = %g m > %g m)", m, float64(cloud.MaxCoord))
}

// rotation returns the row-major rotation matrix of the unit quaternion
// q = (w, x, y, z) (the standard Euler–Rodrigues form, e.g. Kuipers,
// Quaternions and Rotation Sequences, 1999, §5.14; from memory).
func rotation(q [4]float64) [9]float64 {
	w, x, y, z := q[0], q[1], q[2], q[3]
	return [9]float64{
		1 - 2*(y*y+z*z), 2 * (x*y - w*z), 2 * (x*z + w*y),
		2 * (x*y + w*z), 1 - 2*(x*x+z*z), 2 * (y*z - w*x),
		2 * (x*z - w*y), 2 * (y*z + w*x), 1 - 2*(x*x+y*y),
	}
}

// grow returns s resliced to length n, keeping its first elements and
// reallocating (with room to spare) only if its capacity is too small.
func grow[T any](s []T, n int) []T {
	if cap(s) < n {
		ns := make([]T, n, max(n, 2*cap(s)))
		copy(ns, s)
		return ns
	}
	return s[:n]
}

// makeInfo lists the header and scan facts for inspect.
func (r *Reader) makeInfo(root *elem, total int64, opt cloud.Options) cloud.Info {
	unit := cloud.Metre
	if r.unit != 1 {
		unit = opt.Unit
	}
	info := cloud.Info{Format: "e57", Count: total, Columns: append([]string{"x", "y", "z"}, r.names...), Unit: unit}
	add := func(k, format string, a ...any) {
		info.Facts = append(info.Facts, cloud.Fact{Key: k, Value: fmt.Sprintf(format, a...)})
	}
	h := r.hdr
	add("version", "%d.%d", h.Major, h.Minor)
	add("physical length", "%d bytes (%d pages of %d)", h.Length, h.Length/pageSize, h.PageSize)
	add("XML section", "physical offset %d, logical length %d", h.XMLOffset, h.XMLLength)
	if g := root.kid("guid"); g != nil {
		add("guid", "%s", strings.TrimSpace(g.Text))
	}
	if cm := root.kid("coordinateMetadata"); cm != nil && strings.TrimSpace(cm.Text) != "" {
		add("CRS", "%s", strings.TrimSpace(cm.Text))
	}
	add("scans", "%d", len(r.scans))
	add("records", "%d", total)
	single := false
	for i, s := range r.scans {
		k := fmt.Sprintf("scan %d", i+1)
		add(k, "name %q, %d records, binary section at byte %d", s.Name, s.Records, s.Offset)
		add(k+" pose", "rotation (w,x,y,z) %v, translation %v %v %v m", s.Rotation, s.Translation.X, s.Translation.Y, s.Translation.Z)
		if s.Bounds != nil {
			add(k+" bounds", "x [%v, %v] y [%v, %v] z [%v, %v]", s.Bounds[0], s.Bounds[1], s.Bounds[2], s.Bounds[3], s.Bounds[4], s.Bounds[5])
		}
		var fs []string
		for _, f := range s.Fields {
			d := f.Name + " " + f.Type
			switch {
			case f.Type == "Float" && f.Single:
				d += " single"
				if strings.HasPrefix(f.Name, "cartesian") {
					single = true
				}
			case f.Type == "Float":
				d += " double"
			case f.Type == "ScaledInteger":
				d += fmt.Sprintf(" [%d, %d]×%v+%v (%d bits)", f.Min, f.Max, f.Scale, f.Offset, f.Bits)
			default:
				d += fmt.Sprintf(" [%d, %d] (%d bits)", f.Min, f.Max, f.Bits)
			}
			fs = append(fs, d)
		}
		add(k+" fields", "%s", strings.Join(fs, "; "))
	}
	if single {
		info.Warnings = append(info.Warnings, "coordinates are stored as single-precision floats (about 7 significant digits)")
	}
	if im := root.kid("images2D"); im != nil && len(im.Kids) > 0 {
		info.Warnings = append(info.Warnings, fmt.Sprintf("%d images2D entries are not read", len(im.Kids)))
	}
	return info
}

var _ cloud.Reader = (*Reader)(nil)
