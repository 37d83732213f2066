package landxml

import (
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
	"saddlecheck/deviation/mesh"
)

func init() { deviation.RegisterMeshLoader("landxml", Load) }

// FormatError reports a malformed LandXML file.
type FormatError struct {
	Offset int64 // byte offset in the file
	Line   int   // 1-based line
	Msg    string
	Err    error // underlying cause, or nil
}

func (e *FormatError) Error() string {
	s := fmt.Sprintf("landxml: line %d (byte %d): %s", e.Line, e.Offset, e.Msg)
	if e.Err != nil {
		s += ": " + e.Err.Error()
	}
	return s
}

// Unwrap returns the underlying cause.
func (e *FormatError) Unwrap() error { return e.Err }

// UnsupportedError reports valid LandXML this package does not read.
type UnsupportedError struct {
	Line    int
	Feature string
}

func (e *UnsupportedError) Error() string {
	return fmt.Sprintf("landxml: line %d: unsupported %s", e.Line, e.Feature)
}

// TIN is one triangulated surface.
type TIN struct {
	Name string
	// Vertices are the surface points in file units: X easting, Y northing,
	// Z elevation (reordered from the file's N E Z).
	Vertices []r3.Vec
	// IDs holds each vertex's id as written in the file.
	IDs []string
	// Faces index Vertices.
	Faces [][3]int32
	// Invisible counts faces skipped for their i="1" flag.
	Invisible int
}

// File is what Parse found: the unit and the surfaces.
type File struct {
	// Unit is the linearUnit of the Units element ("meter", "USSurveyFoot",
	// …), or "" when the file has none.
	Unit string
	// UnitMetres is the size of Unit in metres, 0 when the file has none.
	UnitMetres float64
	Surfaces   []TIN
}

// linearUnits gives the metres per LandXML linearUnit (LandXML 1.2 schema
// enumerations metLinear and impLinear; foot values exact by definition,
// NIST SP 811 appendix B).
var linearUnits = map[string]float64{
	"millimeter":   0.001,
	"centimeter":   0.01,
	"meter":        1,
	"kilometer":    1000,
	"foot":         0.3048,
	"USSurveyFoot": 1200.0 / 3937.0,
	"inch":         0.0254,
}

// maxPoints caps the points and faces of one file (about 0.5 GB of
// vertices and faces), so that a hostile file cannot exhaust memory.
const maxPoints = 1 << 24

// Parse reads a LandXML document and returns its units and TIN surfaces.
func Parse(r io.Reader) (*File, error) {
	d := xml.NewDecoder(r)
	p := parser{d: d, f: &File{}}
	if err := p.run(); err != nil {
		return nil, err
	}
	return p.f, nil
}

type parser struct {
	d     *xml.Decoder
	stack []string // open elements, checked against end tags (RawToken does not)
	f     *File
	cur   *TIN
	ids   map[string]int32
	inDef bool
	n     int
}

func (p *parser) errf(err error, format string, a ...any) error {
	line, _ := p.d.InputPos()
	return &FormatError{Offset: p.d.InputOffset(), Line: line, Msg: fmt.Sprintf(format, a...), Err: err}
}

func (p *parser) line() int { l, _ := p.d.InputPos(); return l }

// at is the position of an element start, for errors found after its text
// has been read.
type at struct {
	line int
	off  int64
}

func (p *parser) here() at { return at{p.line(), p.d.InputOffset()} }

func (a at) errf(format string, args ...any) error {
	return &FormatError{Offset: a.off, Line: a.line, Msg: fmt.Sprintf(format, args...)}
}

func attr(se xml.StartElement, name string) (string, bool) {
	for _, a := range se.Attr {
		if a.Name.Local == name {
			return a.Value, true
		}
	}
	return "", false
}

