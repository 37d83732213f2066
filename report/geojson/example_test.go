package geojson_test

import (
	"fmt"
	"os"
	"path/filepath"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/report/geojson"
)

// ExampleCreate writes one point and one patch outline (given clockwise;
// the writer turns it counter-clockwise and closes it).
func ExampleCreate() {
	dir, _ := os.MkdirTemp("", "geojson")
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "map.geojson")
	w, err := geojson.Create(path, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	w.Add(geojson.Point{ID: "P1", P: r3.Vec{X: 512000.5, Y: 5400000.25, Z: 101}, DeviationMM: 3.5, Band: "±5", Patch: "NE", Status: "used"})
	if err := w.AddPatch("NE", []r3.Vec{{X: 512000, Y: 5400000}, {X: 512000, Y: 5400010}, {X: 512010, Y: 5400000}}); err != nil {
		fmt.Println(err)
		return
	}
	if err := w.Close(); err != nil {
		fmt.Println(err)
		return
	}
	b, _ := os.ReadFile(path)
	fmt.Print(string(b))
	// Output:
	// {"type":"FeatureCollection","metadata":{"crs":"coordinates are local site-grid easting/northing in metres, not WGS 84 as RFC 7946 requires; do not overlay on web maps without transformation","units":"m","deviation_units":"mm","positions":"[easting, northing, elevation]","mode":"points","points":1,"rejected":0},"features":[
	// {"type":"Feature","geometry":{"type":"Polygon","coordinates":[[[512000,5400000,0],[512010,5400000,0],[512000,5400010,0],[512000,5400000,0]]]},"properties":{"kind":"patch","patch":"NE"}},
	// {"type":"Feature","id":"P1","geometry":{"type":"Point","coordinates":[512000.5,5400000.25,101]},"properties":{"kind":"point","id":"P1","deviation_mm":3.5,"band":"±5","patch":"NE","status":"used"}}
	// ]}
}
