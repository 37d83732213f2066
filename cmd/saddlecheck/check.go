package main

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"time"

	"gonum.org/v1/gonum/spatial/r3"
	"gopkg.in/yaml.v3"

	"saddlecheck/archive"
	"saddlecheck/cloud"
	"saddlecheck/deviation"
	"saddlecheck/fit"
	"saddlecheck/report"
	"saddlecheck/report/geojson"
	"saddlecheck/uncert"
)

func init() {
	register("check", "measure points against the design and decide conformity", runCheck)
}

const checkHelp = `Usage: saddlecheck check --design FILE --points FILE [--points FILE ...] --out DIR [flags]

Reads the survey points (CSV/TXT shot files, PLY, LAS, E57, XYZ — detected
from the content), measures every point's signed orthogonal deviation from
the design surface (positive on the design's normal side), classifies it
(used, outside every patch, far from the shell, rejected row), decides each
patch's and the structure's conformity against the tolerance the design file
states, and writes into DIR:

  deviations.csv  one row per input record, in input order, with its status
  patches.csv     the per-patch statistics table
  summary.json    the machine-readable summary (schema in README.md)
  report.html     a self-contained report to read, print (A4) and sign

Example:
  saddlecheck check --design canopy.yaml --points shots.csv --out check-2026-11-30
  saddlecheck check --design canopy.yaml --points scan.ply --points infill.csv \
      --units m --out check-scan

A headerless shot file needs its column order, e.g. --columns id,n,e,z,code.

With an uncertainty model (--uncertainty FILE, --u-mm X, or the design
file's uncertainty section) every deviation carries its standard
uncertainty u along the normal, and points and patches are decided by the
guarded-acceptance rule: conforming where |d| + k·u <= limit,
nonconforming where |d| − k·u > limit, otherwise inconclusive:
  saddlecheck check --design canopy.yaml --points shots.csv \
      --uncertainty ts-2s-2mm.yaml --out check-with-u

Exit codes: 0 conforming, 1 nonconforming or inconclusive, 2 usage or input
error.
`

type checkConfig struct {
	design  string
	points  multiFlag
	out     string
	units   string
	columns string
	workers int
	plyOut  string
	geojson string
	noFit   bool
	seed    uint64
	uncertF multiFlag
	uMM     float64
	rule    string
	k       float64
	now     func() time.Time
}

func runCheck(args []string, stdout, stderr io.Writer) error {
	var c checkConfig
	fs := newFlags("check", checkHelp, stderr)
	fs.StringVar(&c.design, "design", "", "design file (YAML), required")
	fs.Var(&c.points, "points", "points file; repeat for several files")
	fs.StringVar(&c.out, "out", "", "output folder (created if needed), required")
	fs.StringVar(&c.units, "units", "m", "unit of the points files' coordinates: m, mm, ft (international), us-ft (US survey)")
	fs.StringVar(&c.columns, "columns", "", "column order of headerless text files, e.g. id,n,e,z,code")
	fs.IntVar(&c.workers, "workers", 0, "parallel workers (0: all cores)")
	fs.StringVar(&c.plyOut, "ply-out", "", "also write the checked points as binary PLY with deviation and colour")
	fs.StringVar(&c.geojson, "geojson", "", "also write the used points (or map cells) and patch outlines as GeoJSON")
	fs.BoolVar(&c.noFit, "no-fit", false, "skip the as-built fit (placement/shape/local split)")
	fs.Uint64Var(&c.seed, "seed", 1, "random seed of the robust fit (same seed, same report)")
	fs.Var(&c.uncertF, "uncertainty", "uncertainty model file (YAML, the design file's uncertainty schema); one for all inputs or one per --points, in order")
	fs.Float64Var(&c.uMM, "u-mm", 0, "plain standard uncertainty of every point along the normal, mm (instead of a model file)")
	fs.StringVar(&c.rule, "rule", "", "decision rule with uncertainty: guarded (ISO 14253-1, default) or simple (ignore u)")
	fs.Float64Var(&c.k, "k", 0, "coverage factor of the guard band (default 2)")
	if help, err := parseFlags(fs, args); help || err != nil {
		return err
	}
	if c.design == "" || len(c.points) == 0 || c.out == "" {
		return usageErr(stderr, "check", "--design, --points and --out are required")
	}
	c.now = time.Now
	return check(&c, stdout, stderr)
}

