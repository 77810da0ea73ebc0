package views

import (
	"math"
	"slices"
	"strconv"
	"strings"
)

// TimelineFigure is the province timeline as data: the density of eruptive ages with its bootstrap band
// and pulses, each unit's dates, and the reference timescale, on one age axis (older to the left). web
// fills it with formatted labels; views draws it once for SVG, PNG and PDF.
type TimelineFigure struct {
	Title    string
	Subtitle []string // lines under the title: what is counted and how, in words
	// MinMa, MaxMa is the age window drawn.
	MinMa, MaxMa float64
	Density      *FigureDensity // nil when there is no density to draw
	Pulses       []FigurePulse
	Rows         []FigureRow
	Stages       []FigureStage // timescale strip, finest rank (ages/stages)
	Epochs       []FigureStage // timescale strip, coarser rank (epochs)
	Markers      []MarkerSpec  // the date markers in use, for the legend
	SigmaNote    string        // what the error bars and bands are, with their σ level
	Credit       string        // attribution of the timescale
}

// FigureDensity is the density curve, its band and an optional PDP on a common ascending age grid.
type FigureDensity struct {
	AgesMa       []float64
	Value        []float64 // per Ma
	Lower, Upper []float64 // pointwise 95 % band, per Ma; nil for none
	PDP          []float64 // nil for none
	Label        string    // legend text of the curve, e.g. "KDE (ISJ, h = 0.081 Ma)"
	BandLabel    string
	PDPLabel     string
	YLabel       string // e.g. "Density (per Ma)"
}

// FigurePulse is a pulse with its bootstrap intervals (ages in Ma; Start is the older edge).
type FigurePulse struct {
	Label                string // "P1"
	Detail               string // shown beside the label, e.g. "98 %"
	Title                string // hover text
	ModeMa               float64
	StartMa, EndMa       float64 // edges of the reference density
	ModeLoMa, ModeHiMa   float64
	StartLoMa, StartHiMa float64
	EndLoMa, EndHiMa     float64
}

// FigureRow is one unit: its dates and, when the density counts one value per unit, that value.
type FigureRow struct {
	Label     string
	URL       string
	Group     string // rows are drawn in groups under a small heading ("Lava pile, top first", ...)
	HasValue  bool
	ValueMa   float64
	ValueLoMa float64
	ValueHiMa float64
	ValueNote string // hover text of the value
	Dates     []FigureDate
	// Band, when set, draws the unit's dates as one band instead of one error bar each (Dates is then
	// empty): a unit with hundreds of dates would otherwise be a row hundreds of bars tall.
	Band *FigureBand
}

// FigureBand is a unit's many dates drawn compactly: a box over the span of their error bars, and in it
// the number of dates whose age falls in each stretch of a few points, as a profile.
type FigureBand struct {
	LoMa, HiMa float64   // the span of the dates' error bars
	AgesMa     []float64 // every date's age
	Title      string    // hover text: how many dates, their span, how many are counted
	URL        string    // the list of the unit's dates
}

// bandBinPt is the width, in points, of a stretch of a band's profile.
const bandBinPt = 3.0

// hasBands reports whether a row is drawn as a band.
func hasBands(rows []FigureRow) bool {
	return slices.ContainsFunc(rows, func(r FigureRow) bool { return r.Band != nil })
}

// FigureDate is one date drawn as an error bar.
type FigureDate struct {
	AgeMa, LoMa, HiMa float64
	Marker            string // a MarkerSpec key
	Counted           bool   // false: drawn in grey, not in the density
	Title             string
	URL               string
}

// MarkerSpec names a date marker: Key is a method code (upb_idtims, arar_plateau, ...), Label its name.
type MarkerSpec struct {
	Key, Label string
}

// FigureStage is one unit of the timescale strip.
type FigureStage struct {
	Name     string
	BaseMa   float64
	BasePmMa float64
	TopMa    float64
	Colour   string // "#rrggbb"
	Title    string
}

// Figure geometry, in points.
const (
	figW       = 980.0
	figLeft    = 200.0 // room for unit names
	figRight   = 24.0
	densityH   = 170.0
	stripH     = 17.0
	legendRowH = 17.0
	laneH      = 15.0
)

// pulseColours tint the pulses in turn; pulseInks are darker versions for their labels and lines.
var (
	pulseColours = []string{"#f0a830", "#a77bd1", "#3fae86"}
	pulseInks    = []string{"#8a5a00", "#5f3a8a", "#1d6b50"}
)

func pulseColour(i int) string { return pulseColours[i%len(pulseColours)] }
func pulseInk(i int) string    { return pulseInks[i%len(pulseInks)] }

