package main

import (
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/archive"
	"saddlecheck/change"
	"saddlecheck/cloud"
	"saddlecheck/deviation"
	"saddlecheck/report"
	"saddlecheck/report/history"
)

func init() {
	register("archive", "keep survey epochs of a structure and compare them over time", runArchive)
}

const archiveHelp = `Usage: saddlecheck archive <sub-command> [flags]

Keeps the survey history of structures in an archive folder (an SQLite
database plus the original files, stored by their SHA-256) and compares
epochs: has the shell moved since the last survey, where, by how much, and
is that larger than the survey noise?

Sub-commands:
  init           create an archive folder
  add-structure  record a structure and its design file
  add-epoch      archive one survey (points file and its metadata)
  list           list structures, or the epochs of one structure
  recheck        re-run the check of an archived epoch and store its result
  compare        compare two epochs (M3C2 change map, parameter tests)
  history        key figures of a structure over all its epochs
  verify         check the archive's integrity
  gc             remove stored files no record names

Example (an invented structure):
  saddlecheck archive init surveys
  saddlecheck archive add-structure --archive surveys --name "Tarn Road market canopy" --design canopy.yaml
  saddlecheck archive add-epoch --archive surveys --structure "Tarn Road market canopy" \
      --date 2026-04-18 --points shots-2026.csv --instrument "total station 1\" / 1 mm + 1.5 ppm" \
      --operator "R. Okafor" --datum control --registration-mm 1.5 --temperature 11.5
  saddlecheck archive compare --archive surveys --structure "Tarn Road market canopy" --from 1 --to 2 --out change-1-2

Run 'saddlecheck archive <sub-command> --help' for each sub-command's flags.
`

type archiveSub struct {
	summary string
	run     func(args []string, stdout, stderr io.Writer) error
}

var archiveSubs = map[string]archiveSub{
	"init":          {"create an archive folder", archiveInit},
	"add-structure": {"record a structure and its design file", archiveAddStructure},
	"add-epoch":     {"archive one survey", archiveAddEpoch},
	"list":          {"list structures or epochs", archiveList},
	"recheck":       {"re-run the check of an epoch", archiveRecheck},
	"compare":       {"compare two epochs", archiveCompare},
	"history":       {"key figures over all epochs", archiveHistory},
	"verify":        {"check the archive's integrity", archiveVerify},
	"gc":            {"remove unreferenced stored files", archiveGC},
}

// runArchive dispatches to the archive's sub-commands.
func runArchive(args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 {
		fmt.Fprint(stderr, archiveHelp)
		return errUsage
	}
	switch args[0] {
	case "-h", "-help", "--help", "help":
		// Help goes to stderr, as every command's FlagSet usage does.
		fmt.Fprint(stderr, archiveHelp)
		return nil
	}
	sub, ok := archiveSubs[args[0]]
	if !ok {
		return usageErr(stderr, "archive", "unknown sub-command %q", args[0])
	}
	return sub.run(args[1:], stdout, stderr)
}

// archiveFlags returns a FlagSet for "archive NAME" with the --archive flag.
func archiveFlags(name, help string, stderr io.Writer) (*flag.FlagSet, *string) {
	fs := newFlags("archive "+name, help, stderr)
	dir := fs.String("archive", "", "archive folder, required")
	return fs, dir
}

func openArchive(stderr io.Writer, cmd, dir string) (*archive.Archive, error) {
	if dir == "" {
		return nil, usageErr(stderr, cmd, "--archive is required")
	}
	return archive.Open(dir)
}

const archiveInitHelp = `Usage: saddlecheck archive init DIR

Creates an archive folder DIR (an SQLite database archive.db and a folder
objects/ for the stored files). DIR may exist but must not hold an archive.

Example:
  saddlecheck archive init surveys
`

func archiveInit(args []string, stdout, stderr io.Writer) error {
	fs, dir := archiveFlags("init", archiveInitHelp, stderr)
	if err := fs.Parse(args); err != nil {
		if err == flag.ErrHelp {
			return nil
		}
		return errUsage
	}
	switch {
	case *dir == "" && fs.NArg() == 1:
		*dir = fs.Arg(0)
	case *dir == "" || fs.NArg() > 0:
		return usageErr(stderr, "archive init", "name one folder")
	}
	a, err := archive.Init(*dir)
	if err != nil {
		return err
	}
	defer a.Close()
	fmt.Fprintf(stdout, "created archive %s (schema version %d)\n", *dir, archive.SchemaVersion)
	return nil
}

