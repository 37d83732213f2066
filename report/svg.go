package report

import (
	"fmt"
	"html/template"
	"math"
	"strings"
)

// histogramSVG draws the deviation histogram with the ±limit lines. The
// bins are coloured with the map palette so the two figures read alike.
func histogramSVG(h *Histogram, limitMM, spanMM float64) template.HTML {
	if len(h.Counts) == 0 {
		return template.HTML(`<p class="note">No used points: no histogram.</p>`)
	}
	const W, H, L, B = 640.0, 220.0, 48.0, 28.0
	var max int64
	for _, c := range h.Counts {
		if c > max {
			max = c
		}
	}
	if max == 0 {
		max = 1
	}
	n := len(h.Counts)
	lo, hi := h.FromMM, h.FromMM+float64(n)*h.BinMM
	xs := func(v float64) float64 { return L + (v-lo)/(hi-lo)*(W-L-8) }
	ys := func(c float64) float64 { return H - B - c/float64(max)*(H-B-10) }
	var b strings.Builder
	fmt.Fprintf(&b, `<svg viewBox="0 0 %g %g" role="img" aria-label="Histogram of deviations" class="fig">`, W, H)
	bw := (W - L - 8) / float64(n)
	for i, c := range h.Counts {
		if c == 0 {
			continue
		}
		centre := lo + (float64(i)+0.5)*h.BinMM
		y := ys(float64(c))
		fmt.Fprintf(&b, `<rect x="%.2f" y="%.2f" width="%.2f" height="%.2f" fill="%s" stroke="#555" stroke-width="0.3"><title>%.1f to %.1f mm: %d</title></rect>`,
			L+float64(i)*bw, y, bw, H-B-y, Hex(Colour(centre, spanMM)), lo+float64(i)*h.BinMM, lo+float64(i+1)*h.BinMM, c)
	}
	// axes
	fmt.Fprintf(&b, `<line x1="%g" y1="%g" x2="%g" y2="%g" stroke="#222"/>`, L, H-B, W-8, H-B)
	fmt.Fprintf(&b, `<line x1="%g" y1="10" x2="%g" y2="%g" stroke="#222"/>`, L, L, H-B)
	step := niceStep((hi - lo) / 8)
	for t := math.Ceil(lo/step) * step; t <= hi+1e-9; t += step {
		x := xs(t)
		fmt.Fprintf(&b, `<line x1="%.1f" y1="%g" x2="%.1f" y2="%g" stroke="#222"/><text x="%.1f" y="%g" text-anchor="middle" class="tick">%g</text>`, x, H-B, x, H-B+4, x, H-B+16, round(t))
	}
	fmt.Fprintf(&b, `<text x="%g" y="%g" text-anchor="middle" class="tick">deviation (mm)</text>`, (L+W)/2, H-2)
	fmt.Fprintf(&b, `<text x="12" y="%g" class="tick" transform="rotate(-90 12 %g)" text-anchor="middle">points</text>`, (H-B)/2, (H-B)/2)
	fmt.Fprintf(&b, `<text x="%g" y="18" text-anchor="end" class="tick">max %d</text>`, L-4, max)
	for _, l := range []float64{-limitMM, limitMM} {
		if l >= lo && l <= hi {
			x := xs(l)
			fmt.Fprintf(&b, `<line x1="%.1f" y1="10" x2="%.1f" y2="%g" stroke="#000" stroke-dasharray="4 3"/><text x="%.1f" y="20" text-anchor="middle" class="tick">%+g</text>`, x, x, H-B, x, l)
		}
	}
	b.WriteString(`</svg>`)
	if h.Under+h.Over > 0 {
		fmt.Fprintf(&b, `<p class="note">%d used points lie below and %d above the plotted range.</p>`, h.Under, h.Over)
	}
	return template.HTML(b.String())
}

func niceStep(raw float64) float64 {
	if raw <= 0 {
		return 1
	}
	p := math.Pow(10, math.Floor(math.Log10(raw)))
	for _, m := range []float64{1, 2, 5, 10} {
		if m*p >= raw {
			return m * p
		}
	}
	return 10 * p
}

func round(v float64) float64 { return math.Round(v*1e6) / 1e6 }

