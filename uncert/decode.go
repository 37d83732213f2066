package uncert

import (
	"errors"
	"fmt"
	"reflect"
	"strconv"
	"strings"

	"gopkg.in/yaml.v3"
)

// LineError is a problem in the `uncertainty:` section of a design file, at
// a 1-based line of that file (0 when no line is known). The command adds
// the file name by wrapping it.
type LineError struct {
	Line int
	Msg  string
}

func (e *LineError) Error() string {
	if e.Line <= 0 {
		return e.Msg
	}
	return "line " + strconv.Itoa(e.Line) + ": " + e.Msg
}

// DecodeModel decodes and validates the `uncertainty:` section of a design
// file from its yaml node (the mapping value of the key, or a document
// holding it). Unknown keys, values of the wrong type and every
// Model.Validate failure are returned as *LineError carrying the line of
// the offending key or value.
//
// Schema (all keys optional unless noted; units in the key names):
//
//	instrument:
//	  kind: total-station        # required: total-station | scanner | plain
//	  angle_arcsec: 1            # σ of one direction and one zenith angle
//	  hz_arcsec: 1               # overrides angle_arcsec for directions
//	  zenith_arcsec: 1           # overrides angle_arcsec for zenith angles
//	  orientation_arcsec: 1      # setup orientation, common to the setup
//	  distance_mm: 1             # total station: a
//	  distance_ppm: 1.5          # total station: b
//	  distance_combine: linear   # linear (a + b·s) | rss (√(a² + (b·s)²))
//	  range_mm: 1                # scanner: a
//	  range_mm_per_m: 0.02       # scanner: b, mm per metre of range
//	  max_incidence_deg: 75      # scanner: inflation cap, flagged beyond
//	  centring_mm: 0.5           # instrument and target centring, common
//	  target_height_mm: 0.5      # instrument and target heights, common
//	  target_height: 1.8         # total station: prism above the point, m
//	  sigma_mm: 3                # plain: per-point σ along the normal
//	  stations:                  # total station / scanner: at least one
//	    - id: S1                 # required when there are several
//	      e: 1000.0
//	      n: 2000.0
//	      h: 50.0
//	      instrument_height: 1.6 # metres, added to h
//	      sigma_mm: 1            # each station coordinate, common
//	control_mm: 2                # set-out / registration, common
//	design_mm: 0                 # design model, common
//	surface_mm: 1                # surface / target, per point
//	decision:
//	  rule: guarded              # guarded (ISO 14253-1) | simple
//	  k: 2                       # coverage factor
//	  min_share: 0.95            # share proven conforming for a patch
//	  max_abs_mm: 30             # no point may be proven beyond it
func DecodeModel(n *yaml.Node) (Model, error) {
	var m Model
	if n == nil {
		return m, &LineError{Msg: "uncertainty: section missing"}
	}
	if n.Kind == yaml.DocumentNode && len(n.Content) == 1 {
		n = n.Content[0]
	}
	if err := checkKeys(n, reflect.TypeFor[Model](), "uncertainty"); err != nil {
		return m, err
	}
	if err := n.Decode(&m); err != nil {
		return Model{}, decodeError(n, err)
	}
	if fe := m.validate(); fe != nil {
		return Model{}, &LineError{Line: lineOf(n, fe.path), Msg: fe.Error()}
	}
	if len(m.Instrument.Stations) == 0 {
		m.Instrument.Stations = nil // `stations: []` reads as absent
	}
	return m, nil
}

// checkKeys walks n alongside the Go type t and reports the first mapping
// key that names no field (yaml tag) of the corresponding struct, and any
// node of the wrong shape (a scalar where a mapping or sequence belongs).
func checkKeys(n *yaml.Node, t reflect.Type, path string) error {
	if n.Kind == yaml.AliasNode {
		n = n.Alias
	}
	switch t.Kind() {
	case reflect.Struct:
		if n.Kind == yaml.ScalarNode && n.Tag == "!!null" {
			return nil
		}
		if n.Kind != yaml.MappingNode {
			return &LineError{Line: n.Line, Msg: path + ": want a mapping"}
		}
		for i := 0; i+1 < len(n.Content); i += 2 {
			k, v := n.Content[i], n.Content[i+1]
			f, ok := fieldByTag(t, k.Value)
			if !ok {
				return &LineError{Line: k.Line, Msg: fmt.Sprintf("%s: unknown key %q", path, k.Value)}
			}
			if err := checkKeys(v, f.Type, path+"."+k.Value); err != nil {
				return err
			}
		}
	case reflect.Slice:
		if n.Kind == yaml.ScalarNode && n.Tag == "!!null" {
			return nil
		}
		if n.Kind != yaml.SequenceNode {
			return &LineError{Line: n.Line, Msg: path + ": want a list"}
		}
		for i, e := range n.Content {
			if err := checkKeys(e, t.Elem(), path+"."+strconv.Itoa(i)); err != nil {
				return err
			}
		}
	default:
		if n.Kind != yaml.ScalarNode {
			return &LineError{Line: n.Line, Msg: path + ": want a single value"}
		}
	}
	return nil
}

func fieldByTag(t reflect.Type, key string) (reflect.StructField, bool) {
	for i := 0; i < t.NumField(); i++ {
		f := t.Field(i)
		name, _, _ := strings.Cut(f.Tag.Get("yaml"), ",")
		if name == key {
			return f, true
		}
	}
	return reflect.StructField{}, false
}

// decodeError turns a yaml.v3 decoding error into a LineError. A
// *yaml.TypeError lists messages of the form "line N: …"; the first one is
// kept.
func decodeError(n *yaml.Node, err error) error {
	var te *yaml.TypeError
	if errors.As(err, &te) && len(te.Errors) > 0 {
		msg := te.Errors[0]
		if rest, ok := strings.CutPrefix(msg, "line "); ok {
			if num, tail, ok := strings.Cut(rest, ": "); ok {
				if line, err := strconv.Atoi(num); err == nil {
					return &LineError{Line: line, Msg: "uncertainty: " + tail}
				}
			}
		}
		return &LineError{Line: n.Line, Msg: "uncertainty: " + msg}
	}
	return &LineError{Line: n.Line, Msg: "uncertainty: " + err.Error()}
}

// lineOf returns the line of the key (or list element) at path below the
// mapping n when the whole path exists, else the line of the deepest node
// found (so a missing key points at its parent).
func lineOf(n *yaml.Node, path []string) int {
	line := n.Line
	for _, p := range path {
		var next *yaml.Node
		at := 0
		switch n.Kind {
		case yaml.MappingNode:
			for i := 0; i+1 < len(n.Content); i += 2 {
				if n.Content[i].Value == p {
					next, at = n.Content[i+1], n.Content[i].Line
					break
				}
			}
		case yaml.SequenceNode:
			if i, err := strconv.Atoi(p); err == nil && i >= 0 && i < len(n.Content) {
				next = n.Content[i]
				at = next.Line
			}
		}
		if next == nil {
			return line
		}
		n, line = next, at
	}
	return line
}