// markerStyle is the design of the date markers: one shape per decay system, filled or open for the
// technique, one colour per system (Okabe & Ito's colour-blind-safe set).
func markerStyle(key string) (shape string, colour string, open bool) {
	switch key {
	case "upb_idtims":
		return "square", "#0072B2", false
	case "upb_laicpms":
		return "square", "#0072B2", true
	case "upb_sims":
		return "diamond", "#0072B2", true
	case "arar_plateau":
		return "circle", "#D55E00", false
	case "arar_isochron":
		return "circle", "#D55E00", true
	case "kar":
		return "triangle", "#E69F00", false
	case "reos":
		return "diamond", "#009E73", false
	}
	return "triangle", "#CC79A7", true
}

const (
	inkColour     = "#1d2327"
	mutedColour   = "#5b6770"
	greyColour    = "#9aa3aa"
	bandColour    = "#7fa7c9"
	curveColour   = "#1f4e79"
	pdpColour     = "#8a3b8f"
	valueColour   = "#c9d1d8"
	spanColour    = "#e6eaee"
	stripeColour  = "#f4f6f8"
	boundaryInk   = "#3a4650"
	pulseAlphaMax = 0.85
)

// timelineLayout is the computed geometry of a figure.
type timelineLayout struct {
	f                 TimelineFigure
	plotL, plotR      float64
	titleY            float64
	densT, densB      float64
	lanesT            float64
	rowsT, rowsB      float64
	rowY              []float64 // top of each row
	rowH              []float64
	groupY            map[int]float64 // heading baseline before row i
	stripT            float64
	axisY             float64
	legendT           float64
	legendItems       []legendItem
	legendRows        int
	noteLines         []string
	height            float64
	yMax              float64
	pdpClipped        bool
	ticks, minorTicks []float64
	tickDecimals      int
}

type legendItem struct {
	label string
	draw  func(c canvas, x, y float64) // symbol in a 22 × 12 box whose left middle is (x, y)
	width float64
}

func (f TimelineFigure) x(l *timelineLayout, ageMa float64) float64 {
	return l.plotL + (f.MaxMa-ageMa)/(f.MaxMa-f.MinMa)*(l.plotR-l.plotL)
}

// drawLegendAndNotes draws a figure's legend from top, its items in rows across the figure (rows of them
// reserved by the layout), and under it each note wrapped to the figure's width. The timeline, the
// comparison and the compilation figures end with it.
func drawLegendAndNotes(c canvas, items []legendItem, top float64, rows int, notes ...string) {
	lx, ly := 15.0, top
	for _, it := range items {
		if lx+it.width > figW-25 && lx > 15 {
			lx = 15
			ly += legendRowH
		}
		it.draw(c, lx, ly)
		c.text(lx+28, ly+3.5, it.label, textStyle{Size: 9.5})
		lx += it.width
	}
	ny := top + float64(rows)*legendRowH + 6
	for _, s := range notes {
		for _, line := range wrapText(s, 9.5, figW-30) {
			c.text(15, ny, line, textStyle{Size: 9.5, Colour: mutedColour})
			ny += 13
		}
	}
}

func wrapText(s string, size, width float64) []string {
	var lines []string
	var cur string
	for _, w := range strings.Fields(s) {
		try := w
		if cur != "" {
			try = cur + " " + w
		}
		if textWidth(try, size, false) > width && cur != "" {
			lines = append(lines, cur)
			cur = w
		} else {
			cur = try
		}
	}
	if cur != "" {
		lines = append(lines, cur)
	}
	return lines
}

// niceTicks returns major ticks over [lo, hi] at a 1, 2, 2.5 or 5 × 10ᵏ step giving 5–10 ticks, minor
// ticks at a fifth (or half) of it, and the decimals the labels need.
// ticks returns round major ticks (about n of them) covering [lo, hi], minor ticks between them, and
// the decimals that print every major tick exactly. Both figures (timeline, section panels) use it.
func ticks(lo, hi float64, n int) (major, minor []float64, decimals int) {
	span := hi - lo
	if !(span > 0) {
		return []float64{lo}, nil, 2
	}
	raw := span / float64(max(n, 1))
	pow := math.Pow(10, math.Floor(math.Log10(raw)))
	step, sub := pow, 5
	for _, m := range []struct {
		f   float64
		sub int
	}{{1, 5}, {2, 4}, {2.5, 5}, {5, 5}, {10, 5}} {
		if m.f*pow >= raw {
			step, sub = m.f*pow, m.sub
			break
		}
	}
	decimals = max(0, -int(math.Floor(math.Log10(step)+1e-9)))
	if math.Abs(step/math.Pow(10, -float64(decimals))-math.Round(step/math.Pow(10, -float64(decimals)))) > 1e-9 {
		decimals++
	}
	for k := math.Ceil(lo/step - 1e-9); k*step <= hi+1e-9*step; k++ {
		major = append(major, k*step)
	}
	ms := step / float64(sub)
	for k := math.Ceil(lo/ms - 1e-9); k*ms <= hi+1e-9*ms; k++ {
		minor = append(minor, k*ms)
	}
	return major, minor, decimals
}