const archiveAddStructureHelp = `Usage: saddlecheck archive add-structure --archive DIR --name NAME --design FILE

Records a structure under NAME with its design file (copied into the
archive and identified by its SHA-256).

Example:
  saddlecheck archive add-structure --archive surveys --name "Tarn Road market canopy" --design canopy.yaml
`

func archiveAddStructure(args []string, stdout, stderr io.Writer) error {
	fs, dir := archiveFlags("add-structure", archiveAddStructureHelp, stderr)
	name := fs.String("name", "", "structure name, required")
	design := fs.String("design", "", "design file, required")
	if help, err := parseFlags(fs, args); help || err != nil {
		return err
	}
	if *name == "" || *design == "" {
		return usageErr(stderr, "archive add-structure", "--name and --design are required")
	}
	a, err := openArchive(stderr, "archive add-structure", *dir)
	if err != nil {
		return err
	}
	defer a.Close()
	// The design is archived as given; warn where it will not serve later.
	if d, err := deviation.LoadDesign(*design); err != nil {
		fmt.Fprintf(stderr, "warning: the design file cannot be loaded (%v); it is archived anyway, but recheck will fail and compare will estimate normals from the points\n", err)
	} else {
		for _, p := range d.Patches {
			if p.Kind == "mesh" {
				fmt.Fprintf(stderr, "warning: patch %s uses a mesh file, which the archive does not store: recheck and compare will not find it\n", p.ID)
			}
		}
	}
	s, err := a.AddStructure(*name, *design)
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "structure %d %q, design %s (sha256 %s)\n", s.ID, s.Name, s.DesignName, s.DesignHash)
	return nil
}

const archiveAddEpochHelp = `Usage: saddlecheck archive add-epoch --archive DIR --structure NAME --date YYYY-MM-DD --points FILE [flags]

Archives one survey of a structure: the points file is read once to check
it (format detected from the content, unit as given), then stored by its
SHA-256 together with the survey's metadata. The same points file cannot be
archived twice.

--datum says how the epoch was placed: control (observed from, or
transformed onto, stable control off the shell) or bestfit (registered by
best fit to the shell itself; then a rigid movement of the whole shell
cannot be detected from this epoch).

Example:
  saddlecheck archive add-epoch --archive surveys --structure "Tarn Road market canopy" \
      --date 2026-04-18 --points shots-2026.csv --instrument "total station, 1 mm + 1.5 ppm" \
      --operator "R. Okafor" --datum control --registration-mm 1.5 --temperature 11.5
`

func archiveAddEpoch(args []string, stdout, stderr io.Writer) error {
	fs, dir := archiveFlags("add-epoch", archiveAddEpochHelp, stderr)
	var ne archive.NewEpoch
	fs.StringVar(&ne.Structure, "structure", "", "structure name, required")
	fs.StringVar(&ne.Date, "date", "", "survey date YYYY-MM-DD, required")
	fs.StringVar(&ne.PointsPath, "points", "", "points file, required")
	fs.StringVar(&ne.Instrument, "instrument", "", "instrument model (free text or JSON)")
	fs.StringVar(&ne.Operator, "operator", "", "who surveyed")
	fs.StringVar(&ne.Notes, "notes", "", "free notes (weather, access, targets, …)")
	fs.StringVar(&ne.Datum, "datum", "control", "how the epoch was placed: control or bestfit")
	fs.Float64Var(&ne.RegistrationMM, "registration-mm", 0, "registration (or setup) standard error, mm")
	temp := fs.String("temperature", "", "air or surface temperature, °C (empty: not recorded)")
	units := fs.String("units", "m", "unit of the points' coordinates: m, mm, ft, us-ft")
	columns := fs.String("columns", "", "column order of a headerless text file, e.g. id,n,e,z,code")
	if help, err := parseFlags(fs, args); help || err != nil {
		return err
	}
	if ne.Structure == "" || ne.Date == "" || ne.PointsPath == "" {
		return usageErr(stderr, "archive add-epoch", "--structure, --date and --points are required")
	}
	if _, err := change.ParseDatum(ne.Datum); err != nil {
		return usageErr(stderr, "archive add-epoch", "%v", err)
	}
	if *temp != "" {
		v, err := strconv.ParseFloat(*temp, 64)
		if err != nil {
			return usageErr(stderr, "archive add-epoch", "--temperature %q is not a number", *temp)
		}
		ne.TemperatureC = &v
	}
	unit, err := cloud.ParseUnit(*units)
	if err != nil {
		return usageErr(stderr, "archive add-epoch", "%v", err)
	}
	ne.PointsUnit = unit.Name
	a, err := openArchive(stderr, "archive add-epoch", *dir)
	if err != nil {
		return err
	}
	defer a.Close()
	pts, info, rejected, err := archiveReadPoints(ne.PointsPath, unit, archiveSplit(*columns))
	if err != nil {
		return err
	}
	if len(pts) == 0 {
		return fmt.Errorf("%s: no usable points (%d rejected)", ne.PointsPath, rejected)
	}
	ne.PointsFormat = info.Format
	e, err := a.AddEpoch(ne)
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "epoch %d of %q on %s: %d points (%d rejected), %s, unit %s, datum %s, sha256 %s\n",
		e.ID, ne.Structure, e.Date, len(pts), rejected, e.PointsFormat, e.PointsUnit, e.Datum, e.PointsHash)
	return nil
}

