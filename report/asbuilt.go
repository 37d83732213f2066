package report

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
	"saddlecheck/fit"
)

// AsBuiltInput is what the check knows of one patch's as-built fit.
type AsBuiltInput struct {
	// Result is nil where the patch was not fitted; Note says why.
	Result *fit.SaddleResult
	Split  fit.Split
	Note   string
	Sample int // points the fit saw
	// Pose is the fit described at a fixed design point (nil if none).
	Pose    *fit.PoseEstimate
	PoseRef r3.Vec
}

// AddAsBuilt fills the as-built section of s: per patch the placement,
// shape and local split, the local map and the largest local residuals.
func AddAsBuilt(s *Summary, c *deviation.Collector, d *deviation.Design, in []AsBuiltInput) {
	for i := range s.Patches {
		if i >= len(in) {
			break
		}
		a := in[i]
		ab := &AsBuilt{Note: a.Note, SampleSize: a.Sample}
		if r := a.Result; r != nil {
			ds, _ := deviation.DesignSaddle(&d.Patches[i])
			ab.Fitted = true
			ab.K1 = Value{r.K1.Value, r.K1.U}
			ab.K2 = Value{r.K2.Value, r.K2.U}
			if ds != nil {
				ab.DesignK1, ab.DesignK2 = ds.K1, ds.K2
			}
			ab.DK1Sig, ab.DK2Sig = a.Split.K1.Significant, a.Split.K2.Significant
			ab.PlacementMM = a.Split.Offset * 1000
			ab.TiltMgon = a.Split.Tilt * 200 / math.Pi * 1000
			ab.Inliers, ab.Outliers = r.NumInliers, r.NumOutliers
			ab.QuadricClass = r.Class.Kind.String()
			ab.Solver = fmt.Sprintf("%s after %d iterations, %d evaluations", r.Solver.Status, r.Solver.Iterations, r.Solver.Evaluations)
			if c.Local != nil && c.Local[i] != nil && c.Local[i].N() > 0 {
				ab.RMSLocalMM = c.Local[i].RMS() * 1000
				ab.MaxLocalMM = math.Max(math.Abs(c.Local[i].Min()), math.Abs(c.Local[i].Max())) * 1000
			}
		}
		if a.Pose != nil {
			ab.Pose = &Pose{Params: fit.PoseParams[:], Kinds: []string{"shape", "shape", "translation", "rotation", "rotation"},
				Value: a.Pose.Value[:], Ref: [3]float64{a.PoseRef.X, a.PoseRef.Y, a.PoseRef.Z}, DOF: max(a.Result.DOF, 0)}
			for _, row := range a.Pose.Cov {
				ab.Pose.Cov = append(ab.Pose.Cov, append([]float64(nil), row[:]...))
			}
		}
		s.Patches[i].AsBuilt = ab
	}
	s.LocalMap = buildLocalMap(c, d, s.Map)
	for _, w := range c.WorstLocal() {
		wp := WorstPoint{ID: w.ID, Source: w.Source, Line: w.Line, DeviationMM: w.DevM * 1000, X: w.P.X, Y: w.P.Y, Z: w.P.Z}
		if w.Patch >= 0 && w.Patch < len(d.Patches) {
			wp.Patch = d.Patches[w.Patch].ID
		}
		s.WorstLocal = append(s.WorstLocal, wp)
	}
}

func buildLocalMap(c *deviation.Collector, d *deviation.Design, base Map) Map {
	m := Map{MinX: base.MinX, MinY: base.MinY, MaxX: base.MaxX, MaxY: base.MaxY, Outline: base.Outline, Labels: base.Labels}
	if c.LocalPoints != nil {
		for _, p := range c.LocalPoints {
			m.Points = append(m.Points, MapPoint{X: p.X, Y: p.Y, DevMM: p.DevM * 1000})
		}
		return m
	}
	if g := c.LocalGrid; g != nil {
		m.CellM = g.CellM
		m.Cells = gridCells(g)
	}
	return m
}
