package landxml

import (
	"fmt"
	"strings"
	"testing"
)

// BenchmarkParse parses a synthetic TIN of a 300 × 300 point grid (90 000
// points, 178 802 faces); MB/s is bytes of XML per second.
func BenchmarkParse(b *testing.B) {
	const n = 300
	var sb strings.Builder
	sb.WriteString(`<LandXML version="1.2"><Units><Metric linearUnit="meter"/></Units><Surfaces><Surface name="g"><Definition surfType="TIN"><Pnts>`)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			fmt.Fprintf(&sb, "<P id=\"%d\">%.3f %.3f %.3f</P>\n", i*n+j+1, 5400000+float64(i)*0.5, 512000+float64(j)*0.5, 100+float64(i*j)*1e-4)
		}
	}
	sb.WriteString("</Pnts><Faces>")
	for i := 0; i+1 < n; i++ {
		for j := 0; j+1 < n; j++ {
			a := i*n + j + 1
			fmt.Fprintf(&sb, "<F>%d %d %d</F>\n<F>%d %d %d</F>\n", a, a+1, a+n+1, a, a+n+1, a+n)
		}
	}
	sb.WriteString("</Faces></Definition></Surface></Surfaces></LandXML>")
	doc := sb.String()
	b.SetBytes(int64(len(doc)))
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		f, err := Parse(strings.NewReader(doc))
		if err != nil || len(f.Surfaces[0].Faces) != 2*(n-1)*(n-1) {
			b.Fatal(err)
		}
	}
}