func (f TimelineFigure) layout() *timelineLayout {
	l := &timelineLayout{f: f, plotL: figLeft, plotR: figW - figRight, groupY: map[int]float64{}}
	y := 24.0
	l.titleY = y
	y += 6
	for _, s := range f.Subtitle {
		for _, line := range wrapText(s, 10.5, figW-30) {
			l.noteLines = append(l.noteLines, line)
			y += 14
		}
	}
	y += 26 // room for pulse labels
	if f.Density != nil {
		l.densT = y
		l.densB = y + densityH
		y = l.densB + 12
		for i, v := range f.Density.Upper {
			l.yMax = math.Max(l.yMax, math.Max(v, f.Density.Value[i]))
		}
		if f.Density.Upper == nil {
			for _, v := range f.Density.Value {
				l.yMax = math.Max(l.yMax, v)
			}
		}
		for _, v := range f.Density.PDP {
			if v > l.yMax*1.6 {
				l.pdpClipped = true
			}
		}
		if f.Density.Upper == nil && len(f.Density.PDP) > 0 && !l.pdpClipped {
			for _, v := range f.Density.PDP {
				l.yMax = math.Max(l.yMax, v)
			}
		}
		if l.pdpClipped {
			l.yMax *= 1.6
		}
		l.yMax *= 1.05
		if !(l.yMax > 0) {
			l.yMax = 1
		}
	}
	if len(f.Pulses) > 0 {
		l.lanesT = y
		y += float64(len(f.Pulses))*laneH + 10
	}
	l.rowsT = y
	group := ""
	for i, r := range f.Rows {
		if r.Group != group {
			group = r.Group
			y += 16
			l.groupY[i] = y - 4
		}
		h := math.Max(16, 6+5*float64(len(r.Dates)))
		if r.Band != nil {
			h = 22
		}
		l.rowY = append(l.rowY, y)
		l.rowH = append(l.rowH, h)
		y += h
	}
	l.rowsB = y
	y += 8
	l.stripT = y
	y += 2 * stripH
	l.axisY = y
	y += 44
	l.ticks, l.minorTicks, l.tickDecimals = ticks(f.MinMa, f.MaxMa, 8)
	l.legendT = y
	l.legendItems = f.legend(l)
	x := 0.0
	l.legendRows = 1
	for _, it := range l.legendItems {
		if x+it.width > figW-40 && x > 0 {
			l.legendRows++
			x = 0
		}
		x += it.width
	}
	y += float64(l.legendRows)*legendRowH + 6
	for _, s := range []string{f.SigmaNote, f.Credit} {
		y += 13 * float64(len(wrapText(s, 9.5, figW-30)))
	}
	l.height = y + 10
	return l
}

