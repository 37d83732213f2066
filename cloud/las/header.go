package las

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
)

// Header is the public header block of a LAS file, with the facts this
// reader draws from its variable length records.
type Header struct {
	FileSourceID   uint16
	GlobalEncoding uint16
	GUID           [16]byte
	VersionMajor   uint8
	VersionMinor   uint8
	SystemID       string // up to the first NUL
	Software       string // generating software, up to the first NUL
	CreationDay    uint16
	CreationYear   uint16
	HeaderSize     uint16
	PointOffset    uint32 // offset to point data
	NumVLR         uint32
	PointFormat    uint8 // 0–10, compression bits cleared
	RecordLength   uint16
	LegacyCount    uint32
	LegacyByReturn [5]uint32
	Scale          [3]float64
	Offset         [3]float64
	Min, Max       [3]float64 // header extents, in file units (already scaled)

	WaveformStart uint64 // LAS 1.3+
	EVLRStart     uint64 // LAS 1.4
	NumEVLR       uint32 // LAS 1.4
	Count64       uint64 // LAS 1.4 number of point records
	ByReturn64    [15]uint64

	// Count is the number of point records the reader will return: the
	// 64-bit count where the legacy count is zero or the version is 1.4,
	// else the legacy count.
	Count int64

	// VLRs lists the variable length records and EVLRs found.
	VLRs []VLR
	// WKT is the coordinate reference system as OGC WKT text, if a VLR or
	// EVLR with record ID 2112 carries it.
	WKT string
	// GeoKeys summarises a GeoTIFF GeoKeyDirectory (record ID 34735) as
	// text, one "name(id)=value" per key, separated by "; ".
	GeoKeys string
	// ExtraBytes describes the extra bytes of each record as declared by
	// an Extra Bytes VLR (LASF_Spec record 4), if any.
	ExtraBytes []ExtraByte
	// Warnings lists damage the reader worked around (a broken EVLR
	// region).
	Warnings []string
	// LinearUnit is the EPSG code of ProjLinearUnitsGeoKey (9001 metre,
	// 9002 foot, 9003 US survey foot), or 0 if not given.
	LinearUnit int
}

// ExtraByte is one descriptor of an Extra Bytes VLR (LAS 1.4 R15, "Extra
// Bytes" record: 192 bytes each; layout from memory).
type ExtraByte struct {
	Name        string
	Description string
	DataType    uint8 // 0 undocumented bytes (length in Options), 1–10 uchar … double, 11–30 arrays (deprecated)
	Options     uint8 // bit field; for DataType 0 the number of bytes
}

// VLR is a variable length record (or extended VLR) header.
type VLR struct {
	UserID      string
	RecordID    uint16
	Length      uint64 // payload bytes after the record header
	Description string
	Offset      int64 // file offset of the payload
	Extended    bool  // an EVLR (LAS 1.4, after the point data)
}

// Standard sizes of the point data record formats 0–10 in bytes (LAS 1.4
// R15, tables 7–18).
var recordSize = [...]uint16{20, 28, 26, 34, 57, 63, 30, 36, 38, 59, 67}

// hasTime reports whether point format f has a GPS time field.
func hasTime(f uint8) bool { return f != 0 && f != 2 }

const (
	vlrHeaderSize  = 54  // LAS 1.4 R15 table 4
	extraByteSize  = 192 // one Extra Bytes descriptor
	evlrHeaderSize = 60  // LAS 1.4 R15 table 6
	minHeaderSize  = 227
)

// cstr returns b up to its first NUL, as LAS character fields are.
func cstr(b []byte) string {
	if i := bytes.IndexByte(b, 0); i >= 0 {
		b = b[:i]
	}
	return string(b)
}

