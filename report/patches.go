package report

import (
	"bytes"
	"fmt"
	"strconv"

	"github.com/go-gota/gota/dataframe"
)

// patchRecord is one row of patches.csv. The table is small (one row per
// patch), which is where a dataframe belongs; the per-point output never
// goes through it.
type patchRecord struct {
	ID               string  `dataframe:"id,string"`
	Kind             string  `dataframe:"kind,string"`
	N                int     `dataframe:"n,int"`
	MeanMM           float64 `dataframe:"mean_mm,float"`
	StdMM            float64 `dataframe:"std_mm,float"`
	RMSMM            float64 `dataframe:"rms_mm,float"`
	MinMM            float64 `dataframe:"min_mm,float"`
	MaxMM            float64 `dataframe:"max_mm,float"`
	P05MM            float64 `dataframe:"p05_mm,float"`
	P50MM            float64 `dataframe:"p50_mm,float"`
	P95MM            float64 `dataframe:"p95_mm,float"`
	MaxAbsMM         float64 `dataframe:"max_abs_mm,float"`
	ShareWithinLimit float64 `dataframe:"share_within_limit,float"`
	Verdict          string  `dataframe:"verdict,string"`
}

// WritePatchesCSV writes the per-patch table (patches.csv) atomically.
// Band shares follow as columns share_band_<label>.
func WritePatchesCSV(path string, s *Summary) error {
	rows := make([]patchRecord, 0, len(s.Patches))
	for _, p := range s.Patches {
		rows = append(rows, patchRecord{ID: p.ID, Kind: p.Kind, N: int(p.N), MeanMM: r3d(p.MeanMM), StdMM: r3d(p.StdMM),
			RMSMM: r3d(p.RMSMM), MinMM: r3d(p.MinMM), MaxMM: r3d(p.MaxMM), P05MM: r3d(p.P05MM), P50MM: r3d(p.P50MM),
			P95MM: r3d(p.P95MM), MaxAbsMM: r3d(p.MaxAbsMM), ShareWithinLimit: r6d(p.ShareWithinLimit), Verdict: p.Verdict})
	}
	var df dataframe.DataFrame
	if len(rows) == 0 {
		return WriteFile(path, []byte("id,kind,n,mean_mm,std_mm,rms_mm,min_mm,max_mm,p05_mm,p50_mm,p95_mm,max_abs_mm,share_within_limit,verdict\n"))
	}
	df = dataframe.LoadStructs(rows)
	if df.Err != nil {
		return fmt.Errorf("patches table: %w", df.Err)
	}
	labels := BandLabels(mmToM(s.Tolerance.BandsMM))
	for bi, l := range labels {
		col := make([]float64, len(s.Patches))
		for i, p := range s.Patches {
			if bi < len(p.BandShares) {
				col[i] = r6d(p.BandShares[bi])
			}
		}
		df = df.Mutate(seriesFloats("share_band_"+l, col))
		if df.Err != nil {
			return fmt.Errorf("patches table: %w", df.Err)
		}
	}
	var buf bytes.Buffer
	if err := df.WriteCSV(&buf); err != nil {
		return fmt.Errorf("patches table: %w", err)
	}
	return WriteFile(path, buf.Bytes())
}

func mmToM(v []float64) []float64 {
	out := make([]float64, len(v))
	for i, x := range v {
		out[i] = x / 1000
	}
	return out
}

// r3d and r6d round for a readable table (the JSON keeps full precision).
func r3d(v float64) float64 {
	f, _ := strconv.ParseFloat(strconv.FormatFloat(v, 'f', 3, 64), 64)
	return f
}
func r6d(v float64) float64 {
	f, _ := strconv.ParseFloat(strconv.FormatFloat(v, 'f', 6, 64), 64)
	return f
}
