package las

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/cloud"
)

// refDir returns ../shared/reference/las relative to the repository root
// (the directory holding go.mod), or skips the test.
func refDir(t testing.TB) string {
	t.Helper()
	ref := fuzzRefDir()
	if ref == "" {
		t.Skip("repository root (go.mod) not found")
	}
	if _, err := os.Stat(ref); err != nil {
		t.Skipf("shared LAS reference files absent (%v)", err)
	}
	return ref
}

// refFile returns the path of one reference file, or skips the test.
func refFile(t testing.TB, name string) string {
	t.Helper()
	p := filepath.Join(refDir(t), name)
	if _, err := os.Stat(p); err != nil {
		t.Skipf("reference file %s absent", name)
	}
	return p
}

// readAll reads every record of r in chunks of max.
type readResult struct {
	P                      []r3.Vec
	Line                   []int64
	Attr                   map[string][]float64
	Chunks                 int
	MinP, MaxP, Sum        r3.Vec
	ClassCount, ReturnsCnt map[int]int
}

func readAll(t testing.TB, r cloud.Reader, max int) readResult {
	t.Helper()
	res := readResult{Attr: map[string][]float64{}, ClassCount: map[int]int{}, ReturnsCnt: map[int]int{}}
	res.MinP = r3.Vec{X: math.Inf(1), Y: math.Inf(1), Z: math.Inf(1)}
	res.MaxP = r3.Vec{X: math.Inf(-1), Y: math.Inf(-1), Z: math.Inf(-1)}
	var c cloud.Chunk
	for {
		err := r.Read(&c, max)
		if err == io.EOF {
			if c.Len() != 0 {
				t.Fatalf("io.EOF with %d records in the chunk", c.Len())
			}
			return res
		}
		if err != nil {
			t.Fatal(err)
		}
		res.Chunks++
		if c.ID != nil {
			t.Fatal("Chunk.ID is not nil")
		}
		for i, p := range c.P {
			if c.Reject[i] != "" {
				t.Fatalf("record %d rejected: %s", c.Line[i], c.Reject[i])
			}
			res.P = append(res.P, p)
			res.Sum = r3.Add(res.Sum, p)
			res.MinP = r3.Vec{X: math.Min(res.MinP.X, p.X), Y: math.Min(res.MinP.Y, p.Y), Z: math.Min(res.MinP.Z, p.Z)}
			res.MaxP = r3.Vec{X: math.Max(res.MaxP.X, p.X), Y: math.Max(res.MaxP.Y, p.Y), Z: math.Max(res.MaxP.Z, p.Z)}
		}
		res.Line = append(res.Line, c.Line...)
		for _, a := range c.Attr {
			if len(a.Values) != c.Len() {
				t.Fatalf("attribute %s has %d values for %d records", a.Name, len(a.Values), c.Len())
			}
			res.Attr[a.Name] = append(res.Attr[a.Name], a.Values...)
		}
	}
}

func countOf(v []float64) map[int]int {
	m := map[int]int{}
	for _, x := range v {
		m[int(x)]++
	}
	return m
}

func span(v []float64) [2]float64 {
	s := [2]float64{math.Inf(1), math.Inf(-1)}
	for _, x := range v {
		s[0], s[1] = math.Min(s[0], x), math.Max(s[1], x)
	}
	return s
}

// Tolerances.
const (
	// sumTol is the allowed difference of a coordinate sum from the value in
	// PROVENANCE.md: the sums are printed to 0.01 m steps of 1065 values of
	// up to 7×10^5 m, and naive float64 summation of n terms errs by at
	// most n·2^-53·Σ|x| ≈ 1065·1.1e-16·9e8 ≈ 1e-4 m (Higham, Accuracy and
	// Stability of Numerical Algorithms, 2nd ed., §4.2); a wrong record
	// moves a sum by at least one scale step, 0.01 m.
	sumTol = 1e-3
)

