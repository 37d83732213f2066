package las

import (
	"bytes"
	"encoding/binary"
	"errors"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/cloud"
)

// synthPoint is one record of a synthetic file whose truth the test knows.
type synthPoint struct {
	X, Y, Z   int32
	Intensity uint16
	Ret, NRet uint8
	Class     uint8
	GPS       float64
}

var (
	synthScale  = [3]float64{0.001, 0.001, 0.001}
	synthOffset = [3]float64{500000, 5000000, 100}
)

// buildLAS writes a LAS 1.minor file with the given point format, extra
// bytes per record and points, laid out per LAS 1.4 R15 tables 3 and 7–18.
func buildLAS(minor, format uint8, extra int, pts []synthPoint) []byte {
	hs := 227
	switch minor {
	case 3:
		hs = 235
	case 4:
		hs = 375
	}
	rl := int(recordSize[format]) + extra
	b := make([]byte, hs+rl*len(pts))
	le := binary.LittleEndian
	copy(b, "LASF")
	b[24], b[25] = 1, minor
	copy(b[26:], "synthetic")
	le.PutUint16(b[94:], uint16(hs))
	le.PutUint32(b[96:], uint32(hs))
	b[104] = format
	le.PutUint16(b[105:], uint16(rl))
	if format < 6 {
		le.PutUint32(b[107:], uint32(len(pts)))
	}
	for i := 0; i < 3; i++ {
		le.PutUint64(b[131+8*i:], math.Float64bits(synthScale[i]))
		le.PutUint64(b[155+8*i:], math.Float64bits(synthOffset[i]))
	}
	if minor >= 4 {
		le.PutUint64(b[247:], uint64(len(pts)))
	}
	for i, p := range pts {
		r := b[hs+i*rl:]
		le.PutUint32(r[0:], uint32(p.X))
		le.PutUint32(r[4:], uint32(p.Y))
		le.PutUint32(r[8:], uint32(p.Z))
		le.PutUint16(r[12:], p.Intensity)
		if format < 6 {
			r[14] = p.Ret&7 | (p.NRet&7)<<3
			r[15] = p.Class & 31
			if hasTime(format) {
				le.PutUint64(r[20:], math.Float64bits(p.GPS))
			}
		} else {
			r[14] = p.Ret&15 | p.NRet<<4
			r[16] = p.Class
			le.PutUint64(r[22:], math.Float64bits(p.GPS))
		}
		for j := int(recordSize[format]); j < rl; j++ {
			r[j] = 0xA5 // extra bytes that must be skipped
		}
	}
	return b
}

func synthPoints(n int) []synthPoint {
	pts := make([]synthPoint, n)
	for i := range pts {
		pts[i] = synthPoint{
			X: int32(i*7919 - 1<<30), Y: int32(1<<31 - 1 - i*104729), Z: int32(i*31 - 5000),
			Intensity: uint16(i * 13), Ret: uint8(1 + i%5), NRet: uint8(5), Class: uint8(i % 19),
			GPS: 1e6 + float64(i)/8,
		}
	}
	return pts
}

// TestFormats reads synthetic files of every point format 0–10 (known
// truth: the integers written) with extra bytes, in several chunk sizes.
func TestFormats(t *testing.T) {
	pts := synthPoints(257)
	for f := uint8(0); f <= 10; f++ {
		for k, extra := range []int{0, 5, 1} {
			// LAS 1.2 (227-byte header), 1.3 (235) and 1.4 (375) headers.
			minor := uint8(2 + k)
			if f >= 6 {
				minor = 4
			}
			data := buildLAS(minor, f, extra, pts)
			r, err := NewReader(bytes.NewReader(data), int64(len(data)), cloud.Options{})
			if err != nil {
				t.Fatalf("format %d: %v", f, err)
			}
			if want := [...]uint16{227, 235, 375}[minor-2]; r.Header().HeaderSize != want || fact(r.Info(), "version") != "1."+string(rune('0'+minor)) {
				t.Fatalf("format %d LAS 1.%d: header size %d, version %q", f, minor, r.Header().HeaderSize, fact(r.Info(), "version"))
			}
			res := readAll(t, r, 100)
			if len(res.P) != len(pts) || res.Chunks != 3 {
				t.Fatalf("format %d: %d points in %d chunks, want %d in 3", f, len(res.P), res.Chunks, len(pts))
			}
			for i, p := range pts {
				want := r3.Vec{
					X: float64(p.X)*synthScale[0] + synthOffset[0],
					Y: float64(p.Y)*synthScale[1] + synthOffset[1],
					Z: float64(p.Z)*synthScale[2] + synthOffset[2],
				}
				if res.P[i] != want {
					t.Fatalf("format %d record %d: got %v, want %v", f, i+1, res.P[i], want)
				}
				a := res.Attr
				if a[AttrIntensity][i] != float64(p.Intensity) || a[AttrReturnNumber][i] != float64(p.Ret) ||
					a[AttrNumberOfReturns][i] != float64(p.NRet) || a[AttrClassification][i] != float64(p.Class) {
					t.Fatalf("format %d record %d: attributes %v %v %v %v, want %+v", f, i+1,
						a[AttrIntensity][i], a[AttrReturnNumber][i], a[AttrNumberOfReturns][i], a[AttrClassification][i], p)
				}
				if hasTime(f) && a[AttrGPSTime][i] != p.GPS {
					t.Fatalf("format %d record %d: gps %v, want %v", f, i+1, a[AttrGPSTime][i], p.GPS)
				}
			}
		}
	}
}

