package views

import (
	"math"
	"strconv"
	"strings"
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

type alignedLayout struct {
	width, height, top, bottom, colW float64
	perRow, legRows                  int
	aLo, aHi                         float64
}

func (f AlignedFigure) layout() alignedLayout {
	nc := len(f.Columns)
	l := alignedLayout{colW: 200, top: 112}
	l.width = secFigLeft + float64(nc)*l.colW + float64(max(nc-1, 0))*panelGap + secFigRight
	l.bottom = l.top + plotH
	l.perRow = max(1, int((l.width-secFigLeft)/legendItemW))
	l.legRows = (len(f.Legend) + l.perRow - 1) / l.perRow
	l.height = l.bottom + 48 + float64(l.legRows)*secLegendRowH + float64(len(f.Notes))*15 + 10
	l.aLo, l.aHi = f.AgeMinMa, f.AgeMaxMa
	if !(l.aHi > l.aLo) {
		l.aLo, l.aHi = l.aLo-0.1, l.aLo+0.1
	}
	return l
}

// AlignedSVG draws the aligned figure as a standalone SVG element.
func AlignedSVG(f AlignedFigure) string { return strings.TrimSuffix(string(f.SVG()), "\n") }

// SVG draws the aligned figure as SVG, with hover titles on the anomalies.
func (f AlignedFigure) SVG() []byte {
	l := f.layout()
	c := newSVG(l.width, l.height, f.Title)
	f.draw(c, l)
	return c.bytes()
}

// PNG draws the aligned figure as a PNG image at 144 dpi.
func (f AlignedFigure) PNG() ([]byte, error) {
	l := f.layout()
	return renderPNG(l.width, l.height, func(c canvas) { f.draw(c, l) })
}

// PDF draws the aligned figure as PDF, its text in ASCII.
func (f AlignedFigure) PDF() ([]byte, error) {
	l := f.layout()
	return renderPDF(l.width, l.height, func(c canvas) { f.draw(c, l) })
}

func (f AlignedFigure) draw(c canvas, l alignedLayout) {
	top, bottom, aLo, aHi, colW := l.top, l.bottom, l.aLo, l.aHi, l.colW
	c.rect(0, 0, l.width, l.height, paint{Fill: "#ffffff"})
	c.text(12, 18, f.Title, textStyle{Size: 14, Bold: true})
	if f.Subtitle != "" {
		c.text(12, 33, f.Subtitle, textStyle{Size: 11, Colour: mutedColour})
	}
	y := func(a float64) float64 { return top + (a-aLo)/(aHi-aLo)*plotH }
	ticks, _, dec := ticks(aLo, aHi, 10)
	c.poly([]pt{{secFigLeft, top}, {secFigLeft, bottom}}, false, paint{Stroke: inkColour})
	for _, t := range ticks {
		if t < aLo || t > aHi {
			continue
		}
		c.poly([]pt{{secFigLeft - 4, y(t)}, {secFigLeft, y(t)}}, false, paint{Stroke: inkColour})
		c.text(secFigLeft-6, y(t)+3.5, tickLabel(t, dec), textStyle{Size: 11, Anchor: "end"})
	}
	c.textUp(secFigLeft-48, (top+bottom)/2, "Model age (Ma), older down", textStyle{Size: 11, Anchor: "middle"})

	// x: log10 multiple of the background median, shared by all columns.
	xLo, xHi := math.Log10(0.2), math.Log10(20)
	for _, col := range f.Columns {
		for _, p := range col.Points {
			if p.X > 0 {
				xLo, xHi = math.Min(xLo, math.Log10(p.X)), math.Max(xHi, math.Log10(p.X))
			}
		}
	}
	xLo, xHi = math.Max(xLo, -2), math.Min(xHi, 3)
	for i, col := range f.Columns {
		x0 := secFigLeft + float64(i)*(colW+panelGap)
		right := x0 + colW
		left := x0 + gutterW
		x := func(m float64) float64 { return left + (math.Log10(m)-xLo)/(xHi-xLo)*(right-left) }
		c.text(x0+colW/2, top-44, col.Title, textStyle{Size: 12, Bold: true, Anchor: "middle"})
		if col.Subtitle != "" {
			c.text(x0+colW/2, top-30, col.Subtitle, textStyle{Size: 11, Anchor: "middle", Colour: mutedColour})
		}
		if col.Caution != "" {
			c.text(x0+colW/2, top-17, col.Caution, textStyle{Size: 10.5, Anchor: "middle", Colour: "#7a4b00"})
		}
		c.text(x0+colW/2, top-4, col.Series+" ÷ background median", textStyle{Size: 11, Anchor: "middle", Colour: mutedColour})
		for _, t := range ticks {
			if t >= aLo && t <= aHi {
				c.poly([]pt{{x0, y(t)}, {right, y(t)}}, false, paint{Stroke: gridColour})
			}
		}
		for _, bd := range col.Bands {
			y1, y2 := y(math.Max(math.Min(bd.TopM, bd.BaseM), aLo)), y(math.Min(math.Max(bd.TopM, bd.BaseM), aHi))
			fill := ColorBand
			if bd.Caution {
				fill = ColorCaution
			}
			c.begin(bd.Label, "")
			c.rect(x0, y1, colW, math.Max(y2-y1, 1.5), paint{Fill: fill, FillAlpha: 0.75})
			c.end()
		}
		for _, m := range col.Medians {
			if m.H >= aLo && m.H <= aHi {
				c.begin(m.Label, "")
				c.poly([]pt{{x0, y(m.H)}, {right, y(m.H)}}, false, paint{Stroke: ColorTie, Width: 1.2})
				c.end()
			}
		}
		c.rect(x0, top, gutterW, bottom-top, paint{Fill: "#f7eeee"})
		c.rect(x0, top, colW, bottom-top, paint{Stroke: inkColour})
		c.poly([]pt{{x(1), top}, {x(1), bottom}}, false, paint{Stroke: ColorBaseline, Dash: []float64{5, 3}})
		for _, m := range []float64{0.01, 0.03, 0.1, 0.3, 1, 3, 10, 30, 100, 300} {
			if lm := math.Log10(m); lm >= xLo && lm <= xHi {
				c.poly([]pt{{x(m), bottom}, {x(m), bottom + 4}}, false, paint{Stroke: inkColour})
				c.text(x(m), bottom+15, strconv.FormatFloat(m, 'f', -1, 64)+"×", textStyle{Size: 11, Anchor: "middle"})
			}
		}
		if len(col.Points) == 0 {
			msg := col.Empty
			if msg == "" {
				msg = "no dated samples"
			}
			c.text(x0+colW/2, (top+bottom)/2, msg, textStyle{Size: 11, Italic: true, Anchor: "middle", Colour: mutedColour})
			continue
		}
		for _, a := range col.NotEval {
			if a >= aLo && a <= aHi {
				crossMark(c, x0+gutterW/2, y(a), 3, ColorNotEval)
			}
		}
		alignedPoints(c, col.Points, func(m float64) float64 { return math.Max(left, math.Min(right, x(m))) }, y, aLo, aHi)
	}
	f.drawLegend(c, l, bottom+50)
}

// drawLegend writes the aligned figure's legend from ly down, then its notes.
func (f AlignedFigure) drawLegend(c canvas, l alignedLayout, ly float64) {
	for k, it := range f.Legend {
		col, row := k%l.perRow, k/l.perRow
		lx := secFigLeft + float64(col)*legendItemW
		yy := ly + float64(row)*secLegendRowH
		legendSymbol(c, it, lx+8, yy-4)
		c.text(lx+22, yy, it.Label, textStyle{Size: 11})
	}
	ny := ly + float64(l.legRows)*secLegendRowH + 4
	for _, n := range f.Notes {
		c.text(secFigLeft, ny, n, textStyle{Size: 10.5, Colour: mutedColour})
		ny += 15
	}
}

// alignedPoints draws a column's samples: a line through the runs of dated samples and a dot at each.
func alignedPoints(c canvas, points []Pt, x, y func(float64) float64, aLo, aHi float64) {
	var pts []pt
	flush := func() {
		if len(pts) > 1 {
			c.poly(pts, false, paint{Stroke: ColorRatio, Width: 1.1})
		}
		pts = pts[:0]
	}
	for _, p := range points {
		if !(p.X > 0) || p.H < aLo || p.H > aHi {
			flush()
			continue
		}
		pts = append(pts, pt{x(p.X), y(p.H)})
	}
	flush()
	for _, p := range points {
		if p.X > 0 && p.H >= aLo && p.H <= aHi {
			secMarker(c, "dot", x(p.X), y(p.H), ColorRatio)
		}
	}
}
