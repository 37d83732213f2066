package e57

import (
	"encoding/binary"
	"fmt"
	"io"
	"math"
)

// Packet types of a CompressedVector binary section (ASTM E2807).
const (
	packetIndex = 0
	packetData  = 1
	packetEmpty = 2

	sectionHeaderSize = 32
	streamPad         = 9 // zero bytes kept after a stream's data for 64-bit loads
)

// stream is the bytestream of one prototype field, concatenated across
// data packets.
type stream struct {
	f    *Field
	used bool   // decoded (otherwise its bytes are dropped)
	buf  []byte // undecoded bytes, followed by streamPad zero bytes of capacity
	bit  uint64 // bits of buf already consumed
}

// avail returns how many values the buffered bytes hold.
func (s *stream) avail() int64 {
	if s.f.Bits == 0 {
		return math.MaxInt64
	}
	return int64((uint64(len(s.buf))*8 - s.bit) / uint64(s.f.Bits))
}

// extend makes room for n more bytes at the end of the stream, dropping
// consumed bytes first, and returns that room for the caller to fill. The
// streamPad bytes after it are zero.
func (s *stream) extend(n int) []byte {
	if drop := int(s.bit / 8); drop > 0 {
		k := copy(s.buf, s.buf[drop:])
		s.buf = s.buf[:k]
		s.bit -= uint64(drop) * 8
	}
	old := len(s.buf)
	need := old + n + streamPad
	if cap(s.buf) < need {
		nb := make([]byte, old, 2*need)
		copy(nb, s.buf)
		s.buf = nb
	}
	s.buf = s.buf[:old+n]
	clear(s.buf[old+n : old+n+streamPad])
	return s.buf[old:]
}

// decode writes the next len(dst) values of the stream to dst as float64
// (Integer: raw + Min; ScaledInteger: (raw + Min)·Scale + Offset; Float as
// stored). The caller ensures avail() >= len(dst).
func (s *stream) decode(dst []float64) {
	f := s.f
	le := binary.LittleEndian
	switch {
	case f.Type == "Float" && !f.Single:
		src := s.buf[s.bit/8:][:8*len(dst)]
		for i := range dst {
			dst[i] = math.Float64frombits(le.Uint64(src[8*i : 8*i+8]))
		}
	case f.Type == "Float":
		src := s.buf[s.bit/8:][:4*len(dst)]
		for i := range dst {
			dst[i] = float64(math.Float32frombits(le.Uint32(src[4*i : 4*i+4])))
		}
	case f.Bits == 0:
		v := float64(f.Min)*f.Scale + f.Offset
		if f.Type == "Integer" {
			v = float64(f.Min)
		}
		for i := range dst {
			dst[i] = v
		}
		return
	default:
		w := uint64(f.Bits)
		mask := uint64(math.MaxUint64)
		if w < 64 {
			mask = 1<<w - 1
		}
		bit := s.bit
		buf := s.buf[:len(s.buf)+streamPad]
		lo := f.Min
		if w <= 56 {
			// A value of ≤ 56 bits at any bit shift 0–7 lies within one
			// 64-bit little-endian load.
			for i := range dst {
				v := le.Uint64(buf[bit/8:]) >> (bit % 8)
				dst[i] = float64(int64(v&mask) + lo)
				bit += w
			}
		} else {
			for i := range dst {
				o, sh := bit/8, bit%8
				v := le.Uint64(buf[o:]) >> sh
				if sh+w > 64 {
					v |= uint64(buf[o+8]) << (64 - sh)
				}
				dst[i] = float64(int64(v&mask) + lo)
				bit += w
			}
		}
		if f.Type == "ScaledInteger" {
			sc, off := f.Scale, f.Offset
			for i := range dst {
				dst[i] = dst[i]*sc + off
			}
		}
	}
	s.bit += uint64(len(dst)) * uint64(f.Bits)
}

// vector reads the records of one scan's CompressedVector section.
type vector struct {
	p       *pager
	scan    *Scan
	streams []stream
	next    int64 // logical offset of the next packet
	end     int64 // logical end of the section
	left    int64 // records not yet decoded
	lens    []byte
}