// provenanceCase holds the facts ../shared/reference/las/PROVENANCE.md
// states for one file (measured there by decoding every record).
type provenanceCase struct {
	file         string
	version      string
	format       uint8
	recLen       uint16
	count        int64
	legacyCount  uint32
	scale        [3]float64
	offset       [3]float64
	min, max     [3]float64 // header bounds
	boundsSteps  float64    // header bounds may differ from the points by this many scale steps
	first        r3.Vec     // scaled first point
	sum          *r3.Vec    // sums of scaled X, Y, Z, where stated
	classes      map[int]int
	returns      map[int]int
	intensity    [2]float64 // range, where stated (zero value: not stated)
	gps          [2]float64 // range, where stated
	firstGPS     float64    // where stated
	firstIntens  float64
	hasWKT       bool
	hasGeoKeys   bool
	evlrs        int
	extraBytes   int
	firstReturns [2]float64 // return number, number of returns of the first point, where stated
	firstRaw     [3]int32   // raw integers of the first point, where stated
	rawMin       [3]int32   // raw integer ranges, where stated
	rawMax       [3]int32
	footWarning  bool // the CRS is in US survey feet
}

func provenanceCases() []provenanceCase {
	one := func(f uint8, recLen uint16) provenanceCase {
		c := provenanceCase{
			file: "1.2_" + string(rune('0'+f)) + ".las", version: "1.2", format: f, recLen: recLen,
			count: 1, legacyCount: 1,
			scale: [3]float64{0.01, 0.01, 0.01},
			min:   [3]float64{470692.44, 4602888.9, 16.0}, max: [3]float64{470692.44, 4602888.9, 16.0},
			first:        r3.Vec{X: 470692.44, Y: 4602888.9, Z: 16.0},
			classes:      map[int]int{2: 1},
			firstReturns: [2]float64{2, 0},
			hasWKT:       true, hasGeoKeys: true,
		}
		if f == 1 || f == 3 {
			c.firstGPS = 1205902800.0
		}
		return c
	}
	simpleSum := r3.Vec{X: 678721022.97, Y: 906580758.49, Z: 462314.20}
	hundredSum := r3.Vec{X: 63735734.38, Y: 85135917.47, Z: 43345.89}
	test14 := provenanceCase{
		file: "test1_4.las", version: "1.4", format: 6, recLen: 30, count: 1000, legacyCount: 1000,
		scale:  [3]float64{1.16451354e-06, 1.164510015e-06, 1.003143236e-06},
		offset: [3]float64{1692500.352, 1817499.596, 7350.194653},
		// Computed bounds (PROVENANCE.md); the header's differ by < 1 step.
		min:         [3]float64{1694038.4456374517, 1816492.7062700584, 5592.7499174683535},
		max:         [3]float64{1694539.677014474, 1816497.9762624602, 5599.069686751426},
		boundsSteps: 1,
		first:       r3.Vec{X: 1694510.3869346841, Y: 1816497.966263977, Z: 5598.3596128149675},
		firstRaw:    [3]int32{1726072618, -860129774, -1746345863},
		rawMin:      [3]int32{1320803567, -864646690, -1751937981},
		rawMax:      [3]int32{1751224820, -860121188, -1745638014},
		footWarning: true,
		classes:     map[int]int{2: 1000},
		returns:     map[int]int{1: 974, 2: 23, 3: 2, 4: 1},
		intensity:   [2]float64{2, 68},
		gps:         [2]float64{83177420.53400505, 83177420.60104504},
		firstIntens: 41, firstReturns: [2]float64{1, 1},
		hasWKT: true,
	}
	simple := provenanceCase{
		file: "simple.las", version: "1.2", format: 3, recLen: 34, count: 1065, legacyCount: 1065,
		scale: [3]float64{0.01, 0.01, 0.01},
		min:   [3]float64{635619.85, 848899.7, 406.59}, max: [3]float64{638982.55, 853535.43, 586.38},
		firstRaw: [3]int32{63701224, 84902831, 43166},
		rawMin:   [3]int32{63561985, 84889970, 40659}, rawMax: [3]int32{63898255, 85353543, 58638},
		sum:     &simpleSum,
		classes: map[int]int{1: 789, 2: 276}, returns: map[int]int{1: 925, 2: 114, 3: 21, 4: 5},
		intensity: [2]float64{0, 254}, gps: [2]float64{245370.4171, 249783.1622},
		firstGPS: 245380.78254962614, firstIntens: 143, firstReturns: [2]float64{1, 1},
	}
	extra := simple // same first 34 bytes of every record (PROVENANCE.md)
	extra.file, extra.version, extra.recLen, extra.extraBytes, extra.gps, extra.firstGPS = "extrabytes.las", "1.4", 61, 27, [2]float64{}, 0
	evlr := test14
	evlr.file, evlr.legacyCount, evlr.boundsSteps, evlr.evlrs = "1_4_w_evlr.las", 0, 0, 1
	return []provenanceCase{
		one(0, 20), one(1, 28), one(2, 26), one(3, 34),
		{
			file: "100-points.las", version: "1.2", format: 3, recLen: 34, count: 100, legacyCount: 100,
			scale: [3]float64{0.01, 0.01, 0.01},
			min:   [3]float64{635717.85, 848953.74, 409.19}, max: [3]float64{638944.95, 853483.3, 530.61},
			firstRaw: [3]int32{63678232, 84904318, 42641},
			rawMin:   [3]int32{63571785, 84895374, 40919}, rawMax: [3]int32{63894495, 85348330, 53061},
			sum:     &hundredSum,
			classes: map[int]int{1: 73, 2: 27}, returns: map[int]int{1: 89, 2: 10, 3: 1},
			intensity: [2]float64{1, 233}, gps: [2]float64{245373.1379, 249780.9982}, firstIntens: 157,
		},
		simple, extra, test14, evlr,
		{
			file: "unregistered_extra_bytes.las", version: "1.4", format: 6, recLen: 34, count: 4, legacyCount: 0,
			scale: [3]float64{0.01, 0.01, 0.01},
			min:   [3]float64{1, 1, 1}, max: [3]float64{4, 4, 4},
			first:   r3.Vec{X: 1, Y: 1, Z: 1},
			sum:     &r3.Vec{X: 10, Y: 10, Z: 10},
			classes: map[int]int{0: 4}, returns: map[int]int{0: 4}, extraBytes: 4,
		},
	}
}

