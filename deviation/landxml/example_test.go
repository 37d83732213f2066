package landxml_test

import (
	"fmt"
	"strings"

	"saddlecheck/deviation/landxml"
)

// ExampleParse reads a one-triangle TIN; each point's text is "northing
// easting elevation" and comes out as x = easting, y = northing.
func ExampleParse() {
	doc := `<LandXML version="1.2"><Units><Metric linearUnit="meter"/></Units>
<Surfaces><Surface name="slab"><Definition surfType="TIN">
<Pnts><P id="1">5400000 512000 100</P><P id="2">5400000 512010 100</P><P id="3">5400010 512010 101</P></Pnts>
<Faces><F>1 2 3</F></Faces></Definition></Surface></Surfaces></LandXML>`
	f, err := landxml.Parse(strings.NewReader(doc))
	if err != nil {
		fmt.Println(err)
		return
	}
	s := f.Surfaces[0]
	fmt.Println(s.Name, f.Unit, len(s.Faces), "face")
	for i, v := range s.Vertices {
		fmt.Printf("point %s: x %.0f y %.0f z %.0f\n", s.IDs[i], v.X, v.Y, v.Z)
	}
	// Output:
	// slab meter 1 face
	// point 1: x 512000 y 5400000 z 100
	// point 2: x 512010 y 5400000 z 100
	// point 3: x 512010 y 5400010 z 101
}
