package report

import (
	"encoding/json"
	"time"
)

// Cautions printed in every report (HTML, JSON).
var Cautions = []string{
	"This report states measured geometric deviations of the surveyed surface from the stated design surface. It is not a structural assessment and does not establish strength, stability or fitness for use.",
	"It supports, and does not replace, the judgement of the engineer of record. Acceptance, striking or decentering of formwork, remedial work and any judgement of structural safety rest with the engineer of record or the responsible licensed professional, under the governing code, contract and local regulations; local codes and licensed practice decide.",
	"Geometry within tolerance does not indicate that the concrete has reached the strength or stiffness needed to strike formwork; striking criteria come from the formwork or structural engineer.",
	"The tolerance and its source are those stated in the design file; saddlecheck ships no default shell tolerance, since no general standard gives one for shell shape.",
	"This report is a record to be reviewed and signed by a qualified person. The tool never signs.",
}

// Summary is the content of summary.json. Its schema is documented in
// README.md; keys are stable (scripts depend on them).
type Summary struct {
	Tool      Tool      `json:"tool"`
	Generated time.Time `json:"generated"`
	Structure string    `json:"structure"`
	Design    Design    `json:"design"`
	Inputs    []Input   `json:"inputs"`
	// Basis is the measurement basis (frame label), e.g. "AS-PLACED (site grid)".
	Basis          string    `json:"basis"`
	SignConvention string    `json:"sign_convention"`
	Tolerance      Tolerance `json:"tolerance"`

	PointsRead     int64 `json:"points_read"`
	PointsUsed     int64 `json:"points_used"`
	PointsOutside  int64 `json:"points_outside"`
	PointsFar      int64 `json:"points_far"`
	PointsRejected int64 `json:"points_rejected"`

	Verdict     string       `json:"verdict"`
	VerdictText string       `json:"verdict_text"`
	Overall     Stats        `json:"overall"`
	Patches     []Patch      `json:"patches"`
	Worst       []WorstPoint `json:"worst"`
	Histogram   Histogram    `json:"histogram"`
	Map         Map          `json:"-"`
	// LocalMap maps the residuals from the as-built fits; WorstLocal lists
	// the largest of them (DeviationMM holds the residual).
	LocalMap    Map          `json:"-"`
	WorstLocal  []WorstPoint `json:"worst_local,omitempty"`
	Uncertainty *Uncertainty `json:"uncertainty,omitempty"`

	TimingsS map[string]float64 `json:"timings_s"`
	Warnings []string           `json:"warnings"`
	Cautions []string           `json:"cautions"`
}

// Tool names the program and version that wrote the report.
type Tool struct {
	Name    string `json:"name"`
	Version string `json:"version"`
}

// Design describes the design file.
type Design struct {
	Path     string   `json:"path"`
	SHA256   string   `json:"sha256"`
	Units    string   `json:"units"`
	Normal   string   `json:"normal"`
	OffsetMM float64  `json:"offset_mm"`
	MarginM  float64  `json:"margin_m"`
	Notes    []string `json:"notes,omitempty"`
}

// Input describes one points file.
type Input struct {
	Path     string `json:"path"`
	SHA256   string `json:"sha256"`
	Format   string `json:"format"`
	Units    string `json:"units"`
	Records  int64  `json:"records"`
	Rejected int64  `json:"rejected"`
}

// Tolerance is the tolerance as stated in the design file.
type Tolerance struct {
	Source   string    `json:"source"`
	LimitMM  float64   `json:"limit_mm"`
	MinShare float64   `json:"min_share"`
	MaxAbsMM float64   `json:"max_abs_mm"`
	BandsMM  []float64 `json:"bands_mm"`
	FarMM    float64   `json:"far_mm"`
	Rule     string    `json:"rule"`
	// DecisionRule names how measurement uncertainty enters the decision.
	DecisionRule string `json:"decision_rule"`
}

// Stats are the statistics of the used points of a patch or of all patches.
type Stats struct {
	N                int64     `json:"n"`
	MeanMM           float64   `json:"mean_mm"`
	StdMM            float64   `json:"std_mm"`
	RMSMM            float64   `json:"rms_mm"`
	MinMM            float64   `json:"min_mm"`
	MaxMM            float64   `json:"max_mm"`
	P05MM            float64   `json:"p05_mm"`
	P50MM            float64   `json:"p50_mm"`
	P95MM            float64   `json:"p95_mm"`
	MaxAbsMM         float64   `json:"max_abs_mm"`
	ShareWithinLimit float64   `json:"share_within_limit"`
	BandShares       []float64 `json:"band_shares"`
	// PercentileResolutionMM is the histogram bin width the percentiles come
	// from: each percentile is exact to within one bin.
	PercentileResolutionMM float64 `json:"percentile_resolution_mm"`
}

// Patch is one row of the per-patch table.
type Patch struct {
	ID   string `json:"id"`
	Kind string `json:"kind"`
	Stats
	Verdict string   `json:"verdict"`
	AsBuilt *AsBuilt `json:"asbuilt,omitempty"`
	// Zones counts used points by decision zone where uncertainty is known.
	Zones *Zones `json:"zones,omitempty"`
}

