package views

import (
	"math"
	"strconv"
)

// AlignedColumn is one section on the common age axis: its series against model age (the median age of
// each sample), as a multiple of the section's background median, with its anomalies' 95 % age intervals.
type AlignedColumn struct {
	Title    string
	Subtitle string
	Series   string    // e.g. "Hg/TOC"
	Points   []Pt      // H = median model age (Ma), X = multiple of the background median
	NotEval  []float64 // model ages of samples whose ratio is not evaluable
	Bands    []Band    // BaseM/TopM hold ages in Ma (older, younger)
	Medians  []Mark    // median ages of the anomalies
	Empty    string
	Caution  string // shown under the title (e.g. a different thermal maturity)
}

// AlignedFigure lines sections up on one age axis, older at the bottom.
type AlignedFigure struct {
	Title    string
	Subtitle string
	AgeMinMa float64 // youngest shown (top)
	AgeMaxMa float64 // oldest shown (bottom)
	Columns  []AlignedColumn
	Legend   []LegendItem
	Notes    []string
}

// AlignedSVG draws the aligned figure as a standalone SVG element.
func AlignedSVG(f AlignedFigure) string {
	var b svgBuf
	nc := len(f.Columns)
	colW := 200.0
	width := secFigLeft + float64(nc)*colW + float64(max(nc-1, 0))*panelGap + secFigRight
	top := 112.0
	bottom := top + plotH
	perRow := max(1, int((width-secFigLeft)/legendItemW))
	legendRows := (len(f.Legend) + perRow - 1) / perRow
	height := bottom + 48 + float64(legendRows)*secLegendRowH + float64(len(f.Notes))*15 + 10
	b.f(`<svg xmlns="http://www.w3.org/2000/svg" width="%s" height="%s" viewBox="0 0 %s %s" font-family="%s" font-size="11" role="img" aria-label="%s">`,
		ff(width), ff(height), ff(width), ff(height), figFont, esc(f.Title))
	b.f(`<title>%s</title>`, esc(f.Title))
	b.f(`<rect x="0" y="0" width="%s" height="%s" fill="#ffffff"/>`, ff(width), ff(height))
	b.f(`<text x="12" y="18" font-size="14" font-weight="bold" fill="#1d2327">%s</text>`, esc(f.Title))
	if f.Subtitle != "" {
		b.f(`<text x="12" y="33" fill="#5b6770">%s</text>`, esc(f.Subtitle))
	}
	aLo, aHi := f.AgeMinMa, f.AgeMaxMa
	if !(aHi > aLo) {
		aLo, aHi = aLo-0.1, aLo+0.1
	}
	y := func(a float64) float64 { return top + (a-aLo)/(aHi-aLo)*plotH }
	ticks, _, dec := ticks(aLo, aHi, 10)
	b.f(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#1d2327"/>`, ff(secFigLeft), ff(top), ff(secFigLeft), ff(bottom))
	for _, t := range ticks {
		if t < aLo || t > aHi {
			continue
		}
		b.f(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#1d2327"/>`, ff(secFigLeft-4), ff(y(t)), ff(secFigLeft), ff(y(t)))
		b.f(`<text x="%s" y="%s" text-anchor="end" fill="#1d2327">%s</text>`, ff(secFigLeft-6), ff(y(t)+3.5), tickLabel(t, dec))
	}
	b.f(`<text transform="translate(%s %s) rotate(-90)" text-anchor="middle" fill="#1d2327">Model age (Ma), older down</text>`, ff(secFigLeft-48), ff((top+bottom)/2))

	// x: log10 multiple of the background median, shared by all columns.
	xLo, xHi := math.Log10(0.2), math.Log10(20)
	for _, c := range f.Columns {
		for _, p := range c.Points {
			if p.X > 0 {
				xLo, xHi = math.Min(xLo, math.Log10(p.X)), math.Max(xHi, math.Log10(p.X))
			}
		}
	}
	xLo, xHi = math.Max(xLo, -2), math.Min(xHi, 3)
	for i, c := range f.Columns {
		x0 := secFigLeft + float64(i)*(colW+panelGap)
		right := x0 + colW
		left := x0 + gutterW
		x := func(m float64) float64 { return left + (math.Log10(m)-xLo)/(xHi-xLo)*(right-left) }
		b.f(`<text x="%s" y="%s" text-anchor="middle" font-size="12" font-weight="bold" fill="#1d2327">%s</text>`, ff(x0+colW/2), ff(top-44), esc(c.Title))
		if c.Subtitle != "" {
			b.f(`<text x="%s" y="%s" text-anchor="middle" fill="#5b6770">%s</text>`, ff(x0+colW/2), ff(top-30), esc(c.Subtitle))
		}
		if c.Caution != "" {
			b.f(`<text x="%s" y="%s" text-anchor="middle" fill="#7a4b00" font-size="10.5">%s</text>`, ff(x0+colW/2), ff(top-17), esc(c.Caution))
		}
		b.f(`<text x="%s" y="%s" text-anchor="middle" fill="#5b6770">%s</text>`, ff(x0+colW/2), ff(top-4), esc(c.Series+" ÷ background median"))
		for _, t := range ticks {
			if t >= aLo && t <= aHi {
				b.f(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#eef1f3"/>`, ff(x0), ff(y(t)), ff(right), ff(y(t)))
			}
		}
		for _, bd := range c.Bands {
			y1, y2 := y(math.Max(math.Min(bd.TopM, bd.BaseM), aLo)), y(math.Min(math.Max(bd.TopM, bd.BaseM), aHi))
			col := ColorBand
			if bd.Caution {
				col = ColorCaution
			}
			b.f(`<rect x="%s" y="%s" width="%s" height="%s" fill="%s" fill-opacity="0.75"><title>%s</title></rect>`, ff(x0), ff(y1), ff(colW), ff(math.Max(y2-y1, 1.5)), col, esc(bd.Label))
		}
		for _, m := range c.Medians {
			if m.H >= aLo && m.H <= aHi {
				b.f(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="%s" stroke-width="1.2"><title>%s</title></line>`, ff(x0), ff(y(m.H)), ff(right), ff(y(m.H)), ColorTie, esc(m.Label))
			}
		}
		b.f(`<rect x="%s" y="%s" width="%s" height="%s" fill="#f7eeee"/>`, ff(x0), ff(top), ff(gutterW), ff(bottom-top))
		b.f(`<rect x="%s" y="%s" width="%s" height="%s" fill="none" stroke="#1d2327"/>`, ff(x0), ff(top), ff(colW), ff(bottom-top))
		b.f(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="%s" stroke-dasharray="5 3"/>`, ff(x(1)), ff(top), ff(x(1)), ff(bottom), ColorBaseline)
		for _, m := range []float64{0.01, 0.03, 0.1, 0.3, 1, 3, 10, 30, 100, 300} {
			if lm := math.Log10(m); lm >= xLo && lm <= xHi {
				b.f(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#1d2327"/>`, ff(x(m)), ff(bottom), ff(x(m)), ff(bottom+4))
				b.f(`<text x="%s" y="%s" text-anchor="middle" fill="#1d2327">%s</text>`, ff(x(m)), ff(bottom+15), strconv.FormatFloat(m, 'f', -1, 64)+"×")
			}
		}
		if len(c.Points) == 0 {
			msg := c.Empty
			if msg == "" {
				msg = "no dated samples"
			}
			b.f(`<text x="%s" y="%s" text-anchor="middle" fill="#5b6770" font-style="italic">%s</text>`, ff(x0+colW/2), ff((top+bottom)/2), esc(msg))
			continue
		}
		for _, a := range c.NotEval {
			if a >= aLo && a <= aHi {
				cross(&b, x0+gutterW/2, y(a), 3, ColorNotEval)
			}
		}
		var pts []string
		flush := func() {
			if len(pts) > 1 {
				b.f(`<polyline points="%s" fill="none" stroke="%s" stroke-width="1.1"/>`, joinPts(pts), ColorRatio)
			}
			pts = pts[:0]
		}
		for _, p := range c.Points {
			if !(p.X > 0) || p.H < aLo || p.H > aHi {
				flush()
				continue
			}
			xx := math.Max(left, math.Min(right, x(p.X)))
			pts = append(pts, ff(xx)+","+ff(y(p.H)))
		}
		flush()
		for _, p := range c.Points {
			if p.X > 0 && p.H >= aLo && p.H <= aHi {
				secMarker(&b, "dot", math.Max(left, math.Min(right, x(p.X))), y(p.H), ColorRatio)
			}
		}
	}
	ly := bottom + 50
	for k, it := range f.Legend {
		col, row := k%perRow, k/perRow
		lx := secFigLeft + float64(col)*legendItemW
		yy := ly + float64(row)*secLegendRowH
		legendSymbol(&b, it, lx+8, yy-4)
		b.f(`<text x="%s" y="%s" fill="#1d2327">%s</text>`, ff(lx+22), ff(yy), esc(it.Label))
	}
	ny := ly + float64(legendRows)*secLegendRowH + 4
	for _, n := range f.Notes {
		b.f(`<text x="%s" y="%s" fill="#5b6770" font-size="10.5">%s</text>`, ff(secFigLeft), ff(ny), esc(n))
		ny += 15
	}
	b.f(`</svg>`)
	return b.String()
}

func joinPts(p []string) string {
	n := 0
	for _, s := range p {
		n += len(s) + 1
	}
	out := make([]byte, 0, n)
	for i, s := range p {
		if i > 0 {
			out = append(out, ' ')
		}
		out = append(out, s...)
	}
	return string(out)
}
