package e57

import (
	"bytes"
	"encoding/json"
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

// refDir returns ../shared/reference/e57 relative to the repository root
// (the directory holding go.mod), or "".
func refDir() string {
	dir, err := os.Getwd()
	if err != nil {
		return ""
	}
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			return filepath.Join(dir, "..", "shared", "reference", "e57")
		}
		up := filepath.Dir(dir)
		if up == dir {
			return ""
		}
		dir = up
	}
}

// refFile returns the path of one reference file, or skips the test.
func refFile(t testing.TB, name string) string {
	t.Helper()
	d := refDir()
	p := filepath.Join(d, name)
	if _, err := os.Stat(p); d == "" || err != nil {
		t.Skipf("shared E57 reference file %s absent", name)
	}
	return p
}

type decoded struct {
	P      []r3.Vec
	Reject []string
	Line   []int64
	Attr   map[string][]float64
	Sum    r3.Vec
}

func readAll(t testing.TB, r cloud.Reader, max int) decoded {
	t.Helper()
	d := decoded{Attr: map[string][]float64{}}
	var c cloud.Chunk
	for {
		err := r.Read(&c, max)
		if err == io.EOF {
			if c.Len() != 0 {
				t.Fatal("io.EOF with records")
			}
			return d
		}
		if err != nil {
			t.Fatal(err)
		}
		if c.ID != nil || len(c.P) != c.Len() || len(c.Reject) != c.Len() {
			t.Fatalf("chunk layout: ID %v, %d points, %d rejects, %d lines", c.ID != nil, len(c.P), len(c.Reject), c.Len())
		}
		d.P = append(d.P, c.P...)
		d.Reject = append(d.Reject, c.Reject...)
		d.Line = append(d.Line, c.Line...)
		for _, a := range c.Attr {
			if len(a.Values) != c.Len() {
				t.Fatalf("attribute %s: %d values for %d records", a.Name, len(a.Values), c.Len())
			}
			d.Attr[a.Name] = append(d.Attr[a.Name], a.Values...)
		}
		for _, p := range c.P {
			d.Sum = r3.Add(d.Sum, p)
		}
	}
}

// TestCRC32C checks the page checksum against published check values: the
// CRC-32C of "123456789" is 0xE3069283 (CRC-32/ISCSI check value; RFC 3720,
// iSCSI), and RFC 3720 appendix B.4 lists the CRCs of 32 bytes of 0x00,
// 0xFF, 0x00..0x1F and 0x1F..0x00 as the bytes aa 36 91 8a, 43 ab a8 62,
// 4e 79 dd 46, 5c db 3f 11 (least significant byte first).
func TestCRC32C(t *testing.T) {
	seq := func(f func(i int) byte) []byte {
		b := make([]byte, 32)
		for i := range b {
			b[i] = f(i)
		}
		return b
	}
	tests := []struct {
		name string
		in   []byte
		want uint32
	}{
		{"123456789", []byte("123456789"), 0xE3069283},
		{"32 zeros", seq(func(int) byte { return 0 }), 0x8a9136aa},
		{"32 ones", seq(func(int) byte { return 0xff }), 0x62a8ab43},
		{"incrementing", seq(func(i int) byte { return byte(i) }), 0x46dd794e},
		{"decrementing", seq(func(i int) byte { return byte(31 - i) }), 0x113fdb5c},
	}
	for _, tc := range tests {
		if got := pageCRC(tc.in); got != tc.want {
			t.Errorf("%s: got 0x%08x, want 0x%08x", tc.name, got, tc.want)
		}
	}
}

// Tolerances for values printed in ../shared/reference/e57/PROVENANCE.md.
const (
	// bunnyTol: the bunny coordinates are printed as 6-decimal values of
	// the source data; the decoded doubles lie within 2 ulp of them
	// (ulp(0.2) ≈ 2.8e-17).
	bunnyTol = 1e-16
	// cubeTol: the cube's first point is printed to 8 decimals.
	cubeTol = 5e-9
	// sumTol: sums are printed to 6 (bunny) or 7 (cube) decimals.
	sumTol = 5e-7
)

