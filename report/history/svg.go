package history

import (
	"fmt"
	"html/template"
	"math"
	"strings"

	"saddlecheck/change"
	"saddlecheck/report"
)

// Colours of the map that are not from the diverging scheme.
const (
	greyNotDetected = "#bdbdbd" // ColorBrewer Greys class 4 of 9 (from memory)
	hatchInk        = "#525252"
)

// niceCeil returns the smallest 1, 2 or 5 × 10ᵏ at least v (v > 0).
func niceCeil(v float64) float64 {
	if !(v > 0) || math.IsInf(v, 0) {
		return 1
	}
	e := math.Pow(10, math.Floor(math.Log10(v)))
	for _, m := range []float64{1, 2, 5, 10} {
		if m*e >= v*(1-1e-12) {
			return m * e
		}
	}
	return 10 * e
}

// spanMM is the colour-scale half range: the largest significant |change|
// rounded up to 1, 2 or 5 × 10ᵏ mm (at least 1 mm).
func spanMM(cores []change.Core) float64 {
	m := 0.0
	for _, c := range cores {
		if c.Status == change.Significant {
			m = math.Max(m, math.Abs(c.Distance)*1e3)
		}
	}
	return niceCeil(math.Max(m, 1))
}

// maxMapCells caps the squares drawn on a map (about 4 MB of SVG); beyond
// it cores are merged into coarser display cells (see aggregate).
const maxMapCells = 50000

// aggregate merges cores into display cells of k×k core spacings so that
// at most maxMapCells remain, keeping per cell the most telling core: the
// significant one with the largest |Distance|, else a not-detected one,
// else a too-few one. It returns the cores to draw and the display cell
// size (spacing when nothing was merged).
func aggregate(cores []change.Core, spacing float64) ([]change.Core, float64) {
	if len(cores) <= maxMapCells {
		return cores, spacing
	}
	k := math.Ceil(math.Sqrt(float64(len(cores)) / maxMapCells))
	cell := k * spacing
	rank := func(c *change.Core) float64 {
		switch c.Status {
		case change.Significant:
			return 2 + math.Abs(c.Distance)
		case change.NotDetected:
			return 1
		}
		return 0
	}
	type key struct{ i, j int64 }
	best := map[key]int{}
	var order []key
	for n := range cores {
		c := &cores[n]
		kk := key{int64(math.Floor(c.P.X / cell)), int64(math.Floor(c.P.Y / cell))}
		m, ok := best[kk]
		if !ok {
			order = append(order, kk)
			best[kk] = n
			continue
		}
		if rank(c) > rank(&cores[m]) {
			best[kk] = n
		}
	}
	out := make([]change.Core, 0, len(order))
	for _, kk := range order {
		c := cores[best[kk]]
		c.P.X, c.P.Y = (float64(kk.i)+0.5)*cell, (float64(kk.j)+0.5)*cell
		out = append(out, c)
	}
	return out, cell
}

// changeMapSVG draws the core points in plan view (x east to the right,
// y north up), one square of the core spacing each (or of the display cell
// when there are more than maxMapCells cores).
func changeMapSVG(cores []change.Core, spacing, span float64) template.HTML {
	if len(cores) == 0 {
		return ""
	}
	cores, spacing = aggregate(cores, spacing)
	minX, minY := math.Inf(1), math.Inf(1)
	maxX, maxY := math.Inf(-1), math.Inf(-1)
	for _, c := range cores {
		minX, maxX = math.Min(minX, c.P.X), math.Max(maxX, c.P.X)
		minY, maxY = math.Min(minY, c.P.Y), math.Max(maxY, c.P.Y)
	}
	minX, minY = minX-spacing/2, minY-spacing/2
	maxX, maxY = maxX+spacing/2, maxY+spacing/2
	const W = 720.0
	scale := W / math.Max(maxX-minX, 1e-9)
	if h := (maxY - minY) * scale; h > 720 {
		scale = 720 / (maxY - minY)
	}
	w, h := (maxX-minX)*scale, (maxY-minY)*scale
	var b strings.Builder
	fmt.Fprintf(&b, `<svg class="map" width="%.0f" height="%.0f" viewBox="0 0 %.1f %.1f" role="img" aria-label="plan view of change at core points">`, w+2, h+2, w+2, h+2)
	fmt.Fprintf(&b, `<defs><pattern id="few" width="5" height="5" patternUnits="userSpaceOnUse"><rect width="5" height="5" fill="#ffffff"/><path d="M0,5 L5,0" stroke="%s" stroke-width="0.8"/></pattern></defs>`, hatchInk)
	s := spacing * scale
	for _, c := range cores {
		x := 1 + (c.P.X-spacing/2-minX)*scale
		y := 1 + (maxY-c.P.Y-spacing/2)*scale
		fill := greyNotDetected
		switch c.Status {
		case change.Significant:
			fill = report.Hex(report.Colour(c.Distance*1e3, span))
		case change.TooFewPoints:
			fill = "url(#few)"
		}
		fmt.Fprintf(&b, `<rect x="%.2f" y="%.2f" width="%.2f" height="%.2f" fill="%s"/>`, x, y, s, s, fill)
	}
	// Scale bar: a round length near a fifth of the width.
	bar := niceCeil((maxX - minX) / 6)
	fmt.Fprintf(&b, `<line x1="8" y1="%.1f" x2="%.1f" y2="%.1f" stroke="#000" stroke-width="2"/><text x="8" y="%.1f" font-size="11">%g m</text>`,
		h-8, 8+bar*scale, h-8, h-12, bar)
	b.WriteString(`</svg>`)
	return template.HTML(b.String())
}

