package views

import "math"

// CompilationFigure is the whole compilation on one age axis (older to the left, as on the timeline):
// one lane per province with its density, band and pulses, each scaled to its own highest value; under
// them one row per event at its age-model age (median and 95 % interval), grouped by section; the
// timescale strip and the axis. web fills it; views draws it once for SVG, PNG and PDF.
type CompilationFigure struct {
	Title     string
	Subtitle  []string
	MinMa     float64
	MaxMa     float64
	Provinces []FigureProvinceLane
	Events    []FigureEventMark
	Stages    []FigureStage
	Epochs    []FigureStage
	Note      string // what the curves, bars and whiskers are
	Credit    string // attribution of the timescale
	// Empty is said in the events' place when no event lies in the window.
	Empty string
}

// FigureProvinceLane is one province's lane: its density (nil when it has none, with Message) and pulses.
type FigureProvinceLane struct {
	Label   string
	URL     string // the province's timeline
	Title   string // hover text of the label
	Density *FigureDensity
	Pulses  []FigurePulse
	Message string
}

// FigureEventMark is one event: its median age and 95 % interval, under a section heading (Group).
type FigureEventMark struct {
	Label, URL, Group, Title string
	MedianMa, LoMa, HiMa     float64 // LoMa the younger end, HiMa the older
}

// Geometry of the compilation figure, in points.
const (
	provLaneH   = 58.0 // the density of one province
	provBarH    = 11.0 // its pulses under it
	provGap     = 14.0
	eventMarkH  = 15.0
	markColour  = "#1f4e79"
	markerWidth = 1.3
)

type compilationLayout struct {
	t         TimelineFigure // carries the window and the strip, for x, drawStrip and drawAxis
	l         *timelineLayout
	noteLines []string
	laneT     []float64
	eventsT   float64
	rowY      []float64
	groupY    map[int]float64
	eventsB   float64
	legend    []legendItem
	legendRow int
	height    float64
}

func (f CompilationFigure) layout() *compilationLayout {
	t := TimelineFigure{Title: f.Title, MinMa: f.MinMa, MaxMa: f.MaxMa, Stages: f.Stages, Epochs: f.Epochs}
	l := &timelineLayout{f: t, plotL: figLeft, plotR: figW - figRight, groupY: map[int]float64{}}
	cl := &compilationLayout{t: t, l: l, groupY: map[int]float64{}}
	y := 24.0
	l.titleY = y
	y += 6
	for _, s := range f.Subtitle {
		for _, line := range wrapText(s, 10.5, figW-30) {
			cl.noteLines = append(cl.noteLines, line)
			y += 14
		}
	}
	y += 24 // room for the first lane's pulse labels
	for range f.Provinces {
		cl.laneT = append(cl.laneT, y)
		y += provLaneH + provBarH + provGap
	}
	cl.eventsT = y
	group := ""
	for i, e := range f.Events {
		if i == 0 || e.Group != group {
			group = e.Group
			y += 16
			cl.groupY[i] = y - 4
		}
		cl.rowY = append(cl.rowY, y)
		y += eventMarkH
	}
	if len(f.Events) == 0 {
		y += 20
	}
	cl.eventsB = y
	l.rowsT, l.rowsB = cl.eventsT, y
	y += 8
	l.stripT = y
	y += 2 * stripH
	l.axisY = y
	y += 44
	l.ticks, l.minorTicks, l.tickDecimals = ticks(f.MinMa, f.MaxMa, 8)
	l.legendT = y
	cl.legend = f.legendItems()
	x := 0.0
	cl.legendRow = 1
	for _, it := range cl.legend {
		if x+it.width > figW-40 && x > 0 {
			cl.legendRow++
			x = 0
		}
		x += it.width
	}
	y += float64(cl.legendRow)*legendRowH + 6
	for _, s := range []string{f.Note, f.Credit} {
		y += 13 * float64(len(wrapText(s, 9.5, figW-30)))
	}
	cl.height = y + 10
	return cl
}