const archiveListHelp = `Usage: saddlecheck archive list --archive DIR [--structure NAME]

Lists the structures of the archive, or the epochs of one structure by date
(with whether a check result is stored).

Example:
  saddlecheck archive list --archive surveys --structure "Tarn Road market canopy"
`

func archiveList(args []string, stdout, stderr io.Writer) error {
	fs, dir := archiveFlags("list", archiveListHelp, stderr)
	name := fs.String("structure", "", "list the epochs of this structure")
	if help, err := parseFlags(fs, args); help || err != nil {
		return err
	}
	a, err := openArchive(stderr, "archive list", *dir)
	if err != nil {
		return err
	}
	defer a.Close()
	tw := tabwriter.NewWriter(stdout, 0, 4, 2, ' ', 0)
	defer tw.Flush()
	if *name == "" {
		sts, err := a.Structures()
		if err != nil {
			return err
		}
		fmt.Fprintln(tw, "ID\tSTRUCTURE\tEPOCHS\tDESIGN\tDESIGN SHA256")
		for _, s := range sts {
			es, err := a.Epochs(s.ID)
			if err != nil {
				return err
			}
			fmt.Fprintf(tw, "%d\t%s\t%d\t%s\t%s\n", s.ID, s.Name, len(es), s.DesignName, s.DesignHash[:12])
		}
		return nil
	}
	st, err := a.StructureByName(*name)
	if err != nil {
		return err
	}
	es, err := a.Epochs(st.ID)
	if err != nil {
		return err
	}
	fmt.Fprintln(tw, "EPOCH\tDATE\tDATUM\tREG MM\tTEMP °C\tOPERATOR\tINSTRUMENT\tPOINTS FILE\tRESULT")
	for _, e := range es {
		t := "–"
		if e.TemperatureC != nil {
			t = strconv.FormatFloat(*e.TemperatureC, 'f', 1, 64)
		}
		res := "no"
		if _, err := a.ResultOf(e.ID); err == nil {
			res = "yes"
		}
		fmt.Fprintf(tw, "%d\t%s\t%s\t%.1f\t%s\t%s\t%s\t%s (%s, %s)\t%s\n", e.ID, e.Date, e.Datum, e.RegistrationMM, t,
			e.Operator, e.Instrument, e.PointsName, e.PointsFormat, e.PointsUnit, res)
	}
	return nil
}

const archiveRecheckHelp = `Usage: saddlecheck archive recheck --archive DIR --epoch ID --out DIR [--columns LIST]

Re-runs the check of an archived epoch: the stored design and points files
are extracted (their hashes verified) to a temporary folder and checked as
'saddlecheck check' would, with the reports written to --out. The summary
and the fitted shape parameters are stored as the epoch's result, for
'archive compare' and 'archive history'. The exit code is that of the
check.

Example:
  saddlecheck archive recheck --archive surveys --epoch 3 --out recheck-3
`