// Zones counts points by decision zone.
type Zones struct {
	Conforming    int64 `json:"conforming"`
	Nonconforming int64 `json:"nonconforming"`
	Inconclusive  int64 `json:"inconclusive"`
}

// AsBuilt is the as-built fit of a patch against its design: the split of
// the deviations into placement, shape and local parts.
type AsBuilt struct {
	Fitted       bool    `json:"fitted"`
	Note         string  `json:"note,omitempty"`
	K1           Value   `json:"k1"`
	K2           Value   `json:"k2"`
	DesignK1     float64 `json:"design_k1"`
	DesignK2     float64 `json:"design_k2"`
	DK1Sig       bool    `json:"dk1_significant"`
	DK2Sig       bool    `json:"dk2_significant"`
	PlacementMM  float64 `json:"placement_mm"`
	TiltMgon     float64 `json:"tilt_mgon"`
	RMSLocalMM   float64 `json:"rms_local_mm"`
	MaxLocalMM   float64 `json:"max_abs_local_mm"`
	Inliers      int     `json:"inliers"`
	Outliers     int     `json:"outliers"`
	SampleSize   int     `json:"sample_size"`
	QuadricClass string  `json:"quadric_class"`
	Solver       string  `json:"solver"`
	// Pose describes the fit by quantities that keep their meaning across
	// epochs, with their covariance (for the archive's congruency test).
	Pose *Pose `json:"pose,omitempty"`
}

// Pose is a fitted parameter vector with its covariance: k1, k2 (1/m), the
// offset of the as-built surface from the design reference point Ref along
// the design normal (m), and the tilt of the as-built normal there (two
// components, rad).
type Pose struct {
	Params []string    `json:"params"`
	Kinds  []string    `json:"kinds"`
	Value  []float64   `json:"value"`
	Cov    [][]float64 `json:"cov"`
	Ref    [3]float64  `json:"ref"`
	DOF    int         `json:"dof"`
}

// Value is an estimate with its standard uncertainty.
type Value struct {
	Value float64 `json:"value"`
	U     float64 `json:"u"`
}

// WorstPoint is one of the points with the largest |deviation|.
type WorstPoint struct {
	ID          string  `json:"id"`
	Source      int     `json:"-"`
	File        string  `json:"file"`
	Line        int64   `json:"line"`
	Patch       string  `json:"patch"`
	DeviationMM float64 `json:"deviation_mm"`
	UMM         float64 `json:"u_mm,omitempty"`
	X           float64 `json:"x"`
	Y           float64 `json:"y"`
	Z           float64 `json:"z"`
}

// Histogram is the deviation histogram of used points for the report.
type Histogram struct {
	BinMM  float64 `json:"bin_mm"`
	FromMM float64 `json:"from_mm"`
	Counts []int64 `json:"counts"`
	Under  int64   `json:"under"`
	Over   int64   `json:"over"`
}

// Map is the plan-view deviation map: points or aggregated cells.
type Map struct {
	MinX, MinY, MaxX, MaxY float64
	// CellM is the cell size; zero when Points holds every point.
	CellM   float64
	Cells   []Cell
	Points  []MapPoint
	Outline [][][2]float64 // patch outlines in plan (x, y)
	Labels  []MapLabel
}

// Cell is one aggregated map cell.
type Cell struct {
	X, Y                 float64 // lower-left corner
	N                    int64
	MeanMM, MinMM, MaxMM float64
	Inconclusive         int64
}

// MapPoint is one point on the map.
type MapPoint struct {
	X, Y, DevMM  float64
	Inconclusive bool
}

// MapLabel is a patch label on the map.
type MapLabel struct {
	X, Y float64
	Text string
}

// Uncertainty describes the uncertainty budget and the decision rule.
type Uncertainty struct {
	Rule       string      `json:"rule"`
	K          float64     `json:"k"`
	Components []Component `json:"components"`
	CombinedMM float64     `json:"combined_mean_mm"`
	MaxMM      float64     `json:"combined_max_mm"`
	Zones      Zones       `json:"zones"`
	// Decide is a sentence on what uncertainty would decide the
	// inconclusive points.
	Decide string `json:"decide,omitempty"`
}

// Component is one line of the uncertainty budget.
type Component struct {
	Name   string  `json:"name"`
	MeanMM float64 `json:"mean_mm"`
	MaxMM  float64 `json:"max_mm"`
	Common bool    `json:"common"`
}

// WriteJSON writes s as indented JSON to path, atomically.
func WriteJSON(path string, s *Summary) error {
	if s.Cautions == nil {
		s.Cautions = Cautions
	}
	if s.Warnings == nil {
		s.Warnings = []string{}
	}
	b, err := json.MarshalIndent(s, "", "  ")
	if err != nil {
		return err
	}
	return WriteFile(path, append(b, '\n'))
}
