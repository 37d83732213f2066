package cloud

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"runtime"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

// tprop and telem describe a PLY element for the test encoder below, which
// is written from the 1994 format description independently of the reader
// (its own type table). A list property takes its count and then the items
// from a row.
type tprop struct {
	typ, name string
	count     string // list count type; "" for a scalar
}

type telem struct {
	name  string
	props []tprop
	rows  [][]float64
}

// encodePLY writes elems in encoding enc ("ascii", "binary_little_endian",
// "binary_big_endian").
func encodePLY(t testing.TB, enc string, elems []telem) []byte {
	t.Helper()
	var b bytes.Buffer
	b.WriteString("ply\nformat " + enc + " 1.0\ncomment written by the test encoder\n")
	for _, e := range elems {
		fmt.Fprintf(&b, "element %s %d\n", e.name, len(e.rows))
		for _, p := range e.props {
			if p.count != "" {
				fmt.Fprintf(&b, "property list %s %s %s\n", p.count, p.typ, p.name)
			} else {
				fmt.Fprintf(&b, "property %s %s\n", p.typ, p.name)
			}
		}
	}
	b.WriteString("end_header\n")
	var order binary.ByteOrder = binary.LittleEndian
	if enc == "binary_big_endian" {
		order = binary.BigEndian
	}
	put := func(typ string, v float64) {
		if enc == "ascii" {
			b.WriteString(strconv.FormatFloat(v, 'g', -1, 64) + " ")
			return
		}
		var err error
		switch typ {
		case "char", "int8":
			err = binary.Write(&b, order, int8(v))
		case "uchar", "uint8":
			err = binary.Write(&b, order, uint8(v))
		case "short", "int16":
			err = binary.Write(&b, order, int16(v))
		case "ushort", "uint16":
			err = binary.Write(&b, order, uint16(v))
		case "int", "int32":
			err = binary.Write(&b, order, int32(v))
		case "uint", "uint32":
			err = binary.Write(&b, order, uint32(v))
		case "float", "float32":
			err = binary.Write(&b, order, float32(v))
		case "double", "float64":
			err = binary.Write(&b, order, v)
		default:
			t.Fatalf("test encoder: type %q", typ)
		}
		if err != nil {
			t.Fatal(err)
		}
	}
	for _, e := range elems {
		for _, row := range e.rows {
			k := 0
			for _, p := range e.props {
				if p.count == "" {
					put(p.typ, row[k])
					k++
					continue
				}
				n := int(row[k])
				put(p.count, row[k])
				k++
				for j := 0; j < n; j++ {
					put(p.typ, row[k])
					k++
				}
			}
			if enc == "ascii" {
				b.WriteString(" \n") // trailing blanks, as real files have
			}
		}
	}
	return b.Bytes()
}

// allTypesVertex is a vertex element using every PLY scalar type name and
// alias, with values each type holds exactly, at its range limits where
// the type allows.
func allTypesVertex(list bool) telem {
	props := []tprop{
		{typ: "char", name: "c"}, {typ: "uchar", name: "uc"}, {typ: "short", name: "s"}, {typ: "ushort", name: "us"},
		{typ: "int", name: "i"}, {typ: "uint", name: "ui"}, {typ: "float", name: "f"},
		{typ: "double", name: "x"}, {typ: "float32", name: "y"}, {typ: "float64", name: "z"},
		{typ: "int8", name: "i8"}, {typ: "uint8", name: "u8"}, {typ: "int16", name: "i16"}, {typ: "uint16", name: "u16"},
		{typ: "int32", name: "i32"}, {typ: "uint32", name: "u32"},
	}
	if list {
		props = append(props, tprop{typ: "float", name: "normals", count: "uchar"})
	}
	var rows [][]float64
	for k := 0; k < 50; k++ {
		s := float64(k%2*2 - 1) // ±1
		row := []float64{-128 + float64(k), 255 - float64(k), s * 32767, 65535 - float64(k), s * 2147483647, 4294967295 - float64(k), 0.375 * float64(k),
			500123.456 + float64(k), 1024.75 - float64(k)*0.5, -3.0625 * float64(k),
			127 - float64(k), float64(k), -32768 + float64(k), float64(k) * 1000, -2147483648 + float64(k), float64(k)}
		if list {
			n := k % 3 // 0, 1 or 2 items: zero-length lists included
			row = append(row, float64(n))
			for j := 0; j < n; j++ {
				row = append(row, 0.5*float64(j))
			}
		}
		rows = append(rows, row)
	}
	return telem{name: "vertex", props: props, rows: rows}
}

