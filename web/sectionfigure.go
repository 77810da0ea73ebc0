package web

import (
	"fmt"
	"net/http"
	"strings"
)

// The section figures as downloads: one drawing (views' canvas) written as SVG, PNG or PDF. The format
// comes from the path (figure.svg, figure.png, figure.pdf) or from ?format= on any of them; every other
// parameter is the page's, so the download shows what the page shows.

// figureFormat returns the format asked for and the request without its format parameter (the analysis
// reads format as html|csv|json).
func figureFormat(r *http.Request, ext string) (string, *http.Request, error) {
	q := r.URL.Query()
	f := strings.TrimSpace(q.Get("format"))
	if f == "" {
		f = ext
	}
	switch f {
	case "svg", "png", "pdf":
	default:
		return "", nil, badRequest{message: "This address has parameters that cannot be used. Fix them and reload:",
			problems: []string{fmt.Sprintf("format: unknown value %q; want one of svg, png, pdf", f)}}
	}
	q.Del("format")
	r2 := r.Clone(r.Context())
	r2.URL.RawQuery = q.Encode()
	return f, r2, nil
}

// figure is what the section figures can be written as.
type figure interface {
	SVG() []byte
	PNG() ([]byte, error)
	PDF() ([]byte, error)
}

func writeFigure(w http.ResponseWriter, f figure, format, base string) error {
	switch format {
	case "png":
		b, err := f.PNG()
		if err != nil {
			return err
		}
		return writeFile(w, "image/png", base+".png", b)
	case "pdf":
		b, err := f.PDF()
		if err != nil {
			return err
		}
		return writeFile(w, "application/pdf", base+".pdf", b)
	}
	return writeFile(w, "image/svg+xml; charset=utf-8", base+".svg", append([]byte(`<?xml version="1.0" encoding="UTF-8"?>`+"\n"), f.SVG()...))
}

// sectionFigureAs serves the figure of one section in the format of ext (or ?format=).
func (s *Server) sectionFigureAs(ext string) func(http.ResponseWriter, *http.Request) error {
	return func(w http.ResponseWriter, r *http.Request) error {
		format, r, err := figureFormat(r, ext)
		if err != nil {
			return err
		}
		a, _, err := s.sectionAnalysisFor(r)
		if err != nil {
			return err
		}
		return writeFigure(w, sectionFigure(a), format, fmt.Sprintf("section-%d-figure", a.Sec.ID))
	}
}

// alignedFigureAs serves the figure of the aligned sections in the format of ext (or ?format=).
func (s *Server) alignedFigureAs(ext string) func(http.ResponseWriter, *http.Request) error {
	return func(w http.ResponseWriter, r *http.Request) error {
		format, r, err := figureFormat(r, ext)
		if err != nil {
			return err
		}
		as, o, _, err := s.alignedRequest(r)
		if err != nil {
			return err
		}
		return writeFigure(w, alignedFigure(as, o), format, "sections-aligned")
	}
}
