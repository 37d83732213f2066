package landxml

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

// flatTIN is a LandXML 1.2 document written by hand after the LandXML-1.2
// schema (Units/Metric, Surfaces/Surface/Definition surfType="TIN",
// Pnts/P "northing easting elevation", Faces/F): a 10 m square at
// elevation 100 m, northings near 5 400 000 and eastings near 512 000, two
// triangles plus one invisible face.
const flatTIN = `<?xml version="1.0" encoding="UTF-8"?>
<LandXML xmlns="http://www.landxml.org/schema/LandXML-1.2" version="1.2" date="2026-01-01" time="00:00:00">
  <Units>
    <Metric linearUnit="%UNIT%" areaUnit="squareMeter" volumeUnit="cubicMeter" angularUnit="decimal degrees" directionUnit="decimal degrees"/>
  </Units>
  <Surfaces>
    <Surface name="slab">
      <Definition surfType="TIN">
        <Pnts>
          <P id="1">5400000 512000 100</P>
          <P id="2">5400000 512010 100</P>
          <P id="3"> 5400010  512010
             100 </P>
          <P id="4">5400010 512000 100</P>
          <P id="5">5400020 512020 130</P>
        </Pnts>
        <Faces>
          <F>1 2 3</F>
          <F n="0 0 0">1 3 4</F>
          <F i="1">3 4 5</F>
        </Faces>
      </Definition>
    </Surface>
  </Surfaces>
</LandXML>
`

func doc(unit string) string { return strings.ReplaceAll(flatTIN, "%UNIT%", unit) }

// TestOrder checks the N E Z order: the first point, northing 5400000 ≠
// easting 512000, must land at x = easting, y = northing.
func TestOrder(t *testing.T) {
	f, err := Parse(strings.NewReader(doc("meter")))
	if err != nil {
		t.Fatal(err)
	}
	if len(f.Surfaces) != 1 || f.Unit != "meter" || f.UnitMetres != 1 {
		t.Fatalf("got %d surfaces, unit %q %v", len(f.Surfaces), f.Unit, f.UnitMetres)
	}
	s := f.Surfaces[0]
	if want := (r3.Vec{X: 512000, Y: 5400000, Z: 100}); s.Vertices[0] != want {
		t.Errorf("point 1: got %v, want %v (x = easting, y = northing)", s.Vertices[0], want)
	}
	if want := (r3.Vec{X: 512010, Y: 5400010, Z: 100}); s.Vertices[2] != want {
		t.Errorf("point 3 (split over lines): got %v, want %v", s.Vertices[2], want)
	}
	if len(s.Faces) != 2 || s.Invisible != 1 || s.Faces[1] != [3]int32{0, 2, 3} || s.Name != "slab" {
		t.Errorf("faces %v, invisible %d, name %q", s.Faces, s.Invisible, s.Name)
	}
}

// TestLoad loads the TIN through deviation.LoadMesh and measures points
// above the flat square: the signed distance must be the height above z =
// 100 m (analytic truth), and the units of the file must apply.
func TestLoad(t *testing.T) {
	tests := []struct {
		unit  string
		metre float64 // LandXML-1.2 unit size; feet exact per NIST SP 811 appendix B
	}{
		{"meter", 1}, {"millimeter", 0.001}, {"foot", 0.3048}, {"USSurveyFoot", 1200.0 / 3937.0},
	}
	for _, tc := range tests {
		t.Run(tc.unit, func(t *testing.T) {
			text := doc(tc.unit)
			if tc.metre != 1 && tc.metre != 0.001 {
				text = strings.Replace(text, "<Metric", "<Imperial", 1)
			}
			p := filepath.Join(t.TempDir(), "tin.xml")
			if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
				t.Fatal(err)
			}
			lm, err := deviation.LoadMesh("landxml", deviation.MeshSpec{Path: p, UnitMetres: 1, NormalUp: true})
			if err != nil {
				t.Fatal(err)
			}
			if lm.Triangles != 2 {
				t.Errorf("triangles: got %d, want 2", lm.Triangles)
			}
			q := r3.Vec{X: 512005 * tc.metre, Y: 5400002 * tc.metre, Z: 100*tc.metre + 0.25}
			pr := lm.Surface.Project(q)
			// tol: coordinates near 5.4e6 m carry an ulp of 9.3e-10 m.
			if math.Abs(pr.D-0.25) > 1e-8 || !pr.Inside {
				t.Errorf("D = %v (inside %v), want 0.25", pr.D, pr.Inside)
			}
			if want := (r3.Vec{X: 512005 * tc.metre, Y: 5400002 * tc.metre, Z: 100 * tc.metre}); r3.Norm(r3.Sub(pr.Foot, want)) > 1e-8 {
				t.Errorf("foot %v, want %v", pr.Foot, want)
			}
		})
	}
}

