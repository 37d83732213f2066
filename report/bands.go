package report

import (
	"strconv"
)

// BandLabels returns the labels of the |deviation| bands in millimetres:
// "0-5", "5-10", "10-20", ">20" for bands 5, 10, 20 mm.
func BandLabels(bandsM []float64) []string {
	var out []string
	prev := "0"
	for _, b := range bandsM {
		s := strconv.FormatFloat(b*1000, 'f', -1, 64)
		out = append(out, prev+"-"+s)
		prev = s
	}
	return append(out, ">"+prev)
}