func archiveRecheck(args []string, stdout, stderr io.Writer) error {
	fs, dir := archiveFlags("recheck", archiveRecheckHelp, stderr)
	id := fs.Int64("epoch", 0, "epoch id, required")
	out := fs.String("out", "", "output folder for the check's reports, required")
	columns := fs.String("columns", "", "column order of a headerless text points file")
	if help, err := parseFlags(fs, args); help || err != nil {
		return err
	}
	if *id <= 0 || *out == "" {
		return usageErr(stderr, "archive recheck", "--epoch and --out are required")
	}
	a, err := openArchive(stderr, "archive recheck", *dir)
	if err != nil {
		return err
	}
	defer a.Close()
	e, st, err := epochAndStructure(a, *id)
	if err != nil {
		return err
	}
	tmp, err := os.MkdirTemp("", "saddlecheck-recheck-*")
	if err != nil {
		return err
	}
	defer os.RemoveAll(tmp)
	design, points, err := extractEpoch(a, st, e, tmp)
	if err != nil {
		return err
	}
	cargs := []string{"--design", design, "--points", points, "--out", *out, "--units", e.PointsUnit}
	if *columns != "" {
		cargs = append(cargs, "--columns", *columns)
	}
	checkErr := runCheck(cargs, stdout, stderr)
	if checkErr != nil && !errors.Is(checkErr, errVerdict) {
		return checkErr
	}
	sumJSON, err := os.ReadFile(filepath.Join(*out, "summary.json"))
	if err != nil {
		return fmt.Errorf("reading the check's summary: %w", err)
	}
	var sum report.Summary
	if err := json.Unmarshal(sumJSON, &sum); err != nil {
		return fmt.Errorf("reading the check's summary: %w", err)
	}
	params, err := json.Marshal(history.ParamsFromSummary(&sum))
	if err != nil {
		return err
	}
	if err := a.PutResult(archive.Result{Epoch: e.ID, Summary: sumJSON, Params: params}); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "stored the result of epoch %d (%s, %s)\n", e.ID, st.Name, e.Date)
	return checkErr
}

const archiveCompareHelp = `Usage: saddlecheck archive compare --archive DIR --structure NAME --from ID --to ID --out DIR [flags]

Compares two epochs of a structure. Point level: M3C2 distances (Lague,
Brodu & Leroux 2013) at core points on a regular plan grid, along the design
normal, with a 95 % level of detection per core point from both epochs'
roughness, point counts and registration errors; core points with fewer
than --min-points points of either epoch are marked "too few points".
Parameter level: where both epochs have a stored check result (see
'archive recheck'), the global congruency test of their fitted parameters (k1, k2; offset and tilt at a fixed design point)
and per-parameter tests. Writes compare.html, cores.csv and compare.json
into --out. A detected change is not a conformity verdict: the exit code
is 0 whenever the comparison ran.

Example:
  saddlecheck archive compare --archive surveys --structure "Tarn Road market canopy" \
      --from 1 --to 4 --out change-1-4 --core-spacing 0.25 --radius 0.5
`

func archiveCompare(args []string, stdout, stderr io.Writer) error {
	fs, dir := archiveFlags("compare", archiveCompareHelp, stderr)
	name := fs.String("structure", "", "structure name, required")
	from := fs.Int64("from", 0, "earlier epoch id, required")
	to := fs.Int64("to", 0, "later epoch id, required")
	out := fs.String("out", "", "output folder, required")
	set := m3c2Flags(fs)
	columns := fs.String("columns", "", "column order of headerless text points files")
	if help, err := parseFlags(fs, args); help || err != nil {
		return err
	}
	if *name == "" || *from <= 0 || *to <= 0 || *out == "" {
		return usageErr(stderr, "archive compare", "--structure, --from, --to and --out are required")
	}
	if *from == *to {
		return usageErr(stderr, "archive compare", "--from and --to name the same epoch")
	}
	a, err := openArchive(stderr, "archive compare", *dir)
	if err != nil {
		return err
	}
	defer a.Close()
	st, err := a.StructureByName(*name)
	if err != nil {
		return err
	}
	e1, _, err := epochAndStructure(a, *from)
	if err != nil {
		return err
	}
	e2, _, err := epochAndStructure(a, *to)
	if err != nil {
		return err
	}
	if e1.Structure != st.ID || e2.Structure != st.ID {
		return fmt.Errorf("epochs %d and %d must both belong to %q", e1.ID, e2.ID, st.Name)
	}
	if e2.Date < e1.Date {
		fmt.Fprintf(stderr, "note: epoch %d (%s) is earlier than epoch %d (%s); changes are %d minus %d\n", e2.ID, e2.Date, e1.ID, e1.Date, e2.ID, e1.ID)
	}
	tmp, err := os.MkdirTemp("", "saddlecheck-compare-*")
	if err != nil {
		return err
	}
	defer os.RemoveAll(tmp)
	cols := archiveSplit(*columns)
	p1, n1, err := loadEpochPoints(a, e1, tmp, cols)
	if err != nil {
		return err
	}
	p2, n2, err := loadEpochPoints(a, e2, tmp, cols)
	if err != nil {
		return err
	}
	d1, _ := change.ParseDatum(e1.Datum)
	d2, _ := change.ParseDatum(e2.Datum)
	s := resolveM3C2(*set, e1, e2)
	c := &history.Comparison{Tool: "saddlecheck " + version, Generated: time.Now(), Structure: st.Name, DesignSHA: st.DesignHash,
		From: archiveEpochView(e1, n1), To: archiveEpochView(e2, n2), Settings: s, Datum: change.DatumStatement(d1, d2)}
	c.Cores, c.Patches, c.NormalSource, c.Warning, err = archiveCoreGrid(a, st, tmp, p1, p2, &s)
	if err != nil {
		return err
	}
	c.Summary = change.Compare(c.Cores, p1, p2, &s)
	p1, p2 = nil, nil
	c.Global, c.Params, c.Notes = archiveParamTests(a, e1, e2, d1, d2)
	if err := os.MkdirAll(*out, 0o755); err != nil {
		return err
	}
	if err := history.WriteComparison(*out, c); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "%d core points: %d changed beyond their level of detection, %d not detected, %d too few points; mean change %.2f mm\n",
		c.Summary.Cores, c.Summary.Significant, c.Summary.NotDetected, c.Summary.TooFewPoints, c.Summary.MeanDistance*1e3)
	for _, g := range c.Global {
		fmt.Fprintf(stdout, "patch %s: congruency T = %.3f, critical %.3f: %s\n", g.Patch, g.Result.T, g.Result.Critical,
			map[bool]string{true: "change detected", false: "no change detected"}[g.Result.Reject])
	}
	fmt.Fprintf(stdout, "wrote %s\n", filepath.Join(*out, history.CompareHTML))
	return nil
}