// TestProvenance checks the three valid reference files (libE57Format test
// data) against the facts stated in ../shared/reference/e57/PROVENANCE.md.
func TestProvenance(t *testing.T) {
	type ref struct {
		file    string
		records int64
		pages   int64
		first   []r3.Vec
		tol     float64
		sum     r3.Vec
		single  bool
		attrs   []string
	}
	bunnyFirst := []r3.Vec{{X: -0.07063, Y: 0.04015, Z: 0.001226}, {X: -0.070891, Y: 0.040326, Z: 0.002828}, {X: -0.071053, Y: 0.04057, Z: 0.005774}}
	bunnySum := r3.Vec{X: -841.093298, Y: 3151.198742, Z: 264.243972}
	tests := []ref{
		{file: "bunnyDouble.e57", records: 30571, pages: 726, first: bunnyFirst, tol: bunnyTol, sum: bunnySum, attrs: []string{AttrScan}},
		{file: "bunnyInt32.e57", records: 30571, pages: 366, first: bunnyFirst, tol: bunnyTol, sum: bunnySum, attrs: []string{AttrScan}},
		{file: "ColouredCubeFloat.e57", records: 7680, pages: 116, first: []r3.Vec{{X: -0.5, Y: -0.49905592, Z: 0.07136291}}, tol: cubeTol,
			sum: r3.Vec{X: -49.7208477, Y: 17.8628775, Z: -30.5928180}, single: true, attrs: []string{AttrScan, AttrRed, AttrGreen, AttrBlue}},
	}
	byFile := map[string]decoded{}
	for _, tc := range tests {
		t.Run(tc.file, func(t *testing.T) {
			r, err := Open(refFile(t, tc.file), cloud.Options{})
			if err != nil {
				t.Fatal(err)
			}
			defer r.Close()
			info := r.Info()
			if info.Count != tc.records || len(r.Scans()) != 1 {
				t.Fatalf("count %d in %d scans, want %d in 1", info.Count, len(r.Scans()), tc.records)
			}
			if got := strings.Join(info.Columns[3:], ","); got != strings.Join(tc.attrs, ",") {
				t.Errorf("attribute columns: got %s, want %v", got, tc.attrs)
			}
			if got := len(info.Warnings) > 0 && strings.Contains(info.Warnings[0], "single-precision"); got != tc.single {
				t.Errorf("single-precision warning %v, want %v (%q)", got, tc.single, info.Warnings)
			}
			d := readAll(t, r, 4000)
			if int64(len(d.P)) != tc.records {
				t.Fatalf("read %d records, want %d", len(d.P), tc.records)
			}
			if r.PagesVerified() < tc.pages {
				t.Errorf("verified %d page checksums, the file has %d pages", r.PagesVerified(), tc.pages)
			}
			for i, w := range tc.first {
				if g := d.P[i]; math.Abs(g.X-w.X) > tc.tol || math.Abs(g.Y-w.Y) > tc.tol || math.Abs(g.Z-w.Z) > tc.tol {
					t.Errorf("point %d: got %v, want %v ± %v", i+1, g, w, tc.tol)
				}
			}
			if s := r3.Sub(d.Sum, tc.sum); math.Abs(s.X) > sumTol || math.Abs(s.Y) > sumTol || math.Abs(s.Z) > sumTol {
				t.Errorf("sums: got %v, want %v", d.Sum, tc.sum)
			}
			for i, rej := range d.Reject {
				if rej != "" {
					t.Fatalf("record %d rejected: %s (cartesianInvalidState is 0 for all)", i+1, rej)
				}
				if d.Line[i] != int64(i+1) {
					t.Fatalf("Line[%d] = %d", i, d.Line[i])
				}
			}
			if b := r.Scans()[0].Bounds; b != nil {
				// The decoded extremes equal cartesianBounds exactly.
				lo, hi := extremes(d.P)
				if got := []float64{lo.X, hi.X, lo.Y, hi.Y, lo.Z, hi.Z}; !equal(got, b) {
					t.Errorf("bounds: got %v, want cartesianBounds %v", got, b)
				}
			}
			byFile[tc.file] = d
		})
	}
	t.Run("cube faces", func(t *testing.T) {
		d, ok := byFile["ColouredCubeFloat.e57"]
		if !ok {
			t.Skip("cube not read")
		}
		var faces [3]int
		for _, p := range d.P {
			m := math.Max(math.Abs(p.X), math.Max(math.Abs(p.Y), math.Abs(p.Z)))
			if m != 0.5 {
				t.Fatalf("point %v is off the cube surface", p)
			}
			for k, v := range []float64{p.X, p.Y, p.Z} {
				if math.Abs(v) == 0.5 {
					faces[k]++
				}
			}
		}
		if faces != [3]int{2560, 2560, 2560} {
			t.Errorf("points on the x, y, z faces: got %v, want 2560 each", faces)
		}
		if got := [3]float64{d.Attr[AttrRed][0], d.Attr[AttrGreen][0], d.Attr[AttrBlue][0]}; got != [3]float64{0, 0, 255} {
			t.Errorf("first colour: got %v, want [0 0 255]", got)
		}
	})
	t.Run("bunny encodings agree", func(t *testing.T) {
		a, okA := byFile["bunnyDouble.e57"]
		b, okB := byFile["bunnyInt32.e57"]
		if !okA || !okB {
			t.Skip("bunny files not read")
		}
		for i := range a.P {
			if a.P[i] != b.P[i] {
				t.Fatalf("record %d: double %v, int32 %v (PROVENANCE.md: exactly the same doubles)", i+1, a.P[i], b.P[i])
			}
		}
	})
}

