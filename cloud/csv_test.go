package cloud

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

// Site coordinates of the kind total stations produce (easting 5e5 m,
// northing 5e6 m, mm decimals). The expected float64 values are
// strconv.ParseFloat's correctly rounded results (IEEE 754, round to
// nearest), which the reader must reproduce exactly.
const (
	siteE = "500123.456"
	siteN = "5000123.789"
	siteZ = "101.234"
)

func mustFloat(t testing.TB, s string) float64 {
	t.Helper()
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		t.Fatal(err)
	}
	return v
}

func siteVec(t testing.TB) r3.Vec {
	return r3.Vec{X: mustFloat(t, siteE), Y: mustFloat(t, siteN), Z: mustFloat(t, siteZ)}
}

// TestCSVColumns checks header spellings, column order (northing before
// easting), --columns, delimiters, decimal commas, BOM, CRLF, comments and
// quoting. Each file holds the same shot P1 = (siteE, siteN, siteZ) with
// code "SRF" so that every case must map the columns to (E, N, Z) exactly.
func TestCSVColumns(t *testing.T) {
	tests := []struct {
		name     string
		text     string
		columns  string // Options.Columns, comma-separated
		id, code string // want
		warn     string // substring of a wanted warning
		attr     string // an attribute name wanted
	}{
		{name: "PENZD header", text: "Point,Easting,Northing,Elevation,Code\nP1,500123.456,5000123.789,101.234,SRF\n", id: "P1", code: "SRF"},
		{name: "PNEZD header", text: "PT,N,E,Z,DESC\nP1,5000123.789,500123.456,101.234,SRF\n", id: "P1", code: "SRF"},
		{name: "header unit differs from --unit", text: "Pt,East (ft),North (ft),Elev (ft)\nP1,500123.456,5000123.789,101.234\n", id: "P1", warn: `"East (ft)" in ft but the unit in use is m`},
		{name: "X in capitals", text: "Pt,X,Y,Z\nP1,500123.456,5000123.789,101.234\n", id: "P1", warn: "x = easting"},
		{name: "upper case and units in header", text: "POINT_ID,NORTH (m),EAST (m),RL [m],REMARK\nP1,5000123.789,500123.456,101.234,SRF\n", id: "P1", code: "SRF"},
		{name: "pointid height description", text: "pointid;northing;easting;height;description\nP1;5000123.789;500123.456;101.234;SRF\n", id: "P1", code: "SRF"},
		{name: "name h remark tab", text: "name\tE\tN\tH\tremark\nP1\t500123.456\t5000123.789\t101.234\tSRF\n", id: "P1", code: "SRF"},
		{name: "x y header warns", text: "id,x,y,z,code\nP1,500123.456,5000123.789,101.234,SRF\n", id: "P1", code: "SRF", warn: "x = easting"},
		{name: "y before x header", text: "id,y,x,z,code\nP1,5000123.789,500123.456,101.234,SRF\n", id: "P1", code: "SRF", warn: "x = easting"},
		{name: "extra numeric column", text: "id,e,n,z,intensity,code\nP1,500123.456,5000123.789,101.234,0.75,SRF\n", id: "P1", code: "SRF", attr: "intensity"},
		{name: "columns PNEZD headerless", text: "P1,5000123.789,500123.456,101.234,SRF\n", columns: "id,n,e,z,code", id: "P1", code: "SRF"},
		{name: "columns override header", text: "a,b,c,d,e\nP1,5000123.789,500123.456,101.234,SRF\n", columns: "id,n,e,z,code", id: "P1", code: "SRF", warn: "looks like a header"},
		{name: "decimal comma semicolon", text: "Pt;E;N;Z;Code\nP1;500123,456;5000123,789;101,234;SRF\n", id: "P1", code: "SRF"},
		{name: "decimal comma tab", text: "Pt\tE\tN\tZ\tCode\nP1\t500123,456\t5000123,789\t101,234\tSRF\n", id: "P1", code: "SRF"},
		{name: "blank runs", text: "pt   e            n          z     code\nP1   500123.456   5000123.789   101.234   SRF\n", id: "P1", code: "SRF"},
		{name: "BOM CRLF comments blank lines", text: "\xef\xbb\xbf# exported shots\r\n\r\nid,e,n,z,code\r\n# setup 1\r\nP1,500123.456,5000123.789,101.234,SRF\r\n\r\n", id: "P1", code: "SRF"},
		{name: "quoted code with comma", text: "id,e,n,z,code\n\"P1\",500123.456,5000123.789,101.234,\"kerb, \"\"top\"\"\"\n", id: "P1", code: `kerb, "top"`},
		{name: "latin-1 code", text: "id,e,n,z,code\nP1,500123.456,5000123.789,101.234,B\xf6schung\n", id: "P1", code: "B\xf6schung", warn: "not UTF-8"},
		{name: "trailing delimiter", text: "id,e,n,z,code\nP1,500123.456,5000123.789,101.234,SRF,\n", id: "P1", code: "SRF"},
		{name: "unquoted code with comma", text: "id,e,n,z,code\nP1,500123.456,5000123.789,101.234,kerb, top\n", id: "P1", code: "kerb, top"},
		{name: "quoted field with delimiter before coordinates", text: "code;id;e;n;z\n\"a;b\";P1;500123,456;5000123,789;101,234\n", id: "P1", code: "a;b"},
		{name: "plain xyz headerless", text: "500123.456 5000123.789 101.234\n", warn: "plain XYZ"},
		{name: "plain xyz with rgb", text: "500123.456,5000123.789,101.234,12,34,56\n", warn: "plain XYZ", attr: "col6"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var opt Options
			if tt.columns != "" {
				opt.Columns = strings.Split(tt.columns, ",")
			}
			path := writeFile(t, "shots.csv", []byte(tt.text))
			tb, info, err := openAll(t, path, opt)
			if err != nil {
				t.Fatal(err)
			}
			if info.Format != "csv" {
				t.Errorf("format: got %q, want csv", info.Format)
			}
			if len(tb.P) != 1 {
				t.Fatalf("got %d records, want 1 (rejects %q)", len(tb.P), tb.Reject)
			}
			if tb.Reject[0] != "" {
				t.Fatalf("rejected: %s", tb.Reject[0])
			}
			if got, want := tb.P[0], siteVec(t); got != want {
				t.Errorf("P: got %v, want %v", got, want)
			}
			if tt.id != "" && (len(tb.ID) != 1 || tb.ID[0] != tt.id) {
				t.Errorf("ID: got %q, want %q", tb.ID, tt.id)
			}
			if tt.id == "" && tb.ID != nil {
				t.Errorf("ID: got %q, want nil", tb.ID)
			}
			if tt.code != "" && (len(tb.Code) != 1 || tb.Code[0] != tt.code) {
				t.Errorf("Code: got %q, want %q", tb.Code, tt.code)
			}
			if tt.warn != "" && !strings.Contains(strings.Join(info.Warnings, "\n"), tt.warn) {
				t.Errorf("warnings %q lack %q", info.Warnings, tt.warn)
			}
			if tt.warn == "" && len(info.Warnings) > 0 {
				t.Errorf("unexpected warnings %q", info.Warnings)
			}
			if tt.attr != "" {
				if v, ok := tb.Attr[tt.attr]; !ok || len(v) != 1 || math.IsNaN(v[0]) {
					t.Errorf("attribute %s: got %v (all %v)", tt.attr, v, tb.names)
				}
			}
			if k := strings.Index(tt.text, "P1"); k >= 0 {
				if want := int64(strings.Count(tt.text[:k], "\n") + 1); tb.Line[0] != want {
					t.Errorf("line: got %d, want %d", tb.Line[0], want)
				}
			}
		})
	}
}