// plyCase is a layout decoded in all three encodings.
func plyCases() map[string][]telem {
	before := telem{name: "camera", props: []tprop{{typ: "float", name: "a"}, {typ: "int", name: "idx", count: "uchar"}},
		rows: [][]float64{{1.5, 0}, {2.5, 3, 7, 8, 9}}}
	fixedBefore := telem{name: "range_info", props: []tprop{{typ: "double", name: "r"}, {typ: "ushort", name: "k"}},
		rows: [][]float64{{1, 2}, {3, 4}, {5, 6}}}
	after := telem{name: "face", props: []tprop{{typ: "int", name: "vertex_indices", count: "uchar"}},
		rows: [][]float64{{3, 0, 1, 2}, {0}, {4, 0, 1, 2, 3}}}
	var fast telem
	fast.name = "vertex"
	fast.props = []tprop{{typ: "double", name: "x"}, {typ: "double", name: "y"}, {typ: "double", name: "z"}, {typ: "uchar", name: "intensity"}}
	for k := 0; k < 70000; k++ { // more than DefaultChunk and more than one block
		fast.rows = append(fast.rows, []float64{500000.001 * (1 + float64(k)/7e4), 5000000.017 - float64(k), 100.125, float64(k % 256)})
	}
	var shifted telem // double x, y, z after other properties: the fast path with offsets
	shifted.name = "vertex"
	shifted.props = []tprop{{typ: "uchar", name: "flag"}, {typ: "double", name: "z"}, {typ: "double", name: "x"}, {typ: "float", name: "w"}, {typ: "double", name: "y"}}
	for k := 0; k < 100; k++ {
		shifted.rows = append(shifted.rows, []float64{float64(k), -1.5 * float64(k), 500000.125 + float64(k), 0.25, 5000000.5 - float64(k)})
	}
	return map[string][]telem{
		"double xyz after other properties": {fixedBefore, shifted},
		"all types fixed":                   {fixedBefore, allTypesVertex(false), after},
		"all types with lists":              {before, allTypesVertex(true), after},
		"double xyz fast path":              {fast},
	}
}

// TestPLYEncodings decodes the same data written as ascii, binary little-
// and big-endian, and checks every value against what was written.
func TestPLYEncodings(t *testing.T) {
	for name, elems := range plyCases() {
		t.Run(name, func(t *testing.T) {
			var vert telem
			for _, e := range elems {
				if e.name == "vertex" {
					vert = e
				}
			}
			for _, enc := range []string{"ascii", "binary_little_endian", "binary_big_endian"} {
				path := writeFile(t, "p.ply", encodePLY(t, enc, elems))
				tb, info, err := openAll(t, path, Options{})
				if err != nil {
					t.Fatalf("%s: %v", enc, err)
				}
				// Small chunks cut across the reader's blocks: same records.
				r, err := Open(path, Options{})
				if err != nil {
					t.Fatal(err)
				}
				small, err := drain(t, r, 777)
				r.Close()
				if err != nil || len(small.P) != len(tb.P) {
					t.Fatalf("%s: chunks of 777: %d points, %v", enc, len(small.P), err)
				}
				for i := range tb.P {
					if small.P[i] != tb.P[i] || small.Line[i] != tb.Line[i] {
						t.Fatalf("%s: chunks of 777: record %d differs", enc, i+1)
					}
				}
				if info.Format != "ply-"+enc || info.Count != int64(len(vert.rows)) {
					t.Errorf("%s: info %q count %d", enc, info.Format, info.Count)
				}
				if len(tb.P) != len(vert.rows) {
					t.Fatalf("%s: got %d points, want %d", enc, len(tb.P), len(vert.rows))
				}
				if tb.ID != nil || tb.Code != nil {
					t.Errorf("%s: ID/Code not nil", enc)
				}
				for i, row := range vert.rows {
					k := 0
					for _, p := range vert.props {
						want := row[k]
						k++
						if p.count != "" {
							k += int(want)
							continue
						}
						if p.typ == "float" || p.typ == "float32" {
							want = float64(float32(want))
						}
						var got float64
						switch p.name {
						case "x":
							got = tb.P[i].X
						case "y":
							got = tb.P[i].Y
						case "z":
							got = tb.P[i].Z
						default:
							got = tb.Attr[p.name][i]
						}
						if got != want {
							t.Fatalf("%s: vertex %d %s (%s): got %v, want %v", enc, i+1, p.name, p.typ, got, want)
						}
					}
					if tb.Line[i] != int64(i+1) || tb.Reject[i] != "" {
						t.Fatalf("%s: vertex %d: line %d reject %q", enc, i+1, tb.Line[i], tb.Reject[i])
					}
				}
				if _, ok := tb.Attr["normals"]; ok {
					t.Errorf("%s: list property became an attribute", enc)
				}
			}
		})
	}
}