func extremes(p []r3.Vec) (lo, hi r3.Vec) {
	lo = r3.Vec{X: math.Inf(1), Y: math.Inf(1), Z: math.Inf(1)}
	hi = r3.Scale(-1, lo)
	for _, v := range p {
		lo = r3.Vec{X: math.Min(lo.X, v.X), Y: math.Min(lo.Y, v.Y), Z: math.Min(lo.Z, v.Z)}
		hi = r3.Vec{X: math.Max(hi.X, v.X), Y: math.Max(hi.Y, v.Y), Z: math.Max(hi.Z, v.Z)}
	}
	return lo, hi
}

func equal(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// TestBadCRC opens bad-crc.e57 (libE57Format test data: one page whose
// stored CRC is wrong) and a copy of a valid file with one byte flipped in
// page 100; both must name the page.
func TestBadCRC(t *testing.T) {
	_, err := Open(refFile(t, "bad-crc.e57"), cloud.Options{})
	var ce *ChecksumError
	if !errors.As(err, &ce) || ce.Page != 0 || ce.Offset != 0 {
		t.Fatalf("bad-crc.e57: got %v, want a ChecksumError for page 0", err)
	}
	data, err := os.ReadFile(refFile(t, "bunnyDouble.e57"))
	if err != nil {
		t.Fatal(err)
	}
	data[100*pageSize+517] ^= 0x10
	p := filepath.Join(t.TempDir(), "flipped.e57")
	if err := os.WriteFile(p, data, 0o644); err != nil {
		t.Fatal(err)
	}
	r, err := Open(p, cloud.Options{})
	if err != nil {
		t.Fatal(err) // header and XML pages are intact
	}
	defer r.Close()
	var c cloud.Chunk
	for err == nil {
		err = r.Read(&c, 0)
	}
	if !errors.As(err, &ce) || ce.Page != 100 || ce.Offset != 100*pageSize || !strings.Contains(err.Error(), "page 100") {
		t.Fatalf("got %v, want a ChecksumError naming page 100", err)
	}
}

// TestSynthetic reads synthetic files whose truth is known: the values
// written, the pose (90° about z: (x, y, z) → (−y, x, z), then +t) and the
// spherical conversion of ASTM E2807, x = r·cos(el)·cos(az), y =
// r·cos(el)·sin(az), z = r·sin(el). Packets hold unequal, unaligned shares
// of each bytestream so that packed values straddle packets and pages.
func TestSynthetic(t *testing.T) {
	// poseTol: the quaternion from its 17-digit decimals rotates with an
	// error of a few ulp of 1 times |p| ≤ 60 m, plus ulp(200 m).
	const poseTol = 1e-12
	for _, chunk := range []int{3, 250, 4000} {
		data := buildE57(synthScans(), chunk)
		for _, max := range []int{1, 333, 0} {
			r, err := NewReader(bytes.NewReader(data), int64(len(data)), cloud.Options{})
			if err != nil {
				t.Fatalf("chunk %d: %v", chunk, err)
			}
			if len(r.Scans()) != 3 || r.Info().Count != synthA+synthB {
				t.Fatalf("%d scans, %d records", len(r.Scans()), r.Info().Count)
			}
			d := readAll(t, r, max)
			if len(d.P) != synthA+synthB {
				t.Fatalf("chunk %d max %d: %d records, want %d", chunk, max, len(d.P), synthA+synthB)
			}
			for i := 0; i < synthA; i++ {
				x, y := synthXY(i)
				lx, ly := float64(x)*0.001+10, float64(y)*0.001+10
				want := r3.Vec{X: -ly + 100, Y: lx + 200, Z: synthZ(i) + 5}
				if st := synthState(i); st != 0 {
					if !strings.Contains(d.Reject[i], "invalid state") {
						t.Fatalf("record %d (state %d): reject %q", i+1, st, d.Reject[i])
					}
					continue
				}
				if d.Reject[i] != "" || r3.Norm(r3.Sub(d.P[i], want)) > poseTol {
					t.Fatalf("chunk %d max %d record %d: got %v %q, want %v", chunk, max, i+1, d.P[i], d.Reject[i], want)
				}
				if d.Attr[AttrIntensity][i] != float64(i%256) || d.Attr[AttrScan][i] != 1 {
					t.Fatalf("record %d: intensity %v scan %v", i+1, d.Attr[AttrIntensity][i], d.Attr[AttrScan][i])
				}
			}
			for j := 0; j < synthB; j++ {
				i := synthA + j
				rr, az, el := synthRange(j), synthAz(j), float64(synthEl(j))*0.001
				want := r3.Vec{X: rr * math.Cos(el) * math.Cos(az), Y: rr * math.Cos(el) * math.Sin(az), Z: rr * math.Sin(el)}
				if d.P[i] != want || d.Reject[i] != "" || d.Attr[AttrScan][i] != 2 || !math.IsNaN(d.Attr[AttrIntensity][i]) {
					t.Fatalf("record %d: got %v %q scan %v intensity %v, want %v", i+1, d.P[i], d.Reject[i], d.Attr[AttrScan][i], d.Attr[AttrIntensity][i], want)
				}
			}
			for i, l := range d.Line {
				if l != int64(i+1) {
					t.Fatalf("Line[%d] = %d", i, l)
				}
			}
		}
	}
}

// TestUnit checks that an explicit non-metre unit scales the coordinates
// (US survey foot 1200/3937 m, NIST SP 811 appendix B).
func TestUnit(t *testing.T) {
	data := buildE57(synthScans()[1:2], 100)
	r, err := NewReader(bytes.NewReader(data), int64(len(data)), cloud.Options{Unit: cloud.SurveyFt})
	if err != nil {
		t.Fatal(err)
	}
	d := readAll(t, r, 0)
	rr, az, el := synthRange(0), synthAz(0), float64(synthEl(0))*0.001
	want := r3.Scale(1200.0/3937.0, r3.Vec{X: rr * math.Cos(el) * math.Cos(az), Y: rr * math.Cos(el) * math.Sin(az), Z: rr * math.Sin(el)})
	if d.P[0] != want {
		t.Errorf("got %v, want %v", d.P[0], want)
	}
}

// TestInvalid maps malformed files to their error types and offsets.
func TestInvalid(t *testing.T) {
	good := buildE57(synthScans(), 250)
	edit := func(f func(b []byte)) []byte {
		b := append([]byte(nil), good...)
		f(b)
		return recrc(b)
	}
	scansWith := func(f func(s []synthScan)) []byte {
		s := synthScans()
		f(s)
		return buildE57(s, 250)
	}
	const firstPacket = 48 + sectionHeaderSize // physical = logical in page 0
	tests := []struct {
		name   string
		data   []byte
		kind   string // "format", "unsupported", "checksum"
		offset int64
		msg    string
		atRead bool
	}{
		{name: "short", data: good[:1000], kind: "format", offset: 1000, msg: "shorter than one"},
		{name: "signature", data: edit(func(b []byte) { b[0] = 'X' }), kind: "format", offset: 0, msg: "signature"},
		{name: "version", data: edit(func(b []byte) { b[8] = 2 }), kind: "unsupported", offset: 8, msg: "version 2.0"},
		{name: "page size", data: edit(func(b []byte) { b[41] = 8 }), kind: "unsupported", offset: 40, msg: "page size 2048"},
		{name: "truncated", data: good[:len(good)-pageSize], kind: "format", offset: int64(len(good) - pageSize), msg: "truncated"},
		{name: "XML offset in CRC", data: edit(func(b []byte) { b[24], b[25] = 0xfe, 0x03 }), kind: "format", offset: 24, msg: "XML physical offset 1022"},
		{name: "page CRC", data: func() []byte { b := append([]byte(nil), good...); b[2*pageSize+9] ^= 1; return b }(), kind: "checksum", offset: 2 * pageSize, msg: "page 2"},
		{name: "bad XML", data: scansWith(func(s []synthScan) { s[0].name = "a]]><b" }), kind: "format", msg: "XML section"},
		{name: "no coordinates", data: scansWith(func(s []synthScan) { s[1].fields[0].Name = "rangeX" }), kind: "format", msg: "neither cartesianX/Y/Z nor"},
		{name: "bytestream count", data: edit(func(b []byte) { b[firstPacket+4] = 9 }), kind: "format", offset: firstPacket + 4, msg: "9 bytestreams", atRead: true},
		{name: "packet type", data: edit(func(b []byte) { b[firstPacket] = 7 }), kind: "format", offset: firstPacket, msg: "unknown packet type 7", atRead: true},
		{name: "record count", data: scansWith(func(s []synthScan) { s[0].claim = synthA + 5 }), kind: "format", msg: "5 of 1005 records", atRead: true},
		{name: "huge record count", data: scansWith(func(s []synthScan) { s[0].claim = 1 << 40 }), kind: "format", msg: "more than the file can hold"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			r, err := NewReader(bytes.NewReader(tc.data), int64(len(tc.data)), cloud.Options{})
			if tc.atRead {
				if err != nil {
					t.Fatalf("open: %v", err)
				}
				var c cloud.Chunk
				for err == nil {
					err = r.Read(&c, 0)
				}
				if err == io.EOF {
					t.Fatal("read to the end without error")
				}
			}
			if err == nil {
				t.Fatal("no error")
			}
			var fe *FormatError
			var ue *UnsupportedError
			var ce *ChecksumError
			off := int64(-2)
			switch tc.kind {
			case "format":
				if errors.As(err, &fe) {
					off = fe.Offset
				}
			case "unsupported":
				if errors.As(err, &ue) {
					off = ue.Offset
				}
			case "checksum":
				if errors.As(err, &ce) {
					off = ce.Offset
				}
			}
			if off == -2 {
				t.Fatalf("got %T %v, want a %s error", err, err, tc.kind)
			}
			if tc.offset != 0 && off != tc.offset {
				t.Errorf("offset: got %d, want %d (%v)", off, tc.offset, err)
			}
			if !strings.Contains(err.Error(), tc.msg) {
				t.Errorf("error %q does not contain %q", err, tc.msg)
			}
		})
	}
}