func (f TimelineFigure) legend(l *timelineLayout) []legendItem {
	var items []legendItem
	add := func(label string, draw func(c canvas, x, y float64)) {
		items = append(items, legendItem{label: label, draw: draw, width: 30 + textWidth(label, 9.5, false) + 18})
	}
	for _, m := range f.Markers {
		key := m.Key
		add(m.Label, func(c canvas, x, y float64) {
			c.poly([]pt{{x + 2, y}, {x + 20, y}}, false, paint{Stroke: inkColour, Width: 1})
			marker(c, key, x+11, y, true)
		})
	}
	add("not counted (excluded or not recalculable)", func(c canvas, x, y float64) {
		c.poly([]pt{{x + 2, y}, {x + 20, y}}, false, paint{Stroke: greyColour, Width: 1, Dash: []float64{2, 2}})
		marker(c, "upb_idtims", x+11, y, false)
	})
	if hasBands(f.Rows) {
		add("a unit's many dates: the span of their error bars, the profile how many dates fall at each age", func(c canvas, x, y float64) {
			c.rect(x+2, y-6, 18, 12, paint{Fill: spanColour})
			c.poly([]pt{{x + 2, y + 6}, {x + 6, y + 6}, {x + 6, y}, {x + 10, y}, {x + 10, y - 5}, {x + 14, y - 5}, {x + 14, y + 2},
				{x + 20, y + 2}, {x + 20, y + 6}}, true, paint{Fill: inkColour, FillAlpha: 0.55})
		})
	}
	if hasValues(f.Rows) {
		add("unit value counted in the density (weighted mean ± "+sigmaWord(f.SigmaNote)+")", func(c canvas, x, y float64) {
			c.rect(x+3, y-6, 16, 12, paint{Fill: valueColour})
			c.poly([]pt{{x + 11, y - 6}, {x + 11, y + 6}}, false, paint{Stroke: inkColour, Width: 1.5})
		})
	}
	if d := f.Density; d != nil {
		add(d.Label, func(c canvas, x, y float64) {
			c.poly([]pt{{x + 1, y}, {x + 21, y}}, false, paint{Stroke: curveColour, Width: 2})
		})
		if d.Lower != nil {
			add(d.BandLabel, func(c canvas, x, y float64) {
				c.rect(x+1, y-5, 20, 10, paint{Fill: bandColour, FillAlpha: 0.45})
			})
		}
		if d.PDP != nil {
			add(d.PDPLabel, func(c canvas, x, y float64) {
				c.poly([]pt{{x + 1, y}, {x + 21, y}}, false, paint{Stroke: pdpColour, Width: 1.3, Dash: []float64{4, 2}})
			})
		}
	}
	if len(f.Pulses) > 0 {
		add("pulse (share of replicates in which it exists): solid where every replicate agrees, fading across the 2.5–97.5 % range of its start and of its end", func(c canvas, x, y float64) {
			c.fade(x+1, y-5, 6, 10, pulseColour(0), 0, pulseAlphaMax)
			c.rect(x+7, y-5, 8, 10, paint{Fill: pulseColour(0), FillAlpha: pulseAlphaMax})
			c.fade(x+15, y-5, 6, 10, pulseColour(0), pulseAlphaMax, 0)
		})
		add("pulse mode with its 95 % interval", func(c canvas, x, y float64) {
			c.poly([]pt{{x + 3, y}, {x + 19, y}}, false, paint{Stroke: inkColour, Width: 1.2})
			c.poly([]pt{{x + 3, y - 3}, {x + 3, y + 3}}, false, paint{Stroke: inkColour, Width: 1.2})
			c.poly([]pt{{x + 19, y - 3}, {x + 19, y + 3}}, false, paint{Stroke: inkColour, Width: 1.2})
			c.poly([]pt{{x + 11, y - 6}, {x + 11, y + 6}}, false, paint{Stroke: inkColour, Width: 1, Dash: []float64{4, 3}})
		})
	}
	if len(f.Stages) > 0 {
		add("stage boundary ± (ICS)", func(c canvas, x, y float64) {
			c.rect(x+1, y-6, 20, 12, paint{Fill: "#cce7f0"})
			c.rect(x+7, y-6, 8, 12, paint{Fill: "#ffffff", FillAlpha: 0.6})
			c.poly([]pt{{x + 11, y - 6}, {x + 11, y + 6}}, false, paint{Stroke: boundaryInk, Width: 0.8})
		})
	}
	return items
}

// sigmaWord pulls "2σ" (or "1σ") out of the σ note for the legend.
func sigmaWord(note string) string {
	if strings.Contains(note, "1σ") && !strings.Contains(note, "2σ") {
		return "1σ"
	}
	return "2σ"
}

func hasValues(rows []FigureRow) bool {
	for _, r := range rows {
		if r.HasValue {
			return true
		}
	}
	return false
}

// marker draws a date marker centred on (x, y); counted false draws it in grey.
func marker(c canvas, key string, x, y float64, counted bool) {
	shape, col, open := markerStyle(key)
	if !counted {
		col = greyColour
	}
	p := paint{Fill: col, Stroke: col, Width: 1.1}
	if open {
		p.Fill = "#ffffff"
	}
	const r = 3.3
	switch shape {
	case "square":
		c.rect(x-r+0.3, y-r+0.3, 2*r-0.6, 2*r-0.6, p)
	case "circle":
		c.circle(x, y, r, p)
	case "diamond":
		c.poly([]pt{{x, y - r - 0.8}, {x + r + 0.8, y}, {x, y + r + 0.8}, {x - r - 0.8, y}}, true, p)
	default:
		c.poly([]pt{{x, y - r - 0.5}, {x + r + 0.5, y + r - 0.3}, {x - r - 0.5, y + r - 0.3}}, true, p)
	}
}

