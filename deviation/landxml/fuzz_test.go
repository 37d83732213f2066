package landxml

import (
	"errors"
	"strings"
	"testing"
)

// FuzzLandXML parses arbitrary text: it must never panic, errors must be
// typed, and every face must index an existing vertex. Seeds: the
// hand-written TIN and testdata/fuzz/FuzzLandXML.
func FuzzLandXML(f *testing.F) {
	f.Add(doc("meter"))
	f.Add(strings.Replace(doc("USSurveyFoot"), "<Metric", "<Imperial", 1))
	f.Fuzz(func(t *testing.T, text string) {
		file, err := Parse(strings.NewReader(text))
		if err != nil {
			var fe *FormatError
			var ue *UnsupportedError
			if !errors.As(err, &fe) && !errors.As(err, &ue) {
				t.Fatalf("untyped error %T: %v", err, err)
			}
			return
		}
		for _, s := range file.Surfaces {
			for _, tri := range s.Faces {
				for _, i := range tri {
					if i < 0 || int(i) >= len(s.Vertices) {
						t.Fatalf("face index %d of %d vertices", i, len(s.Vertices))
					}
				}
			}
		}
	})
}
