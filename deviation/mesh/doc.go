// Package mesh measures points against a triangle-mesh design surface: it
// loads ASCII or binary STL (and any other indexed triangle source through
// New), validates and orients the mesh, answers closest-point queries with
// a bounding volume hierarchy, and exports analytic patches as STL.
//
// Importing the package registers the "stl" mesh loader of package
// deviation (deviation.LoadMesh("stl", spec)).
//
// Units: metres throughout, site frame. Mesh files are converted with the
// design file's unit and offset by its origin in float64 before anything
// else; internally every coordinate is held in float64 relative to the
// mesh's own centre (the midpoint of its bounding box), so site eastings of
// 10^5–10^7 m cost no precision. Binary STL stores float32 by format: at a
// coordinate magnitude m its spacing is m·2⁻²³ (about 31 mm at 5·10^5 m), so
// meshes should be written relative to a stated origin; the loader warns
// when the spacing exceeds 0.1 mm.
//
// Sign convention: a distance is positive on the mesh's normal side. Every
// connected component is first made consistently oriented (winding
// propagated across shared edges), then turned as a whole so that its
// normals point to the declared side: with NormalUp the area-weighted mean
// normal of an open component has positive z, otherwise negative. A closed
// component (no boundary edges) has a zero mean normal; it is oriented
// outward (positive signed volume), so positive means outside. The sign of
// a query is taken from the angle-weighted pseudonormal of the feature
// (face, edge or vertex) that holds its closest point, which makes it
// correct near edges and vertices too (Bærentzen & Aanæs 2005).
//
// Closest points come from a bounding volume hierarchy built once by the
// binned surface-area heuristic (flat node array, float32 boxes rounded
// outward, leaves of about five triangles), searched nearest-first with
// pruning by box distance and, on subtrees of at most 256 triangles, by
// the distance to a bounding flat cylinder ("disk") around the local mean
// normal, which is what keeps points far off a sloping surface cheap.
// Vertices stay float64 relative to the centre, so the result is the
// exact closest point up to float64 rounding (about 1e-15 of the mesh
// extent) and identical to a scan of all triangles. Memory is about
// 75 bytes per triangle for a typical design mesh (0.5 vertex per
// triangle).
//
// Project answers one point; ProjectAll answers a slice with the same
// results, visiting the points bucket by bucket over a plan grid so that
// consecutive queries share cached parts of the hierarchy (about twice
// the throughput on shuffled scans).
//
// A point whose closest point lies on a boundary edge or boundary vertex
// lies beyond the design's extent: its projection has Inside = false
// (unless Options.MarginM admits it).
//
// References:
//   - C. Ericson, Real-Time Collision Detection, Morgan Kaufmann 2005,
//     §5.1.5 (closest point on a triangle to a point).
//   - J. A. Bærentzen, H. Aanæs, "Signed distance computation using the
//     angle weighted pseudonormal", IEEE TVCG 11(3), 2005, 243–253.
//   - I. Wald, "On fast construction of SAH-based bounding volume
//     hierarchies", IEEE Symposium on Interactive Ray Tracing 2007
//     (binned surface-area-heuristic build).
package mesh