func fmtTick(v float64, decimals int) string {
	if math.Abs(v) < 1e-12 {
		v = 0
	}
	return strconv.FormatFloat(v, 'f', decimals, 64)
}

// Size returns the figure's width and height in points.
func (f TimelineFigure) Size() (float64, float64) { return figW, f.layout().height }

// drawBackdrop draws what lies under everything else, in this figure and in the comparison's: the white
// page, title and notes, row stripes (so a date can be followed to its unit name) and light guides at the
// major ticks.
func (f TimelineFigure) drawBackdrop(c canvas, l *timelineLayout) {
	c.rect(0, 0, figW, l.height, paint{Fill: "#ffffff"})
	c.text(15, l.titleY, f.Title, textStyle{Size: 15, Bold: true})
	for i, line := range l.noteLines {
		c.text(15, l.titleY+20+14*float64(i), line, textStyle{Size: 10.5, Colour: mutedColour})
	}
	for i := range f.Rows {
		if i%2 == 0 {
			c.rect(l.plotL, l.rowY[i], l.plotR-l.plotL, l.rowH[i], paint{Fill: stripeColour})
		}
	}
	for _, t := range l.ticks {
		xx := f.x(l, t)
		c.poly([]pt{{xx, l.rowsT}, {xx, l.rowsB}}, false, paint{Stroke: "#d5dbe0", Width: 0.5})
	}
}

// draw draws the figure on c.
func (f TimelineFigure) draw(c canvas, l *timelineLayout) {
	x := func(a float64) float64 { return f.x(l, a) }
	clampX := func(a float64) float64 { return math.Min(l.plotR, math.Max(l.plotL, x(a))) }
	f.drawBackdrop(c, l)

	// Pulse modes: dashed lines through the density and the rows.
	top := l.rowsT
	if f.Density != nil {
		top = l.densT
	}
	for i, p := range f.Pulses {
		mx := x(p.ModeMa)
		if mx < l.plotL || mx > l.plotR {
			continue
		}
		c.begin(p.Title, "")
		c.poly([]pt{{mx, top}, {mx, l.rowsB}}, false, paint{Stroke: pulseInk(i), Width: 1, Dash: []float64{4, 3}})
		c.text(mx, top-5, p.Label, textStyle{Size: 10.5, Bold: true, Anchor: "middle", Colour: pulseInk(i)})
		c.end()
	}

	if d := f.Density; d != nil {
		f.drawDensity(c, l, d)
	}
	f.drawPulseLanes(c, l)

	// Unit rows.
	for i, r := range f.Rows {
		if gy, ok := l.groupY[i]; ok {
			c.text(15, gy, r.Group, textStyle{Size: 9.5, Bold: true, Colour: mutedColour})
			c.poly([]pt{{15, gy + 3}, {l.plotR, gy + 3}}, false, paint{Stroke: "#d5dbe0", Width: 0.6})
		}
		y0, h := l.rowY[i], l.rowH[i]
		if r.URL != "" {
			c.begin(r.Label, r.URL)
		}
		c.text(l.plotL-8, y0+h/2+3.5, r.Label, textStyle{Size: 10.5, Anchor: "end"})
		if r.URL != "" {
			c.end()
		}
		if r.HasValue {
			c.begin(r.ValueNote, "")
			lo, hi := clampX(r.ValueHiMa), clampX(r.ValueLoMa)
			c.rect(lo, y0+1, math.Max(hi-lo, 0.5), h-2, paint{Fill: valueColour})
			if vx := x(r.ValueMa); vx >= l.plotL && vx <= l.plotR {
				c.poly([]pt{{vx, y0 + 1}, {vx, y0 + h - 1}}, false, paint{Stroke: inkColour, Width: 1.5})
			}
			c.end()
		}
		if b := r.Band; b != nil {
			f.drawBand(c, l, b, y0, h)
		}
		n := len(r.Dates)
		for j, d := range r.Dates {
			yy := y0 + h/2 + (float64(j)-float64(n-1)/2)*5
			c.begin(d.Title, d.URL)
			col := inkColour
			var dash []float64
			if !d.Counted {
				col, dash = greyColour, []float64{2, 2}
			}
			lo, hi := clampX(d.HiMa), clampX(d.LoMa)
			c.poly([]pt{{lo, yy}, {hi, yy}}, false, paint{Stroke: col, Width: 1, Dash: dash})
			if ax := x(d.AgeMa); ax >= l.plotL && ax <= l.plotR {
				marker(c, d.Marker, ax, yy, d.Counted)
			}
			c.end()
		}
	}

	f.drawStrip(c, l)
	f.drawAxis(c, l)

	drawLegendAndNotes(c, l.legendItems, l.legendT, l.legendRows, f.SigmaNote, f.Credit)
}

