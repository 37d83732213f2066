package las

import (
	"encoding/binary"
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
	cloud.RegisterFormat(cloud.Format{Name: "las", Match: Match, Open: open})
}

// Match reports whether head starts with the LAS file signature "LASF".
func Match(head []byte) bool { return len(head) >= 4 && string(head[:4]) == "LASF" }

func open(path string, opt cloud.Options) (cloud.Reader, error) { return Open(path, opt) }

// Attribute names, in the order they appear in Chunk.Attr.
const (
	AttrIntensity       = "intensity"
	AttrReturnNumber    = "return_number"
	AttrNumberOfReturns = "number_of_returns"
	AttrClassification  = "classification"
	AttrGPSTime         = "gps_time"
)

// Reader streams the point records of one LAS file. It implements
// cloud.Reader.
type Reader struct {
	h  *Header
	r  io.ReaderAt
	mf *mapped.File // nil unless opened by Open
	// mm maps the file opened by Open, where the system allows: point
	// records are then decoded from the page cache without a copy.
	mm   []byte
	path string
	unit float64 // multiplier applied after scaling; 1 for metres
	// mayExceed is set when scale and offset allow coordinates beyond
	// cloud.MaxCoord, so that Read must check every record.
	mayExceed bool
	next      int64 // 0-based index of the next record
	buf       []byte
	names     []string
	info      cloud.Info
	closed    bool
}

// Open opens the LAS file at path. Options.Unit is applied only when it is a
// non-metre unit (see the package documentation); Options.Columns is ignored.
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
	r.path = path
	r.info.Path = path
	r.mm = mf.Data
	return r, nil
}

// NewReader reads the header of the LAS file of the given size in r and
// returns a Reader positioned at its first point record.
func NewReader(r io.ReaderAt, size int64, opt cloud.Options) (*Reader, error) {
	h, err := readHeader(r, size)
	if err != nil {
		return nil, err
	}
	lr := &Reader{h: h, r: r, unit: 1}
	if m := opt.Unit.Metres; m != 0 && m != 1 {
		lr.unit = m
	}
	lr.names = []string{AttrIntensity, AttrReturnNumber, AttrNumberOfReturns, AttrClassification}
	if hasTime(h.PointFormat) {
		lr.names = append(lr.names, AttrGPSTime)
	}
	for k := 0; k < 3; k++ {
		// |X| ≤ |offset| + 2³¹·|scale| for any int32 record.
		if (math.Abs(h.Offset[k])+math.Abs(h.Scale[k])*(1<<31))*lr.unit > cloud.MaxCoord {
			lr.mayExceed = true
		}
	}
	lr.info = lr.makeInfo(opt)
	return lr, nil
}

// Header returns the file's public header block.
func (r *Reader) Header() *Header { return r.h }

// Info describes the file from its header.
func (r *Reader) Info() cloud.Info { return r.info }

// Close closes the file opened by Open.
func (r *Reader) Close() error {
	if r.closed {
		return nil
	}
	r.closed = true
	r.buf = nil
	r.mm = nil
	if r.mf != nil {
		return r.mf.Close()
	}
	return nil
}

// Read resets c and fills it with up to max point records (max <= 0 means
// cloud.DefaultChunk). It returns io.EOF with c empty after the last record.
func (r *Reader) Read(c *cloud.Chunk, max int) error {
	c.Reset()
	if r.closed {
		return os.ErrClosed
	}
	if max <= 0 {
		max = cloud.DefaultChunk
	}
	left := r.h.Count - r.next
	if left <= 0 {
		return io.EOF
	}
	n := max
	if int64(n) > left {
		n = int(left)
	}
	rl := int(r.h.RecordLength)
	need := n * rl
	off := int64(r.h.PointOffset) + r.next*int64(rl)
	var buf []byte
	if r.mm != nil && off+int64(need) <= int64(len(r.mm)) {
		buf = r.mm[off : off+int64(need)]
	} else {
		if cap(r.buf) < need {
			r.buf = make([]byte, need)
		}
		buf = r.buf[:need]
		if got, err := r.r.ReadAt(buf, off); got < need {
			return &FormatError{Offset: off + int64(got), Msg: fmt.Sprintf("point record %d is cut short", r.next+int64(got/rl)+1), Err: unexpected(err)}
		}
	}
	if err := r.decode(c, buf, n, off); err != nil {
		return err
	}
	r.next += int64(n)
	return nil
}