func (f CompilationFigure) legendItems() []legendItem {
	var items []legendItem
	add := func(label string, draw func(c canvas, x, y float64)) {
		items = append(items, legendItem{label: label, draw: draw, width: 30 + textWidth(label, 9.5, false) + 18})
	}
	add("density of the province's eruptive ages (each lane scaled to its own highest value)", func(c canvas, x, y float64) {
		c.poly([]pt{{x + 1, y}, {x + 21, y}}, false, paint{Stroke: curveColour, Width: 2})
	})
	add("95 % bootstrap band", func(c canvas, x, y float64) {
		c.rect(x+1, y-5, 20, 10, paint{Fill: bandColour, FillAlpha: 0.45})
	})
	add("pulse: solid where the replicates agree, fading over the 95 % range of its start and of its end; mode's 95 % interval whiskered", func(c canvas, x, y float64) {
		c.fade(x+1, y-5, 6, 10, pulseColour(0), 0, pulseAlphaMax)
		c.rect(x+7, y-5, 8, 10, paint{Fill: pulseColour(0), FillAlpha: pulseAlphaMax})
		c.fade(x+15, y-5, 6, 10, pulseColour(0), pulseAlphaMax, 0)
	})
	add("event: median age (tick) and 95 % interval (bar) from its section's age model", func(c canvas, x, y float64) {
		c.poly([]pt{{x + 3, y}, {x + 19, y}}, false, paint{Stroke: markColour, Width: markerWidth})
		for _, xx := range []float64{x + 3, x + 19} {
			c.poly([]pt{{xx, y - 3}, {xx, y + 3}}, false, paint{Stroke: markColour, Width: markerWidth})
		}
		c.rect(x+9.5, y-4.5, 3, 9, paint{Fill: markColour})
	})
	if len(f.Stages) > 0 {
		add("stage boundary ± (ICS)", func(c canvas, x, y float64) {
			c.rect(x+1, y-6, 20, 12, paint{Fill: "#cce7f0"})
			c.rect(x+7, y-6, 8, 12, paint{Fill: "#ffffff", FillAlpha: 0.6})
			c.poly([]pt{{x + 11, y - 6}, {x + 11, y + 6}}, false, paint{Stroke: boundaryInk, Width: 0.8})
		})
	}
	return items
}

// shorten cuts a label to fit width at size, ending it with "…".
func shorten(s string, size, width float64, bold bool) string {
	for len([]rune(s)) > 4 && textWidth(s, size, bold) > width {
		r := []rune(s)
		s = string(r[:len(r)-2]) + "…"
	}
	return s
}