// drawBand draws a band in the row at y0 of height h: its span as a box, and the count of dates in each
// stretch of bandBinPt points as one filled profile (a path of a few hundred points whatever the number
// of dates).
func (f TimelineFigure) drawBand(c canvas, l *timelineLayout, b *FigureBand, y0, h float64) {
	clampX := func(a float64) float64 { return math.Max(l.plotL, math.Min(l.plotR, f.x(l, a))) }
	c.begin(b.Title, b.URL)
	lo, hi := clampX(b.HiMa), clampX(b.LoMa)
	c.rect(lo, y0+2, math.Max(hi-lo, 0.5), h-4, paint{Fill: spanColour})
	bins := int(math.Ceil((hi-lo)/bandBinPt)) + 1
	counts := make([]int, bins)
	top := 0
	for _, a := range b.AgesMa {
		ax := f.x(l, a)
		if ax < l.plotL || ax > l.plotR {
			continue
		}
		i := min(max(int((ax-lo)/bandBinPt), 0), bins-1)
		counts[i]++
		top = max(top, counts[i])
	}
	if top > 0 {
		base := y0 + h - 2
		pts := []pt{{lo, base}}
		for i, n := range counts {
			yy := base - float64(n)/float64(top)*(h-4)
			x0, x1 := lo+float64(i)*bandBinPt, math.Min(lo+float64(i+1)*bandBinPt, hi)
			pts = append(pts, pt{x0, yy}, pt{x1, yy})
		}
		pts = append(pts, pt{hi, base})
		c.poly(pts, true, paint{Fill: inkColour, FillAlpha: 0.55})
	}
	c.end()
}

func (f TimelineFigure) drawDensity(c canvas, l *timelineLayout, d *FigureDensity) {
	x := func(a float64) float64 { return f.x(l, a) }
	yv := func(v float64) float64 { return l.densB - math.Min(v, l.yMax)/l.yMax*(l.densB-l.densT) }
	c.rect(l.plotL, l.densT, l.plotR-l.plotL, l.densB-l.densT, paint{Stroke: "#d5dbe0", Width: 0.8})
	// y ticks
	major, _, dec := ticks(0, l.yMax, 8)
	if len(major) > 6 {
		var thin []float64
		for i, v := range major {
			if i%2 == 0 {
				thin = append(thin, v)
			}
		}
		major = thin
	}
	for _, v := range major {
		yy := yv(v)
		c.poly([]pt{{l.plotL - 4, yy}, {l.plotL, yy}}, false, paint{Stroke: inkColour, Width: 0.8})
		c.text(l.plotL-7, yy+3.5, fmtTick(v, dec), textStyle{Size: 9.5, Anchor: "end"})
	}
	c.text(l.plotL-7, l.densT-4, d.YLabel, textStyle{Size: 10, Anchor: "end", Bold: true})
	n := len(d.AgesMa)
	if d.Lower != nil {
		pts := make([]pt, 0, 2*n)
		for i := range n {
			pts = append(pts, pt{x(d.AgesMa[i]), yv(d.Upper[i])})
		}
		for i := n - 1; i >= 0; i-- {
			pts = append(pts, pt{x(d.AgesMa[i]), yv(d.Lower[i])})
		}
		c.poly(pts, true, paint{Fill: bandColour, FillAlpha: 0.45, ID: "band"})
	}
	if d.PDP != nil {
		pts := make([]pt, n)
		for i := range n {
			pts[i] = pt{x(d.AgesMa[i]), yv(d.PDP[i])}
		}
		c.poly(pts, false, paint{Stroke: pdpColour, Width: 1.3, Dash: []float64{4, 2}, ID: "pdp"})
		if l.pdpClipped {
			c.text(l.plotR-4, l.densT+12, "PDP clipped at the top of the panel", textStyle{Size: 9, Anchor: "end", Colour: pdpColour})
		}
	}
	// Each pulse's share of the density, tinted under the curve between its start and end.
	for k, p := range f.Pulses {
		var area []pt
		for i := range n {
			if a := d.AgesMa[i]; a <= p.StartMa && a >= p.EndMa {
				area = append(area, pt{x(a), yv(d.Value[i])})
			}
		}
		if len(area) > 1 {
			area = append(area, pt{area[len(area)-1].X, l.densB}, pt{area[0].X, l.densB})
			c.poly(area, true, paint{Fill: pulseColour(k), FillAlpha: 0.35})
		}
	}
	pts := make([]pt, n)
	for i := range n {
		pts[i] = pt{x(d.AgesMa[i]), yv(d.Value[i])}
	}
	c.poly(pts, false, paint{Stroke: curveColour, Width: 2, ID: "density"})
}

