package cloud

import (
	"bufio"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"math/bits"
	"os"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/spatial/r3"
)

// PLY reading follows Turk's format description (G. Turk, "The PLY Polygon
// File Format", 1994; as published by P. Bourke, paulbourke.net/dataformats/ply).

// plyType is a PLY scalar type.
type plyType uint8

const (
	tNone plyType = iota
	tInt8
	tUint8
	tInt16
	tUint16
	tInt32
	tUint32
	tFloat32
	tFloat64
)

// plyTypes maps the type names of the 1994 description and their sized
// aliases to types.
var plyTypes = map[string]plyType{
	"char": tInt8, "int8": tInt8, "uchar": tUint8, "uint8": tUint8,
	"short": tInt16, "int16": tInt16, "ushort": tUint16, "uint16": tUint16,
	"int": tInt32, "int32": tInt32, "uint": tUint32, "uint32": tUint32,
	"float": tFloat32, "float32": tFloat32, "double": tFloat64, "float64": tFloat64,
}

// size returns the size of t in bytes.
func (t plyType) size() int {
	switch t {
	case tInt8, tUint8:
		return 1
	case tInt16, tUint16:
		return 2
	case tInt32, tUint32, tFloat32:
		return 4
	case tFloat64:
		return 8
	}
	return 0
}

func (t plyType) integer() bool { return t != tFloat32 && t != tFloat64 && t != tNone }

// PLY encodings.
const (
	plyASCII = iota
	plyLE
	plyBE
)

var plyEncodings = map[string]int{"ascii": plyASCII, "binary_little_endian": plyLE, "binary_big_endian": plyBE}

type plyProp struct {
	name     string
	typ      plyType // scalar type, or list item type
	countTyp plyType // list count type; tNone for a scalar
	off      int     // offset in a fixed-size record
}

type plyElement struct {
	name    string
	count   int64
	props   []plyProp
	line    int // header line that declared it
	fixed   int // record size in bytes, or -1 when the element has lists
	minSize int // smallest possible record size in bytes
}

// maxHeader bounds the PLY header.
const maxHeader = 1 << 20

// plyBlock is the target size of one binary read, in bytes: large enough to
// amortise the read call and to bypass the bufio buffer (64 KiB), small
// enough that the three prefetch buffers stay within a typical L2/L3 share
// (768 KiB in all). Measured on the 1M-point benchmark, 2^16 to 2^20 were
// within the noise of a shared machine; 2^18 was among the best.
const plyBlock = 1 << 18

// plyReader streams the vertex element of a PLY file.
type plyReader struct {
	path  string
	close func() error
	br    *bufio.Reader
	off   int64 // bytes consumed from the start of the file
	size  int64 // file size, or -1 when unknown
	unit  Unit
	enc   int
	swap  bool // binary big-endian

	elems []plyElement
	vert  *plyElement
	xyz   [3]int // indexes of x, y, z in vert.props
	attrs []int  // indexes of the other scalar vertex properties
	names []string
	fast  bool // fixed layout with little-endian double x, y, z
	// recheck is set when the fast path met a point that check must see.
	recheck bool

	done int64 // vertex records returned

	// Prefetching of fixed-size binary records (see prefetch).
	full, free chan *block
	quit       chan struct{}
	cur        *block // block being decoded, from r.pos on
	pos        int
	vertAt     int64 // file offset of the first vertex record

	scratch [3][]float64
	tok     []byte
	nonNum  bool // the last ascii scalar was no number
	term    byte // the byte that ended the last ascii token
	// misaligned is the first ascii vertex record (1-based) that did not
	// end its line, or 0.
	misaligned int64

	f32    bool    // coordinates stored as float32
	maxAbs float64 // largest |coordinate| seen, metres
	info   Info
	err    error // sticky fatal error, or io.EOF once done
}

// OpenPLY opens the PLY file at path (ascii, binary_little_endian or
// binary_big_endian, version 1.0) and reads its header. The vertex
// element's x, y, z (of any numeric type) become Chunk.P in metres after
// opt.Unit; its other scalar properties become Chunk.Attr. Elements before
// and after the vertex element are skipped. Chunk.ID is nil: the 1-based
// vertex number Chunk.Line is the id.
func OpenPLY(path string, opt Options) (Reader, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	st, err := f.Stat()
	if err != nil {
		f.Close()
		return nil, err
	}
	size := int64(-1)
	if st.Mode().IsRegular() {
		size = st.Size()
	}
	r, err := newPLY(f, path, size, opt)
	if err != nil {
		f.Close()
		return nil, err
	}
	r.close = f.Close
	return r, nil
}