// TestProvenance checks every LAS reference file against the facts stated
// in ../shared/reference/las/PROVENANCE.md (files from the PDAL and laspy
// test suites; facts measured there by decoding every record).
func TestProvenance(t *testing.T) {
	for _, tc := range provenanceCases() {
		t.Run(tc.file, func(t *testing.T) {
			r, err := Open(refFile(t, tc.file), cloud.Options{})
			if err != nil {
				t.Fatal(err)
			}
			defer r.Close()
			h := r.Header()
			if got := strings.TrimSpace(fact(r.Info(), "version")); got != tc.version {
				t.Errorf("version: got %s, want %s", got, tc.version)
			}
			if h.PointFormat != tc.format || h.RecordLength != tc.recLen {
				t.Errorf("format/record length: got %d/%d, want %d/%d", h.PointFormat, h.RecordLength, tc.format, tc.recLen)
			}
			if h.Count != tc.count || h.LegacyCount != tc.legacyCount || r.Info().Count != tc.count {
				t.Errorf("count: got %d (legacy %d, info %d), want %d (legacy %d)", h.Count, h.LegacyCount, r.Info().Count, tc.count, tc.legacyCount)
			}
			if h.Scale != tc.scale || h.Offset != tc.offset {
				t.Errorf("scale/offset: got %v %v, want %v %v", h.Scale, h.Offset, tc.scale, tc.offset)
			}
			if got := int(h.RecordLength) - int(recordSize[h.PointFormat]); got != tc.extraBytes {
				t.Errorf("extra bytes: got %d, want %d", got, tc.extraBytes)
			}
			if n := countEVLR(h); n != tc.evlrs {
				t.Errorf("EVLRs: got %d, want %d", n, tc.evlrs)
			}
			if (h.WKT != "") != tc.hasWKT || (h.GeoKeys != "") != tc.hasGeoKeys {
				t.Errorf("CRS: got WKT %q, GeoKeys %q; want WKT %v, GeoKeys %v", h.WKT, h.GeoKeys, tc.hasWKT, tc.hasGeoKeys)
			}
			res := readAll(t, r, 0)
			if int64(len(res.P)) != tc.count {
				t.Fatalf("read %d points, want %d", len(res.P), tc.count)
			}
			for i, l := range res.Line {
				if l != int64(i+1) {
					t.Fatalf("Line[%d] = %d, want %d", i, l, i+1)
				}
			}
			if tc.firstRaw != [3]int32{} {
				if want := scaled(tc.firstRaw, h); res.P[0] != want {
					t.Errorf("first point: got %v, want raw %v scaled %v", res.P[0], tc.firstRaw, want)
				}
			}
			if tc.first != (r3.Vec{}) && res.P[0] != tc.first {
				t.Errorf("first point: got %v, want %v", res.P[0], tc.first)
			}
			if tc.rawMin != [3]int32{} {
				if lo, hi := scaled(tc.rawMin, h), scaled(tc.rawMax, h); res.MinP != lo || res.MaxP != hi {
					t.Errorf("bounds: got %v %v, want raw %v %v scaled %v %v", res.MinP, res.MaxP, tc.rawMin, tc.rawMax, lo, hi)
				}
			}
			if got := hasWarning(r.Info(), "US survey foot"); got != tc.footWarning {
				t.Errorf("US survey foot warning %v, want %v: %q", got, tc.footWarning, r.Info().Warnings)
			}
			got := [2][3]float64{{res.MinP.X, res.MinP.Y, res.MinP.Z}, {res.MaxP.X, res.MaxP.Y, res.MaxP.Z}}
			for k := 0; k < 3; k++ {
				// PROVENANCE.md prints shortest decimals; allow the
				// rounding of a decimal to the nearest double, 2 ulp.
				tol := math.Max(tc.boundsSteps*tc.scale[k], 2*ulp(tc.max[k]))
				if math.Abs(got[0][k]-tc.min[k]) > tol || math.Abs(got[1][k]-tc.max[k]) > tol {
					t.Errorf("bounds axis %d: got [%v, %v], want [%v, %v] ± %v", k, got[0][k], got[1][k], tc.min[k], tc.max[k], tol)
				}
				if tc.boundsSteps > 0 && (math.Abs(h.Min[k]-got[0][k]) > tol || math.Abs(h.Max[k]-got[1][k]) > tol) {
					t.Errorf("header bounds axis %d: [%v, %v] more than one scale step from the points' [%v, %v]", k, h.Min[k], h.Max[k], got[0][k], got[1][k])
				}
				if tc.boundsSteps == 0 && (math.Abs(h.Min[k]-tc.min[k]) > tol || math.Abs(h.Max[k]-tc.max[k]) > tol) {
					t.Errorf("header bounds axis %d: got [%v, %v], want [%v, %v]", k, h.Min[k], h.Max[k], tc.min[k], tc.max[k])
				}
			}
			if tc.sum != nil {
				if d := r3.Sub(res.Sum, *tc.sum); math.Abs(d.X) > sumTol || math.Abs(d.Y) > sumTol || math.Abs(d.Z) > sumTol {
					t.Errorf("sums: got %v, want %v", res.Sum, *tc.sum)
				}
			}
			if got := countOf(res.Attr[AttrClassification]); !equalCounts(got, tc.classes) {
				t.Errorf("classes: got %v, want %v", got, tc.classes)
			}
			if tc.returns != nil {
				if got := countOf(res.Attr[AttrReturnNumber]); !equalCounts(got, tc.returns) {
					t.Errorf("return numbers: got %v, want %v", got, tc.returns)
				}
			}
			if tc.intensity != [2]float64{} {
				if got := span(res.Attr[AttrIntensity]); got != tc.intensity {
					t.Errorf("intensity range: got %v, want %v", got, tc.intensity)
				}
			}
			if res.Attr[AttrIntensity][0] != tc.firstIntens {
				t.Errorf("first intensity: got %v, want %v", res.Attr[AttrIntensity][0], tc.firstIntens)
			}
			if tc.firstReturns != [2]float64{} {
				got := [2]float64{res.Attr[AttrReturnNumber][0], res.Attr[AttrNumberOfReturns][0]}
				if got != tc.firstReturns {
					t.Errorf("first point returns: got %v, want %v", got, tc.firstReturns)
				}
			}
			gps, hasGPS := res.Attr[AttrGPSTime]
			if hasGPS != hasTime(tc.format) {
				t.Errorf("gps_time present %v, want %v", hasGPS, hasTime(tc.format))
			}
			if tc.gps != [2]float64{} {
				// PROVENANCE.md prints the 100-points and simple ranges to
				// 1e-4 s; test1_4's exactly.
				if got := span(gps); math.Abs(got[0]-tc.gps[0]) > 5e-5 || math.Abs(got[1]-tc.gps[1]) > 5e-5 {
					t.Errorf("gps range: got %v, want %v", got, tc.gps)
				}
			}
			if tc.firstGPS != 0 && gps[0] != tc.firstGPS {
				t.Errorf("first gps time: got %v, want %v", gps[0], tc.firstGPS)
			}
		})
	}
}