// readHeader parses the public header block and the (E)VLRs of the file in
// r of the given size.
func readHeader(r io.ReaderAt, size int64) (*Header, error) {
	var b [375]byte
	n, err := r.ReadAt(b[:], 0)
	if n < minHeaderSize {
		if err == nil || err == io.EOF {
			err = io.ErrUnexpectedEOF
		}
		return nil, &FormatError{Offset: int64(n), Msg: "public header block shorter than 227 bytes", Err: err}
	}
	if string(b[0:4]) != "LASF" {
		return nil, &FormatError{Offset: 0, Msg: fmt.Sprintf("file signature %q, want \"LASF\"", b[0:4])}
	}
	le := binary.LittleEndian
	h := &Header{
		FileSourceID:   le.Uint16(b[4:]),
		GlobalEncoding: le.Uint16(b[6:]),
		VersionMajor:   b[24],
		VersionMinor:   b[25],
		SystemID:       cstr(b[26:58]),
		Software:       cstr(b[58:90]),
		CreationDay:    le.Uint16(b[90:]),
		CreationYear:   le.Uint16(b[92:]),
		HeaderSize:     le.Uint16(b[94:]),
		PointOffset:    le.Uint32(b[96:]),
		NumVLR:         le.Uint32(b[100:]),
		RecordLength:   le.Uint16(b[105:]),
		LegacyCount:    le.Uint32(b[107:]),
	}
	copy(h.GUID[:], b[8:24])
	for i := range h.LegacyByReturn {
		h.LegacyByReturn[i] = le.Uint32(b[111+4*i:])
	}
	for i := 0; i < 3; i++ {
		h.Scale[i] = math.Float64frombits(le.Uint64(b[131+8*i:]))
		h.Offset[i] = math.Float64frombits(le.Uint64(b[155+8*i:]))
		h.Max[i] = math.Float64frombits(le.Uint64(b[179+16*i:]))
		h.Min[i] = math.Float64frombits(le.Uint64(b[187+16*i:]))
	}
	if h.VersionMajor != 1 || h.VersionMinor > 4 {
		return nil, &UnsupportedError{Offset: 24, Feature: fmt.Sprintf("LAS version %d.%d", h.VersionMajor, h.VersionMinor), Hint: "this reader handles LAS 1.0 to 1.4"}
	}
	need := uint16(minHeaderSize)
	switch h.VersionMinor {
	case 3:
		need = 235
	case 4:
		need = 375
	}
	if h.HeaderSize < need {
		return nil, &FormatError{Offset: 94, Msg: fmt.Sprintf("header size %d, LAS %d.%d needs at least %d", h.HeaderSize, h.VersionMajor, h.VersionMinor, need)}
	}
	if int64(h.HeaderSize) > size || n < int(need) {
		return nil, &FormatError{Offset: int64(n), Msg: fmt.Sprintf("file of %d bytes ends inside the %d-byte public header block", size, h.HeaderSize), Err: io.ErrUnexpectedEOF}
	}
	if h.VersionMinor >= 3 {
		h.WaveformStart = le.Uint64(b[227:])
	}
	if h.VersionMinor >= 4 {
		h.EVLRStart = le.Uint64(b[235:])
		h.NumEVLR = le.Uint32(b[243:])
		h.Count64 = le.Uint64(b[247:])
		for i := range h.ByReturn64 {
			h.ByReturn64[i] = le.Uint64(b[255+8*i:])
		}
	}

	// LAZ: LASzip marks compressed point formats by setting bit 7 (and
	// bit 6) of the format byte (LASzip documentation, from memory).
	fb := b[104]
	if fb&0x80 != 0 {
		return nil, errLAZ(104)
	}
	if fb&0x40 != 0 {
		return nil, &UnsupportedError{Offset: 104, Feature: fmt.Sprintf("point data format byte 0x%02x", fb)}
	}
	h.PointFormat = fb
	if int(fb) >= len(recordSize) {
		return nil, &UnsupportedError{Offset: 104, Feature: fmt.Sprintf("point data record format %d", fb), Hint: "this reader handles formats 0 to 10"}
	}
	if h.RecordLength < recordSize[fb] {
		return nil, &FormatError{Offset: 105, Msg: fmt.Sprintf("point record length %d is shorter than the %d bytes of point format %d", h.RecordLength, recordSize[fb], fb)}
	}
	for i, s := range h.Scale {
		if s == 0 || math.IsNaN(s) || math.IsInf(s, 0) {
			return nil, &FormatError{Offset: int64(131 + 8*i), Msg: fmt.Sprintf("%c scale factor %v is not a finite non-zero number", "XYZ"[i], s)}
		}
		if o := h.Offset[i]; math.IsNaN(o) || math.IsInf(o, 0) {
			return nil, &FormatError{Offset: int64(155 + 8*i), Msg: fmt.Sprintf("%c offset %v is not finite", "XYZ"[i], o)}
		}
	}
	if uint32(h.HeaderSize) > h.PointOffset {
		return nil, &FormatError{Offset: 96, Msg: fmt.Sprintf("offset to point data %d lies inside the %d-byte header", h.PointOffset, h.HeaderSize)}
	}

	// Count: LAS 1.4 R15 (public header block) says the legacy field is zero where the
	// count does not fit or the format is 6–10; the 64-bit field rules.
	h.Count = int64(h.LegacyCount)
	if h.VersionMinor >= 4 && (h.LegacyCount == 0 || uint64(h.LegacyCount) != h.Count64) {
		if h.Count64 > math.MaxInt64 {
			return nil, &FormatError{Offset: 247, Msg: fmt.Sprintf("point count %d is impossible", h.Count64)}
		}
		h.Count = int64(h.Count64)
	}
	// Distrust the count: the body must fit in the file.
	body := size - int64(h.PointOffset)
	if body < 0 {
		return nil, &FormatError{Offset: size, Msg: fmt.Sprintf("file of %d bytes ends before the point data offset %d", size, h.PointOffset), Err: io.ErrUnexpectedEOF}
	}
	if whole := body / int64(h.RecordLength); h.Count > whole {
		return nil, &FormatError{
			Offset: int64(h.PointOffset) + whole*int64(h.RecordLength),
			Msg: fmt.Sprintf("point data truncated: header announces %d records of %d bytes from byte %d, the file holds %d whole records",
				h.Count, h.RecordLength, h.PointOffset, whole),
			Err: io.ErrUnexpectedEOF,
		}
	}

	if err := h.readVLRs(r, size); err != nil {
		return nil, err
	}
	return h, nil
}