// legendSVG draws the 11 PuOr classes over ±span (in unit) plus the grey
// and hatched keys with their labels.
func legendSVG(span float64, unit, grey, hatched string) template.HTML {
	var b strings.Builder
	b.WriteString(`<svg class="legend" width="520" height="64" viewBox="0 0 520 64" role="img" aria-label="colour key">`)
	fmt.Fprintf(&b, `<defs><pattern id="fewkey" width="5" height="5" patternUnits="userSpaceOnUse"><rect width="5" height="5" fill="#ffffff"/><path d="M0,5 L5,0" stroke="%s" stroke-width="0.8"/></pattern></defs>`, hatchInk)
	for k := 0; k < 11; k++ {
		v := span * float64(k-5) / 5 // −span … +span, left to right
		fmt.Fprintf(&b, `<rect x="%d" y="4" width="28" height="16" fill="%s"/>`, 4+k*28, report.Hex(report.Colour(v, span)))
	}
	fmt.Fprintf(&b, `<text x="4" y="34" font-size="11">−%s</text><text x="144" y="34" font-size="11" text-anchor="middle">0</text><text x="312" y="34" font-size="11" text-anchor="end">+%s %s</text>`, trim(span), trim(span), unit)
	fmt.Fprintf(&b, `<rect x="330" y="4" width="16" height="16" fill="%s"/><text x="350" y="16" font-size="11">%s</text>`, greyNotDetected, template.HTMLEscapeString(grey))
	fmt.Fprintf(&b, `<rect x="330" y="26" width="16" height="16" fill="url(#fewkey)" stroke="#999" stroke-width="0.5"/><text x="350" y="38" font-size="11">%s</text>`, template.HTMLEscapeString(hatched))
	b.WriteString(`<text x="4" y="56" font-size="11">purple: moved to the negative side · orange: moved to the normal (positive) side</text>`)
	b.WriteString(`</svg>`)
	return template.HTML(b.String())
}

// seriesSVG plots one series: values with ±2u bars against decimal year
// and, when fitted, the trend line.
func seriesSVG(s *Series, scale float64) template.HTML {
	if len(s.Points) == 0 {
		return ""
	}
	const W, H, L, R, T, B = 640.0, 200.0, 64.0, 16.0, 12.0, 28.0
	x0, x1 := math.Inf(1), math.Inf(-1)
	y0, y1 := math.Inf(1), math.Inf(-1)
	for _, p := range s.Points {
		x0, x1 = math.Min(x0, p.Year), math.Max(x1, p.Year)
		y0, y1 = math.Min(y0, (p.Value-2*p.U)*scale), math.Max(y1, (p.Value+2*p.U)*scale)
	}
	if x1-x0 < 1 {
		x0, x1 = x0-0.5, x1+0.5
	}
	if y1-y0 <= 0 {
		pad := math.Max(math.Abs(y0)*0.1, 1e-9)
		y0, y1 = y0-pad, y1+pad
	}
	pad := (y1 - y0) * 0.08
	y0, y1 = y0-pad, y1+pad
	px := func(x float64) float64 { return L + (x-x0)/(x1-x0)*(W-L-R) }
	py := func(y float64) float64 { return T + (y1-y)/(y1-y0)*(H-T-B) }
	var b strings.Builder
	fmt.Fprintf(&b, `<svg class="series" width="%.0f" height="%.0f" viewBox="0 0 %.0f %.0f" role="img" aria-label="%s over time">`, W, H, W, H, template.HTMLEscapeString(s.Name))
	fmt.Fprintf(&b, `<rect x="%.0f" y="%.0f" width="%.0f" height="%.0f" fill="none" stroke="#999"/>`, L, T, W-L-R, H-T-B)
	for _, yv := range []float64{y0 + pad, (y0 + y1) / 2, y1 - pad} {
		fmt.Fprintf(&b, `<text x="%.0f" y="%.1f" font-size="10" text-anchor="end">%.4g</text>`, L-4, py(yv)+3, yv)
	}
	for yr := math.Ceil(x0); yr <= x1; yr += math.Max(1, math.Round((x1-x0)/6)) {
		fmt.Fprintf(&b, `<text x="%.1f" y="%.0f" font-size="10" text-anchor="middle">%.0f</text>`, px(yr), H-10, yr)
	}
	if tr := s.Trend; tr != nil {
		a, c := tr.Level+tr.Rate*(x0-tr.T0), tr.Level+tr.Rate*(x1-tr.T0)
		fmt.Fprintf(&b, `<line x1="%.1f" y1="%.1f" x2="%.1f" y2="%.1f" stroke="#542788" stroke-dasharray="5 3"/>`, px(x0), py(a*scale), px(x1), py(c*scale))
	}
	for _, p := range s.Points {
		x, y := px(p.Year), py(p.Value*scale)
		if p.U > 0 {
			lo, hi := py((p.Value-2*p.U)*scale), py((p.Value+2*p.U)*scale)
			fmt.Fprintf(&b, `<line x1="%.1f" y1="%.1f" x2="%.1f" y2="%.1f" stroke="#000"/><line x1="%.1f" y1="%.1f" x2="%.1f" y2="%.1f" stroke="#000"/><line x1="%.1f" y1="%.1f" x2="%.1f" y2="%.1f" stroke="#000"/>`,
				x, lo, x, hi, x-4, lo, x+4, lo, x-4, hi, x+4, hi)
		}
		fmt.Fprintf(&b, `<circle cx="%.1f" cy="%.1f" r="3.5" fill="#b35806"/>`, x, y)
	}
	b.WriteString(`</svg>`)
	return template.HTML(b.String())
}

func trim(v float64) string {
	return strings.TrimRight(strings.TrimRight(fmt.Sprintf("%.3f", v), "0"), ".")
}
