package history

import (
	"fmt"
	"time"

	"saddlecheck/change"
)

// DecimalYear converts a civil date YYYY-MM-DD to a decimal year: the year
// plus the elapsed fraction of it at 00:00 UTC of that day.
func DecimalYear(date string) (float64, error) {
	t, err := time.Parse("2006-01-02", date)
	if err != nil {
		return 0, fmt.Errorf("history: date %q: use YYYY-MM-DD", date)
	}
	y0 := time.Date(t.Year(), 1, 1, 0, 0, 0, 0, time.UTC)
	y1 := time.Date(t.Year()+1, 1, 1, 0, 0, 0, 0, time.UTC)
	return float64(t.Year()) + t.Sub(y0).Hours()/y1.Sub(y0).Hours(), nil
}

// Fit fits the series' rate per year with change.FitTrend over the points
// that have a positive uncertainty, when there are at least three; it
// leaves Trend nil otherwise.
func (s *Series) Fit(alpha float64) {
	var t, y, u []float64
	for _, p := range s.Points {
		if p.U > 0 {
			t, y, u = append(t, p.Year), append(y, p.Value), append(u, p.U)
		}
	}
	s.Trend = nil
	if len(t) < 3 {
		return
	}
	if tr, err := change.FitTrend(t, y, u, alpha); err == nil {
		s.Trend = &tr
	}
}