// TestMatch checks the sniffing of the signature.
func TestMatch(t *testing.T) {
	if !Match([]byte("ASTM-E57\x01")) || Match([]byte("ASTM-E5")) || Match([]byte("LASF....")) {
		t.Error("Match disagrees with the ASTM-E57 signature")
	}
}

// TestRejectValues checks that a NaN coordinate and one beyond
// cloud.MaxCoord are rejected with the reason, and a good one kept.
func TestRejectValues(t *testing.T) {
	xs := []float64{math.NaN(), 2e8, 1}
	s := synthScan{name: "v", n: 3, fields: []synthField{
		floatField("cartesianX", false, 3, func(i int) float64 { return xs[i] }),
		floatField("cartesianY", false, 3, func(int) float64 { return 2 }),
		floatField("cartesianZ", false, 3, func(int) float64 { return 3 }),
	}}
	data := buildE57([]synthScan{s}, 100)
	r, err := NewReader(bytes.NewReader(data), int64(len(data)), cloud.Options{})
	if err != nil {
		t.Fatal(err)
	}
	d := readAll(t, r, 0)
	if !strings.HasPrefix(d.Reject[0], "not finite") || !strings.HasPrefix(d.Reject[1], "out of range") || d.Reject[2] != "" {
		t.Errorf("rejects %q", d.Reject)
	}
	if d.P[0] != (r3.Vec{}) || d.P[1] != (r3.Vec{}) || d.P[2] != (r3.Vec{X: 1, Y: 2, Z: 3}) {
		t.Errorf("points %v", d.P)
	}
}

