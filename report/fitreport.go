package report

import (
	"bytes"
	_ "embed"
	"encoding/json"
	"fmt"
	"html/template"
	"math"
	"time"

	"saddlecheck/fit"
)

// FitSurface is one fitted surface of a fit run.
type FitSurface struct {
	// ID names the patch, or "" for a fit without a design.
	ID     string
	Result *fit.SaddleResult
	// Split is the comparison with the design patch (nil without one).
	Split *fit.Split
	// DesignK1, DesignK2 are the design coefficients (with a design).
	DesignK1, DesignK2 float64
	// Sample is how many points the fit saw, of Seen on the surface.
	Sample int
	Seen   int64
	// OutlierIDs lists (up to a limit) the ids of the outliers among the
	// sample.
	OutlierIDs []string
	// STL is the file the fitted surface was written to, if any.
	STL string
	// Note says why a patch was not fitted (Result nil).
	Note string
}

// FitRun is the content of fit.json and fit.html.
type FitRun struct {
	Tool      Tool
	Generated time.Time
	Structure string
	Inputs    []Input
	Design    *Design
	Surfaces  []FitSurface
	Warnings  []string
}

// FitBasis is the frame label of a fit (FIELD.md §6).
const FitBasis = "BEST-FIT (rigid + shape): the saddle's position, orientation and curvatures are all estimated from the points; it describes what shape was built, wherever it is, and is not an acceptance check"

// MaxOutlierIDs is the number of outlier ids listed per surface.
const MaxOutlierIDs = 1000

func surfaceJSON(s *FitSurface) (map[string]json.RawMessage, error) {
	m := map[string]json.RawMessage{}
	if s.Result != nil {
		b, err := json.Marshal(s.Result)
		if err != nil {
			return nil, err
		}
		if err := json.Unmarshal(b, &m); err != nil {
			return nil, err
		}
	}
	put := func(k string, v any) {
		b, _ := json.Marshal(v)
		m[k] = b
	}
	if s.ID != "" {
		put("id", s.ID)
	}
	put("fitted", s.Result != nil)
	if s.Note != "" {
		put("note", s.Note)
	}
	put("sample_size", s.Sample)
	put("points_on_surface", s.Seen)
	if s.Result != nil {
		ids := s.OutlierIDs
		if ids == nil {
			ids = []string{}
		}
		put("outlier_ids", ids)
		put("outlier_ids_complete", s.Result.NumOutliers <= MaxOutlierIDs && int64(s.Sample) == s.Seen)
	}
	if s.Split != nil {
		put("design_k1", s.DesignK1)
		put("design_k2", s.DesignK2)
		put("split", s.Split)
	}
	if s.STL != "" {
		put("stl", s.STL)
	}
	return m, nil
}

// WriteFitJSON writes fit.json. Without a design the single surface's keys
// (k1, k2, origin, axes, rms_mm, inliers, outliers, quadric_class, solver,
// …) stand at the top level; with a design each patch's stand in
// "patches".
func WriteFitJSON(path string, r *FitRun) error {
	top := map[string]any{
		"tool": r.Tool, "generated": r.Generated, "structure": r.Structure, "inputs": r.Inputs,
		"basis": FitBasis, "cautions": Cautions, "warnings": nonNil(r.Warnings),
		"units": "k1, k2 in 1/m (z = k1·x² + k2·y² in the fitted local frame, local z on the up side); lengths in m unless named _mm; angles in rad",
	}
	if r.Design != nil {
		top["design"] = r.Design
		var ps []map[string]json.RawMessage
		for i := range r.Surfaces {
			m, err := surfaceJSON(&r.Surfaces[i])
			if err != nil {
				return err
			}
			ps = append(ps, m)
		}
		top["patches"] = ps
	} else if len(r.Surfaces) == 1 {
		m, err := surfaceJSON(&r.Surfaces[0])
		if err != nil {
			return err
		}
		for k, v := range m {
			top[k] = v
		}
	}
	b, err := json.MarshalIndent(top, "", "  ")
	if err != nil {
		return err
	}
	return WriteFile(path, append(b, '\n'))
}

func nonNil(s []string) []string {
	if s == nil {
		return []string{}
	}
	return s
}

//go:embed fit.html.tmpl
var fitTmplText string

var fitTmpl = template.Must(template.New("fit").Parse(fitTmplText))

type fitView struct {
	R         *FitRun
	Basis     string
	Generated string
	Surfaces  []fitSurfaceView
}

type fitSurfaceView struct {
	Title, Note string
	Fitted      bool
	Params      [][5]string // name, value, u, lo95, hi95
	Facts       [][2]string
	Corr        [][]string
	CorrNames   []string
	Split       [][2]string
}