// TestCSVUnits checks unit conversion against the exact definitions:
// international foot = 0.3048 m and US survey foot = 1200/3937 m (NIST,
// "U.S. Survey Foot: Revised Unit Conversion Factors", Federal Register 85
// FR 62698 (2020); NIST SP 811 appendix B).
func TestCSVUnits(t *testing.T) {
	tests := []struct {
		unit string
		in   string
		want float64 // metres
	}{
		{"m", "1234.567", 1234.567},
		{"mm", "1234567", 1234.567},
		{"ft", "10000", 3048},                   // 10000 × 0.3048 exactly
		{"ft", "1640419.9475", 500000.0000},     // 500 km; 1640419.9475 × 0.3048 = 499999.99999...
		{"us-ft", "3937", 1200},                 // 3937 × 1200/3937 = 1200 exactly by definition
		{"us-ft", "1000000", 304800.6096012192}, // 1e6 × 1200/3937 = 304800.609601219202…
	}
	for _, tt := range tests {
		t.Run(tt.unit+" "+tt.in, func(t *testing.T) {
			u, err := ParseUnit(tt.unit)
			if err != nil {
				t.Fatal(err)
			}
			path := writeFile(t, "u.csv", []byte("e,n,z\n"+tt.in+","+tt.in+","+tt.in+"\n"))
			tb, info, err := openAll(t, path, Options{Unit: u})
			if err != nil {
				t.Fatal(err)
			}
			if info.Unit != u {
				t.Errorf("Info.Unit: got %v, want %v", info.Unit, u)
			}
			// One rounding of the product (relative 1.1e-16) on top of the
			// ParseFloat rounding: 4 ulp is ample and still catches a wrong
			// factor (the two feet differ by 2e-6).
			const rel = 1e-15
			// The 500 km case: the value in ft is rounded to 4 decimals,
			// so it differs from 500000 m by 1.6e-6 m at most.
			tol := rel * math.Abs(tt.want)
			if strings.Contains(tt.in, ".9475") {
				tol = 2e-6
			}
			for _, v := range []float64{tb.P[0].X, tb.P[0].Y, tb.P[0].Z} {
				if math.Abs(v-tt.want) > tol {
					t.Errorf("got %.10f m, want %.10f m", v, tt.want)
				}
			}
		})
	}
	// The two feet must stay distinguishable at state-plane magnitudes:
	// 2 ppm, 2 m at 1e6 ft (FIELD.md §7, computed).
	if d := 1e6 * (SurveyFt.Metres - Foot.Metres); math.Abs(d-0.6096012192) > 1e-6 {
		t.Errorf("us-ft − ft at 1e6 ft: got %v m, want 0.6096012192 m", d)
	}
}