// TestRegistered checks that cloud.Open sniffs an E57 file to this reader.
func TestRegistered(t *testing.T) {
	r, err := cloud.Open(refFile(t, "bunnyInt32.e57"), cloud.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	if _, ok := r.(*Reader); !ok || r.Info().Format != "e57" || r.Info().Count != 30571 {
		t.Errorf("cloud.Open gave %T %q count %d", r, r.Info().Format, r.Info().Count)
	}
}

// TestReferenceReader compares the count and sampled points (first,
// middle, last; exact doubles) with those decoded by the general-purpose
// E57 converter web-e57 from npm, run under Node.js by
// testdata/webe57_ref.mjs (version in testdata/webe57_ref.json). That
// reader also refuses bad-crc.e57.
func TestReferenceReader(t *testing.T) {
	raw, err := os.ReadFile(filepath.Join("testdata", "webe57_ref.json"))
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Source, Version string
		Files           map[string]struct {
			Error  string
			Count  int
			Points []struct {
				Record  int
				X, Y, Z float64
				RGB     []float64
			}
		}
	}
	if err := json.Unmarshal(raw, &ref); err != nil {
		t.Fatal(err)
	}
	if f := ref.Files["bad-crc.e57"]; f.Error == "" {
		t.Errorf("the reference decoded bad-crc.e57")
	}
	compared := 0
	for name, f := range ref.Files {
		if f.Error != "" {
			continue
		}
		compared++
		t.Run(name, func(t *testing.T) {
			r, err := Open(refFile(t, name), cloud.Options{})
			if err != nil {
				t.Fatal(err)
			}
			defer r.Close()
			d := readAll(t, r, 0)
			if len(d.P) != f.Count {
				t.Fatalf("count: got %d, want %d", len(d.P), f.Count)
			}
			for _, p := range f.Points {
				i := p.Record - 1
				if want := (r3.Vec{X: p.X, Y: p.Y, Z: p.Z}); d.P[i] != want {
					t.Errorf("record %d: got %v, want %v (%s %s)", p.Record, d.P[i], want, ref.Source, ref.Version)
				}
				if p.RGB != nil {
					got := []float64{d.Attr[AttrRed][i], d.Attr[AttrGreen][i], d.Attr[AttrBlue][i]}
					if !equal(got, p.RGB) {
						t.Errorf("record %d colour: got %v, want %v", p.Record, got, p.RGB)
					}
				}
			}
		})
	}
	if compared != 3 {
		t.Errorf("%d files compared, want 3", compared)
	}
}

// TestTruncatedWhileReading shortens a file after Open: Read must return a
// typed error (a *FormatError wrapping io.ErrUnexpectedEOF from the mapped
// path, or a read error from ReadAt), never crash.
func TestTruncatedWhileReading(t *testing.T) {
	s := synthScans()[0]
	data := buildE57([]synthScan{s, s, s, s, s, s, s, s}, 3000)
	p := filepath.Join(t.TempDir(), "shrinking.e57")
	if err := os.WriteFile(p, data, 0o644); err != nil {
		t.Fatal(err)
	}
	r, err := Open(p, cloud.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	var c cloud.Chunk
	if err := r.Read(&c, 10); err != nil {
		t.Fatal(err)
	}
	if err := os.Truncate(p, 8192); err != nil {
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
