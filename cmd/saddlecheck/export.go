package main

import (
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
	"saddlecheck/deviation/mesh"
)

func init() {
	register("export", "write the design's analytic patches as a binary STL mesh for CAD", runExport)
}

const exportHelp = `Usage: saddlecheck export --design FILE --stl OUT.stl [--chord-mm 1] [--origin E,N,H]

Tessellates every analytic patch of the design (corners, saddle, plane) so
that no point of the mesh lies farther than the chord tolerance from the true
surface, and writes them as one binary STL. STL stores float32, whose spacing
at site coordinates near 500 000 m is about 31 mm, so the mesh is written
relative to an origin (by default the design's plan centre rounded to whole
metres, at elevation 0); the origin is printed and stored in the STL header.
Mesh patches of the design are not re-exported.

Example:
  saddlecheck export --design canopy.yaml --stl canopy-design.stl --chord-mm 0.5
`

func runExport(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("export", exportHelp, stderr)
	design := fs.String("design", "", "design file (YAML), required")
	out := fs.String("stl", "", "output STL file, required")
	chord := fs.Float64("chord-mm", 1, "largest distance between the mesh and the true surface, mm")
	origin := fs.String("origin", "", "origin the STL coordinates are relative to, E,N,H in metres (default: rounded design centre)")
	if help, err := parseFlags(fs, args); help || err != nil {
		return err
	}
	if *design == "" || *out == "" {
		return usageErr(stderr, "export", "--design and --stl are required")
	}
	if !(*chord > 0) {
		return usageErr(stderr, "export", "--chord-mm must be positive")
	}
	d, err := deviation.LoadDesign(*design)
	if err != nil {
		return err
	}
	o, err := exportOrigin(d, *origin)
	if err != nil {
		return usageErr(stderr, "export", "%v", err)
	}
	var verts []r3.Vec
	var tris [][3]int32
	for _, p := range d.Patches {
		ps, ok := p.Surface.(mesh.Parametric)
		if !ok {
			fmt.Fprintf(stdout, "patch %s: %s patch, not exported\n", p.ID, p.Kind)
			continue
		}
		v, t, err := mesh.Tessellate(ps, *chord/1000)
		if err != nil {
			return fmt.Errorf("patch %s: %w", p.ID, err)
		}
		base := int32(len(verts))
		verts = append(verts, v...)
		for _, tr := range t {
			tris = append(tris, [3]int32{tr[0] + base, tr[1] + base, tr[2] + base})
		}
		fmt.Fprintf(stdout, "patch %s: %d triangles (chord tolerance %g mm)\n", p.ID, len(t), *chord)
	}
	if len(tris) == 0 {
		return fmt.Errorf("%s: no analytic patch to export", *design)
	}
	if err := mesh.WriteSTL(*out, o, verts, tris); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "wrote %s: %d triangles, coordinates relative to origin E %.3f, N %.3f, H %.3f (m)\n", *out, len(tris), o.X, o.Y, o.Z)
	return nil
}

// exportOrigin parses "E,N,H" or, when s is empty, rounds the design's
// plan centre to whole metres (elevation 0).
func exportOrigin(d *deviation.Design, s string) (r3.Vec, error) {
	if s != "" {
		parts := strings.Split(s, ",")
		if len(parts) != 3 {
			return r3.Vec{}, fmt.Errorf("--origin wants E,N,H, got %q", s)
		}
		var v [3]float64
		for i, p := range parts {
			f, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
			if err != nil || math.IsNaN(f) || math.IsInf(f, 0) {
				return r3.Vec{}, fmt.Errorf("--origin: %q is not a number", p)
			}
			v[i] = f
		}
		return r3.Vec{X: v[0], Y: v[1], Z: v[2]}, nil
	}
	lo, hi, ok := d.Extent()
	if !ok {
		return r3.Vec{}, nil
	}
	return r3.Vec{X: math.Round((lo.X + hi.X) / 2), Y: math.Round((lo.Y + hi.Y) / 2)}, nil
}