// newPLY reads the header from src, whose total size is size bytes (-1:
// unknown, no size check), and skips to the vertex element.
func newPLY(src io.Reader, path string, size int64, opt Options) (*plyReader, error) {
	r := &plyReader{path: path, br: bufio.NewReaderSize(src, 1<<16), size: size, unit: opt.Unit}
	if r.unit.Metres == 0 {
		r.unit = Metre
	}
	if err := r.header(); err != nil {
		return nil, err
	}
	if err := r.checkSize(); err != nil {
		return nil, err
	}
	for i := range r.elems {
		e := &r.elems[i]
		if e == r.vert {
			break
		}
		if err := r.skipElement(e); err != nil {
			return nil, err
		}
	}
	return r, nil
}

func (r *plyReader) errf(off int64, cause error, format string, args ...any) error {
	return &FormatError{Path: r.path, Offset: off, Msg: fmt.Sprintf(format, args...), Err: cause}
}

// header parses the header up to and including end_header.
func (r *plyReader) header() error {
	var cur *plyElement
	format := false
	for lineNo := 1; ; lineNo++ {
		start := r.off
		raw, err := r.br.ReadSlice('\n')
		r.off += int64(len(raw))
		if err != nil {
			if err == bufio.ErrBufferFull {
				return r.errf(start, nil, "header line %d is longer than %d bytes", lineNo, len(raw))
			}
			if err == io.EOF {
				return r.errf(r.off, io.ErrUnexpectedEOF, "header ends before end_header")
			}
			return r.errf(r.off, err, "reading header")
		}
		if r.off > maxHeader {
			return r.errf(start, nil, "header longer than %d bytes", maxHeader)
		}
		words := strings.Fields(string(raw))
		if lineNo == 1 {
			if len(words) != 1 || words[0] != "ply" {
				return r.errf(0, nil, "not a PLY file: the first line is not \"ply\"")
			}
			continue
		}
		if len(words) == 0 {
			continue
		}
		bad := func(what string) error {
			return r.errf(start, nil, "header line %d %q: %s", lineNo, strings.TrimSpace(string(raw)), what)
		}
		switch words[0] {
		case "format":
			if len(words) != 3 {
				return bad("want format <encoding> 1.0")
			}
			enc, ok := plyEncodings[words[1]]
			if !ok {
				return r.errf(start, &UnsupportedError{"PLY", "encoding " + strconv.Quote(words[1])}, "header line %d", lineNo)
			}
			if words[2] != "1.0" && words[2] != "1" {
				return r.errf(start, &UnsupportedError{"PLY", "version " + strconv.Quote(words[2])}, "header line %d", lineNo)
			}
			r.enc, r.swap, format = enc, enc == plyBE, true
			r.info.Format = "ply-" + words[1]
		case "comment", "obj_info":
			if len(r.info.Facts) < 32 {
				r.info.Facts = append(r.info.Facts, Fact{words[0], strings.TrimSpace(strings.TrimPrefix(strings.TrimSpace(string(raw)), words[0]))})
			}
		case "element":
			if len(words) != 3 {
				return bad("want element <name> <count>")
			}
			n, err := strconv.ParseInt(words[2], 10, 64)
			if err != nil || n < 0 {
				return bad("the count is not a non-negative integer")
			}
			r.elems = append(r.elems, plyElement{name: words[1], count: n, line: lineNo})
			cur = &r.elems[len(r.elems)-1]
		case "property":
			if cur == nil {
				return bad("property before any element")
			}
			var p plyProp
			var ok bool
			switch {
			case len(words) == 3:
				p.name = words[2]
				p.typ, ok = plyTypes[words[1]]
			case len(words) == 5 && words[1] == "list":
				p.name = words[4]
				p.countTyp, ok = plyTypes[words[2]]
				if ok && !p.countTyp.integer() {
					return bad("a list count must have an integer type")
				}
				var ok2 bool
				p.typ, ok2 = plyTypes[words[3]]
				ok = ok && ok2
			default:
				return bad("want property <type> <name> or property list <count type> <item type> <name>")
			}
			if !ok {
				return r.errf(start, &UnsupportedError{"PLY", "property type in " + strconv.Quote(strings.Join(words, " "))}, "header line %d", lineNo)
			}
			cur.props = append(cur.props, p)
		case "end_header":
			if !format {
				return r.errf(start, nil, "no format line before end_header")
			}
			return r.layout()
		default:
			return bad("unknown keyword")
		}
	}
}

