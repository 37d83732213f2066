package uncert

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
	"gopkg.in/yaml.v3"
)

// section parses a design-file document and returns the value node of its
// `uncertainty:` key (or the document itself when there is none).
func section(t testing.TB, src []byte) *yaml.Node {
	t.Helper()
	var doc yaml.Node
	if err := yaml.Unmarshal(src, &doc); err != nil {
		t.Fatalf("yaml: %v", err)
	}
	root := &doc
	if root.Kind == yaml.DocumentNode && len(root.Content) == 1 {
		root = root.Content[0]
	}
	if root.Kind == yaml.MappingNode {
		for i := 0; i+1 < len(root.Content); i += 2 {
			if root.Content[i].Value == "uncertainty" {
				return root.Content[i+1]
			}
		}
	}
	return &doc
}

func TestDecodeTestdata(t *testing.T) {
	files, _ := filepath.Glob("testdata/*.yaml")
	if len(files) < 3 {
		t.Fatalf("want the three testdata models, found %v", files)
	}
	want := map[string]func(*testing.T, Model){
		"total_station.yaml": func(t *testing.T, m Model) {
			in := m.Instrument
			if in.Kind != KindTotalStation || in.ZenithArcsec != 1.5 || len(in.Stations) != 2 || in.Stations[1].ID != "S2" ||
				in.Stations[1].E != 1040.25 || m.Decision.MinShare != 0.95 || m.Decision.MaxAbsMM != 30 {
				t.Errorf("decoded %+v", m)
			}
			if _, err := m.Setup(""); !errors.Is(err, ErrNoStation) {
				t.Errorf("Setup(\"\") with two stations: got %v, want ErrNoStation", err)
			}
			if _, err := m.Setup("S9"); !errors.Is(err, ErrNoStation) {
				t.Errorf("Setup(S9): got %v, want ErrNoStation", err)
			}
			s, err := m.Setup("S2")
			if err != nil {
				t.Fatal(err)
			}
			if o := s.Origin(); o.X != 1040.25 || math.Abs(o.Z-51.97) > 1e-12 {
				t.Errorf("S2 origin %v", o)
			}
			cr := m.Criterion(0.01)
			if cr.MaxAbs != 0.03 || cr.MinShare != 0.95 || cr.Rule != (Rule{Name: RuleGuarded, K: 2}) {
				t.Errorf("criterion %+v", cr)
			}
		},
		"scanner.yaml": func(t *testing.T, m Model) {
			if m.Instrument.Kind != KindScanner || m.Rule().Name != RuleSimple || m.Instrument.Stations[0].ID != "" {
				t.Errorf("decoded %+v", m)
			}
			if _, err := m.Setup(""); err != nil {
				t.Errorf("single unnamed station: %v", err)
			}
		},
		"plain.yaml": func(t *testing.T, m Model) {
			s, err := m.Setup("")
			if err != nil {
				t.Fatal(err)
			}
			near(t, "plain u", s.NormalU(stationOrigin(siteStation), r3.Vec{Z: 1})/mm, math.Sqrt(13), tolExact)
			if m.Rule() != (Rule{Name: RuleGuarded, K: 2}) {
				t.Errorf("default rule %+v", m.Rule())
			}
		},
	}
	for _, f := range files {
		t.Run(filepath.Base(f), func(t *testing.T) {
			src, err := os.ReadFile(f)
			if err != nil {
				t.Fatal(err)
			}
			m, err := DecodeModel(section(t, src))
			if err != nil {
				t.Fatalf("DecodeModel: %v", err)
			}
			if check := want[filepath.Base(f)]; check != nil {
				check(t, m)
			}
		})
	}
}

