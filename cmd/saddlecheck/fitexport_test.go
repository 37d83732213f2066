package main

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/hschendel/stl"
	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

// TestFitCommandRecoversSaddle: points generated in the test on a known
// saddle z = k1·x² + k2·y² (the analytic truth is the reference), placed at
// site offsets of 5·10^5 / 5·10^6 m with 2 mm noise and 20 % gross
// outliers, are fitted by `saddlecheck fit` without a design; the
// recovered k1, k2 lie within 4 standard uncertainties of the truth and
// fit.json carries the documented keys.
func TestFitCommandRecoversSaddle(t *testing.T) {
	const k1, k2 = 1.0 / 150, -1.0 / 90
	const e0, n0, h0 = 500123.0, 5000456.0, 80.0
	rng := rand.New(rand.NewPCG(7, 9))
	var b strings.Builder
	b.WriteString("id,e,n,z\n")
	for i := 0; i < 3000; i++ {
		x, y := 4+20*rng.Float64(), -6+20*rng.Float64()
		z := k1*x*x + k2*y*y
		if i%5 == 0 {
			z += 0.1 + 0.4*rng.Float64() // scaffold and props, 10-50 cm off
		} else {
			// noise along the normal (−2k1x, −2k2y, 1)/|·|
			nx, ny := -2*k1*x, -2*k2*y
			nn := math.Sqrt(nx*nx + ny*ny + 1)
			d := 0.002 * rng.NormFloat64()
			x, y, z = x+d*nx/nn, y+d*ny/nn, z+d/nn
		}
		fmt.Fprintf(&b, "p%d,%.5f,%.5f,%.5f\n", i, e0+x, n0+y, h0+z)
	}
	b.WriteString("bad,500130.0,5000460.0,oops\n")
	dir := t.TempDir()
	pts := filepath.Join(dir, "scan.csv")
	os.WriteFile(pts, []byte(b.String()), 0o644)
	out := filepath.Join(dir, "fit")
	code, _, stderr := runArgs(t, "fit", "--points", pts, "--out", out, "--stl", filepath.Join(out, "asbuilt.stl"), "--u-mm", "1.5")
	if code != exitOK {
		t.Fatalf("fit exit %d: %s", code, stderr)
	}
	var j struct {
		K1, K2       struct{ Value, U float64 }
		Origin       struct{ Value [3]float64 }
		RMSMM        float64 `json:"rms_mm"`
		Inliers      int
		Outliers     int
		QuadricClass string   `json:"quadric_class"`
		OutlierIDs   []string `json:"outlier_ids"`
	}
	raw, _ := os.ReadFile(filepath.Join(out, "fit.json"))
	if err := json.Unmarshal(raw, &j); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name      string
		got, u, w float64
	}{{"k1", j.K1.Value, j.K1.U, k1}, {"k2", j.K2.Value, j.K2.U, k2}} {
		if !(c.u > 0) || math.Abs(c.got-c.w) > 4*c.u {
			t.Errorf("%s = %.8g ± %.2g, truth %.8g", c.name, c.got, c.u, c.w)
		}
	}
	for i, w := range []float64{e0, n0, h0} {
		if math.Abs(j.Origin.Value[i]-w) > 0.05 {
			t.Errorf("saddle point coordinate %d = %.4f, truth %.4f", i, j.Origin.Value[i], w)
		}
	}
	if j.Outliers < 550 || j.Outliers > 700 {
		t.Errorf("%d outliers, the data hold 600", j.Outliers)
	}
	if len(j.OutlierIDs) != j.Outliers {
		t.Errorf("%d outlier ids for %d outliers", len(j.OutlierIDs), j.Outliers)
	}
	if j.RMSMM < 1.7 || j.RMSMM > 2.3 || j.QuadricClass != "hyperbolic paraboloid" {
		t.Errorf("RMS %.2f mm (noise 2 mm), class %q", j.RMSMM, j.QuadricClass)
	}
	if _, err := os.Stat(filepath.Join(out, "fit.html")); err != nil {
		t.Error(err)
	}
	// residuals.csv: every record, the fitted surface as the reference,
	// u combined in quadrature (JCGM 100:2008, uncorrelated components)
	rows := readCSV(t, filepath.Join(out, "residuals.csv"))
	if len(rows)-1 != 3001 {
		t.Fatalf("residuals.csv has %d rows, want 3001 (every record)", len(rows)-1)
	}
	if last := rows[len(rows)-1]; last[9] != "rejected" || last[10] == "" {
		t.Errorf("the bad row reads %v", last)
	}
	var sumSq float64
	var inl int
	for _, r := range rows[1:3001] {
		res, _ := strconv.ParseFloat(r[4], 64)
		uf, _ := strconv.ParseFloat(r[5], 64)
		ui, _ := strconv.ParseFloat(r[6], 64)
		u, _ := strconv.ParseFloat(r[7], 64)
		if ui != 1.5 || !(uf > 0 && uf < 1.5) || math.Abs(u-math.Hypot(ui, uf)) > 0.0015 {
			t.Fatalf("row %v: u_instrument %g, u_fit %g, u %g", r, ui, uf, u)
		}
		if r[8] == "no" {
			sumSq += res * res
			inl++
		}
	}
	if rms := math.Sqrt(sumSq / float64(inl)); math.Abs(rms-j.RMSMM) > 0.05 {
		t.Errorf("inlier RMS of residuals.csv %.3f mm, fit.json says %.3f mm", rms, j.RMSMM)
	}
	// the STL of the fitted surface opens with the general-purpose reader
	m, err := stl.ReadFile(filepath.Join(out, "asbuilt.stl"))
	if err != nil || len(m.Triangles) == 0 {
		t.Errorf("fitted STL: %v, %d triangles", err, len(m.Triangles))
	}
}

