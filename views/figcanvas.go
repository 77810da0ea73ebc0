package views

import (
	"bytes"
	"fmt"
	"html"
	"image/color"
	"math"
	"strconv"
	"strings"
	"sync"

	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/font/liberation"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgpdf"
)

// The figures are drawn once, by code that speaks to canvas. Two back-ends implement it: svgCanvas writes
// SVG by hand (with hover titles and links), vgCanvas hands the same calls to gonum/plot's vg back-ends for
// PNG (vgimg) and PDF (vgpdf). Coordinates are in points from the top left; text is measured with the
// Liberation Sans metrics in every back-end, so the layout is the same in all three.

type pt struct{ X, Y float64 }

// paint is how a shape is filled and stroked. Colours are "#rrggbb"; an empty colour draws nothing.
type paint struct {
	Fill        string
	FillAlpha   float64 // 0 means opaque
	Stroke      string
	StrokeAlpha float64 // 0 means opaque
	Width       float64
	Dash        []float64
	ID          string // SVG only: an id for tests and scripts
}

type textStyle struct {
	Size   float64
	Bold   bool
	Italic bool
	Colour string
	Anchor string // "start" (default), "middle", "end"
}

type canvas interface {
	rect(x, y, w, h float64, p paint)
	poly(pts []pt, closed bool, p paint)
	circle(cx, cy, r float64, p paint)
	text(x, y float64, s string, ts textStyle)
	// textUp writes s turned a quarter anticlockwise (reading upwards) with its baseline through (x, y);
	// the anchor applies along the text.
	textUp(x, y float64, s string, ts textStyle)
	// fade fills a rectangle with colour whose opacity runs linearly from a0 at the left to a1 at the right.
	fade(x, y, w, h float64, colour string, a0, a1 float64)
	// begin opens a group with a hover title and, when href is not empty, a link; end closes it.
	begin(title, href string)
	end()
}

// fonts holds the Liberation faces used to measure and draw text.
var fonts = sync.OnceValue(func() *font.Cache { return font.NewCache(liberation.Collection()) })

func face(size float64, bold, italic bool) font.Face {
	f := font.Font{Typeface: "Liberation", Variant: "Sans"}
	if bold {
		f.Weight = 3 // font.WeightBold of golang.org/x/image/font (not a CSS weight such as 700)
	}
	if italic {
		f.Style = 1 // font.StyleItalic
	}
	return fonts().Lookup(f, vg.Length(size))
}

// textWidth is the width of s in points at size.
func textWidth(s string, size float64, bold bool) float64 {
	f := face(size, bold, false)
	return float64(f.Width(s))
}

// ---- SVG ----

type svgCanvas struct {
	b     bytes.Buffer
	grads map[string]string
	defs  bytes.Buffer
	n     int
	open  []string // close tags of the groups begin opened
}

func newSVG(w, h float64, label string) *svgCanvas {
	c := &svgCanvas{grads: map[string]string{}}
	fmt.Fprintf(&c.b, `<svg xmlns="http://www.w3.org/2000/svg" width="%s" height="%s" viewBox="0 0 %s %s" role="img" aria-label="%s" font-family="Liberation Sans, Arial, Helvetica, sans-serif">`+"\n",
		f2(w), f2(h), f2(w), f2(h), esc(label))
	return c
}

func (c *svgCanvas) bytes() []byte {
	var out bytes.Buffer
	head, body, _ := strings.Cut(c.b.String(), "\n")
	out.WriteString(head + "\n")
	if c.defs.Len() > 0 {
		out.WriteString("<defs>\n")
		out.Write(c.defs.Bytes())
		out.WriteString("</defs>\n")
	}
	out.WriteString(body)
	out.WriteString("</svg>\n")
	return out.Bytes()
}

func f2(v float64) string {
	s := strconv.FormatFloat(v, 'f', 2, 64)
	s = strings.TrimRight(strings.TrimRight(s, "0"), ".")
	if s == "-0" {
		return "0"
	}
	return s
}

// esc escapes text for SVG content and attribute values.
func esc(s string) string { return html.EscapeString(s) }

