package views

import (
	"math"
	"strconv"
	"strings"
)

// Figures of sections, drawn as SVG by hand: side-by-side panels that share a vertical height axis
// (height up, as a section is logged), and the columns of the aligned page that share an age axis.
// The SVG uses presentation attributes only (no style element), so it obeys the page's content security
// policy inline and stands alone as a download.

// Pt is one plotted sample: height and value, with an optional horizontal error bar (NaN for none).
type Pt struct {
	H, X     float64
	XLo, XHi float64
}

// P returns a point without an error bar.
func P(h, x float64) Pt { return Pt{H: h, X: x, XLo: math.NaN(), XHi: math.NaN()} }

// Series is a set of points of one kind in a panel. Marker is "dot", "open", "ring", "tri-open", "cross",
// "diamond" or "" (line only).
type Series struct {
	Label  string
	Color  string
	Marker string
	Line   bool
	Dash   bool
	Points []Pt
}

// VLine is a vertical reference line in a panel (a threshold, a background median).
type VLine struct {
	X     float64
	Label string
	Color string
}

// Envelope is a shaded interval of x at each height (a 95 % band).
type Envelope struct {
	Label  string
	Color  string
	H      []float64
	Lo, Hi []float64
}

// Panel is one column of the figure: one quantity against height.
type Panel struct {
	Title string
	Unit  string
	// Gutter marks samples that have no value in this panel for a stated reason (e.g. a ratio that is not
	// evaluable): crosses in a strip at the panel's left edge.
	Gutter      []float64
	GutterLabel string
	GutterColor string
	Series      []Series
	VLines      []VLine
	Envelope    *Envelope
	Empty       string // shown instead of data when the panel has none
}

// Band is a shaded height interval across all panels (an anomaly).
type Band struct {
	BaseM, TopM float64
	Label       string
	Caution     bool
}

// Mark is a labelled height (a tie point, a hiatus).
type Mark struct {
	H     float64
	Label string
}

// LegendItem is one entry of the legend.
type LegendItem struct {
	Label  string
	Color  string
	Marker string // as Series.Marker; "band", "caution-band", "line", "dash", "tie", "hiatus", "cross"
}

// SectionFigure is the figure of one section.
type SectionFigure struct {
	Title      string
	Subtitle   string
	HeightMinM float64
	HeightMaxM float64
	Panels     []Panel
	Bands      []Band
	Ties       []Mark
	Hiatuses   []Mark
	Legend     []LegendItem
	Notes      []string
}

// Colours of the figures: one per role, distinguishable in print and by most colour-blind readers.
const (
	ColorHg       = "#1f5f8b"
	ColorHost     = "#6b4f2a"
	ColorRatio    = "#0b7a55"
	ColorD13C     = "#7a3b8f"
	ColorAge      = "#1d2327"
	ColorBand     = "#cfe3f3"
	ColorCaution  = "#f6d7a7"
	ColorNotEval  = "#c0392b"
	ColorMuted    = "#7b868e"
	ColorExcess   = "#c0392b"
	ColorTie      = "#b35900"
	ColorModel    = "#9fb8cc"
	ColorBaseline = "#5b6770"
)

const (
	panelW        = 170.0
	panelGap      = 26.0
	secFigLeft    = 62.0
	secFigRight   = 36.0
	plotH         = 560.0
	gutterW       = 12.0
	secLegendRowH = 18.0
	legendItemW   = 250.0
)

func ff(v float64) string { return strconv.FormatFloat(v, 'f', 1, 64) }

// tickLabel formats a tick value without a negative zero.
func tickLabel(v float64, dec int) string {
	s := strconv.FormatFloat(v, 'f', dec, 64)
	if strings.Trim(s, "-0.") == "" {
		return strings.TrimPrefix(s, "-")
	}
	return s
}

// extent returns a padded range of the finite values given.
func extent(vals []float64, pad float64) (float64, float64, bool) {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range vals {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
	}
	if math.IsInf(lo, 1) {
		return 0, 1, false
	}
	if hi == lo {
		d := math.Max(math.Abs(lo)*0.05, 1e-3)
		return lo - d, hi + d, true
	}
	d := (hi - lo) * pad
	return lo - d, hi + d, true
}

func (p Panel) xValues() []float64 {
	var v []float64
	for _, s := range p.Series {
		for _, pt := range s.Points {
			v = append(v, pt.X, pt.XLo, pt.XHi)
		}
	}
	for _, l := range p.VLines {
		v = append(v, l.X)
	}
	if p.Envelope != nil {
		v = append(v, p.Envelope.Lo...)
		v = append(v, p.Envelope.Hi...)
	}
	return v
}