// scaled applies X = X_record·X_scale + X_offset (LAS 1.4 R15 §2.6).
func scaled(raw [3]int32, h *Header) r3.Vec {
	return r3.Vec{
		X: float64(raw[0])*h.Scale[0] + h.Offset[0],
		Y: float64(raw[1])*h.Scale[1] + h.Offset[1],
		Z: float64(raw[2])*h.Scale[2] + h.Offset[2],
	}
}

func ulp(x float64) float64 { return math.Nextafter(math.Abs(x), math.Inf(1)) - math.Abs(x) }

func hasWarning(info cloud.Info, part string) bool {
	for _, w := range info.Warnings {
		if strings.Contains(w, part) {
			return true
		}
	}
	return false
}

func countEVLR(h *Header) int {
	n := 0
	for _, v := range h.VLRs {
		if v.Extended {
			n++
		}
	}
	return n
}

func equalCounts(a, b map[int]int) bool {
	if len(a) != len(b) {
		return false
	}
	for k, v := range a {
		if b[k] != v {
			return false
		}
	}
	return true
}

func fact(info cloud.Info, key string) string {
	for _, f := range info.Facts {
		if f.Key == key {
			return f.Value
		}
	}
	return ""
}

// TestReferenceReaders compares sampled points (first, middle, last) with
// those decoded by two general-purpose readers from npm, run under Node.js
// by the scripts in testdata (versions recorded in the JSON files):
// @loaders.gl/las (refuses LAS 1.4, so it covers the six 1.2 files) and
// copc's Las.View (all ten files).
func TestReferenceReaders(t *testing.T) {
	for _, tc := range []struct {
		file string
		min  int // files the reference must have decoded
	}{{"loadersgl_ref.json", 6}, {"copc_ref.json", 10}} {
		t.Run(tc.file, func(t *testing.T) { compareReference(t, tc.file, tc.min) })
	}
}

