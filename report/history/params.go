package history

import (
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"

	"saddlecheck/change"
	"saddlecheck/report"
)

// StoredParams is the params JSON of an archived check result: per patch,
// the fitted parameter estimate, and where it came from.
type StoredParams struct {
	Source  string        `json:"source"`
	Patches []PatchParams `json:"patches"`
}

// PatchParams is one patch's fitted parameters.
type PatchParams struct {
	Patch    string          `json:"patch"`
	Estimate change.Estimate `json:"estimate"`
}

// SummarySource describes parameters taken from a check summary.
const SummarySource = "check summary: as-built k1, k2 (shape), the offset of the as-built surface along the design normal at a fixed design point (translation) and the tilt of its normal there (rotation), with their full covariance propagated from each fit"

// SummarySourceShape describes parameters from an older summary that only
// has k1 and k2.
const SummarySourceShape = "check summary: as-built k1, k2 with standard uncertainties; their correlation is not in the summary and is taken as zero"

// ParamsFromSummary takes the as-built parameters of every fitted patch of
// a check summary: the pose vector (k1, k2, offset, two tilts) with its
// covariance where the summary has it, else k1 and k2 with their standard
// uncertainties. The residual degrees of freedom are inliers − 8 (the
// saddle fit's eight parameters).
func ParamsFromSummary(s *report.Summary) StoredParams {
	p := StoredParams{Source: SummarySource, Patches: []PatchParams{}}
	shapeOnly := false
	for _, pt := range s.Patches {
		ab := pt.AsBuilt
		if ab == nil || !ab.Fitted || !(ab.K1.U > 0) || !(ab.K2.U > 0) {
			continue
		}
		if e, ok := poseEstimate(ab.Pose); ok {
			p.Patches = append(p.Patches, PatchParams{Patch: pt.ID, Estimate: e})
			continue
		}
		shapeOnly = true
		p.Patches = append(p.Patches, PatchParams{Patch: pt.ID,
			Estimate: change.ShapeEstimate(ab.K1.Value, ab.K1.U, ab.K2.Value, ab.K2.U, max(ab.Inliers-8, 0))})
	}
	if shapeOnly {
		p.Source = SummarySourceShape
	}
	return p
}

// poseEstimate turns a summary pose into a change.Estimate (an already
// scaled covariance).
func poseEstimate(ps *report.Pose) (change.Estimate, bool) {
	if ps == nil || len(ps.Params) == 0 || len(ps.Value) != len(ps.Params) || len(ps.Kinds) != len(ps.Params) || len(ps.Cov) != len(ps.Params) {
		return change.Estimate{}, false
	}
	n := len(ps.Params)
	e := change.Estimate{Value: append([]float64(nil), ps.Value...), Cov: mat.NewSymDense(n, nil), Dof: ps.DOF}
	for i, name := range ps.Params {
		var k change.Kind
		switch ps.Kinds[i] {
		case "shape":
			k = change.Shape
		case "translation":
			k = change.Translation
		case "rotation":
			k = change.Rotation
		default:
			return change.Estimate{}, false
		}
		e.Params = append(e.Params, change.Param{Name: name, Kind: k})
		if len(ps.Cov[i]) != n {
			return change.Estimate{}, false
		}
		for j := i; j < n; j++ {
			v := 0.5 * (ps.Cov[i][j] + ps.Cov[j][i])
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return change.Estimate{}, false
			}
			e.Cov.SetSym(i, j, v)
		}
	}
	return e, true
}

// ParameterTests runs, for every patch present in both epochs, the
// congruency test of the later minus the earlier parameters under the datum
// rule (change.Difference, change.Congruency at level alpha). Patches
// missing on one side and estimates that do not match are reported in
// notes.
func ParameterTests(earlier, later StoredParams, d1, d2 change.Datum, alpha float64) ([]GlobalTest, []ParamChange, []string) {
	byPatch := map[string]change.Estimate{}
	for _, p := range later.Patches {
		byPatch[p.Patch] = p.Estimate
	}
	var global []GlobalTest
	var params []ParamChange
	notes := []string{"Parameters: " + earlier.Source + "."}
	for _, p := range earlier.Patches {
		q, ok := byPatch[p.Patch]
		if !ok {
			notes = append(notes, fmt.Sprintf("Patch %s has no fitted parameters in the later epoch.", p.Patch))
			continue
		}
		diff, err := change.Difference(p.Estimate, q, d1, d2)
		if err != nil {
			notes = append(notes, fmt.Sprintf("Patch %s: %v.", p.Patch, err))
			continue
		}
		res := change.Congruency(diff.Delta, diff.Q, diff.S0sq, diff.Dof, alpha)
		global = append(global, GlobalTest{Patch: p.Patch, Result: res, Note: diff.Note})
		i1, i2 := paramIndex(p.Estimate), paramIndex(q)
		for i, par := range diff.Params {
			params = append(params, ParamChange{Patch: p.Patch, Name: par.Name,
				From: p.Estimate.Value[i1[par.Name]], To: q.Value[i2[par.Name]], Test: res.Params[i]})
		}
	}
	return global, params, notes
}

func paramIndex(e change.Estimate) map[string]int {
	m := make(map[string]int, len(e.Params))
	for i, p := range e.Params {
		m[p.Name] = i
	}
	return m
}

const bestfitDatum = "bestfit"

// SeriesBuilder collects the key figures of a structure epoch by epoch.
type SeriesBuilder struct {
	series map[string]*Series
}

// Add adds one epoch's figures: the mean offset from the design (mm) from
// the summary, with u = sqrt(s²/n + reg²) (s the deviations' standard
// deviation, n their count, reg the epoch's registration standard error:
// common to all points, so not divided by n); and every shape parameter of
// every patch from params, with u from its covariance. Either may be nil.
// The mean offset of an epoch registered by best fit to the shell (Datum
// "bestfit") is left out: the registration absorbed it.
func (b *SeriesBuilder) Add(e Epoch, year float64, sum *report.Summary, params *StoredParams) {
	if b.series == nil {
		b.series = map[string]*Series{}
	}
	add := func(name, unit string, v, u float64) {
		s, ok := b.series[name]
		if !ok {
			s = &Series{Name: name, Unit: unit}
			b.series[name] = s
		}
		s.Points = append(s.Points, Point{EpochID: e.ID, Date: e.Date, Year: year, Value: v, U: u})
	}
	if sum != nil && sum.Overall.N > 0 && e.Datum != bestfitDatum {
		u := change.Position{Sigma: sum.Overall.StdMM, N: int(sum.Overall.N)}.U(e.RegistrationMM)
		add("mean offset from the design", "mm", sum.Overall.MeanMM, u)
	}
	if params == nil {
		return
	}
	for _, p := range params.Patches {
		est := p.Estimate
		for i, par := range est.Params {
			if par.Kind != change.Shape {
				continue
			}
			u := math.Sqrt(est.Cov.At(i, i))
			if est.Cofactor {
				u *= math.Sqrt(est.S0sq)
			}
			add(fmt.Sprintf("%s (patch %s)", par.Name, p.Patch), "1/m", est.Value[i], u)
		}
	}
}

// Series returns the series by name, each with its rate fitted at level
// alpha (Series.Fit).
func (b *SeriesBuilder) Series(alpha float64) []Series {
	names := make([]string, 0, len(b.series))
	for n := range b.series {
		names = append(names, n)
	}
	sort.Strings(names)
	out := make([]Series, 0, len(names))
	for _, n := range names {
		s := b.series[n]
		s.Fit(alpha)
		out = append(out, *s)
	}
	return out
}
