package cloud

import (
	"bytes"
	"errors"
	"flag"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

var genCorpus = flag.Bool("gen-corpus", false, "rewrite the fuzz seed corpora in testdata/fuzz from the seeds in fuzz_test.go")

// csvSeeds are the seed inputs of FuzzCSV: data and a --columns list.
func csvSeeds() [][2]string {
	return [][2]string{
		{"id,e,n,z,code\nP1,500123.456,5000123.789,101.234,SRF\nP2,500124.456,5000124.789,101.5,\"kerb, top\"\n", ""},
		{"PT;N;E;Z;DESC\r\nP1;5000123,789;500123,456;101,234;SRF\r\n", ""},
		{"\xef\xbb\xbf# shots\n\nP1\t5000123.789\t500123.456\t101.234\tSRF\n", "id,n,e,z,code"},
		{"500123.456 5000123.789 101.234 17 200 201 202\n500124 5000124 101 18 1 2 3\n", ""},
		{"id,x,y,z,intensity\n1,1,2,3,4\n1,abc,2,3,4\n2,NaN,2,3,\n3,1e9,2\n", ""},
		{"a,b,c\n", ""},
		{"P1,1,2,3\n", "id,e,e,z"},
	}
}

// plySeeds are the seed inputs of FuzzPLY, built with the test encoder.
func plySeeds(t testing.TB) [][]byte {
	vert := telem{name: "vertex", props: []tprop{{typ: "float", name: "x"}, {typ: "double", name: "y"}, {typ: "short", name: "z"}, {typ: "uchar", name: "i"}},
		rows: [][]float64{{1.5, 2.25, -3, 4}, {5, 6, 7, 8}}}
	fast := telem{name: "vertex", props: []tprop{{typ: "double", name: "x"}, {typ: "double", name: "y"}, {typ: "double", name: "z"}, {typ: "uchar", name: "intensity"}},
		rows: [][]float64{{500123.456, 5000123.789, 101.234, 7}}}
	face := telem{name: "face", props: []tprop{{typ: "int", name: "vertex_indices", count: "uchar"}}, rows: [][]float64{{3, 0, 1, 1}, {0}}}
	listV := telem{name: "vertex", props: []tprop{{typ: "float", name: "x"}, {typ: "float", name: "y"}, {typ: "float", name: "z"}, {typ: "uchar", name: "n", count: "uchar"}},
		rows: [][]float64{{1, 2, 3, 0}, {4, 5, 6, 2, 9, 9}}}
	var out [][]byte
	for _, enc := range []string{"ascii", "binary_little_endian", "binary_big_endian"} {
		out = append(out, encodePLY(t, enc, []telem{face, vert}), encodePLY(t, enc, []telem{fast}), encodePLY(t, enc, []telem{listV, face}))
	}
	return out
}

// TestGenerateCorpus rewrites testdata/fuzz/FuzzCSV and FuzzPLY from the
// seeds above when run with -gen-corpus:
//
//	go test ./cloud -run TestGenerateCorpus -gen-corpus
func TestGenerateCorpus(t *testing.T) {
	if !*genCorpus {
		t.Skip("run with -gen-corpus to rewrite testdata/fuzz")
	}
	write := func(target string, i int, args ...string) {
		dir := filepath.Join("testdata", "fuzz", target)
		if err := os.MkdirAll(dir, 0o755); err != nil {
			t.Fatal(err)
		}
		body := "go test fuzz v1\n" + strings.Join(args, "\n") + "\n"
		if err := os.WriteFile(filepath.Join(dir, fmt.Sprintf("seed-%02d", i)), []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	for i, s := range csvSeeds() {
		write("FuzzCSV", i, "[]byte("+strconv.Quote(s[0])+")", "string("+strconv.Quote(s[1])+")")
	}
	for i, s := range plySeeds(t) {
		write("FuzzPLY", i, "[]byte("+strconv.Quote(string(s))+")")
	}
}

// FuzzCSV checks that the delimited-text reader never panics, that every
// error is a *ParseError naming the file (and a line when one is at fault),
// that accepted points are finite and in range, and that what it reads
// survives a PLY write → read round trip.
func FuzzCSV(f *testing.F) {
	for _, s := range csvSeeds() {
		f.Add([]byte(s[0]), s[1])
	}
	f.Fuzz(func(t *testing.T, data []byte, columns string) {
		var opt Options
		if columns != "" {
			opt.Columns = strings.Split(columns, ",")
		}
		r, err := newCSV(bytes.NewReader(data), "fuzz.csv", opt)
		if err != nil {
			checkParseError(t, err, opt.Columns == nil)
			return
		}
		defer r.Close()
		tb, err := drain(t, r, 5)
		if err != nil {
			checkParseError(t, err, true)
			return
		}
		checkTable(t, tb)
		roundTrip(t, tb)
	})
}

// FuzzPLY checks that the PLY reader never panics, that every error is a
// *FormatError naming the file and an offset inside it, and that what it
// reads survives a write → read round trip.
func FuzzPLY(f *testing.F) {
	for _, s := range plySeeds(f) {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		r, err := newPLY(bytes.NewReader(data), "fuzz.ply", int64(len(data)), Options{})
		if err == nil {
			defer r.Close()
			var tb table
			tb, err = drain(t, r, 3)
			if err == nil {
				checkTable(t, tb)
				roundTrip(t, tb)
				return
			}
		}
		var fe *FormatError
		if !errors.As(err, &fe) || fe.Path != "fuzz.ply" || fe.Offset < 0 || fe.Offset > int64(len(data)) {
			t.Fatalf("error %T %q is no *FormatError with an offset in [0, %d]", err, err, len(data))
		}
	})
}

func checkParseError(t *testing.T, err error, needLine bool) {
	t.Helper()
	var pe *ParseError
	if !errors.As(err, &pe) || pe.Path != "fuzz.csv" || !strings.HasPrefix(err.Error(), "fuzz.csv") || (needLine && pe.Line <= 0) {
		t.Fatalf("error %T %q is no *ParseError naming the file and a line", err, err)
	}
}

// checkTable checks the record invariants every reader keeps.
func checkTable(t *testing.T, tb table) {
	t.Helper()
	for i, p := range tb.P {
		if i > 0 && tb.Line[i] <= tb.Line[i-1] {
			t.Fatalf("record %d: line %d after %d", i, tb.Line[i], tb.Line[i-1])
		}
		if tb.Reject[i] != "" {
			continue
		}
		for _, v := range []float64{p.X, p.Y, p.Z} {
			if !(math.Abs(v) <= MaxCoord) {
				t.Fatalf("record %d (line %d): accepted coordinate %v", i, tb.Line[i], v)
			}
		}
	}
}

// roundTrip writes tb through PLYWriter and reads it back.
func roundTrip(t *testing.T, tb table) {
	t.Helper()
	var names []string
	var extra [][]float64
	for k, n := range tb.names {
		names = append(names, "a"+strconv.Itoa(k))
		extra = append(extra, tb.Attr[n])
	}
	path := filepath.Join(t.TempDir(), "rt.ply")
	w, err := CreatePLY(path, PLYLayout{Extra: names})
	if err != nil {
		t.Fatal(err)
	}
	if extra == nil {
		extra = [][]float64{}
	}
	if err := w.Write(tb.P, extra, nil); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	back, _, err := openAll(t, path, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(back.P) != len(tb.P) {
		t.Fatalf("round trip: %d points, want %d", len(back.P), len(tb.P))
	}
	for i := range tb.P {
		if back.P[i] != tb.P[i] {
			t.Fatalf("round trip point %d: got %v, want %v", i, back.P[i], tb.P[i])
		}
		for k, n := range names {
			got, want := back.Attr[n][i], float64(float32(extra[k][i]))
			if got != want && !(math.IsNaN(got) && math.IsNaN(want)) {
				t.Fatalf("round trip %s of point %d: got %v, want %v", n, i, got, want)
			}
		}
	}
}