func check(c *checkConfig, stdout, stderr io.Writer) error {
	t0 := time.Now()
	unit, err := cloud.ParseUnit(c.units)
	if err != nil {
		return usageErr(stderr, "check", "%v", err)
	}
	opts := cloud.Options{Unit: unit, Columns: splitColumns(c.columns)}
	d, err := deviation.LoadDesign(c.design)
	if err != nil {
		return err
	}
	if err := os.MkdirAll(c.out, 0o755); err != nil {
		return err
	}

	var prog func(int64)
	var progLabel string
	if isTerminal(stderr) {
		last := time.Now()
		prog = func(n int64) {
			if time.Since(last) > 200*time.Millisecond {
				last = time.Now()
				fmt.Fprintf(stderr, "\r%s %d points…", progLabel, n)
			}
		}
	}
	endProg := func() {
		if prog != nil {
			fmt.Fprint(stderr, "\r\033[K")
		}
	}

	// Pass 1 (unless --no-fit): a bounded random sample of each patch's
	// points, and the robust as-built fit of every analytic patch.
	var asBuilt *fit.AsBuilt
	var abIn []report.AsBuiltInput
	var fitS float64
	fittable := false
	for k := range d.Patches {
		if _, ok := deviation.DesignSaddle(&d.Patches[k]); ok {
			fittable = true
		}
	}
	if !c.noFit && fittable {
		tFit := time.Now()
		progLabel = "sampling for the as-built fit:"
		sampler := deviation.NewSampler(d, fitSample, c.seed)
		if err := runPass(c, opts, d, []deviation.Sink{sampler}, nil, prog, nil); err != nil {
			endProg()
			return err
		}
		endProg()
		asBuilt = &fit.AsBuilt{Fits: make([]*fit.SaddleResult, len(d.Patches))}
		abIn = make([]report.AsBuiltInput, len(d.Patches))
		for k := range d.Patches {
			abIn[k] = fitPatch(d, k, sampler, c.seed)
			asBuilt.Fits[k] = abIn[k].Result
		}
		fitS = time.Since(tFit).Seconds()
	}

	var readers []*timedReader
	patchIDs := make([]string, len(d.Patches))
	for i, p := range d.Patches {
		patchIDs[i] = p.ID
	}
	unc, rule, uNotes, err := uncertaintyFor(c, d, opts, stderr)
	if err != nil {
		return err
	}
	var decision *deviation.Decision
	csvOpt := report.PointCSVOptions{Fit: asBuilt != nil}
	if unc != nil {
		decision = deviation.NewDecision(d.Tolerance, rule)
		csvOpt.Uncertainty = true
		csvOpt.Zone = func(dv, u float64) string { return decision.Zone(dv, u).String() }
	}
	csvw, err := report.NewPointCSV(filepath.Join(c.out, "deviations.csv"), 0, []string(c.points), patchIDs, d.Tolerance.BandsM, csvOpt)
	if err != nil {
		return err
	}
	defer csvw.Abort()
	col := deviation.NewCollector(d, len(c.points))
	sinks := []deviation.Sink{col, csvw}
	span := d.Tolerance.LimitM * 1000
	if n := len(d.Tolerance.BandsM); n > 0 {
		span = d.Tolerance.BandsM[n-1] * 1000
	}
	var plyOut *report.PLYOut
	if c.plyOut != "" {
		if plyOut, err = report.NewPLYOut(c.plyOut, d.Structure, span); err != nil {
			return err
		}
		defer plyOut.Abort()
		sinks = append(sinks, plyOut)
	}
	var gj *geojson.Writer
	if c.geojson != "" {
		if gj, err = geojson.Create(c.geojson, &geojson.Options{Name: d.Structure}); err != nil {
			return err
		}
		defer gj.Abort()
		for _, p := range d.Patches {
			if p.Kind == "mesh" {
				continue
			}
			ring := []r3.Vec{p.Corners[0], p.Corners[1], p.Corners[2], p.Corners[3]}
			if err := gj.AddPatch(p.ID, ring); err != nil {
				return err
			}
		}
		sinks = append(sinks, geojson.NewSink(gj, patchIDs, d.Tolerance.BandsM))
	}
	var enrich []deviation.Enricher
	if unc != nil {
		enrich = append(enrich, unc)
		col.SetDecision(decision)
	}
	if asBuilt != nil {
		enrich = append(enrich, asBuilt)
	}
	enrich = append(enrich, csvw) // formats rows on the workers: last
	progLabel = "checked"
	tRun := time.Now()
	err = runPass(c, opts, d, sinks, enrich, prog, &readers)
	endProg()
	if err != nil {
		return err
	}
	runS := time.Since(tRun).Seconds()

	tRep := time.Now()
	s := report.Build(col, d)
	if asBuilt != nil {
		report.AddAsBuilt(s, col, d, abIn)
	}
	if unc != nil {
		if n := unc.Unmatched.Load(); n > 0 {
			uNotes = append(uNotes, fmt.Sprintf("%d points name a station the uncertainty model does not have: they carry no uncertainty (u empty in deviations.csv) and are decided by their deviation alone", n))
		}
		report.AddUncertainty(s, col, rule, uNotes)
		s.VerdictText = report.VerdictText(s)
	}
	for i := range s.Worst {
		s.Worst[i].File = c.points[s.Worst[i].Source]
	}
	for i := range s.WorstLocal {
		s.WorstLocal[i].File = c.points[s.WorstLocal[i].Source]
	}
	s.Tool = report.Tool{Name: "saddlecheck", Version: version}
	s.Generated = c.now()
	for i, p := range c.points {
		h, err := fileSHA256(p)
		if err != nil {
			return err
		}
		info := readers[i].Info()
		s.Inputs = append(s.Inputs, report.Input{Path: p, SHA256: h, Format: info.Format, Units: unit.Name,
			Records: col.Records(i), Rejected: col.Rejected(i)})
		for _, w := range info.Warnings {
			s.Warnings = append(s.Warnings, p+": "+w)
		}
	}
	var readS float64
	for _, r := range readers {
		readS += r.elapsed.Seconds()
	}
	if err := csvw.Commit(); err != nil {
		return err
	}
	if plyOut != nil {
		if err := plyOut.Close(); err != nil {
			return err
		}
		s.Warnings = append(s.Warnings, "checked points also written as binary PLY: "+c.plyOut)
	}
	if gj != nil {
		if err := gj.Close(); err != nil {
			return err
		}
		s.Warnings = append(s.Warnings, "GeoJSON written to "+c.geojson+": its coordinates are local site-grid easting/northing in metres, not WGS 84 longitude/latitude as RFC 7946 requires; do not overlay it on web maps without a transformation")
	}
	if err := report.WritePatchesCSV(filepath.Join(c.out, "patches.csv"), s); err != nil {
		return err
	}
	s.TimingsS = map[string]float64{"read": readS, "deviation": runS, "report": 0}
	if asBuilt != nil {
		s.TimingsS["fit"] = fitS
	}
	s.TimingsS["report"] = time.Since(tRep).Seconds()
	if err := report.WriteHTML(filepath.Join(c.out, "report.html"), s); err != nil {
		return err
	}
	s.TimingsS["report"] = time.Since(tRep).Seconds()
	s.TimingsS["total"] = time.Since(t0).Seconds()
	if err := report.WriteJSON(filepath.Join(c.out, "summary.json"), s); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "%s: %s — %d points read, %d used, %d outside, %d far, %d rejected\n",
		s.Structure, s.Verdict, s.PointsRead, s.PointsUsed, s.PointsOutside, s.PointsFar, s.PointsRejected)
	for _, p := range s.Patches {
		fmt.Fprintf(stdout, "  patch %-8s n=%-7d mean %+6.1f mm  RMS %5.1f mm  max|d| %5.1f mm  within ±%g mm %5.1f %%",
			p.ID, p.N, p.MeanMM, p.RMSMM, p.MaxAbsMM, s.Tolerance.LimitMM, 100*p.ShareWithinLimit)
		if z := p.Zones; z != nil {
			fmt.Fprintf(stdout, "  proven conforming %d, inconclusive %d, proven nonconforming %d", z.Conforming, z.Inconclusive, z.Nonconforming)
		}
		fmt.Fprintf(stdout, "  %s\n", p.Verdict)
	}
	fmt.Fprintf(stdout, "report: %s\n", filepath.Join(c.out, "report.html"))
	if s.Verdict != "conforming" {
		return errVerdict
	}
	return nil
}