// TestDecodeErrors maps invalid sections to the expected line and message
// (in the manner of image/png's reader error table).
func TestDecodeErrors(t *testing.T) {
	const ts = "instrument:\n  kind: total-station\n  angle_arcsec: 1\n"
	const st = "  stations:\n    - {id: A, e: 1, n: 2, h: 3}\n"
	for _, c := range []struct {
		name, src string
		line      int
		want      string
	}{
		{"unknown key", ts + "  angel_arcsec: 2\n" + st, 4, `unknown key "angel_arcsec"`},
		{"unknown top key", "instrument:\n  kind: plain\ncontrol: 2\n", 3, `unknown key "control"`},
		{"unknown station key", ts + "  stations:\n    - {id: A, x: 1}\n", 5, `unknown key "x"`},
		{"kind missing", "instrument:\n  sigma_mm: 2\n", 1, "kind: missing"},
		{"kind unknown", "instrument:\n  kind: theodolite\n", 2, `unknown kind "theodolite"`},
		{"negative", ts + "  distance_mm: -1\n" + st, 4, "distance_mm: must be a finite number ≥ 0"},
		{"nan", ts + "  centring_mm: .nan\n" + st, 4, "centring_mm: must be a finite number ≥ 0"},
		{"other kind's field", ts + "  range_mm: 1\n" + st, 4, "range_mm: does not apply to kind total-station"},
		{"plain with stations", "instrument:\n  kind: plain\n  sigma_mm: 1\n" + st, 4, "stations: does not apply"},
		{"wrong type", ts + "  distance_ppm: lots\n" + st, 4, "cannot unmarshal"},
		{"not a mapping", "instrument: 5\n", 1, "instrument: want a mapping"},
		{"stations scalar", ts + "  stations: S1\n", 4, "stations: want a list"},
		{"list for a number", ts + "  distance_mm: [1, 2]\n" + st, 4, "distance_mm: want a single value"},
		{"no stations", ts, 1, "needs at least one station"},
		{"duplicate id", ts + st + "    - {id: A, e: 5, n: 2, h: 3}\n", 6, `duplicate station id "A"`},
		{"unnamed among several", ts + st + "    - {e: 5, n: 2, h: 3}\n", 6, "several stations need an id each"},
		{"station sigma", ts + "  stations:\n    - {id: A, e: 1, n: 2, h: 3, sigma_mm: -2}\n", 5, "sigma_mm: must be"},
		{"combine", ts + "  distance_combine: quadratic\n" + st, 4, `unknown rule "quadratic"`},
		{"incidence", "instrument:\n  kind: scanner\n  max_incidence_deg: 95\n" + st, 3, "at most 89"},
		{"rule", "instrument: {kind: plain}\ndecision:\n  rule: lenient\n", 3, `unknown rule "lenient"`},
		{"min share", "instrument: {kind: plain}\ndecision:\n  min_share: 1.5\n", 3, "min_share: must lie in (0, 1]"},
		{"control", "instrument: {kind: plain}\ncontrol_mm: -3\n", 2, "control_mm: must be"},
		{"k", "instrument: {kind: plain}\ndecision: {k: 95}\n", 2, "k: must lie in [0, 10]"},
	} {
		t.Run(c.name, func(t *testing.T) {
			_, err := DecodeModel(section(t, []byte(c.src)))
			var le *LineError
			if !errors.As(err, &le) {
				t.Fatalf("got %v, want a *LineError", err)
			}
			if le.Line != c.line || !strings.Contains(le.Msg, c.want) {
				t.Errorf("got line %d %q, want line %d containing %q", le.Line, le.Msg, c.line, c.want)
			}
		})
	}
	if _, err := DecodeModel(nil); err == nil {
		t.Error("nil node: want an error")
	}
	if got := (&LineError{Msg: "x"}).Error(); got != "x" {
		t.Errorf("line 0: got %q", got)
	}
}

// TestValidateInCode: a Model built in Go gets the same checks with a
// dotted path instead of a line.
func TestValidateInCode(t *testing.T) {
	m := Model{Instrument: Instrument{Kind: KindPlain, SigmaMM: math.Inf(1)}}
	err := m.Validate()
	if err == nil || !strings.Contains(err.Error(), "uncertainty.instrument.sigma_mm") {
		t.Errorf("got %v", err)
	}
	if _, err := m.Setups(); err == nil {
		t.Error("Setups of an invalid model: want an error")
	}
}

// TestWarnings: a valid but incomplete model is named in the report.
func TestWarnings(t *testing.T) {
	for _, c := range []struct {
		name string
		m    Model
		want []string
	}{
		{"complete", Model{Instrument: Instrument{Kind: KindTotalStation, AngleArcsec: 1, DistanceMM: 1, Stations: []Station{siteStation}}, ControlMM: 2}, nil},
		{"no distance, no control", Model{Instrument: Instrument{Kind: KindTotalStation, HzArcsec: 1, ZenithArcsec: 1, Stations: []Station{siteStation}}},
			[]string{"no distance", "no control"}},
		{"scanner without angles", Model{Instrument: Instrument{Kind: KindScanner, RangeMM: 1, Stations: []Station{siteStation}}, ControlMM: 3},
			[]string{"no angle"}},
		{"all zero plain", Model{Instrument: Instrument{Kind: KindPlain}}, []string{"every uncertainty is zero"}},
	} {
		t.Run(c.name, func(t *testing.T) {
			got := c.m.Warnings()
			if len(got) != len(c.want) {
				t.Fatalf("got %q, want %d warnings", got, len(c.want))
			}
			for i := range got {
				if !strings.Contains(got[i], c.want[i]) {
					t.Errorf("warning %d: got %q, want it to contain %q", i, got[i], c.want[i])
				}
			}
		})
	}
}

// FuzzDecodeModel checks that any yaml section decodes without panicking
// and that a model which decodes survives encode → decode unchanged.
func FuzzDecodeModel(f *testing.F) {
	files, _ := filepath.Glob("testdata/*.yaml")
	for _, name := range files {
		src, err := os.ReadFile(name)
		if err != nil {
			f.Fatal(err)
		}
		b, err := yaml.Marshal(section(f, src))
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	f.Fuzz(func(t *testing.T, src []byte) {
		var n yaml.Node
		if yaml.Unmarshal(src, &n) != nil {
			return
		}
		m, err := DecodeModel(&n)
		if err != nil {
			var le *LineError
			if !errors.As(err, &le) {
				t.Fatalf("error %v is not a *LineError", err)
			}
			return
		}
		if _, err := m.Setups(); err != nil {
			t.Fatalf("decoded model does not compile: %v", err)
		}
		out, err := yaml.Marshal(&m)
		if err != nil {
			t.Fatalf("marshal: %v", err)
		}
		var n2 yaml.Node
		if err := yaml.Unmarshal(out, &n2); err != nil {
			t.Fatalf("re-read: %v\n%s", err, out)
		}
		m2, err := DecodeModel(&n2)
		if err != nil {
			t.Fatalf("re-decode: %v\n%s", err, out)
		}
		if !reflect.DeepEqual(m, m2) {
			t.Fatalf("round trip changed the model:\n%+v\n%+v", m, m2)
		}
	})
}
