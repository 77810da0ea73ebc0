package web

import (
	"bytes"
	"context"
	"image/png"
	"net/http"
	"strings"
	"testing"

	"coeval/views"
)

// The section and aligned figures come as SVG, PNG and PDF from one drawing: the PNG decodes to an image
// of the figure's size at 144 dpi, the PDF is a PDF, ?format= works on any of the paths, and a bad
// format is a 400 that names the parameter.
func TestSectionFigureDownloads(t *testing.T) {
	srv, _ := mustServer(t)
	sec := demoSectionIDs(t, srv)["Skarfell Creek"]
	for _, base := range []string{sec + "/figure", "/sections/aligned/figure"} {
		status, h, body := get(t, srv, base+".png?draws=200")
		if status != http.StatusOK || h.Get("Content-Type") != "image/png" {
			t.Fatalf("%s.png: status %d, type %q", base, status, h.Get("Content-Type"))
		}
		img, err := png.Decode(strings.NewReader(body))
		if err != nil {
			t.Fatalf("%s.png does not decode: %v", base, err)
		}
		if b := img.Bounds(); b.Dx() < 1000 || b.Dy() < 1000 {
			t.Errorf("%s.png is %v, want at least 1000 × 1000 pixels (144 dpi)", base, b)
		}
		status, h, body = get(t, srv, base+".pdf?draws=200")
		if status != http.StatusOK || h.Get("Content-Type") != "application/pdf" || !strings.HasPrefix(body, "%PDF") {
			t.Errorf("%s.pdf: status %d, type %q, starts %q", base, status, h.Get("Content-Type"), body[:min(8, len(body))])
		}
		status, h, body = get(t, srv, base+".svg?format=pdf&draws=200")
		if status != http.StatusOK || !strings.HasPrefix(body, "%PDF") || !strings.Contains(h.Get("Content-Disposition"), ".pdf") {
			t.Errorf("%s.svg?format=pdf: status %d, starts %q", base, status, body[:min(8, len(body))])
		}
		status, _, body = get(t, srv, base+".svg?draws=200")
		if status != http.StatusOK || !strings.HasPrefix(body, "<?xml") || wellFormed(body) != nil {
			t.Errorf("%s.svg: status %d, not a well-formed SVG", base, status)
		}
		if status, _, body := get(t, srv, base+".png?format=gif"); status != http.StatusBadRequest || !strings.Contains(body, "format: unknown value") {
			t.Errorf("%s.png?format=gif: status %d, want 400 naming format", base, status)
		}
	}
	_, _, page := get(t, srv, sec)
	for _, want := range []string{"/figure.png", "/figure.pdf", "Figure (SVG)"} {
		if !strings.Contains(page, want) {
			t.Errorf("the section page lacks a link to %s", want)
		}
	}
}

// Every text the section figure draws reads in ASCII in the PDF without losing a character to '?'
// (STACK.md: the PDF back-end garbles non-ASCII text).
func TestSectionFigureTextsHaveASCII(t *testing.T) {
	db := mustDemoDB(t)
	ctx := context.Background()
	srv := &Server{store: db}
	secs, _ := db.Sections(ctx)
	for _, sec := range secs {
		o := sectionOptionsFrom(&params{}, sec)
		o.Draws = 200
		a, err := srv.loadSectionAnalysis(ctx, sec, o)
		if err != nil {
			t.Fatal(err)
		}
		f := sectionFigure(a)
		texts := []string{f.Title, f.Subtitle, "Height (m)"}
		texts = append(texts, f.Notes...)
		for _, p := range f.Panels {
			texts = append(texts, p.Title, p.Unit, p.Empty, p.GutterLabel)
		}
		for _, it := range f.Legend {
			texts = append(texts, it.Label)
		}
		for _, b := range f.Bands {
			texts = append(texts, b.Label)
		}
		for _, s := range texts {
			a := views.ASCII(s)
			if strings.ContainsFunc(a, func(c rune) bool { return c > 127 }) || strings.Count(a, "?") > strings.Count(s, "?") {
				t.Errorf("%s: ASCII(%q) = %q", sec.Name, s, a)
			}
		}
		pdf, err := f.PDF()
		if err != nil || !bytes.HasPrefix(pdf, []byte("%PDF")) {
			t.Errorf("%s: PDF %v", sec.Name, err)
		}
	}
}