// timedReader measures the wall time spent inside Read.
type timedReader struct {
	cloud.Reader
	elapsed time.Duration
}

func (t *timedReader) Read(c *cloud.Chunk, max int) error {
	t0 := time.Now()
	err := t.Reader.Read(c, max)
	t.elapsed += time.Since(t0)
	return err
}

func fileSHA256(path string) (string, error) {
	h, err := archive.HashFile(path)
	return h, withFile(path, err)
}

// fitSample is the largest number of points per patch the as-built fit
// sees (a uniform random sample): enough for parameter uncertainties far
// below the tolerance, with bounded memory whatever the scan size.
const fitSample = 200000

// runPass opens every input, streams it through the design into sinks,
// and closes it. readers, when not nil, receives the timed readers.
func runPass(c *checkConfig, opts cloud.Options, d *deviation.Design, sinks []deviation.Sink, enrich []deviation.Enricher,
	prog func(int64), readers *[]*timedReader) error {
	var inputs []deviation.Input
	for i, p := range c.points {
		r, err := cloud.Open(p, opts)
		if err != nil {
			return err
		}
		defer r.Close()
		tr := &timedReader{Reader: r}
		if readers != nil {
			*readers = append(*readers, tr)
		}
		inputs = append(inputs, deviation.Input{Reader: tr, Source: i})
	}
	err := deviation.Run(inputs, d, sinks, deviation.RunOptions{Workers: c.workers, Progress: prog, Enrich: enrich})
	var se *deviation.SourceError
	if errors.As(err, &se) {
		return withFile(c.points[se.Source], se.Err)
	}
	return err
}