// token returns the next token through RawToken, which is much cheaper than
// Token (no namespace translation), checking element nesting itself.
// LandXML elements are matched by local name, so prefixes do not matter.
func (p *parser) token() (xml.Token, error) {
	tok, err := p.d.RawToken()
	if err != nil {
		if err == io.EOF && len(p.stack) > 0 {
			return nil, fmt.Errorf("element <%s> not closed: %w", p.stack[len(p.stack)-1], io.ErrUnexpectedEOF)
		}
		return nil, err
	}
	switch t := tok.(type) {
	case xml.StartElement:
		p.stack = append(p.stack, t.Name.Local)
	case xml.EndElement:
		if len(p.stack) == 0 || p.stack[len(p.stack)-1] != t.Name.Local {
			open := "none"
			if len(p.stack) > 0 {
				open = "<" + p.stack[len(p.stack)-1] + ">"
			}
			return nil, fmt.Errorf("end tag </%s> does not match the open element %s", t.Name.Local, open)
		}
		p.stack = p.stack[:len(p.stack)-1]
	}
	return tok, nil
}

func (p *parser) run() error {
	root := false
	for {
		tok, err := p.token()
		if err == io.EOF {
			break
		}
		if err != nil {
			return p.errf(err, "malformed XML")
		}
		switch t := tok.(type) {
		case xml.StartElement:
			if !root {
				if t.Name.Local != "LandXML" {
					return p.errf(nil, "root element <%s>, want <LandXML>", t.Name.Local)
				}
				root = true
				continue
			}
			if err := p.start(t); err != nil {
				return err
			}
		case xml.EndElement:
			if err := p.end(t); err != nil {
				return err
			}
		}
	}
	if !root {
		return p.errf(io.ErrUnexpectedEOF, "no <LandXML> element")
	}
	return nil
}

func (p *parser) start(t xml.StartElement) error {
	switch t.Name.Local {
	case "Metric", "Imperial":
		u, ok := attr(t, "linearUnit")
		if !ok {
			return p.errf(nil, "<%s> has no linearUnit", t.Name.Local)
		}
		m, ok := linearUnits[u]
		if !ok {
			return &UnsupportedError{Line: p.line(), Feature: fmt.Sprintf("linearUnit %q", u)}
		}
		p.f.Unit, p.f.UnitMetres = u, m
	case "Surface":
		name, _ := attr(t, "name")
		p.f.Surfaces = append(p.f.Surfaces, TIN{Name: name})
		p.cur = &p.f.Surfaces[len(p.f.Surfaces)-1]
		p.ids = map[string]int32{}
	case "Definition":
		if p.cur == nil {
			return nil // a Definition outside a Surface is not a TIN
		}
		if st, _ := attr(t, "surfType"); st != "" && st != "TIN" {
			return &UnsupportedError{Line: p.line(), Feature: fmt.Sprintf("surfType %q (only TIN surfaces are read)", st)}
		}
		p.inDef = true
	case "P":
		if p.inDef {
			return p.point(t)
		}
	case "F":
		if p.inDef {
			return p.face(t)
		}
	}
	return nil
}

func (p *parser) end(t xml.EndElement) error {
	switch t.Name.Local {
	case "Definition":
		p.inDef = false
	case "Surface":
		p.cur = nil
	}
	return nil
}

// text reads the character data of the element just started, up to its end.
func (p *parser) text() (string, error) {
	var sb strings.Builder
	for {
		tok, err := p.token()
		if err != nil {
			return "", p.errf(unexpected(err), "unterminated element")
		}
		switch t := tok.(type) {
		case xml.CharData:
			sb.Write(t)
		case xml.EndElement:
			return sb.String(), nil
		case xml.StartElement:
			return "", p.errf(nil, "unexpected <%s> inside a point or face", t.Name.Local)
		}
	}
}

func unexpected(err error) error {
	if errors.Is(err, io.EOF) {
		return io.ErrUnexpectedEOF
	}
	return err
}

func (p *parser) point(t xml.StartElement) error {
	pos := p.here()
	id, ok := attr(t, "id")
	if !ok {
		return pos.errf("<P> without id")
	}
	s, err := p.text()
	if err != nil {
		return err
	}
	f := strings.Fields(s)
	if len(f) != 3 {
		return pos.errf("point %q has %d values, want \"northing easting elevation\"", id, len(f))
	}
	var v [3]float64
	for i, x := range f {
		if v[i], err = strconv.ParseFloat(x, 64); err != nil || math.IsNaN(v[i]) || math.IsInf(v[i], 0) {
			return pos.errf("point %q value %q is not a finite number", id, x)
		}
	}
	if _, dup := p.ids[id]; dup {
		return pos.errf("point id %q defined twice in surface %q", id, p.cur.Name)
	}
	if p.n++; p.n > maxPoints {
		return pos.errf("more than %d points and faces", maxPoints)
	}
	p.ids[id] = int32(len(p.cur.Vertices))
	// N E Z in the file → x = E, y = N, z = Z.
	p.cur.Vertices = append(p.cur.Vertices, r3.Vec{X: v[1], Y: v[0], Z: v[2]})
	p.cur.IDs = append(p.cur.IDs, id)
	return nil
}