// sectionLayout is where the parts of a section figure go, in points from the top left.
type sectionLayout struct {
	width, height   float64
	top, bottom     float64
	perRow, legRows int
	hLo, hHi        float64
}

func (f SectionFigure) layout() sectionLayout {
	np := len(f.Panels)
	l := sectionLayout{width: secFigLeft + float64(np)*panelW + float64(max(np-1, 0))*panelGap + secFigRight, top: 58}
	if f.Subtitle != "" {
		l.top += 14
	}
	l.perRow = max(1, int((l.width-secFigLeft)/legendItemW))
	l.legRows = (len(f.Legend) + l.perRow - 1) / l.perRow
	l.bottom = l.top + plotH
	l.height = l.bottom + 44 + float64(l.legRows)*secLegendRowH + float64(len(f.Notes))*15 + 10
	l.hLo, l.hHi = f.HeightMinM, f.HeightMaxM
	if !(l.hHi > l.hLo) {
		l.hLo, l.hHi = l.hLo-1, l.hLo+1
	}
	return l
}

// SectionSVG draws the figure as a standalone SVG element (with its namespace), the same for the page
// and the download.
func SectionSVG(f SectionFigure) string { return strings.TrimSuffix(string(f.SVG()), "\n") }

// SVG draws the figure as SVG, with hover titles on tie points and reference lines.
func (f SectionFigure) SVG() []byte {
	l := f.layout()
	c := newSVG(l.width, l.height, f.Title)
	f.draw(c, l)
	return c.bytes()
}

// PNG draws the figure as a PNG image at 144 dpi (twice the point size).
func (f SectionFigure) PNG() ([]byte, error) {
	l := f.layout()
	return renderPNG(l.width, l.height, func(c canvas) { f.draw(c, l) })
}

// PDF draws the figure as PDF; its text is written in ASCII (δ¹³C as "d13C", ‰ as "permil").
func (f SectionFigure) PDF() ([]byte, error) {
	l := f.layout()
	return renderPDF(l.width, l.height, func(c canvas) { f.draw(c, l) })
}

// gridColour draws the light height gridlines of the section panels.
const gridColour = "#eef1f3"