// layout computes record sizes, finds the vertex element and its x, y, z.
func (r *plyReader) layout() error {
	for i := range r.elems {
		e := &r.elems[i]
		e.fixed = 0
		for j := range e.props {
			p := &e.props[j]
			if p.countTyp != tNone {
				e.fixed = -1
				e.minSize += p.countTyp.size()
				continue
			}
			p.off = e.minSize
			e.minSize += p.typ.size()
		}
		if e.fixed == 0 {
			e.fixed = e.minSize
		}
		if e.name == "vertex" && r.vert == nil {
			r.vert = e
		}
	}
	v := r.vert
	if v == nil {
		return r.errf(r.off, ErrMissingColumn, "the header declares no vertex element")
	}
	r.info.Path, r.info.Count, r.info.Unit = r.path, v.count, r.unit
	r.xyz = [3]int{-1, -1, -1}
	for j, p := range v.props {
		k := strings.Index("xyz", p.name)
		if len(p.name) == 1 && k >= 0 && r.xyz[k] < 0 {
			if p.countTyp != tNone {
				return r.errf(r.off, &UnsupportedError{"PLY", "vertex " + p.name + " as a list"}, "header line %d", v.line)
			}
			r.xyz[k] = j
			r.info.Columns = append(r.info.Columns, p.name)
			continue
		}
		if p.countTyp != tNone {
			r.info.Columns = append(r.info.Columns, roleSkip)
			continue
		}
		r.attrs = append(r.attrs, j)
		r.names = append(r.names, p.name)
		r.info.Columns = append(r.info.Columns, p.name)
	}
	for k, j := range r.xyz {
		if j < 0 {
			return r.errf(r.off, ErrMissingColumn, "the vertex element (header line %d) has no %c property", v.line, "xyz"[k])
		}
		if v.props[j].typ == tFloat32 {
			r.f32 = true
		}
	}
	t := func(k int) plyType { return v.props[r.xyz[k]].typ }
	r.fast = v.fixed > 0 && r.enc == plyLE && t(0) == tFloat64 && t(1) == tFloat64 && t(2) == tFloat64
	var el []string
	for _, e := range r.elems {
		el = append(el, e.name+" "+strconv.FormatInt(e.count, 10))
	}
	r.info.Facts = append([]Fact{{"elements", strings.Join(el, ", ")}}, r.info.Facts...)
	return nil
}

// checkSize compares what the header announces up to the end of the vertex
// element with the size of the file, so that a lying count fails at once.
func (r *plyReader) checkSize() error {
	if r.size < 0 {
		return nil
	}
	var need uint64 // smallest possible body size through the vertex element
	for i := range r.elems {
		e := &r.elems[i]
		per := uint64(e.minSize)
		if r.enc == plyASCII {
			per = 2 * uint64(len(e.props)) // one digit and one blank per value at least
		}
		hi, lo := bits.Mul64(uint64(e.count), per)
		sum, carry := bits.Add64(need, lo, 0)
		if hi != 0 || carry != 0 {
			return r.errf(r.off, nil, "element %s (header line %d) announces %d records, more than any file holds", e.name, e.line, e.count)
		}
		need = sum
		if e == r.vert {
			break
		}
	}
	if r.enc == plyASCII && need > 0 {
		need-- // the last value needs no separator
	}
	have := uint64(r.size - r.off)
	if need > have {
		kind := "bytes"
		if r.enc == plyASCII {
			kind = "bytes of text"
		}
		return r.errf(r.size, io.ErrUnexpectedEOF,
			"the header announces %d vertex records (header line %d), which need at least %d %s after the header at byte %d, but the file ends at byte %d",
			r.vert.count, r.vert.line, need, kind, r.off, r.size)
	}
	return nil
}