func compareReference(t *testing.T, file string, min int) {
	raw, err := os.ReadFile(filepath.Join("testdata", file))
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Source, Version string
		Files           map[string]struct {
			Error  string
			Count  int64
			Points []struct {
				Record                    int
				X, Y, Z                   float64
				Intensity, Classification *float64
				ReturnNumber              *float64 `json:"return_number"`
				GPSTime                   *float64 `json:"gps_time"`
			}
		}
	}
	if err := json.Unmarshal(raw, &ref); err != nil {
		t.Fatal(err)
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
			res := readAll(t, r, 7)
			if int64(len(res.P)) != f.Count {
				t.Fatalf("count: got %d, want %d", len(res.P), f.Count)
			}
			for _, p := range f.Points {
				i := p.Record - 1
				if got, want := res.P[i], (r3.Vec{X: p.X, Y: p.Y, Z: p.Z}); got != want {
					t.Errorf("record %d: got %v, want %v (%s %s)", p.Record, got, want, ref.Source, ref.Version)
				}
				for _, a := range []struct {
					name string
					want *float64
				}{{AttrIntensity, p.Intensity}, {AttrClassification, p.Classification}, {AttrReturnNumber, p.ReturnNumber}, {AttrGPSTime, p.GPSTime}} {
					if a.want != nil && res.Attr[a.name][i] != *a.want {
						t.Errorf("record %d %s: got %v, want %v", p.Record, a.name, res.Attr[a.name][i], *a.want)
					}
				}
			}
		})
	}
	if compared < min {
		t.Errorf("%s: only %d files decoded by the reference, want %d", file, compared, min)
	}
}