func ff(v float64, prec int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	return fmt.Sprintf("%.*g", prec, v)
}

// WriteFitHTML writes the self-contained fit.html.
func WriteFitHTML(path string, r *FitRun) error {
	v := fitView{R: r, Basis: FitBasis, Generated: r.Generated.UTC().Format("2006-01-02 15:04 UTC")}
	for _, s := range r.Surfaces {
		sv := fitSurfaceView{Title: s.ID, Note: s.Note, Fitted: s.Result != nil}
		if sv.Title == "" {
			sv.Title = "fitted surface"
		} else {
			sv.Title = "patch " + sv.Title
		}
		if a := s.Result; a != nil {
			est := func(name string, e fit.Estimate, scale float64, unit string) {
				sv.Params = append(sv.Params, [5]string{name + " (" + unit + ")", ff(e.Value*scale, 8), ff(e.U*scale, 3), ff(e.Lo95*scale, 8), ff(e.Hi95*scale, 8)})
			}
			est("k1", a.K1, 1, "1/m")
			est("k2", a.K2, 1, "1/m")
			for i, n := range []string{"saddle point E", "saddle point N", "saddle point H"} {
				est(n, a.Origin[i], 1, "m")
			}
			for i, n := range []string{"x", "y", "z"} {
				ax := a.Saddle.Axes[i]
				sv.Facts = append(sv.Facts, [2]string{"local " + n + " axis", fmt.Sprintf("(%.6f, %.6f, %.6f), u %.2f mgon", ax.X, ax.Y, ax.Z, a.AxesU[i]*200/math.Pi*1000)})
			}
			sv.Facts = append(sv.Facts,
				[2]string{"RMS of inliers", fmt.Sprintf("%.2f mm (σ̂ %.2f mm, %d degrees of freedom)", a.RMS*1000, a.Sigma*1000, a.DOF)},
				[2]string{"inliers / outliers", fmt.Sprintf("%d / %d of %d sampled (of %d on the surface); inlier threshold %.2f mm", a.NumInliers, a.NumOutliers, s.Sample, s.Seen, a.Threshold*1000)},
				[2]string{"what the data look like", a.Class.Kind.String() + " (general quadric, Taubin fit, classified by its invariants)"},
				[2]string{"solver", fmt.Sprintf("Levenberg–Marquardt: %s, %d iterations, %d evaluations", a.Solver.Status, a.Solver.Iterations, a.Solver.Evaluations)},
				[2]string{"robust step", fmt.Sprintf("RANSAC/MSAC with local optimisation, seed %d, %d iterations, %d re-gating rounds; reweighting: %s", a.Seed, a.RANSACIterations, a.Rounds, robustName(a.Robust))},
			)
			if s.STL != "" {
				sv.Facts = append(sv.Facts, [2]string{"STL of the fitted surface", s.STL})
			}
			if a.ParCorr != nil {
				n := a.ParCorr.SymmetricDim()
				sv.CorrNames = fit.SaddleParamNames[:n]
				for i := 0; i < n; i++ {
					row := []string{fit.SaddleParamNames[i]}
					for k := 0; k < n; k++ {
						row = append(row, fmt.Sprintf("%+.2f", a.ParCorr.At(i, k)))
					}
					sv.Corr = append(sv.Corr, row)
				}
			}
			if sp := s.Split; sp != nil {
				sig := func(b bool) string {
					if b {
						return "significant at 95 %"
					}
					return "not significant at 95 %"
				}
				sv.Split = [][2]string{
					{"placement: offset at the patch centroid along the design normal", fmt.Sprintf("%+.2f mm ± %.2f mm", sp.Offset*1000, sp.OffsetU*1000)},
					{"placement: tilt against the design normal", fmt.Sprintf("%.1f mgon", sp.Tilt*200/math.Pi*1000)},
					{"shape: k1 as-built − design", fmt.Sprintf("%+.3g 1/m ± %.2g (design %.6g), %s", sp.K1.Delta, sp.K1.U, s.DesignK1, sig(sp.K1.Significant))},
					{"shape: k2 as-built − design", fmt.Sprintf("%+.3g 1/m ± %.2g (design %.6g), %s", sp.K2.Delta, sp.K2.U, s.DesignK2, sig(sp.K2.Significant))},
					{"local: residuals from the fitted surface", fmt.Sprintf("RMS %.2f mm, max %.2f mm", sp.LocalRMS*1000, sp.LocalMax*1000)},
				}
			}
		}
		v.Surfaces = append(v.Surfaces, sv)
	}
	var buf bytes.Buffer
	if err := fitTmpl.Execute(&buf, v); err != nil {
		return err
	}
	return WriteFile(path, buf.Bytes())
}

func robustName(s string) string {
	if s == "" {
		return "none"
	}
	return s
}