func errLAZ(off int64) error {
	return &UnsupportedError{Offset: off, Feature: "LAZ compression",
		Hint: "LAZ is compressed; decompress to LAS first with a LAZ-capable tool"}
}

// readVLRs walks the VLRs between the header and the point data, and the
// EVLRs of LAS 1.4 after it, keeping the CRS records.
func (h *Header) readVLRs(r io.ReaderAt, size int64) error {
	off := int64(h.HeaderSize)
	end := int64(h.PointOffset)
	var hb [evlrHeaderSize]byte
	le := binary.LittleEndian
	for i := uint32(0); i < h.NumVLR; i++ {
		if off+vlrHeaderSize > end {
			return &FormatError{Offset: off, Msg: fmt.Sprintf("VLR %d of %d header runs past the point data offset %d", i+1, h.NumVLR, end)}
		}
		if _, err := r.ReadAt(hb[:vlrHeaderSize], off); err != nil {
			return &FormatError{Offset: off, Msg: "reading VLR header", Err: unexpected(err)}
		}
		v := VLR{
			UserID:      cstr(hb[2:18]),
			RecordID:    le.Uint16(hb[18:]),
			Length:      uint64(le.Uint16(hb[20:])),
			Description: cstr(hb[22:54]),
			Offset:      off + vlrHeaderSize,
		}
		if v.Offset+int64(v.Length) > end {
			return &FormatError{Offset: off + 20, Msg: fmt.Sprintf("VLR %d payload of %d bytes runs past the point data offset %d", i+1, v.Length, end)}
		}
		if err := h.useVLR(r, v); err != nil {
			return err
		}
		off = v.Offset + int64(v.Length)
	}
	if h.NumEVLR == 0 || h.EVLRStart == 0 {
		return h.readGeoKeys(r)
	}
	// EVLRs follow the points; a damaged EVLR region does not make the
	// points unreadable, so it is reported as a warning and skipped.
	if err := h.readEVLRs(r, size); err != nil {
		var fe *FormatError
		if !errors.As(err, &fe) {
			return err // LAZ and other refusals stand
		}
		h.Warnings = append(h.Warnings, "EVLRs skipped: "+err.Error())
	}
	return h.readGeoKeys(r)
}

