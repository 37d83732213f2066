package history

import (
	"math"
	"time"

	"saddlecheck/change"
)

// Cautions printed in every archive report.
var Cautions = []string{
	"Changes smaller than the stated level of detection are reported as not detected, not as absent. Trends need independent confirmation before intervention decisions.",
	"This report supports, and does not replace, the judgement of the engineer of record; local codes and licensed practice decide.",
	"It states measured geometric change of the surveyed surface between survey epochs, with its uncertainty. It is not a structural assessment and does not establish strength, stability or fitness for use.",
}

// Epoch describes one archived survey for a report.
type Epoch struct {
	ID             int64    `json:"id"`
	Date           string   `json:"date"`
	Instrument     string   `json:"instrument"`
	Operator       string   `json:"operator"`
	Datum          string   `json:"datum"`
	RegistrationMM float64  `json:"registration_mm"`
	TemperatureC   *float64 `json:"temperature_c"`
	PointsSHA256   string   `json:"points_sha256"`
	PointsName     string   `json:"points_name"`
	Points         int64    `json:"points"`
}

// ParamChange is one row of the parameter-change table.
type ParamChange struct {
	Patch string
	Name  string
	From  float64
	To    float64
	Test  change.ParamTest
}

// GlobalTest is the congruency test of one patch.
type GlobalTest struct {
	Patch  string
	Result change.CongruencyResult
	// Note is the datum statement (change.Diff.Note) and any caveat on the
	// covariance used.
	Note string
}

// Comparison is the content of a comparison report.
type Comparison struct {
	Tool      string
	Generated time.Time
	Structure string
	DesignSHA string
	From, To  Epoch
	// Settings are the M3C2 settings used (defaults resolved by the caller).
	Settings change.Settings
	Cores    []change.Core
	Summary  change.Summary
	// Patches names the patches by Core.Patch index.
	Patches []string
	// NormalSource says where the core normals came from.
	NormalSource string
	// Datum is the datum statement of the comparison.
	Datum   string
	Global  []GlobalTest
	Params  []ParamChange
	Notes   []string
	Warning []string
}

// Point is one epoch's value of a series.
type Point struct {
	EpochID int64
	Date    string
	Year    float64 // decimal year
	Value   float64
	U       float64 // standard uncertainty; 0 if unknown
}

// Series is one key figure over the epochs.
type Series struct {
	Name   string // "k1 (patch north)"
	Unit   string // "1/m", "mm"
	Points []Point
	// Trend is the fitted rate (nil with fewer than three epochs with u > 0).
	Trend *change.Trend
}

// History is the content of a history report.
type History struct {
	Tool      string
	Generated time.Time
	Structure string
	DesignSHA string
	Epochs    []Epoch
	Series    []Series
	// CoreTrends summarises per-core rates when computed (nil otherwise;
	// SetCoreTrends fills it).
	CoreTrends *CoreTrendSummary
	// Cores and Rates are the core points and their fitted rates (parallel
	// slices, nil when not computed); Spacing is the core spacing in m.
	Cores   []change.Core
	Rates   []change.CoreTrend
	Spacing float64
	Datum   string
	Notes   []string
	Warning []string
}

// CoreTrendSummary counts per-core rates of the position along the normal.
type CoreTrendSummary struct {
	Cores       int `json:"cores"`
	Fitted      int `json:"fitted"`
	Significant int `json:"significant"`
	// MeanRateMMPerYear is over fitted cores.
	MeanRateMMPerYear float64 `json:"mean_rate_mm_per_year"`
	MaxAbsMMPerYear   float64 `json:"max_abs_rate_mm_per_year"`
}

// SetCoreTrends stores per-core rates and their summary in h.
func (h *History) SetCoreTrends(cores []change.Core, rates []change.CoreTrend, spacing float64) {
	if len(cores) != len(rates) {
		panic("history: SetCoreTrends: cores and rates differ in length")
	}
	h.Cores, h.Rates, h.Spacing = cores, rates, spacing
	sum := &CoreTrendSummary{Cores: len(cores)}
	var total float64
	for _, t := range rates {
		if !t.OK {
			continue
		}
		sum.Fitted++
		total += t.Rate * 1e3
		sum.MaxAbsMMPerYear = math.Max(sum.MaxAbsMMPerYear, math.Abs(t.Rate*1e3))
		if t.Significant {
			sum.Significant++
		}
	}
	if sum.Fitted > 0 {
		sum.MeanRateMMPerYear = total / float64(sum.Fitted)
	}
	h.CoreTrends = sum
}

// rateCores returns the cores with Distance set to the rate per year and
// Status to Significant, NotDetected or TooFewPoints (no rate), so that the
// change map can draw rates.
func rateCores(cores []change.Core, rates []change.CoreTrend) []change.Core {
	out := make([]change.Core, len(cores))
	for i, c := range cores {
		t := rates[i]
		c.Distance, c.Status = t.Rate, change.NotDetected
		switch {
		case !t.OK:
			c.Distance, c.Status = math.NaN(), change.TooFewPoints
		case t.Significant:
			c.Status = change.Significant
		}
		out[i] = c
	}
	return out
}