// TestCSVLargeCoordinates checks that site coordinates keep every digit:
// the reader's float64 equals strconv.ParseFloat's correctly rounded value
// (IEEE 754 round to nearest; Go spec for strconv) for eastings and
// northings from 5e5 to 5e6 m with mm decimals, also through a decimal
// comma.
func TestCSVLargeCoordinates(t *testing.T) {
	var b strings.Builder
	b.WriteString("id;e;n;z\n")
	var want []r3.Vec
	for i := 0; i < 200; i++ {
		e := 500000 + float64(i)*22500.001 + 0.123
		n := 5000000 - float64(i)*1000.017 - 0.456
		es, ns := strconv.FormatFloat(e, 'f', 3, 64), strconv.FormatFloat(n, 'f', 3, 64)
		want = append(want, r3.Vec{X: mustFloat(t, es), Y: mustFloat(t, ns), Z: mustFloat(t, "99.999")})
		if i%2 == 1 {
			es, ns = strings.Replace(es, ".", ",", 1), strings.Replace(ns, ".", ",", 1)
		}
		b.WriteString("P" + strconv.Itoa(i) + ";" + es + ";" + ns + ";99.999\n")
	}
	tb, _, err := openAll(t, writeFile(t, "big.csv", []byte(b.String())), Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(tb.P) != len(want) {
		t.Fatalf("got %d points, want %d", len(tb.P), len(want))
	}
	for i := range want {
		if tb.P[i] != want[i] {
			t.Errorf("row %d: got %v, want %v", i+1, tb.P[i], want[i])
		}
	}
}

// TestCSVRejects checks that bad rows keep their place with a reason and
// that good rows around them are read.
func TestCSVRejects(t *testing.T) {
	text := "id,e,n,z,code\n" +
		"P1,500123.456,5000123.789,101.234,SRF\n" + // line 2
		"P2,abc,5000123.789,101.234,SRF\n" + // 3
		"P3,500123.456,5000123.789\n" + // 4
		"P4,500123.456,NaN,101.234,SRF\n" + // 5
		"P5,500123.456,5000123.789,+Inf,SRF\n" + // 6
		"P6,2e8,5000123.789,101.234,SRF\n" + // 7
		"P7,500123.456,5000123.789,101.234,SRF\n" + // 8
		"P8,500123.456,5000123.789,101.234,SRF\n" + // 9
		"P9,500123.456,5000123.789,101.234,SRF\n" + // 10
		",500123.456,5000123.789,101.234,SRF\n" + // 11
		"P11,500123.456,5000123.789,101.234,SRF\n" + // 12
		"P12,500123.456,5000123.789,101.234,SRF\n" + // 13
		"P13,500123.456,5000123.789,101.234,SRF\n" + // 14
		"P14,1e999,5000123.789,101.234,SRF\n" // 15
	want := map[int64]string{
		3:  `non-numeric "abc" in column e`,
		4:  "missing field z",
		5:  `not finite "NaN" in column n`,
		6:  `not finite "+Inf" in column z`,
		7:  `out of range "2e8" in column e`,
		11: "missing field id",
		15: `out of range "1e999" in column e`,
	}
	r, err := Open(writeFile(t, "bad.csv", []byte(text)), Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	tb, err := drain(t, r, 4)
	if err != nil {
		t.Fatal(err)
	}
	if len(tb.P) != 14 {
		t.Fatalf("got %d records, want 14", len(tb.P))
	}
	for i, line := range tb.Line {
		w := want[line]
		if got := tb.Reject[i]; (w == "") != (got == "") || !strings.HasPrefix(got, w) {
			t.Errorf("line %d: reject %q, want %q", line, got, w)
		}
		if w != "" && tb.P[i] != (r3.Vec{}) {
			t.Errorf("line %d: rejected point %v, want zero", line, tb.P[i])
		}
		if w == "" && tb.P[i] != siteVec(t) {
			t.Errorf("line %d: got %v, want %v", line, tb.P[i], siteVec(t))
		}
	}
}

// TestCSVDuplicateIDs checks that repeated ids are kept and reported after
// reading, and that Scan counts them.
func TestCSVDuplicateIDs(t *testing.T) {
	text := "id,e,n,z\nA,1,2,3\nB,1,2,3\nA,4,5,6\nC,1,2,3\nB,7,8,9\nA,1,1,1\n"
	path := writeFile(t, "dup.csv", []byte(text))
	r, err := Open(path, Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	s, err := Scan(r)
	if err != nil {
		t.Fatal(err)
	}
	if s.Count != 6 || s.Rejected != 0 || s.DuplicateIDs != 3 {
		t.Errorf("count %d rejected %d duplicates %d, want 6 0 3", s.Count, s.Rejected, s.DuplicateIDs)
	}
	w := strings.Join(s.Info.Warnings, "\n")
	for _, sub := range []string{"3 records repeat", `"A" on line 4`, "first seen on line 2", "kept"} {
		if !strings.Contains(w, sub) {
			t.Errorf("warnings %q lack %q", s.Info.Warnings, sub)
		}
	}
	if s.Min != (r3.Vec{X: 1, Y: 1, Z: 1}) || s.Max != (r3.Vec{X: 7, Y: 8, Z: 9}) {
		t.Errorf("bounds: got %v %v, want (1,1,1) (7,8,9)", s.Min, s.Max)
	}
}

// TestCSVChunking checks that chunk size (and so the split of a chunk
// between two parsers running at once) does not change what is read: values,
// ids, codes, lines, rejects and the repeated-id report.
func TestCSVChunking(t *testing.T) {
	const rows = 12000
	var b strings.Builder
	b.WriteString("# comment\nid,e,n,z,code,intensity\n")
	line := int64(2)
	wantBad := map[int64]bool{}
	for i := 0; i < rows; i++ {
		if i%97 == 0 {
			b.WriteString("# station change\n\n")
			line += 2
		}
		line++
		id := "P" + strconv.Itoa(i)
		if i == 9000 {
			id = "P10" // repeats row 10, across the two halves of a chunk
		}
		e := strconv.Itoa(500000+i) + ".5"
		if i%1500 == 7 {
			e = "bad"
			wantBad[line] = true
		}
		b.WriteString(id + "," + e + "," + strconv.Itoa(5000000-i) + ".25,10.125,\"C," + strconv.Itoa(i%7) + "\"," + strconv.Itoa(i%256) + "\n")
	}
	path := writeFile(t, "c.csv", []byte(b.String()))
	var ref table
	for k, max := range []int{0, 1, 7, 4096, 5000, 8191, 20000} {
		r, err := Open(path, Options{})
		if err != nil {
			t.Fatal(err)
		}
		tb, err := drain(t, r, max)
		warn := strings.Join(r.Info().Warnings, "\n")
		r.Close()
		if err != nil {
			t.Fatal(err)
		}
		if !strings.Contains(warn, `1 records repeat an earlier point id (first: "P10" on line`) || !strings.Contains(warn, "first seen on line 15") {
			t.Errorf("max %d: warnings %q", max, warn)
		}
		if k == 0 {
			ref = tb
			last := rows - 1
			if len(tb.P) != rows || tb.Code[last] != "C,"+strconv.Itoa(last%7) || tb.ID[last] != "P"+strconv.Itoa(last) || tb.Attr["intensity"][last] != float64(last%256) {
				t.Fatalf("reference read wrong: %d points, last %q %q %v", len(tb.P), tb.ID[last], tb.Code[last], tb.Attr["intensity"][last])
			}
			for i, l := range tb.Line {
				if (tb.Reject[i] != "") != wantBad[l] {
					t.Fatalf("line %d: reject %q, want bad %v", l, tb.Reject[i], wantBad[l])
				}
			}
			continue
		}
		for i := range ref.P {
			if tb.P[i] != ref.P[i] || tb.ID[i] != ref.ID[i] || tb.Code[i] != ref.Code[i] || tb.Line[i] != ref.Line[i] || tb.Reject[i] != ref.Reject[i] || tb.Attr["intensity"][i] != ref.Attr["intensity"][i] {
				t.Fatalf("max %d, record %d differs", max, i)
			}
		}
	}
}

// TestCSVTooManyRejectedFirstLine checks that the reported first bad line
// is the earliest, also when it lies in the second half of a chunk parsed
// in two halves at once.
func TestCSVTooManyRejectedFirstLine(t *testing.T) {
	var b strings.Builder
	b.WriteString("e,n,z\n")
	for i := 0; i < 10000; i++ {
		if i < 4000 {
			b.WriteString("1,2,3\n")
		} else {
			b.WriteString("1,2,x\n")
		}
	}
	_, _, err := openAll(t, writeFile(t, "h.csv", []byte(b.String())), Options{})
	if !errors.Is(err, ErrTooManyRejected) || !strings.Contains(err.Error(), "h.csv:4002:") || !strings.Contains(err.Error(), "6000 of 10000") {
		t.Errorf("got %v, want too many rejected at h.csv:4002 with 6000 of 10000", err)
	}
}

// TestCSVErrors is the table of invalid delimited files and the error text
// each must give: the file name, the line, and what to do.
func TestCSVErrors(t *testing.T) {
	half := "id,e,n,z\n1,1,2,3\n2,x,2,3\n3,y,2,3\n"
	tests := []struct {
		name    string
		text    string
		columns []string
		is      error
		want    []string
	}{
		{"headerless total station", "\n# shots\nP1,5000123.789,500123.456,101.234,SRF\n", nil, ErrMissingColumn,
			[]string{"bad.csv:3:", "--columns", "id,n,e,z,code"}},
		{"headerless numeric ids", "1,5000123.789,500123.456,101.234\n2,5000124.789,500124.456,101.234\n", nil, ErrMissingColumn,
			[]string{"bad.csv:1:", "point ids", "--columns"}},
		{"headerless numeric ids out of order", "# shots\n17,5000123.789,500123.456,101.234,7\n3,5000124.789,500124.456,101.234,7\n", nil, ErrMissingColumn,
			[]string{"bad.csv:2:", "point ids", "--columns"}},
		{"header without z", "id,e,n,code\nP1,1,2,SRF\n", nil, ErrMissingColumn,
			[]string{"bad.csv:1:", "no z column", "--columns"}},
		{"header without coordinates", "a,b,c\nd,e,f\n", nil, ErrMissingColumn,
			[]string{"bad.csv:1:", "no e, n, z column"}},
		{"columns without e", "P1,1,2,3\n", []string{"id", "n", "z", "code"}, ErrMissingColumn,
			[]string{"bad.csv", "--columns names no e column"}},
		{"columns twice", "P1,1,2,3\n", []string{"id", "e", "e", "z"}, ErrFieldCount,
			[]string{"bad.csv", "column 3 (e)", "twice"}},
		{"more than half rejected", half, nil, ErrTooManyRejected,
			[]string{"bad.csv:3:", "2 of 3 data rows rejected", `non-numeric "x" in column e`, "delimiter"}},
		{"wrong decimal comma", "id,e,n,z\nP1,500123,456,5000123,789,101,234\nP2,500123,456,5000123,789,101,234\n", nil, ErrTooManyRejected,
			[]string{"bad.csv:2:", "2 of 2 data rows rejected", "fields where the columns name 4"}},
		{"only comments", "# nothing\n\n", nil, nil, []string{"bad.csv", "no data lines"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			path := writeFile(t, "bad.csv", []byte(tt.text))
			_, _, err := openAll(t, path, Options{Columns: tt.columns})
			if err == nil {
				t.Fatal("no error")
			}
			var pe *ParseError
			if !errors.As(err, &pe) {
				t.Fatalf("error %T %q is no *ParseError", err, err)
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

// TestFastFloat checks the decimal fast path against strconv.ParseFloat,
// whose results are correctly rounded (Go strconv documentation), on fixed
// edge cases and on random mm-precision site coordinates.
func TestFastFloat(t *testing.T) {
	cases := []string{"0", "-0", "+0", "0.", ".5", "-.5", "5.", "1", "123456789012345", "1234567890123456",
		"0.000000000000000000001", "0.0000000000000000000001", "0.1", "0.3", "500123.456", "5000123.789",
		"-0.001", "9007199254740993", "000000000000000000000012.5", "1.2.3", "", "-", "+", ".", "1e3", "1_0", " 1", "0x1p3", "nan"}
	rng := uint64(88172645463325252) // xorshift64 (Marsaglia 2003), fixed seed
	for i := 0; i < 20000; i++ {
		rng ^= rng << 13
		rng ^= rng >> 7
		rng ^= rng << 17
		v := float64(rng%10_000_000_000_000) / 1000 // up to 1e10 m with mm
		cases = append(cases, strconv.FormatFloat(v, 'f', 3, 64), strconv.FormatFloat(-v/1e6, 'f', 9, 64))
	}
	for _, s := range cases {
		want, err := strconv.ParseFloat(s, 64)
		got, ok := fastFloat([]byte(s))
		if !ok {
			continue // strconv handles it
		}
		if err != nil {
			t.Errorf("fastFloat(%q) = %v, but strconv rejects it: %v", s, got, err)
			continue
		}
		if math.Float64bits(got) != math.Float64bits(want) {
			t.Errorf("fastFloat(%q) = %v, strconv %v", s, got, want)
		}
	}
	if _, ok := fastFloat([]byte("500123.456")); !ok {
		t.Error("fast path not taken for a plain site coordinate")
	}
}

// TestIDSet checks repeat detection across table growth.
func TestIDSet(t *testing.T) {
	var s idSet
	for i := 0; i < 5000; i++ {
		if _, dup := s.add("P"+strconv.Itoa(i), int64(i+1)); dup {
			t.Fatalf("P%d reported as a repeat", i)
		}
	}
	for i := 0; i < 5000; i += 7 {
		first, dup := s.add("P"+strconv.Itoa(i), 9999)
		if !dup || first != int64(i+1) {
			t.Fatalf("P%d: repeat %v, first line %d, want line %d", i, dup, first, i+1)
		}
	}
}

// TestSplit checks field splitting, trimming and unquoting (quoting as in
// RFC 4180 §2: a field in double quotes may hold the delimiter, and "" in
// it stands for one quote).
func TestSplit(t *testing.T) {
	tests := []struct {
		line  string
		delim byte
		want  []string
	}{
		{"a,b,c", ',', []string{"a", "b", "c"}},
		{" a , b ,c ", ',', []string{"a", "b", "c"}},
		{"a,,c,", ',', []string{"a", "", "c", ""}},
		{`"",x`, ',', []string{"", "x"}},
		{`"a,b","c""d"`, ',', []string{"a,b", `c"d`}},
		{` "a;b" ;c`, ';', []string{"a;b", "c"}},
		{`"open,end`, ',', []string{"open,end"}},
		{"a\t\tc", '\t', []string{"a", "", "c"}},
		{" a \t b\t", '\t', []string{"a", "b", ""}},
		{"  a   b\t c  ", 0, []string{"a", "b", "c"}},
		{`a "b c" d`, 0, []string{"a", "b c", "d"}},
		{"", ',', []string{""}},
		{"   ", 0, nil},
		{"P1234567,-500123.456,-5000123.789,+101.234,kerb line", ',', []string{"P1234567", "-500123.456", "-5000123.789", "+101.234", "kerb line"}},
		{",,,,,,,,,", ',', []string{"", "", "", "", "", "", "", "", "", ""}},
		{"abcdefg,hijklmno,p", ',', []string{"abcdefg", "hijklmno", "p"}},
		{"abcdefgh,ijklmnop,\"q,r\"", ',', []string{"abcdefgh", "ijklmnop", "q,r"}},
		{"id;  e ;\tn\t;z", ';', []string{"id", "e", "n", "z"}},
		{"1\t2\t 3 \t4", '\t', []string{"1", "2", "3", "4"}},
	}
	for _, tt := range tests {
		line := []byte(tt.line)
		var got []string
		for _, f := range split(nil, line, tt.delim) {
			got = append(got, string(line[f.a:f.b]))
		}
		if strings.Join(got, "|") != strings.Join(tt.want, "|") || len(got) != len(tt.want) {
			t.Errorf("split(%q, %q) = %q, want %q", tt.line, tt.delim, got, tt.want)
		}
	}
}

// TestSplitWords checks the word-at-a-time splitter against the byte loop
// on random lines over a small alphabet rich in delimiters, blanks and the
// bytes next to them in value (which catch false positives of a careless
// zero-byte test).
func TestSplitWords(t *testing.T) {
	alphabet := []byte(",;\t -+.0123\x2b\x2d\x3a\x3c\x01\x00\xff ab")
	rng := uint64(0x9e3779b97f4a7c15)
	for n := 0; n < 20000; n++ {
		rng ^= rng << 13
		rng ^= rng >> 7
		rng ^= rng << 17
		line := make([]byte, rng%40)
		for i := range line {
			rng ^= rng << 13
			rng ^= rng >> 7
			rng ^= rng << 17
			line[i] = alphabet[rng%uint64(len(alphabet))]
		}
		for _, d := range []byte{',', ';', '\t', 0} {
			want := splitBytes(nil, bytes.Clone(line), d)
			var got []span
			var ok bool
			if d == 0 {
				got, ok = splitBlankWords(nil, line)
			} else {
				got, ok = splitWords(nil, line, d)
			}
			if !ok {
				t.Fatalf("splitWords refused %q, which has no quote", line)
			}
			if fmt.Sprint(got) != fmt.Sprint(want) {
				t.Fatalf("split %q at %q: words %v, bytes %v", line, d, got, want)
			}
		}
	}
}