// TestNoUnits checks that a file without Units takes the design's unit and
// that MeshSpec.Origin is added after conversion.
func TestNoUnits(t *testing.T) {
	text := doc("meter")
	i, j := strings.Index(text, "<Units>"), strings.Index(text, "</Units>")
	text = text[:i] + text[j+len("</Units>"):]
	f, err := Parse(strings.NewReader(text))
	if err != nil {
		t.Fatal(err)
	}
	if f.UnitMetres != 0 {
		t.Fatalf("unit %v, want none", f.UnitMetres)
	}
	m, rep, err := f.Mesh(deviation.MeshSpec{UnitMetres: 0.001, Origin: r3.Vec{X: 1, Y: 2, Z: 3}, NormalUp: true})
	if err != nil {
		t.Fatal(err)
	}
	lo, hi := m.Bounds()
	if want := (r3.Vec{X: 512 + 1, Y: 5400 + 2, Z: 0.1 + 3}); r3.Norm(r3.Sub(lo, want)) > 1e-9 {
		t.Errorf("min %v, want %v", lo, want)
	}
	if want := (r3.Vec{X: 512.01 + 1, Y: 5400.01 + 2, Z: 0.1 + 3}); r3.Norm(r3.Sub(hi, want)) > 1e-9 {
		t.Errorf("max %v, want %v", hi, want)
	}
	if len(rep.Notes) == 0 || !strings.Contains(rep.Notes[len(rep.Notes)-1], "northing easting elevation") {
		t.Errorf("notes %q", rep.Notes)
	}
}

// TestInvalid maps malformed and unsupported files to typed errors.
func TestInvalid(t *testing.T) {
	good := doc("meter")
	tests := []struct {
		name, text  string
		unsupported bool
		line        int
		msg         string
	}{
		{name: "root", text: `<Other/>`, line: 1, msg: "want <LandXML>"},
		{name: "empty", text: ``, msg: "no <LandXML>"},
		{name: "malformed", text: strings.Replace(good, "</Pnts>", "</Pts>", 1), msg: "malformed XML"},
		{name: "two values", text: strings.Replace(good, "5400000 512010 100", "5400000 512010", 1), line: 11, msg: "has 2 values"},
		{name: "not a number", text: strings.Replace(good, "5400000 512010 100", "5400000 5120x0 100", 1), line: 11, msg: `"5120x0"`},
		{name: "NaN", text: strings.Replace(good, "5400000 512010 100", "NaN 512010 100", 1), line: 11, msg: "not a finite number"},
		{name: "undefined id", text: strings.Replace(good, "<F>1 2 3</F>", "<F>1 2 9</F>", 1), line: 18, msg: `point id "9"`},
		{name: "duplicate id", text: strings.Replace(good, `<P id="2">`, `<P id="1">`, 1), line: 11, msg: "defined twice"},
		{name: "no id", text: strings.Replace(good, `<P id="2">`, `<P>`, 1), line: 11, msg: "without id"},
		{name: "face size", text: strings.Replace(good, "<F>1 2 3</F>", "<F>1 2 3 4</F>", 1), line: 18, msg: "4 point ids"},
		{name: "grid", text: strings.Replace(good, `surfType="TIN"`, `surfType="grid"`, 1), unsupported: true, line: 8, msg: `surfType "grid"`},
		{name: "unit", text: strings.Replace(good, `linearUnit="meter"`, `linearUnit="furlong"`, 1), unsupported: true, line: 4, msg: `"furlong"`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := Parse(strings.NewReader(tc.text))
			if err == nil {
				t.Fatal("no error")
			}
			var fe *FormatError
			var ue *UnsupportedError
			line := -1
			switch {
			case tc.unsupported && errors.As(err, &ue):
				line = ue.Line
			case !tc.unsupported && errors.As(err, &fe):
				line = fe.Line
			default:
				t.Fatalf("got %T %v", err, err)
			}
			if tc.line != 0 && line != tc.line {
				t.Errorf("line: got %d, want %d (%v)", line, tc.line, err)
			}
			if !strings.Contains(err.Error(), tc.msg) {
				t.Errorf("error %q does not contain %q", err, tc.msg)
			}
		})
	}
}

// TestTwoSurfaces checks that a file with two surfaces is refused for a
// single design mesh, naming both.
func TestTwoSurfaces(t *testing.T) {
	good := doc("meter")
	i, j := strings.Index(good, "<Surface "), strings.Index(good, "</Surfaces>")
	text := good[:j] + strings.Replace(good[i:j], `name="slab"`, `name="ground"`, 1) + good[j:]
	f, err := Parse(strings.NewReader(text))
	if err != nil {
		t.Fatal(err)
	}
	if _, _, err := f.Mesh(deviation.MeshSpec{UnitMetres: 1}); err == nil || !strings.Contains(err.Error(), `"slab" "ground"`) {
		t.Errorf("got %v, want an error naming both surfaces", err)
	}
}