// skipElement reads past every record of e.
func (r *plyReader) skipElement(e *plyElement) error {
	if r.enc != plyASCII && e.fixed >= 0 {
		total := e.count * int64(e.fixed) // checked against the file size, or bounded by EOF
		for total > 0 {
			n := int(min(total, 1<<30))
			got, err := r.br.Discard(n)
			r.off += int64(got)
			if err != nil {
				return r.errf(r.off, io.ErrUnexpectedEOF, "element %s ends early", e.name)
			}
			total -= int64(n)
		}
		return nil
	}
	if len(e.props) == 0 {
		return nil // records of no properties take no bytes
	}
	for i := int64(0); i < e.count; i++ {
		for j := range e.props {
			if _, err := r.value(e, i, &e.props[j]); err != nil {
				return err
			}
		}
	}
	return nil
}

// value reads one property of record i of e on the record-by-record path.
// For a list it skips the items and returns the count. In ascii, a value
// that is no number comes back as NaN with a nil error.
func (r *plyReader) value(e *plyElement, i int64, p *plyProp) (float64, error) {
	if p.countTyp == tNone {
		return r.scalar(e, i, p, p.typ, false)
	}
	v, err := r.scalar(e, i, p, p.countTyp, true)
	if err != nil {
		return 0, err
	}
	if v < 0 || v != math.Trunc(v) || v > 1<<31 {
		return 0, r.errf(r.off, nil, "%s record %d: list %s has count %v", e.name, i+1, p.name, v)
	}
	n := int64(v)
	if r.enc == plyASCII {
		for k := int64(0); k < n; k++ {
			if _, err := r.scalar(e, i, p, p.typ, false); err != nil {
				return 0, err
			}
		}
		return v, nil
	}
	skip := int(n) * p.typ.size()
	got, err := r.br.Discard(skip)
	r.off += int64(got)
	if err != nil {
		return 0, r.errf(r.off, io.ErrUnexpectedEOF, "%s record %d: list %s ends early", e.name, i+1, p.name)
	}
	return v, nil
}

// scalar reads one value of type t; count marks a list count, which must
// be a number in ascii.
func (r *plyReader) scalar(e *plyElement, i int64, p *plyProp, t plyType, count bool) (float64, error) {
	if r.enc == plyASCII {
		tok, err := r.token()
		if err != nil {
			return 0, r.errf(r.off, err, "%s record %d of %d, property %s", e.name, i+1, e.count, p.name)
		}
		v, err := strconv.ParseFloat(string(tok), 64)
		if err != nil && !errors.Is(err, strconv.ErrRange) {
			if count {
				return 0, r.errf(r.off-int64(len(tok)), nil, "%s record %d: list %s has count %q", e.name, i+1, p.name, tok)
			}
			r.nonNum = true
			return math.NaN(), nil
		}
		return v, nil
	}
	n := t.size()
	b, err := r.br.Peek(n)
	if err != nil {
		return 0, r.errf(r.off+int64(len(b)), io.ErrUnexpectedEOF, "%s record %d of %d, property %s", e.name, i+1, e.count, p.name)
	}
	v := load(b, t, r.swap)
	r.br.Discard(n)
	r.off += int64(n)
	return v, nil
}

// token returns the next blank-separated ascii token.
func (r *plyReader) token() ([]byte, error) {
	r.tok = r.tok[:0]
	for {
		c, err := r.br.ReadByte()
		if err != nil {
			if len(r.tok) > 0 && err == io.EOF {
				r.term = '\n'
				return r.tok, nil
			}
			if err == io.EOF {
				err = io.ErrUnexpectedEOF
			}
			return nil, err
		}
		r.off++
		if c == ' ' || c == '\t' || c == '\n' || c == '\r' || c == '\f' || c == '\v' {
			if len(r.tok) > 0 {
				r.term = c
				return r.tok, nil
			}
			continue
		}
		if len(r.tok) >= 64 {
			return nil, errors.New("a value longer than 64 bytes")
		}
		r.tok = append(r.tok, c)
	}
}