// draw draws the figure on c: title, height axis, the panels side by side, anomaly numbers, legend, notes.
func (f SectionFigure) draw(c canvas, l sectionLayout) {
	c.rect(0, 0, l.width, l.height, paint{Fill: "#ffffff"})
	c.text(secFigLeft-50, 18, f.Title, textStyle{Size: 14, Bold: true})
	if f.Subtitle != "" {
		c.text(secFigLeft-50, 33, f.Subtitle, textStyle{Size: 11, Colour: mutedColour})
	}
	y := func(h float64) float64 { return l.bottom - (h-l.hLo)/(l.hHi-l.hLo)*plotH }
	hTicks, _, dec := ticks(l.hLo, l.hHi, 10)

	// Height axis, left of the first panel.
	c.poly([]pt{{secFigLeft, l.top}, {secFigLeft, l.bottom}}, false, paint{Stroke: inkColour})
	for _, t := range hTicks {
		if t < l.hLo || t > l.hHi {
			continue
		}
		c.poly([]pt{{secFigLeft - 4, y(t)}, {secFigLeft, y(t)}}, false, paint{Stroke: inkColour})
		c.text(secFigLeft-6, y(t)+3.5, tickLabel(t, dec), textStyle{Size: 11, Anchor: "end"})
	}
	c.textUp(secFigLeft-44, (l.top+l.bottom)/2, "Height (m)", textStyle{Size: 11, Anchor: "middle"})

	for i, p := range f.Panels {
		x0 := secFigLeft + float64(i)*(panelW+panelGap)
		f.drawPanel(c, l, p, x0, y, hTicks)
	}

	// Anomaly numbers beside the last panel, as in the anomaly table.
	np := len(f.Panels)
	lastRight := secFigLeft + float64(np)*panelW + float64(max(np-1, 0))*panelGap
	for _, bd := range f.Bands {
		mid := y((math.Max(bd.BaseM, l.hLo) + math.Min(bd.TopM, l.hHi)) / 2)
		c.text(lastRight+4, mid+4, bd.Label, textStyle{Size: 11, Bold: true})
	}

	// Legend and notes.
	ly := l.bottom + 48
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

func (f SectionFigure) drawPanel(c canvas, l sectionLayout, p Panel, x0 float64, y func(float64) float64, hTicks []float64) {
	top, bottom, hLo, hHi := l.top, l.bottom, l.hLo, l.hHi
	left := x0
	if len(p.Gutter) > 0 {
		left += gutterW
	}
	right := x0 + panelW
	xLo, xHi, ok := extent(p.xValues(), 0.06)
	x := func(v float64) float64 { return left + (v-xLo)/(xHi-xLo)*(right-left) }
	clipX := func(v float64) float64 { return math.Max(left, math.Min(right, x(v))) }

	// Title and unit above the panel.
	c.text(x0+panelW/2, top-20, p.Title, textStyle{Size: 12, Bold: true, Anchor: "middle"})
	if p.Unit != "" {
		c.text(x0+panelW/2, top-7, p.Unit, textStyle{Size: 11, Anchor: "middle", Colour: mutedColour})
	}
	// Height gridlines, anomaly bands, the not-evaluable strip, the frame.
	for _, t := range hTicks {
		if t >= hLo && t <= hHi {
			c.poly([]pt{{x0, y(t)}, {right, y(t)}}, false, paint{Stroke: gridColour})
		}
	}
	for _, bd := range f.Bands {
		col := ColorBand
		if bd.Caution {
			col = ColorCaution
		}
		y1, y2 := y(math.Min(bd.TopM, hHi)), y(math.Max(bd.BaseM, hLo))
		c.rect(x0, y1, panelW, math.Max(y2-y1, 1.5), paint{Fill: col, FillAlpha: 0.75})
	}
	if len(p.Gutter) > 0 {
		c.rect(x0, top, gutterW, bottom-top, paint{Fill: "#f7eeee"})
		c.poly([]pt{{left, top}, {left, bottom}}, false, paint{Stroke: "#d5dbe0"})
	}
	c.rect(x0, top, panelW, bottom-top, paint{Stroke: inkColour})
	for _, h := range f.Hiatuses {
		if h.H >= hLo && h.H <= hHi {
			c.poly([]pt{{x0, y(h.H)}, {right, y(h.H)}}, false, paint{Stroke: inkColour, Width: 1.5, Dash: []float64{2, 3}})
		}
	}
	// Tie points: a small triangle on the panel's left edge.
	for _, t := range f.Ties {
		if t.H >= hLo && t.H <= hHi {
			c.begin(t.Label, "")
			tieMark(c, x0, y(t.H))
			c.end()
		}
	}
	if !ok && p.Envelope == nil {
		msg := p.Empty
		if msg == "" {
			msg = "no data"
		}
		c.text(x0+panelW/2, (top+bottom)/2, msg, textStyle{Size: 11, Italic: true, Anchor: "middle", Colour: mutedColour})
		return
	}
	panelXTicks(c, x, xLo, xHi, right-left, bottom)
	c.text(x0+panelW/2, bottom+29, axisLabel(p), textStyle{Size: 10.5, Anchor: "middle", Colour: mutedColour})
	if e := p.Envelope; e != nil {
		var pts []pt
		for j := range e.H {
			pts = append(pts, pt{clipX(e.Lo[j]), y(e.H[j])})
		}
		for j := len(e.H) - 1; j >= 0; j-- {
			pts = append(pts, pt{clipX(e.Hi[j]), y(e.H[j])})
		}
		if len(pts) > 2 {
			c.poly(pts, true, paint{Fill: e.Color, FillAlpha: 0.55})
		}
	}
	for _, vl := range p.VLines {
		c.begin(vl.Label, "")
		c.poly([]pt{{x(vl.X), top}, {x(vl.X), bottom}}, false, paint{Stroke: vl.Color, Dash: []float64{5, 3}})
		c.end()
	}
	for _, h := range p.Gutter {
		if h >= hLo && h <= hHi {
			crossMark(c, x0+gutterW/2, y(h), 3, p.GutterColor)
		}
	}
	for _, sr := range p.Series {
		panelSeries(c, sr, clipX, y, hLo, hHi)
	}
}

// panelXTicks draws as many x ticks as fit under a panel of width w without their labels touching.
func panelXTicks(c canvas, x func(float64) float64, xLo, xHi, w, bottom float64) {
	var xt []float64
	var xdec int
	for n := 5; n >= 2; n-- {
		xt, _, xdec = ticks(xLo, xHi, n)
		lw := 0.0
		for _, t := range xt {
			lw = math.Max(lw, textWidth(tickLabel(t, xdec), 11, false))
		}
		if float64(len(xt))*(lw+10) <= w {
			break
		}
	}
	for _, t := range xt {
		if t < xLo || t > xHi {
			continue
		}
		c.poly([]pt{{x(t), bottom}, {x(t), bottom + 4}}, false, paint{Stroke: inkColour})
		c.text(x(t), bottom+15, tickLabel(t, xdec), textStyle{Size: 11, Anchor: "middle"})
	}
}

// panelSeries draws one series of a panel: its line, its error bars and markers within the heights shown.
func panelSeries(c canvas, s Series, clipX, y func(float64) float64, hLo, hHi float64) {
	if s.Line {
		var pts []pt
		var dash []float64
		if s.Dash {
			dash = []float64{4, 3}
		}
		flush := func() {
			if len(pts) > 1 {
				c.poly(pts, false, paint{Stroke: s.Color, Width: 1.2, Dash: dash})
			}
			pts = pts[:0]
		}
		for _, q := range s.Points {
			if math.IsNaN(q.X) {
				flush()
				continue
			}
			pts = append(pts, pt{clipX(q.X), y(q.H)})
		}
		flush()
	}
	for _, q := range s.Points {
		if math.IsNaN(q.X) || q.H < hLo || q.H > hHi {
			continue
		}
		if !math.IsNaN(q.XLo) && !math.IsNaN(q.XHi) {
			c.poly([]pt{{clipX(q.XLo), y(q.H)}, {clipX(q.XHi), y(q.H)}}, false, paint{Stroke: s.Color, Width: 1.6})
		}
		secMarker(c, s.Marker, clipX(q.X), y(q.H), s.Color)
	}
}

func axisLabel(p Panel) string {
	if p.Unit == "" {
		return p.Title
	}
	return p.Title + " (" + p.Unit + ")"
}

// tieMark is the triangle of a tie point, pointing right from (x, y).
func tieMark(c canvas, x, y float64) {
	c.poly([]pt{{x, y}, {x + 7, y - 4}, {x + 7, y + 4}}, true, paint{Fill: ColorTie})
}

func crossMark(c canvas, cx, cy, r float64, colour string) {
	p := paint{Stroke: colour, Width: 1.4}
	c.poly([]pt{{cx - r, cy - r}, {cx + r, cy + r}}, false, p)
	c.poly([]pt{{cx - r, cy + r}, {cx + r, cy - r}}, false, p)
}

func secMarker(c canvas, kind string, cx, cy float64, colour string) {
	switch kind {
	case "dot":
		c.circle(cx, cy, 2.2, paint{Fill: colour})
	case "open":
		c.circle(cx, cy, 2.4, paint{Fill: "#ffffff", Stroke: colour, Width: 1.1})
	case "ring":
		c.circle(cx, cy, 4.6, paint{Stroke: colour, Width: 1.4})
	case "tri-open":
		c.poly([]pt{{cx, cy - 3.5}, {cx + 3.5, cy + 2.5}, {cx - 3.5, cy + 2.5}}, true, paint{Fill: "#ffffff", Stroke: colour, Width: 1.1})
	case "cross":
		crossMark(c, cx, cy, 3, colour)
	case "diamond":
		c.poly([]pt{{cx, cy - 4.5}, {cx + 4.5, cy}, {cx, cy + 4.5}, {cx - 4.5, cy}}, true, paint{Fill: colour})
	}
}

func legendSymbol(c canvas, it LegendItem, cx, cy float64) {
	switch it.Marker {
	case "band", "caution-band":
		col := ColorBand
		if it.Marker == "caution-band" {
			col = ColorCaution
		}
		if it.Color != "" {
			col = it.Color
		}
		c.rect(cx-7, cy-4.5, 14, 9, paint{Fill: col})
	case "line":
		c.poly([]pt{{cx - 7, cy}, {cx + 7, cy}}, false, paint{Stroke: it.Color, Width: 1.4})
	case "dash":
		c.poly([]pt{{cx - 7, cy}, {cx + 7, cy}}, false, paint{Stroke: it.Color, Dash: []float64{4, 2}})
	case "tie":
		tieMark(c, cx-4, cy)
	case "hiatus":
		c.poly([]pt{{cx - 7, cy}, {cx + 7, cy}}, false, paint{Stroke: inkColour, Width: 1.5, Dash: []float64{2, 3}})
	case "errbar":
		c.poly([]pt{{cx - 7, cy}, {cx + 7, cy}}, false, paint{Stroke: it.Color, Width: 1.6})
		secMarker(c, "diamond", cx, cy, it.Color)
	default:
		secMarker(c, it.Marker, cx, cy, it.Color)
	}
}
