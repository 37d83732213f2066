package main

import (
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"time"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/cloud"
	"saddlecheck/deviation"
	"saddlecheck/deviation/mesh"
	"saddlecheck/fit"
	"saddlecheck/report"
	"saddlecheck/uncert"
)

func init() {
	register("fit", "fit the as-built saddle to points, with uncertainties", runFit)
}

const fitHelp = `Usage: saddlecheck fit --points FILE [--points FILE ...] [--design FILE] [--out DIR] [--stl FILE] [--seed N]

Fits the hyperbolic paraboloid z = k1·x² + k2·y² (in a fitted local frame,
local z on the up side) to the points by orthogonal distances: a general
quadric (Taubin) inside RANSAC with MSAC scoring starts it, and
Levenberg–Marquardt on the true orthogonal distances finishes it, with the
covariance of the parameters, standard uncertainties and 95 % intervals.
Outliers (scaffold, people, props, ground) are found and listed, never
removed from the data.

Without --design the points are one surface. With --design each analytic
patch is fitted from the design pose, and compared with the design
(placement, tilt, shape). Writes DIR/fit.json and DIR/fit.html; with --stl
also the fitted surface over the data's extent as a binary STL. Without a
design it also writes DIR/residuals.csv: every input record measured
against the fitted surface as the reference, with the fit's own
uncertainty at that point combined with the instrument's (--u-mm or
--uncertainty).

Example:
  saddlecheck fit --points kiosk-roof-scan.ply --out kiosk-roof-fit --stl kiosk-roof-asbuilt.stl
  saddlecheck fit --points shots.csv --design canopy.yaml --out canopy-fit
`

func runFit(args []string, stdout, stderr io.Writer) error {
	var points multiFlag
	fs := newFlags("fit", fitHelp, stderr)
	fs.Var(&points, "points", "points file; repeat for several files (required)")
	design := fs.String("design", "", "design file: fit each analytic patch from its design pose")
	out := fs.String("out", "saddlecheck-fit", "output folder")
	stl := fs.String("stl", "", "also write the fitted surface as binary STL (with a design: one file per patch, FILE-<patch>.stl)")
	seed := fs.Uint64("seed", fit.DefaultSeed, "random seed (same seed, same result)")
	units := fs.String("units", "m", "unit of the points files: m, mm, ft, us-ft")
	robust := fs.String("robust", "", "reweighting after the inlier selection: none, huber or tukey")
	uFile := fs.String("uncertainty", "", "instrument model file (YAML, the design file's uncertainty schema) for residuals.csv (without --design)")
	uMM := fs.Float64("u-mm", 0, "plain per-point standard uncertainty for residuals.csv, mm (without --design)")
	if help, err := parseFlags(fs, args); help || err != nil {
		return err
	}
	if len(points) == 0 {
		return usageErr(stderr, "fit", "--points is required")
	}
	unit, err := cloud.ParseUnit(*units)
	if err != nil {
		return usageErr(stderr, "fit", "%v", err)
	}
	if err := os.MkdirAll(*out, 0o755); err != nil {
		return err
	}
	opts := cloud.Options{Unit: unit}
	run := &report.FitRun{Tool: report.Tool{Name: "saddlecheck", Version: version}, Generated: time.Now()}
	settings := func(start *deviation.Saddle) *fit.SaddleSettings {
		return &fit.SaddleSettings{Start: start, Seed: *seed, Robust: *robust}
	}
	if *design == "" {
		var readers []cloud.Reader
		for _, p := range points {
			r, err := cloud.Open(p, opts)
			if err != nil {
				return err
			}
			defer r.Close()
			readers = append(readers, r)
		}
		pts, ids, seen, err := cloud.Sample(readers, fitSample, *seed)
		if err != nil {
			return err
		}
		run.Structure = "as-built fit of " + filepath.Base(points[0])
		var setup *uncert.Setup
		switch {
		case *uFile != "" && *uMM != 0:
			return usageErr(stderr, "fit", "give --uncertainty or --u-mm, not both")
		case *uFile != "":
			m, err := loadModel(*uFile)
			if err != nil {
				return err
			}
			ss, err := m.Setups()
			if err != nil {
				return err
			}
			if len(ss) != 1 {
				return fmt.Errorf("%s: fit takes a one-station model (%d stations given)", *uFile, len(ss))
			}
			setup = &ss[0]
		case *uMM < 0:
			return usageErr(stderr, "fit", "--u-mm must be positive")
		case *uMM > 0:
			m := uncert.Model{Instrument: uncert.Instrument{Kind: uncert.KindPlain, SigmaMM: *uMM}}
			ss, err := m.Setups()
			if err != nil {
				return err
			}
			setup = &ss[0]
		}
		s := report.FitSurface{Sample: len(pts), Seen: seen}
		r, err := fit.FitSaddle(pts, settings(nil))
		if err != nil {
			s.Note = "not fitted: " + err.Error()
		} else {
			s.Result = r
			s.OutlierIDs = outlierIDs(r, ids)
			if err := writeResiduals(filepath.Join(*out, "residuals.csv"), points, opts, r, setup); err != nil {
				return err
			}
			run.Warnings = append(run.Warnings, "residuals.csv: every input record measured against the fitted surface as the reference, with the fit's own uncertainty (u_fit_mm) combined with the instrument's (u_mm)")
			if *stl != "" {
				if err := writeFittedSTL(*stl, r, pts); err != nil {
					return err
				}
				s.STL = *stl
			}
		}
		run.Surfaces = append(run.Surfaces, s)
	} else {
		d, err := deviation.LoadDesign(*design)
		if err != nil {
			return err
		}
		run.Structure = d.Structure
		run.Design = &report.Design{Path: d.Path, SHA256: d.SHA256, Units: d.Unit.Name, Normal: normalName(d.NormalUp), OffsetMM: d.OffsetM * 1000}
		sampler := deviation.NewSampler(d, fitSample, *seed)
		sampler.KeepIDs = true
		c := &checkConfig{points: points}
		if err := runPass(c, opts, d, []deviation.Sink{sampler}, nil, nil, nil); err != nil {
			return err
		}
		for k := range d.Patches {
			p := &d.Patches[k]
			in := fitPatch(d, k, sampler, *seed)
			s := report.FitSurface{ID: p.ID, Result: in.Result, Note: in.Note, Sample: in.Sample, Seen: sampler.Seen(k)}
			if in.Result != nil {
				sp := in.Split
				s.Split = &sp
				if ds, ok := deviation.DesignSaddle(p); ok {
					s.DesignK1, s.DesignK2 = ds.K1, ds.K2
				}
				s.OutlierIDs = outlierIDs(in.Result, sampler.IDs(k))
				if *stl != "" {
					name := stlName(*stl, p.ID)
					if err := writeFittedSTL(name, in.Result, sampler.Points(k)); err != nil {
						return err
					}
					s.STL = name
				}
			}
			run.Surfaces = append(run.Surfaces, s)
		}
	}
	for _, p := range points {
		h, err := fileSHA256(p)
		if err != nil {
			return err
		}
		run.Inputs = append(run.Inputs, report.Input{Path: p, SHA256: h, Units: unit.Name})
	}
	if err := report.WriteFitJSON(filepath.Join(*out, "fit.json"), run); err != nil {
		return err
	}
	if err := report.WriteFitHTML(filepath.Join(*out, "fit.html"), run); err != nil {
		return err
	}
	for _, s := range run.Surfaces {
		name := s.ID
		if name == "" {
			name = "surface"
		}
		if s.Result == nil {
			fmt.Fprintf(stdout, "%s: %s\n", name, s.Note)
			continue
		}
		r := s.Result
		fmt.Fprintf(stdout, "%s: k1 = %.6g ± %.2g 1/m, k2 = %.6g ± %.2g 1/m, RMS %.2f mm, %d inliers, %d outliers, %s\n",
			name, r.K1.Value, r.K1.U, r.K2.Value, r.K2.U, r.RMS*1000, r.NumInliers, r.NumOutliers, r.Class.Kind)
	}
	fmt.Fprintf(stdout, "report: %s\n", filepath.Join(*out, "fit.html"))
	return nil
}

