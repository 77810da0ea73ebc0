package views

import (
	"fmt"
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
	figFont       = "Liberation Sans, Arial, Helvetica, sans-serif"
	panelW        = 170.0
	panelGap      = 26.0
	secFigLeft    = 62.0
	secFigRight   = 36.0
	plotH         = 560.0
	gutterW       = 12.0
	secLegendRowH = 18.0
	legendItemW   = 250.0
)

// svgBuf collects SVG text.
type svgBuf struct{ strings.Builder }

func (b *svgBuf) f(format string, args ...any) { fmt.Fprintf(b, format, args...) }

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

// SectionSVG draws the figure as a standalone SVG document fragment (an <svg> element with its
// namespace), the same for the page and the download.
func SectionSVG(f SectionFigure) string {
	var b svgBuf
	np := len(f.Panels)
	width := secFigLeft + float64(np)*panelW + float64(max(np-1, 0))*panelGap + secFigRight
	top := 58.0
	if f.Subtitle != "" {
		top += 14
	}
	perRow := max(1, int((width-secFigLeft)/legendItemW))
	legendRows := (len(f.Legend) + perRow - 1) / perRow
	bottom := top + plotH
	height := bottom + 44 + float64(legendRows)*secLegendRowH + float64(len(f.Notes))*15 + 10
	b.f(`<svg xmlns="http://www.w3.org/2000/svg" width="%s" height="%s" viewBox="0 0 %s %s" font-family="%s" font-size="11" role="img" aria-label="%s">`,
		ff(width), ff(height), ff(width), ff(height), figFont, esc(f.Title))
	b.f(`<title>%s</title>`, esc(f.Title))
	b.f(`<rect x="0" y="0" width="%s" height="%s" fill="#ffffff"/>`, ff(width), ff(height))
	b.f(`<text x="%s" y="18" font-size="14" font-weight="bold" fill="#1d2327">%s</text>`, ff(secFigLeft-50), esc(f.Title))
	if f.Subtitle != "" {
		b.f(`<text x="%s" y="33" fill="#5b6770">%s</text>`, ff(secFigLeft-50), esc(f.Subtitle))
	}
	hLo, hHi := f.HeightMinM, f.HeightMaxM
	if !(hHi > hLo) {
		hLo, hHi = hLo-1, hLo+1
	}
	y := func(h float64) float64 { return bottom - (h-hLo)/(hHi-hLo)*plotH }
	ticks, _, dec := ticks(hLo, hHi, 10)

	// Height axis, left of the first panel.
	b.f(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#1d2327"/>`, ff(secFigLeft), ff(top), ff(secFigLeft), ff(bottom))
	for _, t := range ticks {
		if t < hLo || t > hHi {
			continue
		}
		b.f(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#1d2327"/>`, ff(secFigLeft-4), ff(y(t)), ff(secFigLeft), ff(y(t)))
		b.f(`<text x="%s" y="%s" text-anchor="end" fill="#1d2327">%s</text>`, ff(secFigLeft-6), ff(y(t)+3.5), tickLabel(t, dec))
	}
	b.f(`<text transform="translate(%s %s) rotate(-90)" text-anchor="middle" fill="#1d2327">Height (m)</text>`, ff(secFigLeft-44), ff((top+bottom)/2))

	for i, p := range f.Panels {
		x0 := secFigLeft + float64(i)*(panelW+panelGap)
		drawPanel(&b, p, x0, top, bottom, hLo, hHi, y, ticks, f)
	}

	// Anomaly numbers beside the last panel, as in the anomaly table.
	lastRight := secFigLeft + float64(np)*panelW + float64(max(np-1, 0))*panelGap
	for _, bd := range f.Bands {
		mid := y((math.Max(bd.BaseM, hLo) + math.Min(bd.TopM, hHi)) / 2)
		b.f(`<text x="%s" y="%s" font-weight="bold" fill="#1d2327">%s</text>`, ff(lastRight+4), ff(mid+4), esc(bd.Label))
	}

	// Legend and notes.
	ly := bottom + 48
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

func drawPanel(b *svgBuf, p Panel, x0, top, bottom, hLo, hHi float64, y func(float64) float64, hTicks []float64, f SectionFigure) {
	left := x0
	if len(p.Gutter) > 0 {
		left += gutterW
	}
	right := x0 + panelW
	xLo, xHi, ok := extent(p.xValues(), 0.06)
	x := func(v float64) float64 { return left + (v-xLo)/(xHi-xLo)*(right-left) }
	clipX := func(v float64) float64 { return math.Max(left, math.Min(right, x(v))) }

	// Title and unit above the panel.
	b.f(`<text x="%s" y="%s" text-anchor="middle" font-size="12" font-weight="bold" fill="#1d2327">%s</text>`, ff(x0+panelW/2), ff(top-20), esc(p.Title))
	if p.Unit != "" {
		b.f(`<text x="%s" y="%s" text-anchor="middle" fill="#5b6770">%s</text>`, ff(x0+panelW/2), ff(top-7), esc(p.Unit))
	}
	// Frame, height gridlines, anomaly bands.
	for _, t := range hTicks {
		if t >= hLo && t <= hHi {
			b.f(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#eef1f3"/>`, ff(x0), ff(y(t)), ff(right), ff(y(t)))
		}
	}
	for _, bd := range f.Bands {
		c := ColorBand
		if bd.Caution {
			c = ColorCaution
		}
		y1, y2 := y(math.Min(bd.TopM, hHi)), y(math.Max(bd.BaseM, hLo))
		b.f(`<rect x="%s" y="%s" width="%s" height="%s" fill="%s" fill-opacity="0.75"/>`, ff(x0), ff(y1), ff(panelW), ff(math.Max(y2-y1, 1.5)), c)
	}
	if len(p.Gutter) > 0 {
		b.f(`<rect x="%s" y="%s" width="%s" height="%s" fill="#f7eeee"/>`, ff(x0), ff(top), ff(gutterW), ff(bottom-top))
		b.f(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#d5dbe0"/>`, ff(left), ff(top), ff(left), ff(bottom))
	}
	b.f(`<rect x="%s" y="%s" width="%s" height="%s" fill="none" stroke="#1d2327"/>`, ff(x0), ff(top), ff(panelW), ff(bottom-top))
	for _, h := range f.Hiatuses {
		if h.H >= hLo && h.H <= hHi {
			b.f(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#1d2327" stroke-width="1.5" stroke-dasharray="2 3"/>`, ff(x0), ff(y(h.H)), ff(right), ff(y(h.H)))
		}
	}
	// Tie points: a small triangle on the panel's left edge.
	for _, t := range f.Ties {
		if t.H >= hLo && t.H <= hHi {
			yy := y(t.H)
			b.f(`<path d="M%s %sl7 -4v8z" fill="%s"><title>%s</title></path>`, ff(x0), ff(yy), ColorTie, esc(t.Label))
		}
	}
	if !ok && p.Envelope == nil {
		msg := p.Empty
		if msg == "" {
			msg = "no data"
		}
		b.f(`<text x="%s" y="%s" text-anchor="middle" fill="#5b6770" font-style="italic">%s</text>`, ff(x0+panelW/2), ff((top+bottom)/2), esc(msg))
		return
	}
	// x axis ticks below the panel.
	// As many ticks as fit without their labels touching (about 6.2 px per character at 11 px).
	var xt []float64
	var xdec int
	for n := 5; n >= 2; n-- {
		xt, _, xdec = ticks(xLo, xHi, n)
		w := 0
		for _, t := range xt {
			w = max(w, len(tickLabel(t, xdec)))
		}
		if float64(len(xt))*(float64(w)*6.2+10) <= right-left {
			break
		}
	}
	for _, t := range xt {
		if t < xLo || t > xHi {
			continue
		}
		b.f(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#1d2327"/>`, ff(x(t)), ff(bottom), ff(x(t)), ff(bottom+4))
		b.f(`<text x="%s" y="%s" text-anchor="middle" fill="#1d2327">%s</text>`, ff(x(t)), ff(bottom+15), tickLabel(t, xdec))
	}
	b.f(`<text x="%s" y="%s" text-anchor="middle" fill="#5b6770" font-size="10.5">%s</text>`, ff(x0+panelW/2), ff(bottom+29), esc(axisLabel(p)))
	if p.Envelope != nil {
		e := p.Envelope
		var pts []string
		for j := range e.H {
			pts = append(pts, ff(clipX(e.Lo[j]))+","+ff(y(e.H[j])))
		}
		for j := len(e.H) - 1; j >= 0; j-- {
			pts = append(pts, ff(clipX(e.Hi[j]))+","+ff(y(e.H[j])))
		}
		if len(pts) > 2 {
			b.f(`<polygon points="%s" fill="%s" fill-opacity="0.55" stroke="none"/>`, strings.Join(pts, " "), e.Color)
		}
	}
	for _, l := range p.VLines {
		b.f(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="%s" stroke-dasharray="5 3"><title>%s</title></line>`, ff(x(l.X)), ff(top), ff(x(l.X)), ff(bottom), l.Color, esc(l.Label))
	}
	for _, h := range p.Gutter {
		if h >= hLo && h <= hHi {
			cross(b, x0+gutterW/2, y(h), 3, p.GutterColor)
		}
	}
	for _, s := range p.Series {
		if s.Line {
			var pts []string
			flush := func() {
				if len(pts) > 1 {
					dash := ""
					if s.Dash {
						dash = ` stroke-dasharray="4 3"`
					}
					b.f(`<polyline points="%s" fill="none" stroke="%s" stroke-width="1.2"%s/>`, strings.Join(pts, " "), s.Color, dash)
				}
				pts = pts[:0]
			}
			for _, pt := range s.Points {
				if math.IsNaN(pt.X) {
					flush()
					continue
				}
				pts = append(pts, ff(clipX(pt.X))+","+ff(y(pt.H)))
			}
			flush()
		}
		for _, pt := range s.Points {
			if math.IsNaN(pt.X) || pt.H < hLo || pt.H > hHi {
				continue
			}
			if !math.IsNaN(pt.XLo) && !math.IsNaN(pt.XHi) {
				b.f(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="%s" stroke-width="1.6"/>`, ff(clipX(pt.XLo)), ff(y(pt.H)), ff(clipX(pt.XHi)), ff(y(pt.H)), s.Color)
			}
			secMarker(b, s.Marker, clipX(pt.X), y(pt.H), s.Color)
		}
	}
}

func axisLabel(p Panel) string {
	if p.Unit == "" {
		return p.Title
	}
	return p.Title + " (" + p.Unit + ")"
}

func cross(b *svgBuf, cx, cy, r float64, color string) {
	b.f(`<path d="M%s %sl%s %sM%s %sl%s %s" stroke="%s" stroke-width="1.4"/>`, ff(cx-r), ff(cy-r), ff(2*r), ff(2*r), ff(cx-r), ff(cy+r), ff(2*r), ff(-2*r), color)
}

func secMarker(b *svgBuf, kind string, cx, cy float64, color string) {
	switch kind {
	case "dot":
		b.f(`<circle cx="%s" cy="%s" r="2.2" fill="%s"/>`, ff(cx), ff(cy), color)
	case "open":
		b.f(`<circle cx="%s" cy="%s" r="2.4" fill="#ffffff" stroke="%s" stroke-width="1.1"/>`, ff(cx), ff(cy), color)
	case "ring":
		b.f(`<circle cx="%s" cy="%s" r="4.6" fill="none" stroke="%s" stroke-width="1.4"/>`, ff(cx), ff(cy), color)
	case "tri-open":
		b.f(`<path d="M%s %sl3.5 6h-7z" fill="#ffffff" stroke="%s" stroke-width="1.1"/>`, ff(cx), ff(cy-3.5), color)
	case "cross":
		cross(b, cx, cy, 3, color)
	case "diamond":
		b.f(`<path d="M%s %sl4.5 4.5l-4.5 4.5l-4.5 -4.5z" fill="%s"/>`, ff(cx), ff(cy-4.5), color)
	}
}

func legendSymbol(b *svgBuf, it LegendItem, cx, cy float64) {
	switch it.Marker {
	case "band", "caution-band":
		c := ColorBand
		if it.Marker == "caution-band" {
			c = ColorCaution
		}
		if it.Color != "" {
			c = it.Color
		}
		b.f(`<rect x="%s" y="%s" width="14" height="9" fill="%s"/>`, ff(cx-7), ff(cy-4.5), c)
	case "line":
		b.f(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="%s" stroke-width="1.4"/>`, ff(cx-7), ff(cy), ff(cx+7), ff(cy), it.Color)
	case "dash":
		b.f(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="%s" stroke-dasharray="4 2"/>`, ff(cx-7), ff(cy), ff(cx+7), ff(cy), it.Color)
	case "tie":
		b.f(`<path d="M%s %sl7 -4v8z" fill="%s"/>`, ff(cx-4), ff(cy), ColorTie)
	case "hiatus":
		b.f(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#1d2327" stroke-width="1.5" stroke-dasharray="2 3"/>`, ff(cx-7), ff(cy), ff(cx+7), ff(cy))
	case "errbar":
		b.f(`<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="%s" stroke-width="1.6"/>`, ff(cx-7), ff(cy), ff(cx+7), ff(cy), it.Color)
		secMarker(b, "diamond", cx, cy, it.Color)
	default:
		secMarker(b, it.Marker, cx, cy, it.Color)
	}
}