// m3c2Flags declares the M3C2 settings flags.
func m3c2Flags(fs *flag.FlagSet) *change.Settings {
	s := &change.Settings{}
	fs.Float64Var(&s.CoreSpacing, "core-spacing", change.DefaultCoreSpacing, "plan spacing of core points, m")
	fs.Float64Var(&s.Radius, "radius", change.DefaultRadius, "projection-cylinder radius, m")
	fs.Float64Var(&s.HalfLength, "half-length", change.DefaultHalfLength, "projection-cylinder half-length along the normal, m")
	fs.IntVar(&s.MinPoints, "min-points", change.DefaultMinPoints, "least points of each epoch per cylinder")
	fs.BoolVar(&s.Median, "median", false, "use the median position along the normal instead of the mean")
	fs.Float64Var(&s.NormalScale, "normal-scale", change.DefaultNormalScale, "plan radius for estimating normals where no design surface is available, m")
	return s
}

// resolveM3C2 completes the settings for two epochs: defaults, and the
// registration error of the comparison from both epochs' registration
// standard errors (mm in the archive, m here).
func resolveM3C2(s change.Settings, e1, e2 archive.Epoch) change.Settings {
	s.Registration = change.CombineRegistration(e1.RegistrationMM*1e-3, e2.RegistrationMM*1e-3)
	s = s.Resolved()
	s.Workers = 0 // not a property of the comparison; Compare picks it
	return s
}

// designProjectors loads the patches of a design file as projectors for
// core points; nil means no design loader (normals are then estimated).
var designProjectors = loadDesignProjectors

func loadDesignProjectors(path string) ([]string, []change.ProjectFunc, error) {
	d, err := deviation.LoadDesign(path)
	if err != nil {
		return nil, nil, err
	}
	ids := make([]string, len(d.Patches))
	proj := make([]change.ProjectFunc, len(d.Patches))
	for i, p := range d.Patches {
		surf := p.Surface
		ids[i] = p.ID
		proj[i] = func(q r3.Vec) (r3.Vec, r3.Vec, bool) {
			pr := surf.Project(q)
			return pr.Foot, pr.Normal, pr.Inside
		}
	}
	return ids, proj, nil
}

// archiveCoreGrid builds the core points of a comparison from the
// structure's design (one grid per patch, normals from the design) or, when
// the design cannot be loaded, from the points' plan extent with normals
// estimated from the earlier epoch's points. It returns the cores, the
// patch names, the normal statement and warnings.
func archiveCoreGrid(a *archive.Archive, st archive.Structure, tmp string, p1, p2 []r3.Vec, s *change.Settings) ([]change.Core, []string, string, []string, error) {
	var warn []string
	if designProjectors != nil {
		design := filepath.Join(tmp, "design-"+archiveSafeName(st.DesignName, "design"))
		if err := a.Extract(st.DesignHash, design); err != nil {
			return nil, nil, "", nil, err
		}
		ids, proj, err := designProjectors(design)
		if err == nil {
			var cores []change.Core
			for k, p := range proj {
				if cores, err = change.Grid(cores, p, k, p1, p2, s); err != nil {
					return nil, nil, "", nil, err
				}
			}
			return cores, ids, "design surface normal at each core point (no normal estimated from the points)", nil, nil
		}
		warn = append(warn, fmt.Sprintf("The archived design file of %q could not be loaded (%v); normals were estimated from the points instead.", st.Name, err))
	}
	cores, err := change.Grid(nil, nil, 0, p1, p2, s)
	if err != nil {
		return nil, nil, "", nil, err
	}
	failed := change.EstimateNormals(cores, p1, s)
	src := fmt.Sprintf("estimated: the normal of the best-fit plane of the earlier epoch's points within %g m (plan) of each core point, as no design surface was available", s.NormalScale)
	if failed > 0 {
		src += fmt.Sprintf("; %d core points had too few neighbours and keep the vertical", failed)
	}
	return cores, []string{"all"}, src, warn, nil
}