// TestExportSTL: the exported design reads back with the general-purpose
// STL reader (hschendel/stl) with the triangle count the command printed,
// and lies within the chord tolerance of the analytic worked-example hypar
// z = (h/L²)·x·y (FIELD.md §4.3) at every triangle centroid, measured by
// the closest-point solver.
func TestExportSTL(t *testing.T) {
	dir := t.TempDir()
	design, _ := hyparFixture(t, dir, []float64{0})
	out := filepath.Join(dir, "design.stl")
	code, stdout, stderr := runArgs(t, "export", "--design", design, "--stl", out, "--chord-mm", "0.5")
	if code != exitOK {
		t.Fatalf("export exit %d: %s", code, stderr)
	}
	m := regexp.MustCompile(`(\d+) triangles, coordinates relative to origin E ([0-9.]+), N ([0-9.]+), H ([0-9.-]+)`).FindStringSubmatch(stdout)
	if m == nil {
		t.Fatalf("export output %q", stdout)
	}
	n, _ := strconv.Atoi(m[1])
	oe, _ := strconv.ParseFloat(m[2], 64)
	on, _ := strconv.ParseFloat(m[3], 64)
	oh, _ := strconv.ParseFloat(m[4], 64)
	solid, err := stl.ReadFile(out)
	if err != nil {
		t.Fatal(err)
	}
	if len(solid.Triangles) != n {
		t.Fatalf("STL has %d triangles, command said %d", len(solid.Triangles), n)
	}
	d, err := deviation.LoadDesign(design)
	if err != nil {
		t.Fatal(err)
	}
	surf := d.Patches[0].Surface
	worst := 0.0
	for _, tr := range solid.Triangles {
		var c [3]float64
		for _, v := range tr.Vertices {
			c[0] += float64(v[0]) / 3
			c[1] += float64(v[1]) / 3
			c[2] += float64(v[2]) / 3
		}
		p := r3.Vec{X: c[0] + oe, Y: c[1] + on, Z: c[2] + oh}
		if gap := math.Abs(surf.Project(p).D); gap > worst {
			worst = gap
		}
	}
	// 0.5 mm chord, plus float32 storage of coordinates relative to the
	// origin (spacing below 1e-6 m at 10 m)
	if worst > 0.0005+1e-5 {
		t.Errorf("largest centroid gap %.3f mm exceeds the 0.5 mm chord tolerance", worst*1000)
	}
}