// lineEnds reports whether the ascii record just read ends its line
// (blanks may follow), consuming the rest of the line when it does. One
// record per line is how ascii PLY is written (Turk 1994); a record that
// does not end its line means the header's properties do not match the
// data.
func (r *plyReader) lineEnds() bool {
	if r.term == '\n' {
		return true
	}
	for {
		b, err := r.br.Peek(1)
		if err != nil {
			return true // end of file
		}
		switch b[0] {
		case ' ', '\t', '\r', '\f', '\v':
			r.br.Discard(1)
			r.off++
		case '\n':
			r.br.Discard(1)
			r.off++
			r.term = '\n'
			return true
		default:
			return false
		}
	}
}

// load decodes one scalar of type t from b (little-endian, or big-endian
// when swap is set).
func load(b []byte, t plyType, swap bool) float64 {
	le := binary.LittleEndian
	switch t {
	case tInt8:
		return float64(int8(b[0]))
	case tUint8:
		return float64(b[0])
	case tInt16, tUint16:
		u := le.Uint16(b)
		if swap {
			u = bits.ReverseBytes16(u)
		}
		if t == tInt16 {
			return float64(int16(u))
		}
		return float64(u)
	case tInt32, tUint32, tFloat32:
		u := le.Uint32(b)
		if swap {
			u = bits.ReverseBytes32(u)
		}
		switch t {
		case tInt32:
			return float64(int32(u))
		case tUint32:
			return float64(u)
		}
		return float64(math.Float32frombits(u))
	case tFloat64:
		u := le.Uint64(b)
		if swap {
			u = bits.ReverseBytes64(u)
		}
		return math.Float64frombits(u)
	}
	return math.NaN()
}

// decodeColumn sets dst[i] to the value of type t at byte off of record i
// of the fixed-size records in src (rec bytes each). The loops for the
// common types avoid the per-value type switch of load.
func decodeColumn(dst []float64, src []byte, rec, off int, t plyType, swap bool) {
	le := binary.LittleEndian
	switch {
	case t == tUint8:
		for i := range dst {
			dst[i] = float64(src[i*rec+off])
		}
	case t == tFloat32 && !swap:
		for i := range dst {
			dst[i] = float64(math.Float32frombits(le.Uint32(src[i*rec+off:])))
		}
	case t == tFloat64 && !swap:
		for i := range dst {
			dst[i] = math.Float64frombits(le.Uint64(src[i*rec+off:]))
		}
	default:
		for i := range dst {
			dst[i] = load(src[i*rec+off:], t, swap)
		}
	}
}

// Read implements Reader.
func (r *plyReader) Read(c *Chunk, max int) error {
	if max <= 0 {
		max = DefaultChunk
	}
	c.Reset()
	c.ID, c.Code = nil, nil
	c.Attr = attrsFor(c.Attr, r.names)
	if r.err != nil {
		return r.err
	}
	n := int(min(int64(max), r.vert.count-r.done))
	if n == 0 {
		r.err = io.EOF
		return r.err
	}
	c.P = grow(c.P, n)
	c.Line = grow(c.Line, n)
	c.Reject = grow(c.Reject, n)
	clear(c.Reject)
	for k := range c.Attr {
		c.Attr[k].Values = grow(c.Attr[k].Values, n)
	}
	for i := range c.Line {
		c.Line[i] = r.done + int64(i) + 1
	}
	var err error
	if r.enc != plyASCII && r.vert.fixed > 0 {
		err = r.readFixed(c, n)
	} else {
		err = r.readRecords(c, n)
	}
	if err != nil {
		c.Reset()
		r.err = err
		return err
	}
	r.done += int64(n)
	if !r.fast || r.recheck || r.unit.Metres != 1 {
		r.check(c)
	}
	r.recheck = false
	return nil
}

// grow returns s resized to n, reusing its storage when it can.
func grow[T any](s []T, n int) []T {
	if cap(s) < n {
		return make([]T, n)
	}
	return s[:n]
}

// block is one read of fixed-size vertex records.
type block struct {
	data []byte
	off  int64 // file offset of data[0]
	n    int   // bytes read when err is set
	err  error // the read failed: data holds n bytes, then the file ended
}