func (f TimelineFigure) drawStrip(c canvas, l *timelineLayout) {
	x := func(a float64) float64 { return f.x(l, a) }
	clampX := func(a float64) float64 { return math.Min(l.plotR, math.Max(l.plotL, x(a))) }
	for k, band := range [][]FigureStage{f.Epochs, f.Stages} {
		y0 := l.stripT + float64(k)*stripH
		label := "Epoch"
		if k == 1 {
			label = "Stage"
		}
		c.text(l.plotL-8, y0+stripH/2+3.5, label, textStyle{Size: 9.5, Anchor: "end", Colour: mutedColour})
		if len(band) == 0 {
			c.rect(l.plotL, y0, l.plotR-l.plotL, stripH, paint{Fill: stripeColour, Stroke: "#d5dbe0", Width: 0.6})
			continue
		}
		veil := func(ageMa, pmMa float64) (float64, float64) {
			return clampX(ageMa + pmMa), clampX(ageMa - pmMa)
		}
		for _, s := range band {
			x0, x1 := clampX(s.BaseMa), clampX(s.TopMa)
			if x1 > x0 {
				c.rect(x0, y0, x1-x0, stripH, paint{Fill: s.Colour, Stroke: boundaryInk, Width: 0.5})
			}
		}
		// Boundary uncertainty: a pale veil over base ± its uncertainty, under the names.
		pm := map[float64]float64{}
		for _, s := range band {
			pm[s.BaseMa] = s.BasePmMa
			if s.BasePmMa > 0 && s.BaseMa > f.MinMa && s.BaseMa < f.MaxMa {
				a, b := veil(s.BaseMa, s.BasePmMa)
				c.rect(a, y0, b-a, stripH, paint{Fill: "#ffffff", FillAlpha: 0.55})
				bx := x(s.BaseMa)
				c.poly([]pt{{bx, y0}, {bx, y0 + stripH}}, false, paint{Stroke: boundaryInk, Width: 1})
			}
		}
		for _, s := range band {
			x0, x1 := clampX(s.BaseMa), clampX(s.TopMa)
			if x1 <= x0 {
				continue
			}
			// The name goes in the clear part between the veils of the unit's base and top when it fits.
			cx0, cx1 := x0, x1
			if p := s.BasePmMa; p > 0 {
				_, r := veil(s.BaseMa, p)
				cx0 = math.Max(cx0, r)
			}
			if p := pm[s.TopMa]; p > 0 {
				l, _ := veil(s.TopMa, p)
				cx1 = math.Min(cx1, l)
			}
			name := s.Name
			room := cx1 - cx0 - 6
			if textWidth(name, 9.5, false) > room {
				cx0, cx1 = x0, x1
				room = x1 - x0 - 6
			}
			if textWidth(name, 9.5, false) > room {
				name = abbreviate(s.Name)
			}
			c.begin(s.Title, "")
			c.rect(x0, y0, x1-x0, stripH, paint{Fill: "#ffffff", FillAlpha: 0.001})
			if textWidth(name, 9.5, false) <= room {
				c.text((cx0+cx1)/2, y0+stripH/2+3.5, name, textStyle{Size: 9.5, Anchor: "middle"})
			}
			c.end()
		}
	}
}

// drawPulseLanes draws each pulse in a lane of its own under the density: solid where the replicates agree
// it is erupting, fading over the 2.5–97.5 % range of its start (older edge) and of its end, with the
// mode's 95 % interval as a whisker.
func (f TimelineFigure) drawPulseLanes(c canvas, l *timelineLayout) {
	if len(f.Pulses) == 0 {
		return
	}
	c.text(l.plotL-8, l.lanesT+laneH/2+3.5, "Pulses", textStyle{Size: 9.5, Anchor: "end", Colour: mutedColour})
	for i, p := range f.Pulses {
		f.drawPulseBar(c, l, p, i, l.lanesT+float64(i)*laneH+1.5, laneH-3, true)
	}
}