func normalName(up bool) string {
	if up {
		return "up"
	}
	return "down"
}

func stlName(base, id string) string {
	ext := filepath.Ext(base)
	return base[:len(base)-len(ext)] + "-" + id + ext
}

func outlierIDs(r *fit.SaddleResult, ids []string) []string {
	out := []string{}
	for i, in := range r.Inliers {
		if !in && i < len(ids) {
			out = append(out, ids[i])
			if len(out) == report.MaxOutlierIDs {
				break
			}
		}
	}
	return out
}

// writeFittedSTL writes the fitted saddle over the plan extent of its
// inliers (the bounding rectangle in the fitted local x–y plane) at a 1 mm
// chord tolerance, relative to the saddle point rounded to whole metres.
func writeFittedSTL(path string, r *fit.SaddleResult, pts []r3.Vec) error {
	s := r.Saddle
	lo := r3.Vec{X: math.Inf(1), Y: math.Inf(1)}
	hi := r3.Vec{X: math.Inf(-1), Y: math.Inf(-1)}
	for i, p := range pts {
		if !r.Inliers[i] {
			continue
		}
		q := s.ToLocal(p)
		lo.X, lo.Y = math.Min(lo.X, q.X), math.Min(lo.Y, q.Y)
		hi.X, hi.Y = math.Max(hi.X, q.X), math.Max(hi.Y, q.Y)
	}
	corners := [4]r3.Vec{s.ToSite(r3.Vec{X: lo.X, Y: lo.Y}), s.ToSite(r3.Vec{X: hi.X, Y: lo.Y}),
		s.ToSite(r3.Vec{X: hi.X, Y: hi.Y}), s.ToSite(r3.Vec{X: lo.X, Y: hi.Y})}
	patch, err := deviation.NewSaddlePatch(s, corners, 0)
	if err != nil {
		return err
	}
	v, t, err := mesh.Tessellate(patch, 0.001)
	if err != nil {
		return err
	}
	o := r3.Vec{X: math.Round(s.Origin.X), Y: math.Round(s.Origin.Y), Z: math.Round(s.Origin.Z)}
	return mesh.WriteSTL(path, o, v, t)
}

// writeResiduals streams every input record through the fitted surface as
// the reference into residuals.csv.
func writeResiduals(path string, points []string, opts cloud.Options, r *fit.SaddleResult, setup *uncert.Setup) error {
	w, err := report.NewResidualCSV(path, r, setup)
	if err != nil {
		return err
	}
	defer w.Abort()
	var c cloud.Chunk
	for _, p := range points {
		rd, err := cloud.Open(p, opts)
		if err != nil {
			return err
		}
		for {
			err := rd.Read(&c, 0)
			if err == io.EOF {
				break
			}
			if err != nil {
				rd.Close()
				return withFile(p, err)
			}
			if err := w.Add(&c, p); err != nil {
				rd.Close()
				return err
			}
		}
		rd.Close()
	}
	return w.Commit()
}