// decode fills c with the n records in buf. A file mapped into memory that
// is truncated by another program while it is read faults on access; that
// fault is turned into a *FormatError instead of a crash
// (runtime/debug.SetPanicOnFault).
func (r *Reader) decode(c *cloud.Chunk, buf []byte, n int, off int64) (err error) {
	if r.mm != nil {
		defer debug.SetPanicOnFault(debug.SetPanicOnFault(true))
		defer func() {
			if e := recover(); e != nil {
				if _, ok := e.(interface{ Addr() uintptr }); !ok {
					panic(e)
				}
				c.Reset()
				err = &FormatError{Offset: off, Msg: "the file changed (was truncated) while it was being read", Err: io.ErrUnexpectedEOF}
			}
		}()
	}
	r.prepare(c, n)
	if r.h.PointFormat < 6 {
		r.decodeLegacy(c, buf, n)
	} else {
		r.decodeExtended(c, buf, n)
	}
	if r.mayExceed {
		rejectRange(c)
	}
	return nil
}

// rejectRange rejects the records of c beyond cloud.MaxCoord, a unit or
// scale mistake rather than a site coordinate.
func rejectRange(c *cloud.Chunk) {
	for i, p := range c.P {
		if m := math.Max(math.Abs(p.X), math.Max(math.Abs(p.Y), math.Abs(p.Z))); m > cloud.MaxCoord {
			c.Reject[i] = fmt.Sprintf("out of range (|v| = %g m > %g m)", m, float64(cloud.MaxCoord))
			c.P[i] = r3.Vec{}
		}
	}
}

// prepare sizes every slice of c to n records and sets the attribute names.
func (r *Reader) prepare(c *cloud.Chunk, n int) {
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
	for i := range c.Attr {
		c.Attr[i].Values = grow(c.Attr[i].Values, n)
	}
	c.ID, c.Code = nil, nil
	c.P = grow(c.P, n)
	c.Line = grow(c.Line, n)
	c.Reject = grow(c.Reject, n)
	clear(c.Reject)
	first := r.next + 1
	for i := range c.Line {
		c.Line[i] = first + int64(i)
	}
}

// grow returns s resliced to length n, reallocating only if its capacity is
// too small. The contents are overwritten by the caller.
func grow[T any](s []T, n int) []T {
	if cap(s) < n {
		return make([]T, n)
	}
	return s[:n]
}

// decodeLegacy decodes point formats 0–5: X Y Z int32, intensity uint16,
// return byte (return number bits 0–2, number of returns bits 3–5),
// classification byte (class bits 0–4), …, GPS time float64 at byte 20 for
// formats 1, 3, 4, 5 (LAS 1.4 R15 tables 7–12).
func (r *Reader) decodeLegacy(c *cloud.Chunk, buf []byte, n int) {
	rl := int(r.h.RecordLength)
	p := c.P[:n]
	inten, ret, nret, cls := c.Attr[0].Values[:n], c.Attr[1].Values[:n], c.Attr[2].Values[:n], c.Attr[3].Values[:n]
	sc := scaler{r.h.Scale, r.h.Offset}
	le := binary.LittleEndian
	var gps []float64
	if len(c.Attr) > 4 {
		gps = c.Attr[4].Values[:n]
	}
	for i := range p {
		b := buf[i*rl : i*rl+20]
		p[i] = sc.at(b)
		inten[i] = float64(le.Uint16(b[12:]))
		ret[i] = float64(b[14] & 7)
		nret[i] = float64(b[14] >> 3 & 7)
		cls[i] = float64(b[15] & 31)
		if gps != nil {
			gps[i] = math.Float64frombits(le.Uint64(buf[i*rl+20 : i*rl+28]))
		}
	}
	r.applyUnit(p)
}

// decodeExtended decodes point formats 6–10: X Y Z int32, intensity uint16,
// return byte (return number bits 0–3, number of returns bits 4–7), flags
// byte, classification byte, user data, scan angle int16, point source
// uint16, GPS time float64 at byte 22 (LAS 1.4 R15 tables 13–18).
func (r *Reader) decodeExtended(c *cloud.Chunk, buf []byte, n int) {
	rl := int(r.h.RecordLength)
	p := c.P[:n]
	inten, ret, nret, cls := c.Attr[0].Values[:n], c.Attr[1].Values[:n], c.Attr[2].Values[:n], c.Attr[3].Values[:n]
	gps := c.Attr[4].Values[:n]
	sc := scaler{r.h.Scale, r.h.Offset}
	le := binary.LittleEndian
	for i := range p {
		b := buf[i*rl : i*rl+30]
		p[i] = sc.at(b)
		inten[i] = float64(le.Uint16(b[12:]))
		ret[i] = float64(b[14] & 15)
		nret[i] = float64(b[14] >> 4)
		cls[i] = float64(b[16])
		gps[i] = math.Float64frombits(le.Uint64(b[22:]))
	}
	r.applyUnit(p)
}

// scaler applies X = X_record·X_scale + X_offset (likewise Y, Z) in float64
// (LAS 1.4 R15, public header block, "X, Y, and Z scale factor").
type scaler struct{ scale, offset [3]float64 }