// TestPLYHeaderWhitespace checks CRLF, tabs, runs of blanks and leading
// blanks in the header, as in draco's test_extra_whitespace.ply (see
// ../shared/reference/ply/PROVENANCE.md), here in binary big-endian.
func TestPLYHeaderWhitespace(t *testing.T) {
	vert := telem{name: "vertex", props: []tprop{{typ: "float", name: "x"}, {typ: "float", name: "y"}, {typ: "float", name: "z"}},
		rows: [][]float64{{0.25, 0.1, 0}, {0.5, 0.9, 0}}}
	data := encodePLY(t, "binary_big_endian", []telem{vert})
	i := bytes.Index(data, []byte("end_header\n")) + len("end_header\n")
	head := string(data[:i])
	head = strings.ReplaceAll(head, " ", " \t  ")
	head = strings.ReplaceAll(head, "\nelement", "\n\t element")
	head = strings.ReplaceAll(head, "\n", " \r\n")
	head = strings.Replace(head, "comment", "obj_info scanner 1\r\ncomment", 1)
	tb, info, err := openAll(t, writeFile(t, "ws.ply", append([]byte(head), data[i:]...)), Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(tb.P) != 2 || tb.P[1] != (r3.Vec{X: float64(float32(0.5)), Y: float64(float32(0.9))}) {
		t.Fatalf("got %v", tb.P)
	}
	if !strings.Contains(fmt.Sprint(info.Facts), "obj_info scanner 1") {
		t.Errorf("facts %v lack the obj_info line", info.Facts)
	}
}

// TestPLYAsciiRejects checks that bad vertex values are rejected in place.
func TestPLYAsciiRejects(t *testing.T) {
	text := "ply\nformat ascii 1.0\nelement vertex 5\nproperty double x\nproperty double y\nproperty double z\nproperty uchar intensity\nend_header\n" +
		"1 2 3 4\nabc 2 3 4\n1 nan 3 4\n1 2 3e9 4\n1 2 3 4 \n"
	tb, _, err := openAll(t, writeFile(t, "r.ply", []byte(text)), Options{})
	if err != nil {
		t.Fatal(err)
	}
	want := []string{"", `non-numeric "abc" in property x`, "not finite", "out of range", ""}
	for i, w := range want {
		if got := tb.Reject[i]; (w == "") != (got == "") || !strings.HasPrefix(got, w) {
			t.Errorf("vertex %d: reject %q, want %q", i+1, got, w)
		}
	}
	if tb.P[4] != (r3.Vec{X: 1, Y: 2, Z: 3}) || tb.P[1] != (r3.Vec{}) {
		t.Errorf("points: %v", tb.P)
	}
}

// TestPLYFloat32Warning checks the warning for float32 coordinates at site
// magnitudes: at 500123 m the float32 spacing is 2^-5 = 0.03125 m (IEEE 754
// binary32 has a 24-bit significand; 2^18 ≤ 500123 < 2^19; FIELD.md §7
// quotes 0.031 m).
func TestPLYFloat32Warning(t *testing.T) {
	for _, tt := range []struct {
		x    float64
		warn bool
	}{{500123.456, true}, {9999, false}} {
		vert := telem{name: "vertex", props: []tprop{{typ: "float", name: "x"}, {typ: "float", name: "y"}, {typ: "float", name: "z"}},
			rows: [][]float64{{tt.x, 1, 2}}}
		_, info, err := openAll(t, writeFile(t, "f.ply", encodePLY(t, "binary_little_endian", []telem{vert})), Options{})
		if err != nil {
			t.Fatal(err)
		}
		w := strings.Join(info.Warnings, "\n")
		if got := strings.Contains(w, "float32") && strings.Contains(w, "0.0312"); got != tt.warn {
			t.Errorf("x = %v: warnings %q, want float32 warning %v", tt.x, info.Warnings, tt.warn)
		}
	}
}

// TestPLYErrors is the table of invalid PLY input and the error text each
// must give: the file, the byte offset and the reason.
func TestPLYErrors(t *testing.T) {
	vert3 := telem{name: "vertex", props: []tprop{{typ: "double", name: "x"}, {typ: "double", name: "y"}, {typ: "double", name: "z"}, {typ: "uchar", name: "i"}},
		rows: [][]float64{{1, 2, 3, 4}, {5, 6, 7, 8}, {9, 10, 11, 12}}}
	le := encodePLY(t, "binary_little_endian", []telem{vert3})
	hdr := bytes.Index(le, []byte("end_header\n")) + len("end_header\n")
	lied := bytes.Replace(le, []byte("element vertex 3"), []byte("element vertex 9"), 1)
	asc := encodePLY(t, "ascii", []telem{vert3})
	h := "ply\nformat ascii 1.0\n"
	tests := []struct {
		name string
		data []byte
		size int64 // -1: unknown (no size check), 0: len(data)
		is   error
		want []string
	}{
		{"count lies (size check)", lied, 0, io.ErrUnexpectedEOF,
			[]string{"bad.ply: byte offset " + strconv.Itoa(len(lied)), "announces 9 vertex records", "ends at byte"}},
		{"truncated binary body", le[:hdr+25+10], -1, io.ErrUnexpectedEOF,
			[]string{"bad.ply: byte offset " + strconv.Itoa(hdr+25+10), "vertex record 2 of 3"}},
		{"truncated ascii body", asc[:len(asc)-8], -1, io.ErrUnexpectedEOF,
			[]string{"bad.ply: byte offset " + strconv.Itoa(len(asc)-8), "vertex record 3 of 3"}},
		{"ascii count lies", []byte(h + "element vertex 100\nproperty float x\nproperty float y\nproperty float z\nend_header\n1 2 3\n"), 0, io.ErrUnexpectedEOF,
			[]string{"byte offset 108", "announces 100 vertex records", "header at byte 102"}},
		{"unsupported encoding", []byte("ply\nformat binary_middle_endian 1.0\nend_header\n"), 0, nil,
			[]string{"byte offset 4", "unsupported PLY feature", "binary_middle_endian"}},
		{"unsupported version", []byte("ply\nformat ascii 2.0\nend_header\n"), 0, nil,
			[]string{"byte offset 4", "version"}},
		{"unknown type", []byte(h + "element vertex 1\nproperty int64 x\nend_header\n1\n"), 0, nil,
			[]string{"byte offset 38", "unsupported PLY feature", "int64"}},
		{"property before element", []byte(h + "property float x\nend_header\n"), 0, nil,
			[]string{"byte offset 21", "header line 3", "property before any element"}},
		{"float list count", []byte(h + "element vertex 1\nproperty list float int x\nend_header\n"), 0, nil,
			[]string{"byte offset 38", "integer type"}},
		{"no vertex element", []byte(h + "element face 0\nend_header\n"), 0, ErrMissingColumn,
			[]string{"no vertex element"}},
		{"no z", []byte(h + "element vertex 1\nproperty float x\nproperty float y\nend_header\n1 2\n"), 0, ErrMissingColumn,
			[]string{"header line 3", "no z property"}},
		{"no end_header", []byte(h + "element vertex 1\n"), 0, io.ErrUnexpectedEOF,
			[]string{"header ends before end_header"}},
		{"no format", []byte("ply\nelement vertex 0\nend_header\n"), 0, nil,
			[]string{"no format line"}},
		{"unknown keyword", []byte(h + "elephant 3\nend_header\n"), 0, nil,
			[]string{"byte offset 21", "unknown keyword"}},
		{"negative count", []byte(h + "element vertex -1\nend_header\n"), 0, nil,
			[]string{"non-negative integer"}},
		{"huge count", []byte("ply\nformat binary_little_endian 1.0\nelement vertex 9223372036854775807\nproperty double x\nproperty double y\nproperty double z\nend_header\n"), 0, nil,
			[]string{"more than any file holds"}},
		{"negative list count", append([]byte("ply\nformat binary_little_endian 1.0\nelement junk 1\nproperty list char int k\nelement vertex 0\nproperty float x\nproperty float y\nproperty float z\nend_header\n"), 0xff, 0, 0, 0, 0), 0, nil,
			[]string{"junk record 1", "count -1"}},
		{"ascii list count not a number", []byte(h + "element junk 1\nproperty list uchar int k\nelement vertex 0\nproperty float x\nproperty float y\nproperty float z\nend_header\nq 1 2 3\n"), 0, nil,
			[]string{"junk record 1", `count "q"`}},
		{"not ply", []byte("plyx\nformat ascii 1.0\n"), 0, nil,
			[]string{"byte offset 0", "first line"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			size := tt.size
			if size == 0 {
				size = int64(len(tt.data))
			}
			r, err := newPLY(bytes.NewReader(tt.data), "bad.ply", size, Options{})
			if err == nil {
				defer r.Close()
				_, err = drain(t, r, 0)
			}
			if err == nil {
				t.Fatal("no error")
			}
			var fe *FormatError
			if !errors.As(err, &fe) {
				t.Fatalf("error %T %q is no *FormatError", err, err)
			}
			if want := "bad.ply: byte offset " + strconv.FormatInt(fe.Offset, 10) + ": "; !strings.HasPrefix(err.Error(), want) || fe.Offset < 0 || fe.Offset > int64(len(tt.data)) {
				t.Errorf("error %q does not start with %q inside the file", err, want)
			}
			if tt.is != nil && !errors.Is(err, tt.is) {
				t.Errorf("error %q does not wrap %v", err, tt.is)
			}
			for _, s := range tt.want {
				if !strings.Contains(err.Error(), s) {
					t.Errorf("error %q lacks %q", err, s)
				}
			}
		})
	}
}

// TestOpenSniff checks Open's content sniffing, whatever the file name.
func TestOpenSniff(t *testing.T) {
	vert := telem{name: "vertex", props: []tprop{{typ: "double", name: "x"}, {typ: "double", name: "y"}, {typ: "double", name: "z"}}, rows: [][]float64{{1, 2, 3}}}
	png := []byte("\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR")
	tests := []struct {
		name   string
		data   []byte
		format string
		want   []string // error substrings; nil: no error
	}{
		{"ply named csv", encodePLY(t, "binary_little_endian", []telem{vert}), "ply-binary_little_endian", nil},
		{"ply crlf magic", []byte("ply\r\nformat ascii 1.0\r\nelement vertex 1\r\nproperty float x\r\nproperty float y\r\nproperty float z\r\nend_header\r\n1 2 3\r\n"), "ply-ascii", nil},
		{"text", []byte("e,n,z\n1,2,3\n"), "csv", nil},
		{"utf-8 codes", []byte("id,e,n,z,code\nP1,1,2,3,Böschung\n"), "csv", nil},
		{"latin-1 codes", []byte("id,e,n,z,code\nP1,1,2,3,B\xf6schung\n"), "csv", nil},
		{"png", png, "", []string{"in.csv: byte offset 6", "unknown file format"}}, // 0x1a after the PNG signature's CR LF
		{"nul inside", []byte("e,n,z\n1,2,3\n\x00\x01\x02"), "", []string{"in.csv: byte offset 12", "unknown file format"}},
		{"empty", nil, "", []string{"in.csv: byte offset 0", "empty file"}},
		{"utf-16", []byte("\xff\xfei\x00d\x00,\x00"), "", []string{"in.csv: byte offset 0", "UTF-16", "UTF-8"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r, err := Open(writeFile(t, "in.csv", tt.data), Options{})
			if tt.want == nil {
				if err != nil {
					t.Fatal(err)
				}
				defer r.Close()
				if got := r.Info().Format; got != tt.format {
					t.Errorf("format: got %q, want %q", got, tt.format)
				}
				return
			}
			if err == nil {
				r.Close()
				t.Fatal("no error")
			}
			if !errors.Is(err, ErrUnknownFormat) {
				t.Errorf("error %q does not wrap ErrUnknownFormat", err)
			}
			for _, s := range tt.want {
				if !strings.Contains(err.Error(), s) {
					t.Errorf("error %q lacks %q", err, s)
				}
			}
		})
	}
}

// TestOpenRegistered checks that a registered format is sniffed before the
// built-in ones.
func TestOpenRegistered(t *testing.T) {
	saved := formats
	defer func() { formats = saved }()
	var opened string
	RegisterFormat(Format{
		Name:  "test",
		Match: func(head []byte) bool { return bytes.HasPrefix(head, []byte("TEST")) },
		Open: func(path string, opt Options) (Reader, error) {
			opened = path
			return nil, errors.New("test format opened")
		},
	})
	path := writeFile(t, "x.bin", []byte("TEST\x00\x01"))
	if _, err := Open(path, Options{}); err == nil || err.Error() != "test format opened" || opened != path {
		t.Errorf("registered format not used: %v", err)
	}
	if _, err := Open(writeFile(t, "y.bin", []byte("\x00\x01")), Options{}); err == nil || !strings.Contains(err.Error(), "none of test, PLY") {
		t.Errorf("error should list the registered format: %v", err)
	}
}

// TestScanEmptyBounds checks that Scan's bounds are zero when no point is
// accepted, and finite otherwise.
func TestScanEmptyBounds(t *testing.T) {
	vert := telem{name: "vertex", props: []tprop{{typ: "double", name: "x"}, {typ: "double", name: "y"}, {typ: "double", name: "z"}},
		rows: [][]float64{{math.NaN(), 1, 1}}}
	r, err := Open(writeFile(t, "n.ply", encodePLY(t, "binary_little_endian", []telem{vert})), Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	s, err := Scan(r)
	if err != nil {
		t.Fatal(err)
	}
	if s.Count != 1 || s.Rejected != 1 || s.Min != (r3.Vec{}) || s.Max != (r3.Vec{}) {
		t.Errorf("got %+v", s)
	}
}

// TestPLYStreamsInBoundedMemory checks that reading a binary PLY allocates
// a bounded amount whatever the file size: the reader must stream, never
// hold the file. 400,000 vertices of 25 bytes are a 10 MB file; one chunk
// of DefaultChunk records with its buffers needs about 2.2 MB (24 + 8 + 8 +
// 16 bytes per record plus a 256 KiB read block).
func TestPLYStreamsInBoundedMemory(t *testing.T) {
	if testing.Short() {
		t.Skip("writes a 10 MB file")
	}
	const n = 400000
	var b bytes.Buffer
	b.WriteString("ply\nformat binary_little_endian 1.0\nelement vertex " + strconv.Itoa(n) +
		"\nproperty double x\nproperty double y\nproperty double z\nproperty uchar intensity\nend_header\n")
	var rec [25]byte
	for i := 0; i < n; i++ {
		binary.LittleEndian.PutUint64(rec[0:], math.Float64bits(float64(i)))
		b.Write(rec[:])
	}
	path := writeFile(t, "big.ply", b.Bytes())
	b = bytes.Buffer{}
	r, err := Open(path, Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	var c Chunk
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	got := 0
	for {
		err := r.Read(&c, 0)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		if c.P[c.Len()-1].X != float64(got+c.Len()-1) {
			t.Fatalf("record %d: got x = %v", got+c.Len(), c.P[c.Len()-1].X)
		}
		got += c.Len()
	}
	runtime.ReadMemStats(&after)
	if got != n {
		t.Fatalf("read %d records, want %d", got, n)
	}
	if alloc := after.TotalAlloc - before.TotalAlloc; alloc > 4<<20 {
		t.Errorf("reading a %d-byte file allocated %d bytes, want < 4 MiB", 25*n, alloc)
	}
}

// idReader is a Reader of fixed records with ids, for Scan's own
// repeated-id count (readers that do not count them).
type idReader struct {
	ids  []string
	done bool
}

func (r *idReader) Read(c *Chunk, max int) error {
	c.Reset()
	if r.done {
		return io.EOF
	}
	r.done = true
	for i, id := range r.ids {
		c.P = append(c.P, r3.Vec{X: float64(i)})
		c.ID = append(c.ID, id)
		c.Line = append(c.Line, int64(i+1))
		c.Reject = append(c.Reject, "")
	}
	return nil
}
func (r *idReader) Info() Info   { return Info{Format: "test"} }
func (r *idReader) Close() error { return nil }

func TestScanCountsRepeatedIDs(t *testing.T) {
	s, err := Scan(&idReader{ids: []string{"a", "b", "a", "c", "a", "b"}})
	if err != nil {
		t.Fatal(err)
	}
	if s.Count != 6 || s.DuplicateIDs != 3 || s.Min.X != 0 || s.Max.X != 5 {
		t.Errorf("got %+v, want 6 records, 3 repeats, x 0..5", s)
	}
}

// TestPLYAsciiMisaligned checks the warning for ascii data with more values
// per line than the header's vertex properties (one record per line: Turk
// 1994), and its absence for trailing blanks and CRLF.
func TestPLYAsciiMisaligned(t *testing.T) {
	h := "ply\nformat ascii 1.0\nelement vertex 2\nproperty float x\nproperty float y\nproperty float z\nend_header\n"
	for _, tt := range []struct {
		body string
		warn bool
	}{
		{"1 2 3\n4 5 6\n", false},
		{"1 2 3  \t\r\n4 5 6 \r\n", false},
		{"1 2 3", true}, // too short: an error, see below
		{"1 2 3 9\n4 5 6 9\n", true},
	} {
		_, info, err := openAll(t, writeFile(t, "m.ply", []byte(h+tt.body)), Options{})
		if tt.body == "1 2 3" {
			if err == nil {
				t.Errorf("%q: no error for a missing record", tt.body)
			}
			continue
		}
		if err != nil {
			t.Fatalf("%q: %v", tt.body, err)
		}
		got := strings.Contains(strings.Join(info.Warnings, "\n"), "vertex record 1 does not end its line")
		if got != tt.warn {
			t.Errorf("%q: warnings %q, want misalignment warning %v", tt.body, info.Warnings, tt.warn)
		}
	}
}

// TestPLYCloseMidway checks that closing a binary reader in the middle of
// its vertex element stops its prefetching cleanly (run with -race).
func TestPLYCloseMidway(t *testing.T) {
	var fast telem
	fast.name = "vertex"
	fast.props = []tprop{{typ: "double", name: "x"}, {typ: "double", name: "y"}, {typ: "double", name: "z"}}
	for k := 0; k < 50000; k++ {
		fast.rows = append(fast.rows, []float64{float64(k), 1, 2})
	}
	path := writeFile(t, "c.ply", encodePLY(t, "binary_little_endian", []telem{fast}))
	for _, reads := range []int{0, 1, 3} {
		r, err := Open(path, Options{})
		if err != nil {
			t.Fatal(err)
		}
		var c Chunk
		for i := 0; i < reads; i++ {
			if err := r.Read(&c, 1000); err != nil {
				t.Fatal(err)
			}
		}
		if err := r.Close(); err != nil {
			t.Fatal(err)
		}
		if err := r.Read(&c, 1000); err == nil && reads > 0 {
			t.Errorf("Read after Close (%d reads) succeeded", reads)
		}
	}
}