// archiveParamTests runs the parameter tests of two epochs from their
// stored results.
func archiveParamTests(a *archive.Archive, e1, e2 archive.Epoch, d1, d2 change.Datum) ([]history.GlobalTest, []history.ParamChange, []string) {
	r1, err1 := storedParamsOf(a, e1.ID)
	r2, err2 := storedParamsOf(a, e2.ID)
	if err1 != nil || err2 != nil {
		return nil, nil, []string{"No parameter test: both epochs need a stored check result ('saddlecheck archive recheck')."}
	}
	return history.ParameterTests(r1, r2, d1, d2, 0.05)
}

func storedParamsOf(a *archive.Archive, epoch int64) (history.StoredParams, error) {
	var p history.StoredParams
	r, err := a.ResultOf(epoch)
	if err != nil {
		return p, err
	}
	err = json.Unmarshal(r.Params, &p)
	return p, err
}

const archiveHistoryHelp = `Usage: saddlecheck archive history --archive DIR --structure NAME --out DIR [--cores] [flags]

Writes the survey history of a structure into --out (history.html,
history.csv, history.json): per epoch the as-built shape coefficients k1 and
k2 of each patch and the mean offset from the design, from the stored check
results, with ±2u bars, and a weighted least-squares rate per year with a
t test where three or more epochs have values. With --cores it also reads
every epoch's points and fits a rate of the surface position along the
normal at each core point (M3C2 settings as for compare).

Example:
  saddlecheck archive history --archive surveys --structure "Tarn Road market canopy" --out history --cores
`

func archiveHistory(args []string, stdout, stderr io.Writer) error {
	fs, dir := archiveFlags("history", archiveHistoryHelp, stderr)
	name := fs.String("structure", "", "structure name, required")
	out := fs.String("out", "", "output folder, required")
	cores := fs.Bool("cores", false, "also fit rates at core points from every epoch's points")
	set := m3c2Flags(fs)
	columns := fs.String("columns", "", "column order of headerless text points files")
	if help, err := parseFlags(fs, args); help || err != nil {
		return err
	}
	if *name == "" || *out == "" {
		return usageErr(stderr, "archive history", "--structure and --out are required")
	}
	a, err := openArchive(stderr, "archive history", *dir)
	if err != nil {
		return err
	}
	defer a.Close()
	st, err := a.StructureByName(*name)
	if err != nil {
		return err
	}
	es, err := a.Epochs(st.ID)
	if err != nil {
		return err
	}
	h := &history.History{Tool: "saddlecheck " + version, Generated: time.Now(), Structure: st.Name, DesignSHA: st.DesignHash}
	var sb history.SeriesBuilder
	bestfit := 0
	for _, e := range es {
		ev := archiveEpochView(e, 0)
		h.Epochs = append(h.Epochs, ev)
		if e.Datum == archive.DatumBestFit {
			bestfit++
		}
		year, err := history.DecimalYear(e.Date)
		if err != nil {
			return err
		}
		r, err := a.ResultOf(e.ID)
		if err != nil {
			h.Notes = append(h.Notes, fmt.Sprintf("Epoch %d (%s) has no stored check result.", e.ID, e.Date))
			continue
		}
		var sum report.Summary
		var sp history.StoredParams
		sumOK := json.Unmarshal(r.Summary, &sum) == nil
		parOK := json.Unmarshal(r.Params, &sp) == nil
		if !sumOK || !parOK {
			h.Warning = append(h.Warning, fmt.Sprintf("The stored result of epoch %d could not be read in full.", e.ID))
		}
		sb.Add(ev, year, ptrIf(&sum, sumOK), ptrIf(&sp, parOK))
	}
	h.Series = sb.Series(0.05)
	switch {
	case bestfit == 0:
		h.Datum = "All epochs are placed on stable control: the mean offset includes any movement of the shell as a whole."
	default:
		h.Datum = fmt.Sprintf("%d of %d epochs were registered by best fit to the shell: for those, a rigid movement of the whole shell is absorbed by the registration and the mean offset shows no placement change; the shape coefficients are unaffected.", bestfit, len(es))
	}
	if *cores {
		// Positions of a best-fit epoch absorbed any rigid movement: only
		// epochs on stable control enter the per-core rates.
		var ctl []archive.Epoch
		for _, e := range es {
			if e.Datum == archive.DatumControl {
				ctl = append(ctl, e)
			}
		}
		if len(ctl) < len(es) {
			h.Notes = append(h.Notes, fmt.Sprintf("Rates at core points use the %d epochs placed on stable control; the %d registered by best fit to the shell are left out.", len(ctl), len(es)-len(ctl)))
		}
		if len(ctl) >= 3 {
			cores, rates, spacing, err := archiveCoreTrends(a, st, ctl, *set, archiveSplit(*columns))
			if err != nil {
				return err
			}
			h.SetCoreTrends(cores, rates, spacing)
		} else {
			h.Notes = append(h.Notes, "No rates at core points: fewer than three epochs on stable control.")
		}
	}
	if err := os.MkdirAll(*out, 0o755); err != nil {
		return err
	}
	if err := history.WriteHistory(*out, h); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "%d epochs, %d series; wrote %s\n", len(es), len(h.Series), filepath.Join(*out, history.HistoryHTML))
	return nil
}