// readEVLRs walks the extended VLRs of LAS 1.4 after the point data.
func (h *Header) readEVLRs(r io.ReaderAt, size int64) error {
	var hb [evlrHeaderSize]byte
	le := binary.LittleEndian
	bodyEnd := int64(h.PointOffset) + h.Count*int64(h.RecordLength)
	if h.EVLRStart > uint64(size) || int64(h.EVLRStart) < bodyEnd {
		return &FormatError{Offset: 235, Msg: fmt.Sprintf("EVLR start %d lies outside the file after the point data (%d..%d)", h.EVLRStart, bodyEnd, size)}
	}
	off := int64(h.EVLRStart)
	for i := uint32(0); i < h.NumEVLR; i++ {
		if off+evlrHeaderSize > size {
			return &FormatError{Offset: off, Msg: fmt.Sprintf("EVLR %d of %d header runs past the end of the file", i+1, h.NumEVLR), Err: io.ErrUnexpectedEOF}
		}
		if _, err := r.ReadAt(hb[:], off); err != nil {
			return &FormatError{Offset: off, Msg: "reading EVLR header", Err: unexpected(err)}
		}
		v := VLR{
			UserID:      cstr(hb[2:18]),
			RecordID:    le.Uint16(hb[18:]),
			Length:      le.Uint64(hb[20:]),
			Description: cstr(hb[28:60]),
			Offset:      off + evlrHeaderSize,
			Extended:    true,
		}
		if v.Length > uint64(size-v.Offset) {
			return &FormatError{Offset: off + 20, Msg: fmt.Sprintf("EVLR %d payload of %d bytes runs past the end of the file", i+1, v.Length), Err: io.ErrUnexpectedEOF}
		}
		if err := h.useVLR(r, v); err != nil {
			return err
		}
		off = v.Offset + int64(v.Length)
	}
	return nil
}

// maxCRSRecord caps how much of a CRS record is read into memory.
const maxCRSRecord = 1 << 20

// useVLR records v and reads its payload where it carries the CRS.
func (h *Header) useVLR(r io.ReaderAt, v VLR) error {
	h.VLRs = append(h.VLRs, v)
	switch {
	case v.UserID == "laszip encoded" && v.RecordID == 22204:
		return errLAZ(v.Offset)
	case v.UserID == "LASF_Spec" && v.RecordID == 4:
		p, err := payload(r, v)
		if err != nil {
			return err
		}
		for o := 0; o+extraByteSize <= len(p); o += extraByteSize {
			d := p[o : o+extraByteSize]
			h.ExtraBytes = append(h.ExtraBytes, ExtraByte{
				DataType: d[2], Options: d[3], Name: cstr(d[4:36]), Description: cstr(d[160:192]),
			})
		}
	case v.RecordID == 2112 && (v.UserID == "LASF_Projection" || v.UserID == "liblas"):
		if h.WKT != "" && v.UserID == "liblas" {
			return nil // the official record wins
		}
		p, err := payload(r, v)
		if err != nil {
			return err
		}
		h.WKT = cstr(p)
	}
	return nil
}

func payload(r io.ReaderAt, v VLR) ([]byte, error) {
	n := v.Length
	if n > maxCRSRecord {
		n = maxCRSRecord
	}
	p := make([]byte, n)
	if _, err := r.ReadAt(p, v.Offset); err != nil {
		return nil, &FormatError{Offset: v.Offset, Msg: fmt.Sprintf("reading %s record %d", v.UserID, v.RecordID), Err: unexpected(err)}
	}
	return p, nil
}

func unexpected(err error) error {
	if errors.Is(err, io.EOF) {
		return io.ErrUnexpectedEOF
	}
	return err
}
