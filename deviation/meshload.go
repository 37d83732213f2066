package deviation

import (
	"fmt"
	"sort"
	"sync"

	"gonum.org/v1/gonum/spatial/r3"
)

// MeshSpec is what a design file says about a mesh patch.
type MeshSpec struct {
	// Path is the mesh file, already resolved relative to the design file.
	Path string
	// UnitMetres is the size in metres of one unit of the mesh coordinates
	// (the design file's `units`).
	UnitMetres float64
	// Origin is added (in metres, site frame) to every mesh vertex after
	// unit conversion: mesh coordinates are relative to it.
	Origin r3.Vec
	// NormalUp picks the positive side: true for `normal: up` (+Z).
	NormalUp bool
	// MarginM is the containment margin in metres (see Patch).
	MarginM float64
}

// LoadedMesh is a mesh patch ready for measurement.
type LoadedMesh struct {
	Surface   Surface
	Triangles int
	// Notes are facts for the report (counts of boundary edges, repaired
	// orientations, bounding box, origin).
	Notes []string
	// Warnings are things the user must know (degenerate or duplicate
	// triangles, precision lost to float32 coordinates, …).
	Warnings []string
}

// MeshLoader opens a mesh file of one kind.
type MeshLoader func(spec MeshSpec) (*LoadedMesh, error)

var (
	meshMu      sync.RWMutex
	meshLoaders = map[string]MeshLoader{}
)

// RegisterMeshLoader makes kind ("stl", "landxml") available to design
// files. Mesh packages call it from init, in the manner of
// image.RegisterFormat; the command imports them for their side effect.
func RegisterMeshLoader(kind string, l MeshLoader) {
	meshMu.Lock()
	defer meshMu.Unlock()
	meshLoaders[kind] = l
}

// LoadMesh opens a mesh patch of the given kind.
func LoadMesh(kind string, spec MeshSpec) (*LoadedMesh, error) {
	meshMu.RLock()
	l, ok := meshLoaders[kind]
	var kinds []string
	for k := range meshLoaders {
		kinds = append(kinds, k)
	}
	meshMu.RUnlock()
	if !ok {
		sort.Strings(kinds)
		return nil, fmt.Errorf("no loader for %s meshes (known: %v)", kind, kinds)
	}
	return l(spec)
}
