package main

import (
	"flag"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
	"saddlecheck/report"
)

func init() {
	register("demo", "build an invented canopy survey and check it end to end", runDemo)
}

const demoHelp = `Usage: saddlecheck demo [--out DIR]

Builds an invented scenario — the four-hypar umbrella canopy of the
(fictional) Tarnbrook Market Hall, surveyed by total station with 2 mm shot
noise, a few bad rows, scaffold shots and one patch that sagged on its
formwork — writes its design file and shot file into DIR/input, runs the
check and writes the report into DIR.

Example:
  saddlecheck demo --out tarnbrook-demo
  # then open tarnbrook-demo/report.html

The demo exits 0 when it ran (its check is nonconforming by design: the
sagging patch fails); 'saddlecheck check' on the same files exits 1.

Flags:
`

func runDemo(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("demo", flag.ContinueOnError)
	fs.SetOutput(stderr)
	out := fs.String("out", "saddlecheck-demo", "folder for the demo's inputs and report")
	fs.Usage = func() { fmt.Fprint(stderr, demoHelp); fs.PrintDefaults() }
	if err := fs.Parse(args); err != nil {
		if err == flag.ErrHelp {
			return nil
		}
		return errUsage
	}
	if fs.NArg() > 0 {
		fmt.Fprintf(stderr, "demo: unexpected argument %q\n", fs.Arg(0))
		return errUsage
	}
	in := filepath.Join(*out, "input")
	if err := os.MkdirAll(in, 0o755); err != nil {
		return err
	}
	design, shots, err := writeDemoInputs(in)
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "demo inputs: %s, %s\n", design, shots)
	err = runCheck([]string{"--design", design, "--points", shots, "--out", *out}, stdout, stderr)
	if err != nil && err != errVerdict {
		return err
	}
	fmt.Fprintf(stdout, "demo report: %s\n", filepath.Join(*out, "report.html"))
	return nil
}

// The demo canopy: four hyperbolic-paraboloid quadrants around a central
// column, each 6 m × 6 m in plan, low at the column head and alternately
// high and low at the outer corners, placed in a site grid with large
// eastings and northings to exercise the precision handling.
var (
	demoE0, demoN0 = 512340.0, 6123400.0
	demoColumnZ    = 3.20
	demoHighZ      = 4.70
	demoLowZ       = 3.80
)

// demoQuadrants returns the corner rings of the four patches (edge order).
func demoQuadrants() map[string][4]r3.Vec {
	c := r3.Vec{X: demoE0, Y: demoN0, Z: demoColumnZ}
	p := func(dx, dy, z float64) r3.Vec { return r3.Vec{X: demoE0 + dx, Y: demoN0 + dy, Z: z} }
	return map[string][4]r3.Vec{
		"NE": {c, p(6, 0, demoHighZ), p(6, 6, demoLowZ), p(0, 6, demoHighZ)},
		"NW": {c, p(0, 6, demoHighZ), p(-6, 6, demoLowZ), p(-6, 0, demoHighZ)},
		"SW": {c, p(-6, 0, demoHighZ), p(-6, -6, demoLowZ), p(0, -6, demoHighZ)},
		"SE": {c, p(0, -6, demoHighZ), p(6, -6, demoLowZ), p(6, 0, demoHighZ)},
	}
}

// bilinear evaluates the bilinear patch of corners q (edge order) at (u, v)
// and its unnormalised normal.
func bilinear(q [4]r3.Vec, u, v float64) (r3.Vec, r3.Vec) {
	// P(u,v) = (1-u)(1-v) q0 + u(1-v) q1 + u v q2 + (1-u) v q3
	p := r3.Add(r3.Add(r3.Scale((1-u)*(1-v), q[0]), r3.Scale(u*(1-v), q[1])),
		r3.Add(r3.Scale(u*v, q[2]), r3.Scale((1-u)*v, q[3])))
	pu := r3.Add(r3.Scale(1-v, r3.Sub(q[1], q[0])), r3.Scale(v, r3.Sub(q[2], q[3])))
	pv := r3.Add(r3.Scale(1-u, r3.Sub(q[3], q[0])), r3.Scale(u, r3.Sub(q[2], q[1])))
	n := r3.Cross(pu, pv)
	if n.Z < 0 {
		n = r3.Scale(-1, n)
	}
	return p, r3.Unit(n)
}

func vecYAML(v r3.Vec) string { return fmt.Sprintf("[%.4f, %.4f, %.4f]", v.X, v.Y, v.Z) }