// TestUnit checks that an explicit non-metre unit scales every coordinate
// (international foot 0.3048 m exactly, NIST SP 811 appendix B).
func TestUnit(t *testing.T) {
	pts := synthPoints(3)
	data := buildLAS(2, 0, 0, pts)
	r, err := NewReader(bytes.NewReader(data), int64(len(data)), cloud.Options{Unit: cloud.Foot})
	if err != nil {
		t.Fatal(err)
	}
	res := readAll(t, r, 0)
	for i, p := range pts {
		x := (float64(p.X)*synthScale[0] + synthOffset[0]) * 0.3048
		if res.P[i].X != x {
			t.Errorf("record %d: x %v, want %v", i+1, res.P[i].X, x)
		}
	}
	if u := r.Info().Unit; u != cloud.Foot {
		t.Errorf("Info().Unit = %v, want ft", u)
	}
}

// TestInvalid maps malformed or unsupported files to their error types,
// byte offsets and message parts (in the manner of image/png's table).
func TestInvalid(t *testing.T) {
	good := buildLAS(2, 3, 0, synthPoints(10))
	le := binary.LittleEndian
	edit := func(f func(b []byte) []byte) []byte {
		return f(append([]byte(nil), good...))
	}
	withVLR := func(user string, id uint16) []byte {
		b := append([]byte(nil), good[:227]...)
		v := make([]byte, vlrHeaderSize+4)
		copy(v[2:], user)
		le.PutUint16(v[18:], id)
		le.PutUint16(v[20:], 4)
		b = append(b, v...)
		b = append(b, good[227:]...)
		le.PutUint32(b[96:], uint32(227+len(v)))
		le.PutUint32(b[100:], 1)
		return b
	}
	tests := []struct {
		name        string
		data        []byte
		unsupported bool
		offset      int64
		msg         string
		eof         bool
	}{
		{name: "empty", data: nil, offset: 0, msg: "shorter than 227", eof: true},
		{name: "signature", data: edit(func(b []byte) []byte { copy(b, "LASX"); return b }), offset: 0, msg: "signature"},
		{name: "version", data: edit(func(b []byte) []byte { b[25] = 9; return b }), unsupported: true, offset: 24, msg: "version 1.9"},
		{name: "LAZ bit", data: edit(func(b []byte) []byte { b[104] |= 0x80; return b }), unsupported: true, offset: 104, msg: "decompress to LAS first"},
		{name: "LAZ VLR", data: withVLR("laszip encoded", 22204), unsupported: true, offset: 227 + vlrHeaderSize, msg: "LAZ is compressed"},
		{name: "format 11", data: edit(func(b []byte) []byte { b[104] = 11; return b }), unsupported: true, offset: 104, msg: "format 11"},
		{name: "short record", data: edit(func(b []byte) []byte { le.PutUint16(b[105:], 33); return b }), offset: 105, msg: "shorter than the 34 bytes"},
		{name: "zero scale", data: edit(func(b []byte) []byte { le.PutUint64(b[139:], 0); return b }), offset: 139, msg: "Y scale"},
		{name: "NaN offset", data: edit(func(b []byte) []byte { le.PutUint64(b[171:], math.Float64bits(math.NaN())); return b }), offset: 171, msg: "Z offset"},
		{name: "points in header", data: edit(func(b []byte) []byte { le.PutUint32(b[96:], 100); return b }), offset: 96, msg: "inside the 227-byte header"},
		{name: "truncated body", data: good[:len(good)-1], offset: 227 + 9*34, msg: "announces 10 records", eof: true},
		{name: "count too large", data: edit(func(b []byte) []byte { le.PutUint32(b[107:], 1<<31); return b }), offset: 227 + 10*34, msg: "truncated", eof: true},
		{name: "VLR overrun", data: edit(func(b []byte) []byte { le.PutUint32(b[100:], 1); return b }), offset: 227, msg: "VLR 1 of 1"},
		{name: "header size", data: edit(func(b []byte) []byte { le.PutUint16(b[94:], 100); return b }), offset: 94, msg: "header size 100"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := NewReader(bytes.NewReader(tc.data), int64(len(tc.data)), cloud.Options{})
			if err == nil {
				t.Fatal("no error")
			}
			var off int64
			var fe *FormatError
			var ue *UnsupportedError
			switch {
			case errors.As(err, &ue):
				if !tc.unsupported {
					t.Fatalf("got UnsupportedError %v, want FormatError", err)
				}
				off = ue.Offset
			case errors.As(err, &fe):
				if tc.unsupported {
					t.Fatalf("got FormatError %v, want UnsupportedError", err)
				}
				off = fe.Offset
			default:
				t.Fatalf("untyped error %T %v", err, err)
			}
			if off != tc.offset {
				t.Errorf("offset: got %d, want %d (%v)", off, tc.offset, err)
			}
			if !strings.Contains(err.Error(), tc.msg) {
				t.Errorf("error %q does not contain %q", err, tc.msg)
			}
			if errors.Is(err, io.ErrUnexpectedEOF) != tc.eof {
				t.Errorf("errors.Is(err, io.ErrUnexpectedEOF) = %v, want %v", !tc.eof, tc.eof)
			}
		})
	}
}