func (p paint) attrs() string {
	var b strings.Builder
	if p.ID != "" {
		fmt.Fprintf(&b, ` id="%s"`, esc(p.ID))
	}
	if p.Fill == "" {
		b.WriteString(` fill="none"`)
	} else {
		fmt.Fprintf(&b, ` fill="%s"`, p.Fill)
		if p.FillAlpha > 0 && p.FillAlpha < 1 {
			fmt.Fprintf(&b, ` fill-opacity="%s"`, f2(p.FillAlpha))
		}
	}
	if p.Stroke != "" {
		w := p.Width
		if w == 0 {
			w = 1
		}
		fmt.Fprintf(&b, ` stroke="%s" stroke-width="%s"`, p.Stroke, f2(w))
		if p.StrokeAlpha > 0 && p.StrokeAlpha < 1 {
			fmt.Fprintf(&b, ` stroke-opacity="%s"`, f2(p.StrokeAlpha))
		}
		if len(p.Dash) > 0 {
			ds := make([]string, len(p.Dash))
			for i, d := range p.Dash {
				ds[i] = f2(d)
			}
			fmt.Fprintf(&b, ` stroke-dasharray="%s"`, strings.Join(ds, " "))
		}
	}
	return b.String()
}

func (c *svgCanvas) rect(x, y, w, h float64, p paint) {
	fmt.Fprintf(&c.b, `<rect x="%s" y="%s" width="%s" height="%s"%s/>`+"\n", f2(x), f2(y), f2(w), f2(h), p.attrs())
}

func (c *svgCanvas) poly(pts []pt, closed bool, p paint) {
	if len(pts) == 0 {
		return
	}
	var d strings.Builder
	for i, q := range pts {
		if i == 0 {
			d.WriteString("M")
		} else {
			d.WriteString("L")
		}
		d.WriteString(f2(q.X) + " " + f2(q.Y))
	}
	if closed {
		d.WriteString("Z")
	}
	fmt.Fprintf(&c.b, `<path d="%s"%s/>`+"\n", d.String(), p.attrs())
}

func (c *svgCanvas) circle(cx, cy, r float64, p paint) {
	fmt.Fprintf(&c.b, `<circle cx="%s" cy="%s" r="%s"%s/>`+"\n", f2(cx), f2(cy), f2(r), p.attrs())
}

func (c *svgCanvas) text(x, y float64, s string, ts textStyle) {
	var extra strings.Builder
	if ts.Anchor != "" && ts.Anchor != "start" {
		fmt.Fprintf(&extra, ` text-anchor="%s"`, ts.Anchor)
	}
	if ts.Bold {
		extra.WriteString(` font-weight="bold"`)
	}
	if ts.Italic {
		extra.WriteString(` font-style="italic"`)
	}
	col := ts.Colour
	if col == "" {
		col = "#1d2327"
	}
	fmt.Fprintf(&c.b, `<text x="%s" y="%s" font-size="%s" fill="%s"%s>%s</text>`+"\n", f2(x), f2(y), f2(ts.Size), col, extra.String(), esc(s))
}

func (c *svgCanvas) textUp(x, y float64, s string, ts textStyle) {
	var inner svgCanvas
	inner.text(0, 0, s, ts)
	fmt.Fprintf(&c.b, `<g transform="translate(%s %s) rotate(-90)">%s</g>`+"\n", f2(x), f2(y), strings.TrimSuffix(inner.b.String(), "\n"))
}

func (c *svgCanvas) fade(x, y, w, h float64, colour string, a0, a1 float64) {
	key := colour + "|" + f2(a0) + "|" + f2(a1)
	id, ok := c.grads[key]
	if !ok {
		c.n++
		id = "fade" + strconv.Itoa(c.n)
		c.grads[key] = id
		fmt.Fprintf(&c.defs, `<linearGradient id="%s" x1="0" y1="0" x2="1" y2="0"><stop offset="0" stop-color="%s" stop-opacity="%s"/><stop offset="1" stop-color="%s" stop-opacity="%s"/></linearGradient>`+"\n",
			id, colour, f2(a0), colour, f2(a1))
	}
	fmt.Fprintf(&c.b, `<rect x="%s" y="%s" width="%s" height="%s" fill="url(#%s)"/>`+"\n", f2(x), f2(y), f2(w), f2(h), id)
}