func (p *parser) face(t xml.StartElement) error {
	inv, _ := attr(t, "i")
	pos := p.here()
	s, err := p.text()
	if err != nil {
		return err
	}
	if strings.TrimSpace(inv) == "1" {
		p.cur.Invisible++
		return nil
	}
	f := strings.Fields(s)
	if len(f) != 3 {
		return pos.errf("face has %d point ids, want 3", len(f))
	}
	if p.n++; p.n > maxPoints {
		return pos.errf("more than %d points and faces", maxPoints)
	}
	// The schema puts Pnts before Faces, so every id is known here.
	var tri [3]int32
	for j, id := range f {
		i, ok := p.ids[id]
		if !ok {
			return pos.errf("surface %q face %d refers to point id %q, which is not defined before it", p.cur.Name, len(p.cur.Faces)+1, id)
		}
		tri[j] = i
	}
	p.cur.Faces = append(p.cur.Faces, tri)
	return nil
}

// Load is the "landxml" mesh loader: it reads the one TIN surface of
// spec.Path, converts it to metres (the file's Units, else
// spec.UnitMetres), adds spec.Origin and builds the mesh.
func Load(spec deviation.MeshSpec) (*deviation.LoadedMesh, error) {
	fh, err := os.Open(spec.Path)
	if err != nil {
		return nil, err
	}
	defer fh.Close()
	f, err := Parse(fh)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", spec.Path, err)
	}
	m, rep, err := f.Mesh(spec)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", spec.Path, err)
	}
	return &deviation.LoadedMesh{Surface: m, Triangles: m.Triangles(), Notes: rep.Notes, Warnings: rep.Warnings}, nil
}

// Mesh builds the mesh of the file's only TIN surface for spec (unit,
// origin, side and margin; spec.Path is not used).
func (f *File) Mesh(spec deviation.MeshSpec) (*mesh.Mesh, *mesh.Report, error) {
	if len(f.Surfaces) != 1 {
		var names []string
		for _, s := range f.Surfaces {
			names = append(names, strconv.Quote(s.Name))
		}
		return nil, nil, fmt.Errorf("landxml: the file holds %d surfaces %v; keep exactly one TIN per design mesh file", len(f.Surfaces), names)
	}
	s := &f.Surfaces[0]
	unit := f.UnitMetres
	var warn []string
	if unit == 0 {
		unit = spec.UnitMetres
		if unit == 0 {
			unit = 1
		}
	} else if spec.UnitMetres != 0 && spec.UnitMetres != unit {
		warn = append(warn, fmt.Sprintf("the file's linearUnit %s (%g m) overrides the design's unit (%g m)", f.Unit, unit, spec.UnitMetres))
	}
	verts := make([]r3.Vec, len(s.Vertices))
	for i, v := range s.Vertices {
		verts[i] = r3.Add(r3.Scale(unit, v), spec.Origin)
	}
	m, rep, err := mesh.New(verts, s.Faces, mesh.Options{NormalUp: spec.NormalUp, MarginM: spec.MarginM})
	if err != nil {
		return nil, rep, err
	}
	rep.Notes = append(rep.Notes, fmt.Sprintf("LandXML surface %q: %d points, %d faces (%d invisible skipped), unit %g m, origin (%.3f, %.3f, %.3f) m; points read as northing easting elevation",
		s.Name, len(s.Vertices), len(s.Faces), s.Invisible, unit, spec.Origin.X, spec.Origin.Y, spec.Origin.Z))
	rep.Warnings = append(rep.Warnings, warn...)
	return m, rep, nil
}
