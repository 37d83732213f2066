package fit

import (
	"encoding/json"
	"math"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

// TestCompareToDesign: the as-built data come from the analytic truth; the
// design is the truth moved 20 mm against its normal at the patch centroid
// and with K1 changed by 5 %. The split must report a +20 mm placement
// offset (a pure translation along the normal is exactly that offset) and
// a significant ΔK1 = −5 % of K1 but no significant ΔK2.
func TestCompareToDesign(t *testing.T) {
	truth := synthSaddle()
	pts, _ := synthPoints(&truth, workloadOptions(5000, 0.1, 0.02, 21))
	res, err := FitSaddle(pts, nil)
	if err != nil {
		t.Fatal(err)
	}
	var c r3.Vec
	for i, p := range pts {
		if res.Inliers[i] {
			c = r3.Add(c, p)
		}
	}
	c = r3.Scale(1/float64(res.NumInliers), c)

	// Pure translation first: exact offset, zero tilt.
	fl, _ := truth.ClosestLocal(truth.ToLocal(c))
	n := truth.Normal(truth.ToSite(fl))
	shifted := truth
	shifted.Origin = r3.Sub(truth.Origin, r3.Scale(0.020, n))
	exact := &SaddleResult{Saddle: truth, K1: Estimate{Value: truth.K1}, K2: Estimate{Value: truth.K2}}
	sp := CompareToDesign(&shifted, exact, c)
	if math.Abs(sp.Offset-0.020) > 1e-9 || sp.Tilt > 1e-9 {
		t.Errorf("translation: got offset %.12g m, tilt %g rad, want 0.020, 0", sp.Offset, sp.Tilt)
	}

	design := shifted
	design.K1 = truth.K1 * 1.05
	sp = CompareToDesign(&design, res, c)
	t.Logf("offset %.2f ± %.2f mm, tilt %.3g mrad, ΔK1 %.3g ± %.2g, ΔK2 %.3g ± %.2g",
		1e3*sp.Offset, 1e3*sp.OffsetU, 1e3*sp.Tilt, sp.K1.Delta, sp.K1.U, sp.K2.Delta, sp.K2.U)
	if !sp.K1.Significant || sp.K2.Significant {
		t.Errorf("significance: got ΔK1 %v, ΔK2 %v, want true, false", sp.K1.Significant, sp.K2.Significant)
	}
	if math.Abs(sp.K1.Delta+0.05*truth.K1) > 5*sp.K1.U {
		t.Errorf("ΔK1: got %g, want %g", sp.K1.Delta, -0.05*truth.K1)
	}
	if sp.OffsetU <= 0 || sp.OffsetU > 0.001 {
		t.Errorf("offset u: got %g m, want within (0, 1 mm]", sp.OffsetU)
	}
	// Changing K1 about the saddle point also moves the surface at the
	// centroid: the design is higher there by 0.05·K1·x_c² along local z,
	// about that times cos(slope) along the normal, so the offset is 20 mm
	// minus that, to first order (the tilt and the sideways shift of the
	// foot add a few per cent of it).
	xc := truth.ToLocal(c)
	want := 0.020 - 0.05*truth.K1*xc.X*xc.X/math.Sqrt(1+4*truth.K1*truth.K1*xc.X*xc.X+4*truth.K2*truth.K2*xc.Y*xc.Y)
	if math.Abs(sp.Offset-want) > 0.05*math.Abs(want) {
		t.Errorf("offset: got %.4g m, want %.4g", sp.Offset, want)
	}
}

// TestSaddleResultJSON checks that the JSON form carries the keys of the
// fit.json schema.
func TestSaddleResultJSON(t *testing.T) {
	truth := synthSaddle()
	pts, _ := synthPoints(&truth, workloadOptions(2000, 0.1, 0, 5))
	res, err := FitSaddle(pts, &SaddleSettings{Start: &truth})
	if err != nil {
		t.Fatal(err)
	}
	b, err := json.Marshal(res)
	if err != nil {
		t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"k1", "k2", "origin", "axes", "rms_mm", "inliers", "outliers", "quadric_class", "solver", "covariance", "correlation", "intervals", "seed"} {
		if _, ok := m[k]; !ok {
			t.Errorf("key %q missing from %s", k, b)
		}
	}
	k1 := m["k1"].(map[string]any)
	if k1["value"].(float64) != res.K1.Value || k1["u"].(float64) != res.K1.U {
		t.Errorf("k1: got %v, want value %v u %v", k1, res.K1.Value, res.K1.U)
	}
	if got := m["inliers"].(float64) + m["outliers"].(float64); int(got) != len(pts) {
		t.Errorf("inliers + outliers: got %v, want %d", got, len(pts))
	}
	if s := m["solver"].(map[string]any); s["status"] == "" || s["evaluations"].(float64) < 1 {
		t.Errorf("solver: got %v", s)
	}
}