func (c *svgCanvas) begin(title, href string) {
	if href != "" {
		fmt.Fprintf(&c.b, `<a href="%s"><title>%s</title>`+"\n", esc(href), esc(title))
		c.open = append(c.open, "</a>\n")
		return
	}
	fmt.Fprintf(&c.b, "<g><title>%s</title>\n", esc(title))
	c.open = append(c.open, "</g>\n")
}

func (c *svgCanvas) end() {
	if n := len(c.open); n > 0 {
		c.b.WriteString(c.open[n-1])
		c.open = c.open[:n-1]
	}
}

// ---- vg (PNG, PDF) ----

type vgCanvas struct {
	c     vg.Canvas
	h     float64
	ascii bool // PDF: gonum's PDF back-end garbles non-ASCII text
}

func parseHex(s string, alpha float64) color.Color {
	if len(s) != 7 || s[0] != '#' {
		return color.Black
	}
	v, err := strconv.ParseUint(s[1:], 16, 32)
	if err != nil {
		return color.Black
	}
	a := 1.0
	if alpha > 0 && alpha < 1 {
		a = alpha
	}
	// premultiplied alpha
	return color.RGBA{R: uint8(float64(v>>16&0xff) * a), G: uint8(float64(v>>8&0xff) * a), B: uint8(float64(v&0xff) * a), A: uint8(255 * a)}
}

func (c *vgCanvas) p(x, y float64) vg.Point { return vg.Point{X: vg.Length(x), Y: vg.Length(c.h - y)} }

func (c *vgCanvas) path(pts []pt, closed bool) vg.Path {
	var path vg.Path
	for i, q := range pts {
		if i == 0 {
			path.Move(c.p(q.X, q.Y))
		} else {
			path.Line(c.p(q.X, q.Y))
		}
	}
	if closed {
		path.Close()
	}
	return path
}

func (c *vgCanvas) draw(path vg.Path, p paint) {
	if p.Fill != "" {
		c.c.SetColor(parseHex(p.Fill, p.FillAlpha))
		c.c.Fill(path)
	}
	if p.Stroke != "" {
		w := p.Width
		if w == 0 {
			w = 1
		}
		c.c.SetLineWidth(vg.Length(w))
		dash := make([]vg.Length, len(p.Dash))
		for i, d := range p.Dash {
			dash[i] = vg.Length(d)
		}
		c.c.SetLineDash(dash, 0)
		c.c.SetColor(parseHex(p.Stroke, p.StrokeAlpha))
		c.c.Stroke(path)
	}
}

func (c *vgCanvas) rect(x, y, w, h float64, p paint) {
	c.draw(c.path([]pt{{x, y}, {x + w, y}, {x + w, y + h}, {x, y + h}}, true), p)
}

func (c *vgCanvas) poly(pts []pt, closed bool, p paint) {
	if len(pts) == 0 {
		return
	}
	c.draw(c.path(pts, closed), p)
}

func (c *vgCanvas) circle(cx, cy, r float64, p paint) {
	var path vg.Path
	path.Move(c.p(cx+r, cy))
	path.Arc(c.p(cx, cy), vg.Length(r), 0, 2*math.Pi)
	path.Close()
	c.draw(path, p)
}

func (c *vgCanvas) text(x, y float64, s string, ts textStyle) {
	if c.ascii {
		s = ASCII(s)
	} else {
		s = plainDigits.Replace(s)
	}
	f := face(ts.Size, ts.Bold, ts.Italic && !c.ascii) // the PDF back-end has no italic face
	if c.ascii && ts.Bold {
		// vgpdf registers a font under its name with no style but selects it with style "B" when the
		// weight is bold, and then cannot find it: hand it the bold face under a name of its own.
		f.Font.Weight, f.Font.Typeface = 0, f.Font.Typeface+"Bold"
	}
	w := float64(f.Width(s))
	switch ts.Anchor {
	case "middle":
		x -= w / 2
	case "end":
		x -= w
	}
	col := ts.Colour
	if col == "" {
		col = "#1d2327"
	}
	c.c.SetColor(parseHex(col, 1))
	c.c.FillString(f, c.p(x, y), s)
}

func (c *vgCanvas) textUp(x, y float64, s string, ts textStyle) {
	c.c.Push()
	c.c.Translate(c.p(x, y))
	c.c.Rotate(math.Pi / 2)
	inner := &vgCanvas{c: c.c, h: 0, ascii: c.ascii}
	inner.text(0, 0, s, ts)
	c.c.Pop()
}