// drawPulseBar draws pulse p (the i-th, for its colour) as a bar of height h from y0: solid where the
// replicates agree it is erupting, fading over the 2.5–97.5 % range of its start and of its end, the
// mode's 95 % interval as a whisker, and (label) its label beside it.
func (f TimelineFigure) drawPulseBar(c canvas, l *timelineLayout, p FigurePulse, i int, y0, h float64, label bool) {
	clampX := func(a float64) float64 { return math.Min(l.plotR, math.Max(l.plotL, f.x(l, a))) }
	col := pulseColour(i)
	c.begin(p.Title, "")
	oldL, oldR := clampX(p.StartHiMa), clampX(p.StartLoMa)
	youL, youR := clampX(p.EndHiMa), clampX(p.EndLoMa)
	if oldR > youL {
		// The start and end ranges overlap: no stretch is certain; the fades meet halfway.
		mid := (oldR + youL) / 2
		oldR, youL = mid, mid
	}
	if oldR < youL {
		c.rect(oldR, y0, youL-oldR, h, paint{Fill: col, FillAlpha: pulseAlphaMax})
	}
	if oldR > oldL {
		c.fade(oldL, y0, oldR-oldL, h, col, 0, pulseAlphaMax)
	}
	if youR > youL {
		c.fade(youL, y0, youR-youL, h, col, pulseAlphaMax, 0)
	}
	lo, hi := clampX(p.ModeHiMa), clampX(p.ModeLoMa)
	ym := y0 + h/2
	c.poly([]pt{{lo, ym}, {hi, ym}}, false, paint{Stroke: inkColour, Width: 1.2})
	c.poly([]pt{{lo, ym - 3.5}, {lo, ym + 3.5}}, false, paint{Stroke: inkColour, Width: 1.2})
	c.poly([]pt{{hi, ym - 3.5}, {hi, ym + 3.5}}, false, paint{Stroke: inkColour, Width: 1.2})
	if label {
		text := p.Label
		if p.Detail != "" {
			text += " (" + p.Detail + ")"
		}
		// The label goes right of the bar when it fits, else left of it.
		w := textWidth(text, 9.5, true)
		lx, anchor := math.Max(youR, hi)+5, "start"
		if lx+w > l.plotR {
			lx, anchor = math.Min(oldL, lo)-5, "end"
		}
		c.text(lx, ym+3.5, text, textStyle{Size: 9.5, Bold: true, Anchor: anchor, Colour: pulseInk(i)})
	}
	c.end()
}

// abbreviate shortens a timescale name to its first three letters and a full stop.
func abbreviate(s string) string {
	r := []rune(s)
	if len(r) <= 4 {
		return s
	}
	return string(r[:3]) + "."
}

func (f TimelineFigure) drawAxis(c canvas, l *timelineLayout) {
	y := l.axisY
	c.poly([]pt{{l.plotL, y}, {l.plotR, y}}, false, paint{Stroke: inkColour, Width: 1})
	for _, t := range l.minorTicks {
		xx := f.x(l, t)
		c.poly([]pt{{xx, y}, {xx, y + 3}}, false, paint{Stroke: inkColour, Width: 0.6})
	}
	lastRight := -1e9
	ticks := slices.Clone(l.ticks)
	slices.Reverse(ticks) // oldest (leftmost) first
	for _, t := range ticks {
		xx := f.x(l, t)
		c.poly([]pt{{xx, y}, {xx, y + 6}}, false, paint{Stroke: inkColour, Width: 1})
		s := fmtTick(t, l.tickDecimals)
		w := textWidth(s, 10, false)
		if xx-w/2 > lastRight+4 {
			c.text(xx, y+17, s, textStyle{Size: 10, Anchor: "middle"})
			lastRight = xx + w/2
		}
	}
	mid := (l.plotL + l.plotR) / 2
	c.text(mid, y+34, "Age (Ma)", textStyle{Size: 11, Bold: true, Anchor: "middle"})
	c.text(l.plotL, y+34, "← older", textStyle{Size: 10, Colour: mutedColour})
	c.text(l.plotR, y+34, "younger →", textStyle{Size: 10, Colour: mutedColour, Anchor: "end"})
}

// SVG draws the figure as SVG, with hover titles on every date and unit linking to their pages.
func (f TimelineFigure) SVG() []byte {
	l := f.layout()
	c := newSVG(figW, l.height, f.Title)
	f.draw(c, l)
	return c.bytes()
}

// PNG draws the figure as a PNG image at 144 dpi (twice the point size).
func (f TimelineFigure) PNG() ([]byte, error) {
	l := f.layout()
	return renderPNG(figW, l.height, func(c canvas) { f.draw(c, l) })
}

// PDF draws the figure as PDF; its text is written in ASCII (σ as "sigma", ± as "+/-").
func (f TimelineFigure) PDF() ([]byte, error) {
	l := f.layout()
	return renderPDF(figW, l.height, func(c canvas) { f.draw(c, l) })
}