// TestTruncatedReference cuts a reference file short (simple.las, 1065
// records of 34 bytes from byte 227) and expects the offset of the first
// incomplete record.
func TestTruncatedReference(t *testing.T) {
	data, err := os.ReadFile(refFile(t, "simple.las"))
	if err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(t.TempDir(), "cut.las")
	if err := os.WriteFile(p, data[:len(data)-10], 0o644); err != nil {
		t.Fatal(err)
	}
	_, err = Open(p, cloud.Options{})
	var fe *FormatError
	if !errors.As(err, &fe) || fe.Offset != 227+1064*34 || !errors.Is(err, io.ErrUnexpectedEOF) {
		t.Fatalf("got %v, want FormatError at byte %d wrapping io.ErrUnexpectedEOF", err, 227+1064*34)
	}
}

// TestCRSFacts checks the CRS text kept for the report: the 1.2_0.las
// GeoKeyDirectory (PROVENANCE.md: LASF_Projection 34735, 64 bytes, plus
// ASCII params 34737) and the WKT of test1_4.las.
func TestCRSFacts(t *testing.T) {
	r, err := Open(refFile(t, "1.2_0.las"), cloud.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	keys := fact(r.Info(), "CRS GeoTIFF keys")
	// 64 bytes = 4 header + 7 keys of 4 uint16 each.
	if n := strings.Count(keys, ")="); n != 7 || !strings.Contains(keys, "GTModelType(1024)=1") {
		t.Errorf("GeoTIFF keys: got %q with %d keys, want 7 starting GTModelType(1024)=1", keys, n)
	}
	if len(r.Header().VLRs) != 3 {
		t.Errorf("VLRs: got %d, want 3", len(r.Header().VLRs))
	}
	if w := fact(r.Info(), "CRS WKT"); !strings.HasPrefix(w, "PROJCS[") {
		t.Errorf("WKT: got %.40q, want PROJCS[…", w)
	}
	r2, err := Open(refFile(t, "test1_4.las"), cloud.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer r2.Close()
	if w := r2.Header().WKT; !strings.Contains(w, "[") {
		t.Errorf("test1_4 WKT: got %.60q", w)
	}
}

// TestMatch checks the sniffing of the signature.
func TestMatch(t *testing.T) {
	for _, tc := range []struct {
		head string
		want bool
	}{{"LASF\x00\x00", true}, {"LAS", false}, {"ply\n", false}, {"", false}} {
		if got := Match([]byte(tc.head)); got != tc.want {
			t.Errorf("Match(%q) = %v, want %v", tc.head, got, tc.want)
		}
	}
}

// BenchmarkLASRead reads synthetic files of 2^20 records in point formats
// 0, 1, 2, 3 and 6 (20–34 MiB) from disk (page cache); MB/s is bytes of
// file per wall-clock second, MB/cpu-s per second of process CPU time
// (steadier on a shared machine).
func BenchmarkLASRead(b *testing.B) {
	for _, f := range []uint8{0, 1, 2, 3, 6} {
		b.Run("format"+string(rune('0'+f)), func(b *testing.B) {
			minor := uint8(2)
			if f >= 6 {
				minor = 4
			}
			data := buildLAS(minor, f, 0, synthPoints(1<<20))
			p := filepath.Join(b.TempDir(), "bench.las")
			if err := os.WriteFile(p, data, 0o644); err != nil {
				b.Fatal(err)
			}
			b.SetBytes(int64(len(data)))
			b.ReportAllocs()
			var c cloud.Chunk
			b.ResetTimer()
			cpu0 := cpuTime()
			defer func() {
				if cpu := cpuTime() - cpu0; cpu > 0 {
					b.ReportMetric(float64(b.N)*float64(len(data))/1e6/cpu.Seconds(), "MB/cpu-s")
				}
			}()
			for i := 0; i < b.N; i++ {
				r, err := Open(p, cloud.Options{})
				if err != nil {
					b.Fatal(err)
				}
				for {
					err := r.Read(&c, 0)
					if err == io.EOF {
						break
					}
					if err != nil {
						b.Fatal(err)
					}
				}
				r.Close()
			}
		})
	}
}

// TestRange checks that records beyond cloud.MaxCoord (a scale mistake:
// 1 m per count) are rejected, not handed out, and the others kept.
func TestRange(t *testing.T) {
	pts := synthPoints(3)
	pts[0].X, pts[1].X, pts[2].X = 0, 2e8, -1000 // X = raw·1 m + 500000 m
	data := buildLAS(2, 0, 0, pts)
	binary.LittleEndian.PutUint64(data[131:], math.Float64bits(1))
	r, err := NewReader(bytes.NewReader(data), int64(len(data)), cloud.Options{})
	if err != nil {
		t.Fatal(err)
	}
	var c cloud.Chunk
	if err := r.Read(&c, 0); err != nil {
		t.Fatal(err)
	}
	if c.Reject[0] != "" || c.Reject[2] != "" || c.P[0].X != 500000 || c.P[2].X != 499000 {
		t.Errorf("records 1, 3: rejects %q, x %v %v", c.Reject, c.P[0].X, c.P[2].X)
	}
	if !strings.Contains(c.Reject[1], "out of range") || c.P[1] != (r3.Vec{}) {
		t.Errorf("record 2: reject %q, P %v", c.Reject[1], c.P[1])
	}
}

// TestTruncatedWhileReading shortens a file after Open: the next Read
// must give a *FormatError wrapping io.ErrUnexpectedEOF, not crash (the
// mapped-file path turns the access fault into an error).
func TestTruncatedWhileReading(t *testing.T) {
	data := buildLAS(2, 3, 0, synthPoints(200000))
	p := filepath.Join(t.TempDir(), "shrinking.las")
	if err := os.WriteFile(p, data, 0o644); err != nil {
		t.Fatal(err)
	}
	r, err := Open(p, cloud.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	var c cloud.Chunk
	if err := r.Read(&c, 1000); err != nil {
		t.Fatal(err)
	}
	if err := os.Truncate(p, 4096); err != nil {
		t.Fatal(err)
	}
	for err == nil {
		err = r.Read(&c, 0)
	}
	var fe *FormatError
	if !errors.As(err, &fe) || !errors.Is(err, io.ErrUnexpectedEOF) || c.Len() != 0 {
		t.Fatalf("got %v with %d records, want a FormatError wrapping io.ErrUnexpectedEOF", err, c.Len())
	}
}