func (c *vgCanvas) fade(x, y, w, h float64, colour string, a0, a1 float64) {
	const strips = 24
	for i := range strips {
		t := (float64(i) + 0.5) / strips
		c.rect(x+w*float64(i)/strips, y, w/strips+0.01, h, paint{Fill: colour, FillAlpha: math.Max(0.001, a0+(a1-a0)*t)})
	}
}

func (c *vgCanvas) begin(string, string) {}
func (c *vgCanvas) end()                 {}

// asciiFor maps the non-ASCII characters the figures use to ASCII for the PDF back-end.
var asciiFor = strings.NewReplacer(
	"σ̂", "sigma-hat",
	"σ", "sigma", "±", "+/-", "–", "-", "—", "-", "−", "-", "×", "x", "≥", ">=", "≤", "<=", "≈", "~",
	"⁴⁰Ar/³⁹Ar", "40Ar/39Ar", "⁴⁰", "40", "³⁹", "39", "²⁰⁶Pb/²³⁸U", "206Pb/238U", "²³⁸", "238", "²⁰⁶", "206",
	"δ¹³C", "d13C", "¹³", "13", "→", "->", "←", "<-", "’", "'", "‘", "'", "“", "\"", "”", "\"", "…", "...",
	"µ", "u", "⁻¹", "-1", "⁻", "-", "·", "*", "é", "e", "è", "e", "ö", "o", "ü", "u", "å", "a", "ø", "o", "æ", "ae",
	"\u00a0", " ", "\u2009", " ", "\u202f", " ", "°", " deg",
	"λ", "lambda", "ζ", "zeta", "τ", "tau", "δ", "delta", "μ", "u", "Φ", "Phi", "φ", "phi", "√", "sqrt", "⊕", "(+)",
	"⚠", "!", "›", ">", "▲", "^", "▼", "v", "‰", "permil", "÷", "/",
)

// plainDigits writes superscript digits as plain ones for the raster back-end: Liberation Sans has no
// ⁰ or ⁹, so "⁴⁰Ar/³⁹Ar" would lose them.
var plainDigits = strings.NewReplacer("⁰", "0", "¹", "1", "²", "2", "³", "3", "⁴", "4", "⁵", "5", "⁶", "6", "⁷", "7", "⁸", "8", "⁹", "9")

// ASCII writes s in ASCII for the PDF back-end: the figures' symbols spelled out, anything else unknown
// replaced by '?'.
func ASCII(s string) string {
	s = asciiFor.Replace(s)
	for _, r := range s {
		if r > 127 {
			return strings.Map(func(r rune) rune {
				if r > 127 {
					return '?'
				}
				return r
			}, s)
		}
	}
	return s
}

// renderVG draws a figure of w × h points with draw on a vg back-end and returns its encoded bytes.
func renderPNG(w, h float64, draw func(canvas)) ([]byte, error) {
	img := vgimg.NewWith(vgimg.UseWH(vg.Length(w), vg.Length(h)), vgimg.UseDPI(144))
	img.SetColor(color.White)
	var bg vg.Path
	bg.Move(vg.Point{})
	bg.Line(vg.Point{X: vg.Length(w)})
	bg.Line(vg.Point{X: vg.Length(w), Y: vg.Length(h)})
	bg.Line(vg.Point{Y: vg.Length(h)})
	bg.Close()
	img.Fill(bg)
	draw(&vgCanvas{c: img, h: h})
	var buf bytes.Buffer
	if _, err := (vgimg.PngCanvas{Canvas: img}).WriteTo(&buf); err != nil {
		return nil, fmt.Errorf("png: %w", err)
	}
	return buf.Bytes(), nil
}

func renderPDF(w, h float64, draw func(canvas)) ([]byte, error) {
	pdf := vgpdf.New(vg.Length(w), vg.Length(h))
	pdf.EmbedFonts(true)
	draw(&vgCanvas{c: pdf, h: h, ascii: true})
	var buf bytes.Buffer
	if _, err := pdf.WriteTo(&buf); err != nil {
		return nil, fmt.Errorf("pdf: %w", err)
	}
	return buf.Bytes(), nil
}
