package mesh_test

import (
	"fmt"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation/mesh"
)

// A 10 m × 10 m square of two triangles at site coordinates, one wound
// the wrong way: New repairs the winding and turns the square up.
func ExampleNew() {
	o := r3.Vec{X: 512000, Y: 5412000, Z: 100}
	at := func(x, y float64) r3.Vec { return r3.Add(o, r3.Vec{X: x, Y: y}) }
	verts := []r3.Vec{at(0, 0), at(10, 0), at(10, 10), at(0, 10)}
	tris := [][3]int32{{0, 1, 2}, {0, 3, 2}}
	m, rep, err := mesh.New(verts, tris, mesh.Options{NormalUp: true})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(rep.Triangles, "triangles,", rep.Reoriented, "reoriented,", rep.BoundaryEdges, "boundary edges")
	for _, p := range []r3.Vec{at(3, 4), at(12, 5)} {
		p.Z += 0.025
		pr := m.Project(p)
		fmt.Printf("D = %+.3f m, inside %v\n", pr.D, pr.Inside)
	}
	// Output:
	// 2 triangles, 1 reoriented, 4 boundary edges
	// D = +0.025 m, inside true
	// D = +2.000 m, inside false
}