// archiveCoreTrends reads every epoch's points and fits a rate at each
// core point of the grid over the first and last epochs.
func archiveCoreTrends(a *archive.Archive, st archive.Structure, es []archive.Epoch, set change.Settings, cols []string) ([]change.Core, []change.CoreTrend, float64, error) {
	tmp, err := os.MkdirTemp("", "saddlecheck-history-*")
	if err != nil {
		return nil, nil, 0, err
	}
	defer os.RemoveAll(tmp)
	first, _, err := loadEpochPoints(a, es[0], tmp, cols)
	if err != nil {
		return nil, nil, 0, err
	}
	last, _, err := loadEpochPoints(a, es[len(es)-1], tmp, cols)
	if err != nil {
		return nil, nil, 0, err
	}
	s := resolveM3C2(set, es[0], es[len(es)-1])
	cores, _, _, _, err := archiveCoreGrid(a, st, tmp, first, last, &s)
	if err != nil {
		return nil, nil, 0, err
	}
	first, last = nil, nil
	years := make([]float64, len(es))
	reg := make([]float64, len(es))
	pos := make([][]change.Position, len(es))
	for k, e := range es {
		if years[k], err = history.DecimalYear(e.Date); err != nil {
			return nil, nil, 0, err
		}
		reg[k] = e.RegistrationMM * 1e-3
		pts, _, err := loadEpochPoints(a, e, tmp, cols)
		if err != nil {
			return nil, nil, 0, err
		}
		pos[k] = change.Positions(nil, cores, pts, &s)
	}
	return cores, change.CoreTrends(nil, years, pos, reg, &s, 0.05), s.CoreSpacing, nil
}

const archiveVerifyHelp = `Usage: saddlecheck archive verify --archive DIR [--deep]

Checks the archive: SQLite's integrity and foreign-key checks, and that
every stored file a record names exists (with --deep, that its content still
matches its SHA-256). Exits 2 and lists the problems if any.

Example:
  saddlecheck archive verify --archive surveys --deep
`

func archiveVerify(args []string, stdout, stderr io.Writer) error {
	fs, dir := archiveFlags("verify", archiveVerifyHelp, stderr)
	deep := fs.Bool("deep", false, "also re-hash every stored file")
	if help, err := parseFlags(fs, args); help || err != nil {
		return err
	}
	a, err := openArchive(stderr, "archive verify", *dir)
	if err != nil {
		return err
	}
	defer a.Close()
	problems, err := a.Check(*deep)
	if err != nil {
		return err
	}
	for _, p := range problems {
		fmt.Fprintln(stdout, p)
	}
	if len(problems) > 0 {
		return fmt.Errorf("%d problems in %s", len(problems), *dir)
	}
	fmt.Fprintln(stdout, "archive is sound")
	return nil
}

const archiveGCHelp = `Usage: saddlecheck archive gc --archive DIR [--grace 1h]

Removes stored files that no record names (left by an interrupted add) and
leftover temporary files, if older than --grace (so that an add running in
another process is not disturbed).

Example:
  saddlecheck archive gc --archive surveys
`