// prefetch starts reading the rest of the vertex element in blocks of
// size bytes on a second goroutine, so that the next block is copied from
// the file while this one is decoded. Three buffers circulate between
// r.free and r.full; Close stops the goroutine.
func (r *plyReader) prefetch(size int) {
	const nbuf = 3
	r.full, r.free, r.quit = make(chan *block, nbuf), make(chan *block, nbuf), make(chan struct{})
	for i := 0; i < nbuf; i++ {
		r.free <- &block{data: make([]byte, size)}
	}
	r.vertAt = r.off - (r.done * int64(r.vert.fixed))
	left := (r.vert.count - r.done) * int64(r.vert.fixed)
	full, free, quit := r.full, r.free, r.quit // the goroutine touches no field of r
	go func(br io.Reader, off, left int64) {
		defer close(full)
		for left > 0 {
			var b *block
			select {
			case b = <-free:
			case <-quit:
				return
			}
			b.data = b.data[:min(int64(cap(b.data)), left)]
			m, err := io.ReadFull(br, b.data)
			b.off, b.n, b.err = off, m, err
			off, left = off+int64(m), left-int64(m)
			select {
			case full <- b:
			case <-quit:
				return
			}
			if err != nil {
				return
			}
		}
	}(r.br, r.off, left)
}

// readFixed decodes n fixed-size binary vertex records, in blocks.
func (r *plyReader) readFixed(c *Chunk, n int) error {
	v := r.vert
	rec := v.fixed
	per := max(1, plyBlock/rec)
	if r.full == nil {
		r.prefetch(per * rec)
	}
	for got := 0; got < n; {
		if r.cur != nil && r.pos == len(r.cur.data) {
			r.free <- r.cur
			r.cur = nil
		}
		if r.cur == nil {
			b, ok := <-r.full
			if !ok {
				return r.errf(r.off, errors.New("reader closed"), "vertex record %d of %d", r.done+int64(got)+1, v.count)
			}
			if b.err != nil {
				miss := b.off + int64(b.n)
				return r.errf(miss, io.ErrUnexpectedEOF, "vertex record %d of %d", (miss-r.vertAt)/int64(rec)+1, v.count)
			}
			r.cur, r.pos = b, 0
		}
		k := min(n-got, (len(r.cur.data)-r.pos)/rec)
		src := r.cur.data[r.pos : r.pos+k*rec]
		r.pos += k * rec
		r.off = r.cur.off + int64(r.pos)
		p := c.P[got : got+k]
		fused := false // the attributes were decoded with x, y, z
		if r.fast {
			ox, oy, oz := v.props[r.xyz[0]].off, v.props[r.xyz[1]].off, v.props[r.xyz[2]].off
			le := binary.LittleEndian
			// hi is the largest |coordinate| as IEEE 754 bits: for
			// non-negative values the bit patterns order as the values,
			// and NaN patterns lie above +Inf, so one compare at the end
			// finds any non-finite or out-of-range point.
			const sign = 1 << 63
			var hi uint64
			if ox == 0 && oy == 8 && oz == 16 {
				// x, y, z first: constant offsets, one bounds check; a
				// single uchar attribute (intensity) is decoded in the same
				// pass.
				var u8 []float64
				u8off := 0
				if a := r.attrs; len(a) == 1 && v.props[a[0]].typ == tUint8 {
					u8, u8off = c.Attr[0].Values[got:got+k], v.props[a[0]].off
					fused = true
				}
				for i, o := 0, 0; i < len(p); i, o = i+1, o+rec {
					b := src[o : o+rec]
					_ = b[23]
					ux, uy, uz := le.Uint64(b[0:8]), le.Uint64(b[8:16]), le.Uint64(b[16:24])
					p[i] = r3.Vec{X: math.Float64frombits(ux), Y: math.Float64frombits(uy), Z: math.Float64frombits(uz)}
					hi = max(hi, ux&^sign, uy&^sign, uz&^sign)
					if u8 != nil {
						u8[i] = float64(b[u8off])
					}
				}
			} else {
				b := src
				for i := range p {
					ux, uy, uz := le.Uint64(b[ox:]), le.Uint64(b[oy:]), le.Uint64(b[oz:])
					p[i] = r3.Vec{X: math.Float64frombits(ux), Y: math.Float64frombits(uy), Z: math.Float64frombits(uz)}
					hi = max(hi, ux&^sign, uy&^sign, uz&^sign)
					b = b[rec:]
				}
			}
			r.recheck = r.recheck || hi > math.Float64bits(MaxCoord)
		} else {
			for a := range r.scratch {
				r.scratch[a] = grow(r.scratch[a], k)
				pr := v.props[r.xyz[a]]
				decodeColumn(r.scratch[a], src, rec, pr.off, pr.typ, r.swap)
			}
			x, y, z := r.scratch[0], r.scratch[1], r.scratch[2]
			for i := range p {
				p[i] = r3.Vec{X: x[i], Y: y[i], Z: z[i]}
			}
		}
		for a, j := range r.attrs {
			if fused {
				break
			}
			pr := v.props[j]
			decodeColumn(c.Attr[a].Values[got:got+k], src, rec, pr.off, pr.typ, r.swap)
		}
		got += k
	}
	return nil
}

