package views

import "math"

// CompareFigure is the aligned figure of a comparison: the province's density with its pulses (drawn
// as on the timeline), and under it one row per event with its age distribution, grouped by section,
// on one age axis with the timescale strip. web fills it; views draws it once for SVG, PNG and PDF.
type CompareFigure struct {
	// Timeline holds the title, notes, window, density, pulses and timescale; its Rows are the events
	// (Label, Group = section, URL), without dates.
	Timeline TimelineFigure
	// Events has one entry per row of Timeline.Rows.
	Events []FigureEventAge
}

// FigureEventAge is an event's age distribution: a density on an ascending age grid (any scale: it is
// drawn scaled to its row) with its median and 95 % interval.
type FigureEventAge struct {
	AgesMa, Density []float64
	MedianMa        float64
	LoMa, HiMa      float64 // 2.5 and 97.5 % (younger and older end)
	Title           string
	Colour          string // "#rrggbb"; "" for the default
	// Unit marks the row of an eruptive unit's weighted mean (rows=units|both) rather than an event: it
	// is drawn in the units' colour and named in the legend.
	Unit bool
}

const (
	eventRowH    = 26.0
	eventColour  = "#3b6e8f"
	eventOutline = "#1f4e79"
	unitColour   = "#c56a1b"
	unitOutline  = "#8a4510"
)

func (f CompareFigure) layout() *timelineLayout {
	t := f.Timeline
	l := t.layout()
	// Taller rows than a unit's: each holds a small density.
	extra := 0.0
	groupShift := map[int]float64{}
	for i := range l.rowY {
		if _, ok := l.groupY[i]; ok {
			groupShift[i] = extra
		}
		l.rowY[i] += extra
		extra += eventRowH - l.rowH[i]
		l.rowH[i] = eventRowH
	}
	for i, s := range groupShift {
		l.groupY[i] += s
	}
	l.rowsB += extra
	l.stripT += extra
	l.axisY += extra
	l.legendT += extra
	l.height += extra
	// Its own legend (the timeline's names date markers this figure does not draw).
	oldRows := l.legendRows
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
	l.height += float64(l.legendRows-oldRows) * legendRowH
	return l
}

func (f CompareFigure) legend(l *timelineLayout) []legendItem {
	var items []legendItem
	add := func(label string, draw func(c canvas, x, y float64)) {
		items = append(items, legendItem{label: label, draw: draw, width: 30 + textWidth(label, 9.5, false) + 18})
	}
	all := f.Timeline.legend(l)
	for _, it := range all {
		if it.label == "not counted (excluded or not recalculable)" {
			continue
		}
		items = append(items, it)
	}
	add("event age: density of its draws, median and 95 % interval", func(c canvas, x, y float64) {
		c.poly([]pt{{x + 1, y + 5}, {x + 7, y - 2}, {x + 11, y - 6}, {x + 15, y - 2}, {x + 21, y + 5}}, true, paint{Fill: eventColour, FillAlpha: 0.35, Stroke: eventOutline, Width: 0.8})
		c.poly([]pt{{x + 4, y + 5}, {x + 18, y + 5}}, false, paint{Stroke: inkColour, Width: 1.2})
		c.poly([]pt{{x + 11, y - 6}, {x + 11, y + 6}}, false, paint{Stroke: inkColour, Width: 1.5})
	})
	for _, e := range f.Events {
		if e.Unit {
			add("unit weighted mean: its analytical spread, mean and 95 % interval", func(c canvas, x, y float64) {
				c.poly([]pt{{x + 5, y + 5}, {x + 9, y - 1}, {x + 11, y - 6}, {x + 13, y - 1}, {x + 17, y + 5}}, true, paint{Fill: unitColour, FillAlpha: 0.35, Stroke: unitOutline, Width: 0.8})
				c.poly([]pt{{x + 7, y + 5}, {x + 15, y + 5}}, false, paint{Stroke: inkColour, Width: 1.2})
				c.poly([]pt{{x + 11, y - 6}, {x + 11, y + 6}}, false, paint{Stroke: inkColour, Width: 1.5})
			})
			break
		}
	}
	return items
}