// TestRegistered checks that cloud.Open sniffs a LAS file to this reader.
func TestRegistered(t *testing.T) {
	r, err := cloud.Open(refFile(t, "simple.las"), cloud.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	if _, ok := r.(*Reader); !ok || r.Info().Format != "las" || r.Info().Count != 1065 {
		t.Errorf("cloud.Open gave %T %q count %d", r, r.Info().Format, r.Info().Count)
	}
}

// TestBadEVLR moves the EVLR start of 1_4_w_evlr.las (PROVENANCE.md: one
// EVLR at byte 32305 after 1000 records) past the end of the file: the
// points stay readable and Info warns.
func TestBadEVLR(t *testing.T) {
	data, err := os.ReadFile(refFile(t, "1_4_w_evlr.las"))
	if err != nil {
		t.Fatal(err)
	}
	if got := binary.LittleEndian.Uint64(data[235:]); got != 32305 {
		t.Fatalf("EVLR start %d, PROVENANCE.md says 32305", got)
	}
	binary.LittleEndian.PutUint64(data[235:], uint64(len(data)+100))
	r, err := NewReader(bytes.NewReader(data), int64(len(data)), cloud.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if !hasWarning(r.Info(), "EVLRs skipped") {
		t.Errorf("warnings %q", r.Info().Warnings)
	}
	if res := readAll(t, r, 0); len(res.P) != 1000 {
		t.Errorf("read %d points, want 1000", len(res.P))
	}
}

// TestExtraBytes checks the Extra Bytes VLR of extrabytes.las against
// PROVENANCE.md: five descriptors Colors (type 23, options 0), Reserved
// (0, 7), Flags (12, 0), Intensity (5, 0, description "Brightness"), Time
// (7, 0); the record's 27 extra bytes are skipped.
func TestExtraBytes(t *testing.T) {
	r, err := Open(refFile(t, "extrabytes.las"), cloud.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	want := []ExtraByte{
		{Name: "Colors", DataType: 23}, {Name: "Reserved", DataType: 0, Options: 7}, {Name: "Flags", DataType: 12},
		{Name: "Intensity", DataType: 5, Description: "Brightness"}, {Name: "Time", DataType: 7},
	}
	got := r.Header().ExtraBytes
	if len(got) != len(want) {
		t.Fatalf("got %d descriptors %+v, want %d", len(got), got, len(want))
	}
	for i := range want {
		g := got[i]
		if g.Name != want[i].Name || g.DataType != want[i].DataType || g.Options != want[i].Options ||
			(want[i].Description != "" && g.Description != want[i].Description) {
			t.Errorf("descriptor %d: got %+v, want %+v", i+1, g, want[i])
		}
	}
	if f := fact(r.Info(), "extra bytes"); !strings.HasPrefix(f, "Colors (type 23, options 0)") {
		t.Errorf("extra bytes fact %q", f)
	}
}
