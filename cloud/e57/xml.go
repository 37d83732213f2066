package e57

import (
	"bytes"
	"encoding/xml"
	"fmt"
	"math"
	"math/bits"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/spatial/r3"
)

// elem is one element of the E57 XML tree.
type elem struct {
	XMLName xml.Name
	Attr    []xml.Attr `xml:",any,attr"`
	Text    string     `xml:",chardata"`
	Kids    []elem     `xml:",any"`
}

func (e *elem) attr(name string) (string, bool) {
	for _, a := range e.Attr {
		if a.Name.Local == name {
			return a.Value, true
		}
	}
	return "", false
}

func (e *elem) kid(name string) *elem {
	for i := range e.Kids {
		if e.Kids[i].XMLName.Local == name {
			return &e.Kids[i]
		}
	}
	return nil
}

// float returns the value of a Float or Integer element child name, or def
// when the child is absent or empty (an empty Float element is 0).
func (e *elem) float(name string, def float64) (float64, error) {
	k := e.kid(name)
	if k == nil {
		return def, nil
	}
	s := strings.TrimSpace(k.Text)
	if s == "" {
		return 0, nil
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		return 0, fmt.Errorf("element %s: %q is not a number", name, s)
	}
	return v, nil
}

// Field is one field of a CompressedVector prototype, in bytestream order.
type Field struct {
	Name string // e.g. "cartesianX"
	// Type is "Float", "Integer" or "ScaledInteger".
	Type string
	// Single is true for a Float of precision="single".
	Single bool
	// Min and Max bound an Integer or ScaledInteger's raw value.
	Min, Max int64
	// Scale and Offset give a ScaledInteger's value, raw·Scale + Offset.
	Scale, Offset float64
	// Bits is the bit width of one packed value: 64 or 32 for Float,
	// ⌈log₂(Max−Min+1)⌉ for the integer types (0 when Max = Min).
	Bits int
}

// Scan describes one data3D child: a scan with its pose and prototype.
type Scan struct {
	Name, GUID string
	Records    int64 // recordCount of its points
	Offset     int64 // physical offset of its binary section (fileOffset)
	// Rotation is the pose's unit quaternion (w, x, y, z); identity when the
	// file gives no pose.
	Rotation [4]float64
	// Translation is the pose's translation in metres.
	Translation r3.Vec
	// Bounds holds cartesianBounds (xMin, xMax, yMin, yMax, zMin, zMax) if
	// given, else nil.
	Bounds []float64
	Fields []Field
	// Spherical is true when the points are given as range, azimuth,
	// elevation rather than cartesian coordinates.
	Spherical bool
}

// parseXML reads the E57 XML section.
func parseXML(data []byte, off int64) (root *elem, scans []Scan, err error) {
	root = new(elem)
	d := xml.NewDecoder(bytes.NewReader(data))
	if err := d.Decode(root); err != nil {
		return nil, nil, &FormatError{Offset: off, Msg: fmt.Sprintf("XML section near logical byte %d", d.InputOffset()), Err: err}
	}
	if root.XMLName.Local != "e57Root" {
		return nil, nil, &FormatError{Offset: off, Msg: fmt.Sprintf("XML root element <%s>, want <e57Root>", root.XMLName.Local)}
	}
	d3 := root.kid("data3D")
	if d3 == nil {
		return root, nil, nil
	}
	for i := range d3.Kids {
		s, err := parseScan(&d3.Kids[i], i)
		if err != nil {
			return nil, nil, &FormatError{Offset: off, Msg: fmt.Sprintf("data3D child %d", i+1), Err: err}
		}
		scans = append(scans, s)
	}
	return root, scans, nil
}