// at decodes the three little-endian int32 coordinates at the start of b.
func (s *scaler) at(b []byte) r3.Vec {
	le := binary.LittleEndian
	_ = b[11]
	return r3.Vec{
		X: float64(int32(le.Uint32(b[0:])))*s.scale[0] + s.offset[0],
		Y: float64(int32(le.Uint32(b[4:])))*s.scale[1] + s.offset[1],
		Z: float64(int32(le.Uint32(b[8:])))*s.scale[2] + s.offset[2],
	}
}

// applyUnit multiplies every coordinate by the caller's unit, applied after
// X = X_record·X_scale + X_offset so that metre files stay bit-exact.
func (r *Reader) applyUnit(p []r3.Vec) {
	if u := r.unit; u != 1 {
		for i := range p {
			p[i] = r3.Scale(u, p[i])
		}
	}
}

// makeInfo lists the header facts for inspect.
func (r *Reader) makeInfo(opt cloud.Options) cloud.Info {
	h := r.h
	unit := cloud.Metre
	if r.unit != 1 {
		unit = opt.Unit
	}
	info := cloud.Info{
		Format:  "las",
		Count:   h.Count,
		Columns: append([]string{"x", "y", "z"}, r.names...),
		Unit:    unit,
	}
	add := func(k, format string, a ...any) {
		info.Facts = append(info.Facts, cloud.Fact{Key: k, Value: fmt.Sprintf(format, a...)})
	}
	add("version", "%d.%d", h.VersionMajor, h.VersionMinor)
	add("point format", "%d", h.PointFormat)
	extra := int(h.RecordLength) - int(recordSize[h.PointFormat])
	add("record length", "%d bytes (%d extra)", h.RecordLength, extra)
	add("point count", "%d", h.Count)
	if h.VersionMinor >= 4 {
		add("point count (legacy field)", "%d", h.LegacyCount)
		add("points by return", "%v", h.ByReturn64[:])
	} else {
		add("points by return", "%v", h.LegacyByReturn[:])
	}
	add("scale", "%v %v %v", h.Scale[0], h.Scale[1], h.Scale[2])
	add("offset", "%v %v %v", h.Offset[0], h.Offset[1], h.Offset[2])
	add("header min", "%v %v %v", h.Min[0], h.Min[1], h.Min[2])
	add("header max", "%v %v %v", h.Max[0], h.Max[1], h.Max[2])
	add("global encoding", "%d", h.GlobalEncoding)
	add("system identifier", "%s", h.SystemID)
	add("generating software", "%s", h.Software)
	add("creation day/year", "%d/%d", h.CreationDay, h.CreationYear)
	var vl []string
	for _, v := range h.VLRs {
		kind := "VLR"
		if v.Extended {
			kind = "EVLR"
		}
		vl = append(vl, fmt.Sprintf("%s %s/%d %d bytes %q", kind, v.UserID, v.RecordID, v.Length, v.Description))
	}
	if len(vl) > 0 {
		add("records", "%s", strings.Join(vl, "; "))
	}
	if len(h.ExtraBytes) > 0 {
		var eb []string
		for _, e := range h.ExtraBytes {
			d := fmt.Sprintf("%s (type %d, options %d)", e.Name, e.DataType, e.Options)
			if e.Description != "" {
				d += fmt.Sprintf(" %q", e.Description)
			}
			eb = append(eb, d)
		}
		add("extra bytes", "%s", strings.Join(eb, "; "))
	}
	if h.WKT != "" {
		add("CRS WKT", "%s", h.WKT)
	}
	if h.GeoKeys != "" {
		add("CRS GeoTIFF keys", "%s", h.GeoKeys)
	}
	info.Warnings = append(info.Warnings, h.Warnings...)
	if h.PointFormat >= 6 && h.VersionMinor < 4 {
		info.Warnings = append(info.Warnings, fmt.Sprintf("point format %d in a LAS %d.%d file (formats 6–10 belong to LAS 1.4)", h.PointFormat, h.VersionMajor, h.VersionMinor))
	}
	if h.VersionMinor >= 4 && h.LegacyCount != 0 && uint64(h.LegacyCount) != h.Count64 {
		info.Warnings = append(info.Warnings, fmt.Sprintf("legacy point count %d differs from the 64-bit count %d; using %d", h.LegacyCount, h.Count64, h.Count64))
	}
	if r.unit == 1 {
		switch h.LinearUnit {
		case 9002:
			info.Warnings = append(info.Warnings, "the CRS linear unit is the international foot (EPSG 9002) but the coordinates are read as metres; give the unit ft to convert")
		case 9003:
			info.Warnings = append(info.Warnings, "the CRS linear unit is the US survey foot (EPSG 9003) but the coordinates are read as metres; give the unit us-ft to convert")
		}
	}
	if h.PointFormat == 4 || h.PointFormat == 5 || h.PointFormat >= 9 {
		info.Warnings = append(info.Warnings, "waveform packets are not read")
	}
	return info
}

var _ cloud.Reader = (*Reader)(nil)