// fitPatch fits the as-built saddle of patch k from its sample, starting
// from the design pose, and splits it against the design.
func fitPatch(d *deviation.Design, k int, s *deviation.Sampler, seed uint64) report.AsBuiltInput {
	p := &d.Patches[k]
	pts := s.Points(k)
	in := report.AsBuiltInput{Sample: len(pts)}
	ds, ok := deviation.DesignSaddle(p)
	if !ok {
		in.Note = "not fitted: a " + p.Kind + " patch has no design saddle to compare with"
		return in
	}
	if len(pts) < 30 {
		in.Note = fmt.Sprintf("not fitted: only %d points on the patch (30 needed for a meaningful 8-parameter fit)", len(pts))
		return in
	}
	r, err := fit.FitSaddle(pts, &fit.SaddleSettings{Start: ds, Seed: seed})
	if err != nil {
		in.Note = "not fitted: " + err.Error()
		return in
	}
	// centroid of the inliers, summed relative to the first point so
	// that site coordinates of 10^6 m lose nothing
	var sum r3.Vec
	var n float64
	for i, q := range pts {
		if r.Inliers[i] {
			sum = r3.Add(sum, r3.Sub(q, pts[0]))
			n++
		}
	}
	cen := r3.Add(pts[0], r3.Scale(1/n, sum))
	in.Result = r
	in.Split = fit.CompareToDesign(ds, r, cen)
	// the pose at a fixed design point (the foot of the corners' centroid),
	// comparable between epochs
	var cc r3.Vec
	for _, q := range p.Corners {
		cc = r3.Add(cc, r3.Scale(0.25, r3.Sub(q, p.Corners[0])))
	}
	ref := p.Surface.Project(r3.Add(p.Corners[0], cc))
	if pe, ok := r.Pose(ref.Foot, ref.Normal); ok {
		in.Pose = &pe
		in.PoseRef = ref.Foot
	}
	return in
}