func archiveGC(args []string, stdout, stderr io.Writer) error {
	fs, dir := archiveFlags("gc", archiveGCHelp, stderr)
	grace := fs.Duration("grace", time.Hour, "leave files younger than this")
	if help, err := parseFlags(fs, args); help || err != nil {
		return err
	}
	a, err := openArchive(stderr, "archive gc", *dir)
	if err != nil {
		return err
	}
	defer a.Close()
	rep, err := a.GC(*grace)
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "removed %d unreferenced files and %d temporary files (%d bytes)\n", len(rep.Orphans), len(rep.Temps), rep.Bytes)
	return nil
}

// epochAndStructure returns an epoch and its structure.
func epochAndStructure(a *archive.Archive, id int64) (archive.Epoch, archive.Structure, error) {
	e, err := a.Epoch(id)
	if err != nil {
		return e, archive.Structure{}, err
	}
	sts, err := a.Structures()
	if err != nil {
		return e, archive.Structure{}, err
	}
	for _, s := range sts {
		if s.ID == e.Structure {
			return e, s, nil
		}
	}
	return e, archive.Structure{}, fmt.Errorf("epoch %d names a missing structure %d", id, e.Structure)
}

// extractEpoch copies the design and points files of an epoch into dir
// under their original names.
func extractEpoch(a *archive.Archive, st archive.Structure, e archive.Epoch, dir string) (design, points string, err error) {
	design = filepath.Join(dir, "design-"+archiveSafeName(st.DesignName, "design"))
	if err := a.Extract(st.DesignHash, design); err != nil {
		return "", "", err
	}
	points = filepath.Join(dir, fmt.Sprintf("epoch%d-%s", e.ID, archiveSafeName(e.PointsName, "points")))
	if err := a.Extract(e.PointsHash, points); err != nil {
		return "", "", err
	}
	return design, points, nil
}

// loadEpochPoints extracts and reads the points of an epoch; it returns the
// usable points and the number of records.
func loadEpochPoints(a *archive.Archive, e archive.Epoch, dir string, cols []string) ([]r3.Vec, int64, error) {
	path := filepath.Join(dir, fmt.Sprintf("epoch%d-%s", e.ID, archiveSafeName(e.PointsName, "points")))
	if err := a.Extract(e.PointsHash, path); err != nil {
		return nil, 0, err
	}
	defer os.Remove(path)
	unit, err := cloud.ParseUnit(e.PointsUnit)
	if err != nil {
		return nil, 0, fmt.Errorf("epoch %d: %w", e.ID, err)
	}
	pts, _, rejected, err := archiveReadPoints(path, unit, cols)
	if err != nil {
		return nil, 0, fmt.Errorf("epoch %d: %w", e.ID, err)
	}
	return pts, int64(len(pts)) + rejected, nil
}

// archiveReadPoints reads every usable point of a file.
func archiveReadPoints(path string, unit cloud.Unit, cols []string) ([]r3.Vec, cloud.Info, int64, error) {
	r, err := cloud.Open(path, cloud.Options{Unit: unit, Columns: cols})
	if err != nil {
		return nil, cloud.Info{}, 0, err
	}
	defer r.Close()
	info := r.Info()
	var pts []r3.Vec
	if info.Count > 0 && info.Count < 1<<28 {
		pts = make([]r3.Vec, 0, info.Count)
	}
	var c cloud.Chunk
	var rejected int64
	for {
		err := r.Read(&c, 0)
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, info, 0, withFile(path, err)
		}
		for i := range c.P {
			if c.Reject[i] != "" {
				rejected++
				continue
			}
			pts = append(pts, c.P[i])
		}
	}
	return pts, info, rejected, nil
}

func archiveEpochView(e archive.Epoch, n int64) history.Epoch {
	return history.Epoch{ID: e.ID, Date: e.Date, Instrument: e.Instrument, Operator: e.Operator, Datum: e.Datum,
		RegistrationMM: e.RegistrationMM, TemperatureC: e.TemperatureC, PointsSHA256: e.PointsHash, PointsName: e.PointsName, Points: n}
}

// archiveSafeName returns the base name of name, or def if it is empty or special.
func archiveSafeName(name, def string) string {
	b := filepath.Base(name)
	if b == "." || b == ".." || b == string(filepath.Separator) || b == "" {
		return def
	}
	return b
}

func archiveSplit(s string) []string {
	if strings.TrimSpace(s) == "" {
		return nil
	}
	var out []string
	for _, f := range strings.Split(s, ",") {
		out = append(out, strings.TrimSpace(f))
	}
	return out
}

// ptrIf returns p if ok, else nil.
func ptrIf[T any](p *T, ok bool) *T {
	if ok {
		return p
	}
	return nil
}
