package report

import "github.com/go-gota/gota/series"

func seriesFloats(name string, v []float64) series.Series { return series.New(v, series.Float, name) }