// newVector reads the section header at the scan's physical offset. used
// says which prototype fields are decoded.
func newVector(p *pager, s *Scan, used func(name string) bool) (*vector, error) {
	start, ok := toLogical(s.Offset)
	if !ok {
		return nil, &FormatError{Offset: s.Offset, Msg: "binary section offset points into a page checksum"}
	}
	var h [sectionHeaderSize]byte
	if err := p.readAt(h[:], start); err != nil {
		return nil, err
	}
	if h[0] != 1 {
		return nil, &FormatError{Offset: s.Offset, Msg: fmt.Sprintf("section id %d, want 1 (CompressedVector)", h[0])}
	}
	le := binary.LittleEndian
	length := le.Uint64(h[8:])
	dataPhys := le.Uint64(h[16:])
	if length < sectionHeaderSize || length > uint64(p.pages*pageData) || start+int64(length) > p.pages*pageData {
		return nil, &FormatError{Offset: s.Offset + 8, Msg: fmt.Sprintf("section logical length %d does not fit the file", length)}
	}
	end := start + int64(length)
	next, ok := toLogical(int64(min(dataPhys, math.MaxInt64)))
	if s.Records > 0 && (!ok || next < start+sectionHeaderSize || next >= end) {
		return nil, &FormatError{Offset: s.Offset + 16, Msg: fmt.Sprintf("data physical offset %d lies outside the section", dataPhys)}
	}
	v := &vector{p: p, scan: s, next: next, end: end, left: s.Records}
	v.streams = make([]stream, len(s.Fields))
	for i := range s.Fields {
		v.streams[i] = stream{f: &s.Fields[i], used: used(s.Fields[i].Name)}
	}
	return v, nil
}

// ready returns how many records every used stream can decode now.
func (v *vector) ready() int64 {
	n := v.left
	for i := range v.streams {
		if s := &v.streams[i]; s.used {
			n = min(n, s.avail())
		}
	}
	return n
}

// fill reads data packets until at least one record is ready.
func (v *vector) fill() error {
	for v.ready() == 0 {
		if v.left == 0 {
			return io.EOF
		}
		if err := v.packet(); err != nil {
			return err
		}
	}
	return nil
}

// packet reads the next packet; data packets feed the streams, index and
// empty packets are skipped.
func (v *vector) packet() error {
	phys := toPhysical(v.next)
	if v.next+4 > v.end {
		return &FormatError{Offset: phys, Msg: fmt.Sprintf("binary section ends with %d of %d records of scan %q undecoded", v.left, v.scan.Records, v.scan.Name), Err: io.ErrUnexpectedEOF}
	}
	var h [4]byte
	if err := v.p.readAt(h[:], v.next); err != nil {
		return err
	}
	le := binary.LittleEndian
	n := int64(le.Uint16(h[2:])) + 1
	if v.next+n > v.end {
		return &FormatError{Offset: phys, Msg: fmt.Sprintf("packet of %d bytes runs past the end of its section", n)}
	}
	switch h[0] {
	case packetIndex, packetEmpty:
		v.next += n
		return nil
	case packetData:
	default:
		return &FormatError{Offset: phys, Msg: fmt.Sprintf("unknown packet type %d", h[0])}
	}
	// Read the bytestream lengths, then each used stream's bytes straight
	// from the pages into its buffer; unused streams are skipped unread.
	if n < 6 {
		return &FormatError{Offset: phys, Msg: "data packet shorter than its header"}
	}
	var cb [2]byte
	if err := v.p.readAt(cb[:], v.next+4); err != nil {
		return err
	}
	count := int(le.Uint16(cb[:]))
	if count != len(v.streams) {
		return &FormatError{Offset: phys + 4, Msg: fmt.Sprintf("data packet has %d bytestreams, the prototype %d fields", count, len(v.streams))}
	}
	o := int64(6 + 2*count)
	if o > n {
		return &FormatError{Offset: phys, Msg: "data packet bytestream lengths run past the packet"}
	}
	if cap(v.lens) < 2*count {
		v.lens = make([]byte, 2*count)
	}
	lens := v.lens[:2*count]
	if err := v.p.readAt(lens, v.next+6); err != nil {
		return err
	}
	for i := range v.streams {
		l := int64(le.Uint16(lens[2*i:]))
		if o+l > n {
			return &FormatError{Offset: phys + int64(6+2*i), Msg: fmt.Sprintf("bytestream %d of %d bytes runs past the packet", i+1, l)}
		}
		if s := &v.streams[i]; s.used && l > 0 {
			if err := v.p.readAt(s.extend(int(l)), v.next+o); err != nil {
				return err
			}
		}
		o += l
	}
	v.next += n
	return nil
}