func writeDemoInputs(dir string) (designPath, shotsPath string, err error) {
	quads := demoQuadrants()
	order := []string{"NE", "NW", "SW", "SE"}
	var y strings.Builder
	y.WriteString("# Design of the (fictional) Tarnbrook Market Hall umbrella canopy.\n")
	y.WriteString("# Invented for the saddlecheck demo; no real structure.\n")
	y.WriteString("structure: Tarnbrook Market Hall, umbrella canopy U2 (demo)\n")
	y.WriteString("units: m\nnormal: up\noffset_mm: 0\n")
	y.WriteString("patches:\n")
	for _, id := range order {
		q := quads[id]
		ring := fmt.Sprintf("[%s, %s, %s, %s]", vecYAML(q[0]), vecYAML(q[1]), vecYAML(q[2]), vecYAML(q[3]))
		if id == "SW" {
			// One patch given in its algebraic form, converted from the
			// same corners, to show both ways of stating a design.
			s, err := deviation.SaddleFromCorners(q, r3.Vec{Z: 1})
			if err != nil {
				return "", "", err
			}
			fmt.Fprintf(&y, "  - id: %s\n    saddle: {k1: %.12g, k2: %.12g, origin: [%.6f, %.6f, %.6f], axes: [[%.12f, %.12f, %.12f], [%.12f, %.12f, %.12f], [%.12f, %.12f, %.12f]]}\n    corners: %s\n",
				id, s.K1, s.K2, s.Origin.X, s.Origin.Y, s.Origin.Z,
				s.Axes[0].X, s.Axes[0].Y, s.Axes[0].Z, s.Axes[1].X, s.Axes[1].Y, s.Axes[1].Z, s.Axes[2].X, s.Axes[2].Y, s.Axes[2].Z, ring)
			continue
		}
		fmt.Fprintf(&y, "  - id: %s\n    corners: %s\n", id, ring)
	}
	y.WriteString(`tolerance:
  source: "Tarnbrook canopy specification TS-07 (fictional), clause 4.2: shell surface position"
  limit_mm: 10
  min_share: 0.95
  max_abs_mm: 25
  bands_mm: [5, 10, 20]
  far_mm: 150
`)
	// The survey: one total-station setup south-west of the canopy,
	// reflectorless shots on the soffit (typical spec-sheet figures).
	fmt.Fprintf(&y, `uncertainty:
  instrument:
    kind: total-station
    angle_arcsec: 2
    distance_mm: 2
    distance_ppm: 2
    distance_combine: linear
    centring_mm: 0.5
    stations:
      - {id: ST1, e: %.3f, n: %.3f, h: 0.350, instrument_height: 1.550}
  control_mm: 1.5
  surface_mm: 0.5
  decision: {rule: guarded, k: 2}
`, demoE0-14.0, demoN0-11.0)
	designPath = filepath.Join(dir, "design.yaml")
	if err := report.WriteFile(designPath, []byte(y.String())); err != nil {
		return "", "", err
	}

	// Shots: a grid of 24×24 shots per patch with 2 mm noise along the
	// normal; the SE patch sags up to 22 mm in a cosine bell (formwork gave
	// way), plus scaffold shots, ground shots outside the canopy and a few
	// bad rows as a field book really has them.
	rng := rand.New(rand.NewPCG(2024, 11))
	var b strings.Builder
	b.WriteString("# Tarnbrook Market Hall canopy U2, as-built survey of the soffit after striking (demo data)\n")
	b.WriteString("# operator: R. Okonkwo-Lind (fictional); instrument: total station, reflectorless\n")
	b.WriteString("Point,Northing,Easting,Elevation,Code\n")
	id := 1000
	shot := func(p r3.Vec, code string) {
		fmt.Fprintf(&b, "%d,%.4f,%.4f,%.4f,%s\n", id, p.Y, p.X, p.Z, code)
		id++
	}
	const n = 24
	for _, pid := range order {
		q := quads[pid]
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				u := (float64(i) + 0.2 + 0.6*rng.Float64()) / n
				v := (float64(j) + 0.2 + 0.6*rng.Float64()) / n
				p, nn := bilinear(q, u, v)
				d := 0.002 * rng.NormFloat64()
				if pid == "SE" {
					// sag centred at (u, v) = (0.6, 0.55), radius 0.35 in parameters
					r := math.Hypot(u-0.6, v-0.55) / 0.35
					if r < 1 {
						d -= 0.022 * 0.5 * (1 + math.Cos(math.Pi*r))
					}
				}
				shot(r3.Add(p, r3.Scale(d, nn)), "SOF"+pid)
			}
		}
		// scaffold and prop shots hanging below the patch
		p, _ := bilinear(q, 0.5, 0.5)
		shot(r3.Add(p, r3.Vec{Z: -0.62}), "SCAF")
	}
	// ground shots well outside the canopy plan
	for k := 0; k < 6; k++ {
		a := 2 * math.Pi * float64(k) / 6
		shot(r3.Vec{X: demoE0 + 9*math.Cos(a), Y: demoN0 + 9*math.Sin(a), Z: 0.05 * rng.NormFloat64()}, "GND")
	}
	// bad rows, as field books have them
	b.WriteString("2001,6123401.2000,512341.1000,,SOFNE\n")       // missing elevation
	b.WriteString("2002,6123402.1000,5123A2.3000,4.1000,SOFNE\n") // mistyped easting
	b.WriteString("2003,6123398.0000,512338.0000,NaN,SOFSW\n")    // NaN from an export
	shotsPath = filepath.Join(dir, "shots.csv")
	return designPath, shotsPath, report.WriteFile(shotsPath, []byte(b.String()))
}