// mapSVG draws the plan view: patch outlines, and coloured cells or points.
// North (site +y) is up.
func mapSVG(m *Map, spanMM float64) template.HTML {
	if m.MaxX <= m.MinX || m.MaxY <= m.MinY {
		return template.HTML(`<p class="note">No map: no used points.</p>`)
	}
	const W = 640.0
	dx, dy := m.MaxX-m.MinX, m.MaxY-m.MinY
	pad := 0.04 * math.Max(dx, dy)
	x0, y0 := m.MinX-pad, m.MinY-pad
	sc := (W - 20) / (dx + 2*pad)
	H := (dy+2*pad)*sc + 20
	if H > 900 {
		sc *= 880 / (H - 20)
		H = 900
	}
	X := func(x float64) float64 { return 10 + (x-x0)*sc }
	Y := func(y float64) float64 { return H - 10 - (y-y0)*sc }
	var b strings.Builder
	fmt.Fprintf(&b, `<svg viewBox="0 0 %g %.0f" role="img" aria-label="Plan view of deviations" class="fig map">`, W, H)
	fmt.Fprintf(&b, `<rect x="0" y="0" width="%g" height="%.0f" fill="#fff"/>`, W, H)
	if m.CellM > 0 {
		s := m.CellM * sc
		for _, c := range m.Cells {
			fmt.Fprintf(&b, `<rect x="%.2f" y="%.2f" width="%.2f" height="%.2f" fill="%s"><title>%d pts, mean %+.1f mm, %+.1f to %+.1f</title></rect>`,
				X(c.X), Y(c.Y+m.CellM), s+0.05, s+0.05, Hex(Colour(c.MeanMM, spanMM)), c.N, c.MeanMM, c.MinMM, c.MaxMM)
			if c.Inconclusive > 0 {
				fmt.Fprintf(&b, `<rect x="%.2f" y="%.2f" width="%.2f" height="%.2f" fill="none" stroke="#000" stroke-width="0.6"/>`,
					X(c.X)+0.5, Y(c.Y+m.CellM)+0.5, s-1, s-1)
			}
		}
	} else {
		r := math.Max(1.5, math.Min(4, 0.25*sc))
		for _, p := range m.Points {
			stroke := ""
			if p.Inconclusive {
				stroke = ` stroke="#000" stroke-width="0.8"`
			}
			fmt.Fprintf(&b, `<circle cx="%.2f" cy="%.2f" r="%.2f" fill="%s"%s/>`, X(p.X), Y(p.Y), r, Hex(Colour(p.DevMM, spanMM)), stroke)
		}
	}
	for _, ring := range m.Outline {
		var pts []string
		for _, q := range ring {
			pts = append(pts, fmt.Sprintf("%.1f,%.1f", X(q[0]), Y(q[1])))
		}
		fmt.Fprintf(&b, `<polygon points="%s" fill="none" stroke="#333" stroke-width="1"/>`, strings.Join(pts, " "))
	}
	for _, l := range m.Labels {
		fmt.Fprintf(&b, `<text x="%.1f" y="%.1f" class="lbl" text-anchor="middle">%s</text>`, X(l.X), Y(l.Y), template.HTMLEscapeString(l.Text))
	}
	// north arrow and scale bar
	fmt.Fprintf(&b, `<g class="tick"><line x1="%g" y1="34" x2="%g" y2="14" stroke="#000" marker-end="url(#ar)"/><text x="%g" y="46" text-anchor="middle">N</text></g>`, W-20, W-20, W-20)
	bar := niceStep((dx + 2*pad) / 5)
	fmt.Fprintf(&b, `<g class="tick"><line x1="14" y1="%.0f" x2="%.1f" y2="%.0f" stroke="#000" stroke-width="2"/><text x="14" y="%.0f">%g m</text></g>`, H-14, 14+bar*sc, H-14, H-18, bar)
	b.WriteString(`<defs><marker id="ar" markerWidth="6" markerHeight="6" refX="3" refY="3" orient="auto"><path d="M0,6 L3,0 L6,6 z"/></marker></defs>`)
	b.WriteString(`</svg>`)
	if m.CellM > 0 {
		fmt.Fprintf(&b, `<p class="note">Mean deviation per %.2f m cell (%d cells).`, m.CellM, len(m.Cells))
	} else {
		fmt.Fprintf(&b, `<p class="note">Every used point (%d).`, len(m.Points))
	}
	b.WriteString(` A black outline marks cells or points where the decision is inconclusive.</p>`)
	return template.HTML(b.String())
}

// legendSVG draws the colour scale.
func legendSVG(spanMM float64) template.HTML {
	var b strings.Builder
	b.WriteString(`<svg viewBox="0 0 640 40" class="fig legend" role="img" aria-label="Colour scale">`)
	for k := 0; k < 11; k++ {
		v := spanMM * float64(5-k) / 5
		c := Colour(v, spanMM)
		x := 20 + float64(10-k)*54
		fmt.Fprintf(&b, `<rect x="%.0f" y="2" width="54" height="16" fill="%s" stroke="#777" stroke-width="0.3"/><text x="%.0f" y="32" text-anchor="middle" class="tick">%+.3g</text>`, x, Hex(c), x+27, v)
	}
	b.WriteString(`</svg>`)
	return template.HTML(b.String())
}