// readRecords decodes n vertex records one by one (ascii, or binary with
// list properties).
func (r *plyReader) readRecords(c *Chunk, n int) error {
	v := r.vert
	attrAt := make(map[int]int, len(r.attrs))
	for a, j := range r.attrs {
		attrAt[j] = a
	}
	for i := 0; i < n; i++ {
		rec := r.done + int64(i)
		var xyz [3]float64
		bad := ""
		for j := range v.props {
			p := &v.props[j]
			r.nonNum = false
			val, err := r.value(v, rec, p)
			if err != nil {
				return err
			}
			if r.nonNum && bad == "" && p.countTyp == tNone {
				bad = fmt.Sprintf("non-numeric %s in property %s", quoteField(r.tok), p.name)
			}
			if a, ok := attrAt[j]; ok {
				c.Attr[a].Values[i] = val
			}
			for k, x := range r.xyz {
				if x == j {
					xyz[k] = val
				}
			}
		}
		c.P[i] = r3.Vec{X: xyz[0], Y: xyz[1], Z: xyz[2]}
		c.Reject[i] = bad
		if r.enc == plyASCII && !r.lineEnds() && r.misaligned == 0 {
			r.misaligned = rec + 1
		}
	}
	return nil
}

// check applies the unit and rejects non-finite and out-of-range points.
func (r *plyReader) check(c *Chunk) {
	u := r.unit.Metres
	for i := range c.P {
		p := c.P[i]
		if u != 1 {
			p = r3.Scale(u, p)
		}
		ax, ay, az := math.Abs(p.X), math.Abs(p.Y), math.Abs(p.Z)
		if ax <= MaxCoord && ay <= MaxCoord && az <= MaxCoord {
			c.P[i] = p
			if r.f32 {
				r.maxAbs = max(r.maxAbs, ax, ay, az)
			}
			continue
		}
		m := max(ax, ay, az)
		if c.Reject[i] == "" {
			if finite(p.X) && finite(p.Y) && finite(p.Z) {
				c.Reject[i] = fmt.Sprintf("out of range (|v| = %g m > %g m)", m, float64(MaxCoord))
			} else {
				c.Reject[i] = fmt.Sprintf("not finite (%g, %g, %g)", c.P[i].X, c.P[i].Y, c.P[i].Z)
			}
		}
		c.P[i] = r3.Vec{}
	}
}

// Info implements Reader. The float32 warning appears once a coordinate
// beyond 1e4 m has been read.
func (r *plyReader) Info() Info {
	in := r.info
	in.Warnings = append([]string(nil), r.info.Warnings...)
	if r.misaligned > 0 {
		in.Warnings = append(in.Warnings, fmt.Sprintf(
			"vertex record %d does not end its line: the header's vertex properties may not match the data, so values may be shifted; check the file's header", r.misaligned))
	}
	if r.f32 && r.maxAbs > 1e4 {
		m := float32(r.maxAbs)
		ulp := float64(math.Nextafter32(m, float32(math.Inf(1)))) - float64(m)
		in.Warnings = append(in.Warnings, fmt.Sprintf(
			"coordinates are stored as float32 and reach %.0f m, where float32 spacing is %.3g m: the file cannot hold millimetres; write double x, y, z or subtract a local origin before export",
			r.maxAbs, ulp))
	}
	return in
}

// Close implements Reader.
func (r *plyReader) Close() error {
	if r.quit != nil {
		close(r.quit)
		r.quit = nil
	}
	if r.err == nil {
		r.err = r.errf(r.off, errClosed, "")
	}
	if r.close == nil {
		return nil
	}
	err := r.close()
	r.close = nil
	return err
}