// uncertaintyFor builds the per-input uncertainty enricher from the flags
// (and, where the design file has one, its uncertainty section). It returns
// nil when no model is given.
func uncertaintyFor(c *checkConfig, d *deviation.Design, opts cloud.Options, stderr io.Writer) (*deviation.Uncertainty, uncert.Rule, []string, error) {
	var models []*uncert.Model
	switch {
	case c.uMM > 0 && len(c.uncertF) > 0:
		return nil, uncert.Rule{}, nil, usageErr(stderr, "check", "give --u-mm or --uncertainty, not both")
	case c.uMM < 0:
		return nil, uncert.Rule{}, nil, usageErr(stderr, "check", "--u-mm must be positive")
	case c.uMM > 0:
		models = []*uncert.Model{{Instrument: uncert.Instrument{Kind: uncert.KindPlain, SigmaMM: c.uMM}}}
	case len(c.uncertF) > 0:
		if len(c.uncertF) != 1 && len(c.uncertF) != len(c.points) {
			return nil, uncert.Rule{}, nil, usageErr(stderr, "check", "give one --uncertainty for all inputs or one per --points (%d given for %d inputs)", len(c.uncertF), len(c.points))
		}
		for _, f := range c.uncertF {
			m, err := loadModel(f)
			if err != nil {
				return nil, uncert.Rule{}, nil, err
			}
			models = append(models, m)
		}
	case d.Uncertainty != nil:
		models = []*uncert.Model{d.Uncertainty}
	default:
		if c.rule != "" || c.k != 0 {
			return nil, uncert.Rule{}, nil, usageErr(stderr, "check", "--rule and --k need an uncertainty model (--uncertainty FILE or --u-mm X)")
		}
		return nil, uncert.Rule{}, nil, nil
	}
	ruleName, k := models[0].Decision.Rule, models[0].Decision.K
	if c.rule != "" {
		ruleName = c.rule
	}
	if c.k != 0 {
		k = c.k
	}
	rule, err := uncert.NewRule(ruleName, k)
	if err != nil {
		return nil, uncert.Rule{}, nil, usageErr(stderr, "check", "%v", err)
	}
	e := &deviation.Uncertainty{}
	var notes []string
	for i := range c.points {
		m := models[0]
		if len(models) > 1 {
			m = models[i]
		}
		setups, err := m.Setups()
		if err != nil {
			return nil, uncert.Rule{}, nil, err
		}
		var byStn map[string]*uncert.Setup
		if len(setups) != 1 {
			has, err := hasStationColumn(c.points[i], opts)
			if err != nil {
				return nil, uncert.Rule{}, nil, err
			}
			if !has {
				return nil, uncert.Rule{}, nil, fmt.Errorf("%s: the uncertainty model has %d stations but the file has no station column (station, stn or setup) naming each shot's station; add one, or give one points file per station, each with its own --uncertainty file", c.points[i], len(setups))
			}
			byStn = map[string]*uncert.Setup{}
			for k := range setups {
				byStn[setups[k].ID] = &setups[k]
			}
		}
		s := setups[0]
		if byStn != nil {
			e.Setups = append(e.Setups, nil)
		} else {
			e.Setups = append(e.Setups, &s)
		}
		e.ByStation = append(e.ByStation, byStn)
		for _, w := range m.Warnings() {
			notes = append(notes, c.points[i]+": uncertainty model: "+w)
		}
	}
	return e, rule, notes, nil
}

// loadModel reads an uncertainty model file.
func loadModel(path string) (*uncert.Model, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var n yaml.Node
	if err := yaml.Unmarshal(b, &n); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	m, err := uncert.DecodeModel(&n)
	if err != nil {
		var le *uncert.LineError
		if errors.As(err, &le) {
			return nil, fmt.Errorf("%s:%d: %s", path, le.Line, le.Msg)
		}
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return &m, nil
}

// hasStationColumn reports whether the points file carries per-shot
// station ids (a station, stn or setup column).
func hasStationColumn(path string, opts cloud.Options) (bool, error) {
	r, err := cloud.Open(path, opts)
	if err != nil {
		return false, err
	}
	defer r.Close()
	for _, col := range r.Info().Columns {
		if col == "station" {
			return true, nil
		}
	}
	return false, nil
}