func (f CompilationFigure) draw(c canvas, cl *compilationLayout) {
	t, l := cl.t, cl.l
	x := func(a float64) float64 { return t.x(l, a) }
	clampX := func(a float64) float64 { return math.Min(l.plotR, math.Max(l.plotL, x(a))) }
	c.rect(0, 0, figW, cl.height, paint{Fill: "#ffffff"})
	c.text(15, l.titleY, f.Title, textStyle{Size: 15, Bold: true})
	for i, line := range cl.noteLines {
		c.text(15, l.titleY+20+14*float64(i), line, textStyle{Size: 10.5, Colour: mutedColour})
	}
	// Guides at the major ticks through the lanes and the events.
	top := cl.eventsT
	if len(cl.laneT) > 0 {
		top = cl.laneT[0]
	}
	for _, tk := range l.ticks {
		xx := x(tk)
		c.poly([]pt{{xx, top}, {xx, cl.eventsB}}, false, paint{Stroke: "#e1e6ea", Width: 0.5})
	}
	for k, p := range f.Provinces {
		y0 := cl.laneT[k]
		dB := y0 + provLaneH
		c.rect(l.plotL, y0, l.plotR-l.plotL, provLaneH, paint{Stroke: "#d5dbe0", Width: 0.8})
		// The province's name, linked to its timeline, on at most two lines.
		c.begin(p.Title, p.URL)
		lines := wrapText(p.Label, 10.5, l.plotL-20)
		if len(lines) > 2 {
			lines = []string{lines[0], shorten(lines[1]+" "+lines[2], 10.5, l.plotL-20, true)}
		}
		for i, line := range lines {
			c.text(l.plotL-8, y0+provLaneH/2+4-7*float64(len(lines)-1)+14*float64(i), shorten(line, 10.5, l.plotL-20, true), textStyle{Size: 10.5, Bold: true, Anchor: "end", Colour: curveColour})
		}
		c.end()
		d := p.Density
		if d == nil || len(d.AgesMa) == 0 {
			msg := p.Message
			if msg == "" {
				msg = "no density"
			}
			c.text((l.plotL+l.plotR)/2, y0+provLaneH/2+3.5, shorten(msg, 9.5, l.plotR-l.plotL-20, false), textStyle{Size: 9.5, Anchor: "middle", Colour: mutedColour})
			continue
		}
		peak := 0.0
		for i, v := range d.Value {
			peak = math.Max(peak, v)
			if d.Upper != nil {
				peak = math.Max(peak, d.Upper[i])
			}
		}
		if !(peak > 0) {
			peak = 1
		}
		peak *= 1.05
		yv := func(v float64) float64 { return dB - math.Min(v, peak)/peak*(provLaneH-2) }
		// Only the stretch of the grid inside the window, clipped at its edges.
		var idx []int
		for i, a := range d.AgesMa {
			if a >= f.MinMa && a <= f.MaxMa {
				idx = append(idx, i)
			}
		}
		if len(idx) < 2 {
			c.text((l.plotL+l.plotR)/2, y0+provLaneH/2+3.5, "its density lies outside this window", textStyle{Size: 9.5, Anchor: "middle", Colour: mutedColour})
			continue
		}
		if d.Lower != nil {
			pts := make([]pt, 0, 2*len(idx))
			for _, i := range idx {
				pts = append(pts, pt{x(d.AgesMa[i]), yv(d.Upper[i])})
			}
			for k := len(idx) - 1; k >= 0; k-- {
				i := idx[k]
				pts = append(pts, pt{x(d.AgesMa[i]), yv(d.Lower[i])})
			}
			c.poly(pts, true, paint{Fill: bandColour, FillAlpha: 0.45})
		}
		for j, pu := range p.Pulses {
			var area []pt
			for _, i := range idx {
				if a := d.AgesMa[i]; a <= pu.StartMa && a >= pu.EndMa {
					area = append(area, pt{x(a), yv(d.Value[i])})
				}
			}
			if len(area) > 1 {
				area = append(area, pt{area[len(area)-1].X, dB}, pt{area[0].X, dB})
				c.poly(area, true, paint{Fill: pulseColour(j), FillAlpha: 0.35})
			}
		}
		pts := make([]pt, 0, len(idx))
		for _, i := range idx {
			pts = append(pts, pt{x(d.AgesMa[i]), yv(d.Value[i])})
		}
		c.poly(pts, false, paint{Stroke: curveColour, Width: 1.8})
		lastRight := math.Inf(-1) // a label that would overlap the one before it is left to the hover text
		for j, pu := range p.Pulses {
			if pu.EndMa > f.MaxMa || pu.StartMa < f.MinMa {
				continue
			}
			t.drawPulseBar(c, l, pu, j, dB+2, provBarH-3, false)
			w := textWidth(pu.Label, 9.5, true)
			if mx := x(pu.ModeMa); mx >= l.plotL && mx <= l.plotR && mx-w/2 > lastRight+3 {
				lastRight = mx + w/2
				c.begin(pu.Title, "")
				c.text(mx, y0-3, pu.Label, textStyle{Size: 9.5, Bold: true, Anchor: "middle", Colour: pulseInk(j)})
				c.end()
			}
		}
	}
	// Events.
	if len(f.Events) == 0 && f.Empty != "" {
		c.text((l.plotL+l.plotR)/2, cl.eventsT+14, f.Empty, textStyle{Size: 10, Anchor: "middle", Colour: mutedColour})
	}
	for i, e := range f.Events {
		if gy, ok := cl.groupY[i]; ok {
			c.text(15, gy, shorten(e.Group, 9.5, figW-40, true), textStyle{Size: 9.5, Bold: true, Colour: mutedColour})
			c.poly([]pt{{15, gy + 3}, {l.plotR, gy + 3}}, false, paint{Stroke: "#d5dbe0", Width: 0.6})
		}
		y0 := cl.rowY[i]
		ym := y0 + eventMarkH/2
		if i%2 == 0 {
			c.rect(l.plotL, y0, l.plotR-l.plotL, eventMarkH, paint{Fill: stripeColour})
		}
		c.begin(e.Title, e.URL)
		c.text(l.plotL-8, ym+3.5, shorten(e.Label, 10, l.plotL-25, false), textStyle{Size: 10, Anchor: "end"})
		lo, hi := clampX(e.HiMa), clampX(e.LoMa)
		c.poly([]pt{{lo, ym}, {hi, ym}}, false, paint{Stroke: markColour, Width: markerWidth})
		for _, xx := range []float64{lo, hi} {
			c.poly([]pt{{xx, ym - 3}, {xx, ym + 3}}, false, paint{Stroke: markColour, Width: markerWidth})
		}
		if mx := x(e.MedianMa); mx >= l.plotL && mx <= l.plotR {
			c.rect(mx-1.5, ym-4.5, 3, 9, paint{Fill: markColour})
		}
		c.end()
	}
	t.drawStrip(c, l)
	t.drawAxis(c, l)
	drawLegendAndNotes(c, cl.legend, l.legendT, cl.legendRow, f.Note, f.Credit)
}

// SVG draws the figure as SVG: the provinces' names link to their timelines, the events to their pages.
func (f CompilationFigure) SVG() []byte {
	cl := f.layout()
	c := newSVG(figW, cl.height, f.Title)
	f.draw(c, cl)
	return c.bytes()
}

// PNG draws the figure as a PNG image at 144 dpi.
func (f CompilationFigure) PNG() ([]byte, error) {
	cl := f.layout()
	return renderPNG(figW, cl.height, func(c canvas) { f.draw(c, cl) })
}

// PDF draws the figure as PDF; its text is written in ASCII.
func (f CompilationFigure) PDF() ([]byte, error) {
	cl := f.layout()
	return renderPDF(figW, cl.height, func(c canvas) { f.draw(c, cl) })
}
