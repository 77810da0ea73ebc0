package views

import (
	"bytes"
	"encoding/xml"
	"errors"
	"io"
	"slices"
	"strings"
	"testing"
)

// recorder is a canvas that keeps the text drawn on it.
type recorder struct{ texts []string }

func (r *recorder) rect(x, y, w, h float64, p paint)                  {}
func (r *recorder) poly(pts []pt, closed bool, p paint)               {}
func (r *recorder) circle(cx, cy, rad float64, p paint)               {}
func (r *recorder) text(x, y float64, s string, ts textStyle)         { r.texts = append(r.texts, s) }
func (r *recorder) textUp(x, y float64, s string, ts textStyle)       { r.texts = append(r.texts, s) }
func (r *recorder) fade(x, y, w, h float64, c string, a0, a1 float64) {}
func (r *recorder) begin(title, href string)                          { r.texts = append(r.texts, title) }
func (r *recorder) end()                                              {}

// sampleFigure has the labels the app writes: σ, ±, ⁴⁰Ar/³⁹Ar, λ, ζ, en dashes, and characters that
// must be escaped in SVG.
func sampleFigure() TimelineFigure {
	ages := []float64{154, 154.5, 155, 155.5, 156}
	return TimelineFigure{
		Title:    "Test <province> & co — eruptive history",
		Subtitle: []string{"Counted: one value per unit; ⁴⁰Ar/³⁹Ar on Min et al. 2000 λ, FCs 28.201 Ma.", "Bandwidth: ISJ: ζ(t) has no root on [0, 0.1]"},
		MinMa:    153.8, MaxMa: 156.2,
		Density: &FigureDensity{AgesMa: ages, Value: []float64{0, 1, 2, 1, 0}, Lower: []float64{0, 0.5, 1, 0.5, 0}, Upper: []float64{0.1, 1.5, 3, 1.5, 0.1},
			PDP: []float64{0, 0.2, 9, 0.2, 0}, Label: "KDE, h = 0.25 Ma", BandLabel: "95 % band", PDPLabel: "PDP (not a KDE)", YLabel: "Density (per Ma)"},
		Pulses: []FigurePulse{{Label: "P1", Detail: "97 %", Title: "P1: mode 155.0 Ma (95 %: 155.1 – 154.9)", ModeMa: 155, StartMa: 155.6, EndMa: 154.4,
			ModeLoMa: 154.9, ModeHiMa: 155.1, StartLoMa: 155.4, StartHiMa: 155.8, EndLoMa: 154.2, EndHiMa: 154.6}},
		Rows: []FigureRow{{Label: "Unit A", URL: "/units/1", Group: "Lava pile", HasValue: true, ValueMa: 155, ValueLoMa: 154.9, ValueHiMa: 155.1,
			ValueNote: "U–Pb weighted mean 155.00 ± 0.10 Ma (2σ)",
			Dates: []FigureDate{{AgeMa: 155, LoMa: 154.9, HiMa: 155.1, Marker: "upb_idtims", Counted: true, Title: "S-1 · U–Pb ID-TIMS · 155.00 ± 0.10 Ma (2σ) \"x\" <y>", URL: "/dates/1"},
				{AgeMa: 155.2, LoMa: 154.8, HiMa: 155.6, Marker: "arar_isochron", Title: "S-2 · not counted", URL: "/dates/2"}}}},
		Stages:    []FigureStage{{Name: "Oxfordian", BaseMa: 161.5, BasePmMa: 1, TopMa: 154.8, Colour: "#bfe7f1", Title: "Oxfordian"}, {Name: "Kimmeridgian", BaseMa: 154.8, BasePmMa: 0.8, TopMa: 149.2, Colour: "#ccecf4", Title: "Kimmeridgian"}},
		Markers:   []MarkerSpec{{"upb_idtims", "U–Pb ID-TIMS"}, {"arar_isochron", "⁴⁰Ar/³⁹Ar isochron"}},
		SigmaNote: "Error bars: each date ± 2σ, analytical.",
		Credit:    "Timescale: ICS chart v2024/12 (CC BY 4.0).",
	}
}

// The PDF back-end garbles non-ASCII text (STACK.md), so every label is written in ASCII there, and
// none of them may lose a character to '?'.
func TestPDFTextIsASCII(t *testing.T) {
	f := sampleFigure()
	r := &recorder{}
	f.draw(r, f.layout())
	if len(r.texts) < 20 {
		t.Fatalf("only %d texts drawn", len(r.texts))
	}
	for _, s := range r.texts {
		a := ASCII(s)
		if strings.ContainsFunc(a, func(c rune) bool { return c > 127 }) || strings.Count(a, "?") > strings.Count(s, "?") {
			t.Errorf("ASCII(%q) = %q", s, a)
		}
	}
	cases := []struct{ in, want string }{
		{"± 2σ", "+/- 2sigma"},
		{"⁴⁰Ar/³⁹Ar plateau", "40Ar/39Ar plateau"},
		{"U–Pb ID-TIMS", "U-Pb ID-TIMS"},
		{"← older", "<- older"},
		{"Min et al. 2000 λ", "Min et al. 2000 lambda"},
	}
	for _, tc := range cases {
		if got := ASCII(tc.in); got != tc.want {
			t.Errorf("ASCII(%q) = %q, want %q", tc.in, got, tc.want)
		}
	}
	pdf, err := f.PDF()
	if err != nil || !bytes.HasPrefix(pdf, []byte("%PDF")) {
		t.Errorf("PDF: %v, starts %q", err, pdf[:min(8, len(pdf))])
	}
}

func TestSVGEscapesAndParses(t *testing.T) {
	svg := sampleFigure().SVG()
	dec := xml.NewDecoder(bytes.NewReader(svg))
	var titles int
	for {
		tok, err := dec.Token()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatalf("SVG does not parse: %v", err)
		}
		if se, ok := tok.(xml.StartElement); ok && se.Name.Local == "title" {
			titles++
		}
	}
	if titles < 5 {
		t.Errorf("%d hover titles, want one per date, unit value, pulse and stage", titles)
	}
	for _, want := range []string{`<a href="/dates/1"><title>S-1`, "&lt;province&gt; &amp; co", `id="density"`, `id="band"`, `id="pdp"`, "PDP clipped"} {
		if !bytes.Contains(svg, []byte(want)) {
			t.Errorf("SVG lacks %q", want)
		}
	}
}

func TestNiceTicks(t *testing.T) {
	cases := []struct {
		lo, hi float64
		want   []float64
		dec    int
	}{
		{152.8, 156.6, []float64{153, 153.5, 154, 154.5, 155, 155.5, 156, 156.5}, 1},
		{0, 2.6, []float64{0, 0.5, 1, 1.5, 2, 2.5}, 1},
		{201.1, 201.45, []float64{201.1, 201.15, 201.2, 201.25, 201.3, 201.35, 201.4, 201.45}, 2},
		{60, 250, []float64{75, 100, 125, 150, 175, 200, 225, 250}, 0},
	}
	for _, tc := range cases {
		got, _, dec := ticks(tc.lo, tc.hi, 8)
		round := func(v float64) float64 { return float64(int64(v*1e6+0.5)) / 1e6 }
		for i := range got {
			got[i] = round(got[i])
		}
		if !slices.Equal(got, tc.want) || dec != tc.dec {
			t.Errorf("ticks(%v, %v, 8) = %v (%d decimals), want %v (%d)", tc.lo, tc.hi, got, dec, tc.want, tc.dec)
		}
	}
}