func (f CompareFigure) draw(c canvas, l *timelineLayout) {
	t := f.Timeline
	x := func(a float64) float64 { return t.x(l, a) }
	clampX := func(a float64) float64 { return math.Min(l.plotR, math.Max(l.plotL, x(a))) }
	t.drawBackdrop(c, l)
	top := l.rowsT
	if t.Density != nil {
		top = l.densT
	}
	for i, p := range t.Pulses {
		mx := x(p.ModeMa)
		if mx < l.plotL || mx > l.plotR {
			continue
		}
		c.begin(p.Title, "")
		c.poly([]pt{{mx, top}, {mx, l.rowsB}}, false, paint{Stroke: pulseInk(i), Width: 1, Dash: []float64{4, 3}})
		c.text(mx, top-5, p.Label, textStyle{Size: 10.5, Bold: true, Anchor: "middle", Colour: pulseInk(i)})
		c.end()
	}
	if d := t.Density; d != nil {
		t.drawDensity(c, l, d)
	}
	t.drawPulseLanes(c, l)
	for i, r := range t.Rows {
		if gy, ok := l.groupY[i]; ok {
			c.text(15, gy, r.Group, textStyle{Size: 9.5, Bold: true, Colour: mutedColour})
			c.poly([]pt{{15, gy + 3}, {l.plotR, gy + 3}}, false, paint{Stroke: "#d5dbe0", Width: 0.6})
		}
		y0, h := l.rowY[i], l.rowH[i]
		if r.URL != "" {
			c.begin(r.Label, r.URL)
		}
		label := r.Label
		for len(label) > 4 && textWidth(label, 10.5, false) > l.plotL-20 {
			label = string([]rune(label)[:len([]rune(label))-2]) + "…"
		}
		c.text(l.plotL-8, y0+h/2+3.5, label, textStyle{Size: 10.5, Anchor: "end"})
		if r.URL != "" {
			c.end()
		}
		if i >= len(f.Events) {
			continue
		}
		e := f.Events[i]
		col, outline := e.Colour, eventOutline
		if e.Unit {
			outline = unitOutline
			if col == "" {
				col = unitColour
			}
		}
		if col == "" {
			col = eventColour
		}
		base := y0 + h - 4
		peak := 0.0
		for _, v := range e.Density {
			peak = math.Max(peak, v)
		}
		c.begin(e.Title, "")
		if peak > 0 && len(e.AgesMa) > 1 {
			pts := make([]pt, 0, len(e.AgesMa)+2)
			for k, a := range e.AgesMa {
				pts = append(pts, pt{clampX(a), base - e.Density[k]/peak*(h-8)})
			}
			pts = append(pts, pt{clampX(e.AgesMa[len(e.AgesMa)-1]), base}, pt{clampX(e.AgesMa[0]), base})
			c.poly(pts, true, paint{Fill: col, FillAlpha: 0.35, Stroke: outline, Width: 0.8})
		}
		lo, hi := clampX(e.HiMa), clampX(e.LoMa)
		c.poly([]pt{{lo, base}, {hi, base}}, false, paint{Stroke: inkColour, Width: 1.2})
		for _, xx := range []float64{lo, hi} {
			c.poly([]pt{{xx, base - 3}, {xx, base + 3}}, false, paint{Stroke: inkColour, Width: 1.2})
		}
		if mx := x(e.MedianMa); mx >= l.plotL && mx <= l.plotR {
			c.poly([]pt{{mx, y0 + 2}, {mx, base + 3}}, false, paint{Stroke: inkColour, Width: 1.5})
		}
		c.end()
	}
	t.drawStrip(c, l)
	t.drawAxis(c, l)
	drawLegendAndNotes(c, l.legendItems, l.legendT, l.legendRows, t.SigmaNote, t.Credit)
}

// SVG draws the figure as SVG with hover titles.
func (f CompareFigure) SVG() []byte {
	l := f.layout()
	c := newSVG(figW, l.height, f.Timeline.Title)
	f.draw(c, l)
	return c.bytes()
}

// PNG draws the figure as a PNG image at 144 dpi.
func (f CompareFigure) PNG() ([]byte, error) {
	l := f.layout()
	return renderPNG(figW, l.height, func(c canvas) { f.draw(c, l) })
}

// PDF draws the figure as PDF; its text is written in ASCII.
func (f CompareFigure) PDF() ([]byte, error) {
	l := f.layout()
	return renderPDF(figW, l.height, func(c canvas) { f.draw(c, l) })
}