func parseScan(v *elem, idx int) (Scan, error) {
	s := Scan{Rotation: [4]float64{1, 0, 0, 0}}
	if n := v.kid("name"); n != nil {
		s.Name = strings.TrimSpace(n.Text)
	}
	if g := v.kid("guid"); g != nil {
		s.GUID = strings.TrimSpace(g.Text)
	}
	if pose := v.kid("pose"); pose != nil {
		if rot := pose.kid("rotation"); rot != nil {
			for i, c := range []string{"w", "x", "y", "z"} {
				def := 0.0
				if i == 0 {
					def = 1
				}
				var err error
				if s.Rotation[i], err = rot.float(c, def); err != nil {
					return s, err
				}
			}
			q := s.Rotation
			norm := math.Sqrt(q[0]*q[0] + q[1]*q[1] + q[2]*q[2] + q[3]*q[3])
			if !(norm > 0) || math.IsInf(norm, 0) {
				return s, fmt.Errorf("pose rotation quaternion %v has no direction", q)
			}
			for i := range s.Rotation {
				s.Rotation[i] /= norm
			}
		}
		if tr := pose.kid("translation"); tr != nil {
			var err error
			if s.Translation.X, err = tr.float("x", 0); err != nil {
				return s, err
			}
			if s.Translation.Y, err = tr.float("y", 0); err != nil {
				return s, err
			}
			if s.Translation.Z, err = tr.float("z", 0); err != nil {
				return s, err
			}
		}
	}
	if b := v.kid("cartesianBounds"); b != nil {
		for _, n := range []string{"xMinimum", "xMaximum", "yMinimum", "yMaximum", "zMinimum", "zMaximum"} {
			x, err := b.float(n, math.NaN())
			if err != nil {
				return s, err
			}
			s.Bounds = append(s.Bounds, x)
		}
	}
	pts := v.kid("points")
	if pts == nil {
		return s, fmt.Errorf("scan %d has no points element", idx+1)
	}
	if t, _ := pts.attr("type"); t != "CompressedVector" {
		return s, fmt.Errorf("points of type %q, want CompressedVector", t)
	}
	var err error
	if s.Offset, err = intAttr(pts, "fileOffset", -1); err != nil {
		return s, err
	}
	if s.Records, err = intAttr(pts, "recordCount", -1); err != nil {
		return s, err
	}
	if s.Offset < 0 || s.Records < 0 {
		return s, fmt.Errorf("points need fileOffset and recordCount")
	}
	proto := pts.kid("prototype")
	if proto == nil {
		return s, fmt.Errorf("points have no prototype")
	}
	if err := flatten(proto, "", &s.Fields); err != nil {
		return s, err
	}
	has := map[string]bool{}
	for _, f := range s.Fields {
		has[f.Name] = true
	}
	switch {
	case has["cartesianX"] && has["cartesianY"] && has["cartesianZ"]:
	case has["sphericalRange"] && has["sphericalAzimuth"] && has["sphericalElevation"]:
		s.Spherical = true
	default:
		return s, fmt.Errorf("prototype has neither cartesianX/Y/Z nor sphericalRange/Azimuth/Elevation")
	}
	return s, nil
}

// flatten lists the terminal fields of a prototype depth-first, the order
// of their bytestreams.
func flatten(e *elem, prefix string, dst *[]Field) error {
	for i := range e.Kids {
		k := &e.Kids[i]
		name := prefix + k.XMLName.Local
		t, _ := k.attr("type")
		f := Field{Name: name, Type: t, Scale: 1}
		switch t {
		case "Structure":
			if err := flatten(k, name+".", dst); err != nil {
				return err
			}
			continue
		case "Float":
			p, _ := k.attr("precision")
			f.Single = p == "single"
			f.Bits = 64
			if f.Single {
				f.Bits = 32
			}
		case "Integer", "ScaledInteger":
			var err error
			if f.Min, err = intAttr(k, "minimum", math.MinInt64); err != nil {
				return err
			}
			if f.Max, err = intAttr(k, "maximum", math.MaxInt64); err != nil {
				return err
			}
			if f.Max < f.Min {
				return fmt.Errorf("field %s: maximum %d < minimum %d", name, f.Max, f.Min)
			}
			f.Bits = bits.Len64(uint64(f.Max) - uint64(f.Min))
			if t == "ScaledInteger" {
				if f.Scale, err = floatAttr(k, "scale", 1); err != nil {
					return err
				}
				if f.Offset, err = floatAttr(k, "offset", 0); err != nil {
					return err
				}
			}
		default:
			return &UnsupportedError{Offset: -1, Feature: fmt.Sprintf("prototype field %s of type %q", name, t)}
		}
		*dst = append(*dst, f)
	}
	return nil
}

func intAttr(e *elem, name string, def int64) (int64, error) {
	s, ok := e.attr(name)
	if !ok {
		return def, nil
	}
	v, err := strconv.ParseInt(strings.TrimSpace(s), 10, 64)
	if err != nil {
		return 0, fmt.Errorf("attribute %s=%q of <%s> is not an integer", name, s, e.XMLName.Local)
	}
	return v, nil
}

func floatAttr(e *elem, name string, def float64) (float64, error) {
	s, ok := e.attr(name)
	if !ok {
		return def, nil
	}
	v, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, fmt.Errorf("attribute %s=%q of <%s> is not a finite number", name, s, e.XMLName.Local)
	}
	return v, nil
}
