package e57

import (
	"encoding/binary"
	"errors"
	"fmt"
	"hash/crc32"
	"io"
)

// Physical layer constants (ASTM E2807, physical layer).
const (
	pageSize     = 1024
	pageData     = 1020 // data bytes per page; the last 4 hold the CRC
	headerSize   = 48
	blockPages   = 64 // pages read and verified per ReadAt
	maxXMLLength = 64 << 20
)

// castagnoli is the CRC-32C table (polynomial 0x1EDC6F41, reflected
// 0x82F63B78; RFC 3720, from memory).
var castagnoli = crc32.MakeTable(crc32.Castagnoli)

// pageCRC returns the CRC-32C of b.
func pageCRC(b []byte) uint32 { return crc32.Checksum(b, castagnoli) }

// toPhysical maps a logical offset (data bytes only) to its physical offset.
func toPhysical(logical int64) int64 {
	return logical/pageData*pageSize + logical%pageData
}

// toLogical maps a physical offset to its logical offset; ok is false for
// an offset inside a page's checksum.
func toLogical(physical int64) (logical int64, ok bool) {
	if physical < 0 || physical%pageSize >= pageData {
		return 0, false
	}
	return physical/pageSize*pageData + physical%pageSize, true
}

// pager reads logical bytes of an E57 file, verifying the checksum of each
// page when it is first read. It keeps one block of pages in memory.
type pager struct {
	r io.ReaderAt
	// mm maps the whole file where the system allows; blocks are then
	// verified and read in place instead of being copied out first.
	mm    []byte
	pages int64 // pages in the file
	block []byte
	first int64 // index of the first page in block
	n     int64 // pages held in block
	// Verified counts the pages checked so far.
	verified int64
}

func newPager(r io.ReaderAt, size int64) *pager {
	return &pager{r: r, pages: size / pageSize, first: -1}
}

// load reads and verifies the block holding page pg.
func (p *pager) load(pg int64) error {
	first := pg / blockPages * blockPages
	n := p.pages - first
	if n > blockPages {
		n = blockPages
	}
	var b []byte
	if end := (first + n) * pageSize; p.mm != nil && end <= int64(len(p.mm)) {
		b = p.mm[first*pageSize : end]
		p.block = b
	} else {
		if p.mm != nil || cap(p.block) < int(n)*pageSize {
			p.mm = nil
			p.block = make([]byte, blockPages*pageSize)
		}
		b = p.block[:n*pageSize]
		if got, err := p.r.ReadAt(b, first*pageSize); got < len(b) {
			p.first = -1
			if err == nil || errors.Is(err, io.EOF) {
				err = io.ErrUnexpectedEOF
			}
			return &FormatError{Offset: first*pageSize + int64(got), Msg: "reading pages", Err: err}
		}
	}
	for i := int64(0); i < n; i++ {
		page := b[i*pageSize : (i+1)*pageSize]
		stored := binary.BigEndian.Uint32(page[pageData:])
		if c := pageCRC(page[:pageData]); c != stored {
			p.first = -1
			return &ChecksumError{Page: first + i, Offset: (first + i) * pageSize, Stored: stored, Computed: c}
		}
	}
	p.verified += n
	p.first, p.n = first, n
	return nil
}

// readAt fills dst with the logical bytes starting at logical offset off.
func (p *pager) readAt(dst []byte, off int64) error {
	for len(dst) > 0 {
		pg := off / pageData
		if pg >= p.pages {
			return &FormatError{Offset: toPhysical(off), Msg: fmt.Sprintf("read past the last page (%d pages)", p.pages), Err: io.ErrUnexpectedEOF}
		}
		if p.first < 0 || pg < p.first || pg >= p.first+p.n {
			if err := p.load(pg); err != nil {
				return err
			}
		}
		in := off % pageData
		src := p.block[(pg-p.first)*pageSize+in : (pg-p.first)*pageSize+pageData]
		k := copy(dst, src)
		dst = dst[k:]
		off += int64(k)
	}
	return nil
}

// header is the 48-byte E57 file header (ASTM E2807, file header).
type header struct {
	Major, Minor uint32
	Length       uint64 // physical length of the file
	XMLOffset    uint64 // physical offset of the XML section
	XMLLength    uint64 // logical length of the XML section
	PageSize     uint64
}

func readHeader(p *pager, size int64) (header, error) {
	var h header
	if size < pageSize {
		return h, &FormatError{Offset: size, Msg: fmt.Sprintf("file of %d bytes is shorter than one 1024-byte page", size), Err: io.ErrUnexpectedEOF}
	}
	var b [headerSize]byte
	if err := p.readAt(b[:], 0); err != nil {
		return h, err
	}
	if string(b[:8]) != "ASTM-E57" {
		return h, &FormatError{Offset: 0, Msg: fmt.Sprintf("file signature %q, want \"ASTM-E57\"", b[:8])}
	}
	le := binary.LittleEndian
	h = header{
		Major: le.Uint32(b[8:]), Minor: le.Uint32(b[12:]),
		Length: le.Uint64(b[16:]), XMLOffset: le.Uint64(b[24:]), XMLLength: le.Uint64(b[32:]),
		PageSize: le.Uint64(b[40:]),
	}
	if h.Major != 1 {
		return h, &UnsupportedError{Offset: 8, Feature: fmt.Sprintf("E57 version %d.%d (this reader handles 1.x)", h.Major, h.Minor)}
	}
	if h.PageSize != pageSize {
		return h, &UnsupportedError{Offset: 40, Feature: fmt.Sprintf("page size %d (the standard fixes 1024)", h.PageSize)}
	}
	if h.Length%pageSize != 0 {
		return h, &FormatError{Offset: 16, Msg: fmt.Sprintf("physical length %d is not a whole number of pages", h.Length)}
	}
	if h.Length > uint64(size) {
		return h, &FormatError{Offset: size, Msg: fmt.Sprintf("file truncated: header says %d bytes, file has %d", h.Length, size), Err: io.ErrUnexpectedEOF}
	}
	xl, ok := toLogical(int64(min(h.XMLOffset, uint64(size))))
	if !ok || h.XMLOffset >= h.Length {
		return h, &FormatError{Offset: 24, Msg: fmt.Sprintf("XML physical offset %d is not a data byte of the file", h.XMLOffset)}
	}
	if h.XMLLength == 0 || h.XMLLength > maxXMLLength || xl+int64(h.XMLLength) > int64(h.Length)/pageSize*pageData {
		return h, &FormatError{Offset: 32, Msg: fmt.Sprintf("XML logical length %d does not fit the file", h.XMLLength)}
	}
	p.pages = int64(h.Length) / pageSize
	return h, nil
}
