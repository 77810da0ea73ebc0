package web

import (
	"fmt"
	"net/http"
	"strings"

	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
)

// The help pages: what each import file holds, column by column, from the same definitions the importer
// reads its header with (store.FileFormats), and a template of each to download.

func (s *Server) registerHelpRoutes(r chi.Router) {
	r.Get("/help", s.handle(s.handleHelp))
	r.Get("/help/files/{kind}", s.handle(s.handleFileFormat))
	r.Get("/help/addresses", s.handle(s.handleHelpAddresses))
	r.Get("/help/downloads/{kind}", s.handle(s.handleDownloadFormat))
}

func (s *Server) handleHelp(w http.ResponseWriter, r *http.Request) error {
	v := views.Detail{Page: s.page(r.Context(), "Help", "Help")}
	v.Intro = "What each kind of file holds, column by column, with a template to download. The importer reads its files with these very definitions, so this page and the importer cannot disagree."
	t := views.Table{Caption: "Files the compilation is built from", Columns: []views.Column{
		{Label: "File"}, {Label: "One row per"}, {Label: "Template"},
	}}
	for _, f := range store.FileFormats() {
		per := f.Intro
		if i := strings.Index(per, ". "); i > 0 {
			per = per[:i+1]
		}
		t.Rows = append(t.Rows, []views.Cell{
			{Text: f.Title, URL: "/help/files/" + f.Kind},
			{Text: per},
			{Text: "template (CSV)", URL: "/help/files/" + f.Kind + "?format=csv"},
		})
	}
	d := views.Table{Caption: "Downloads: their columns, units and meanings", Columns: []views.Column{{Label: "Download"}}}
	for _, k := range downloadKinds() {
		d.Rows = append(d.Rows, []views.Cell{{Text: k.Title, URL: "/help/downloads/" + k.Kind}})
	}
	v.Tables = []views.Table{t, d}
	v.Links = []views.Link{{Label: "Addresses for scripts: the choices every page's address can carry", URL: "/help/addresses"}}
	v.Notes = []string{
		"Every file: UTF-8, comma-separated, the first row the header. Column names are exact and an unknown column is refused, so a misspelt or wrongly-unitised column is never silently dropped. Column order is free. An empty cell is no value. Numbers use a point as the decimal mark. Uncertainties are given at the σ level the row states and stored as 1σ.",
		"Files are imported from the Import page (signed in as a contributor or curator) or from the command line; each file is imported whole or not at all.",
	}
	s.render(w, r, http.StatusOK, views.DetailPage(v))
	return nil
}

func (s *Server) handleFileFormat(w http.ResponseWriter, r *http.Request) error {
	kind := chi.URLParam(r, "kind")
	f, ok := store.FileFormatByKind(kind)
	if !ok {
		return notFoundError{what: "file kind " + fmt.Sprintf("%q", kind)}
	}
	p := newParams(r)
	format := p.oneOf("format", []string{"html", "csv"}, "html")
	if err := p.err(); err != nil {
		return err
	}
	if format == "csv" {
		w.Header().Set("Content-Type", "text/csv; charset=utf-8")
		w.Header().Set("Content-Disposition", fmt.Sprintf("attachment; filename=%q", "coeval-"+f.Kind+"-template.csv"))
		_, err := w.Write(f.Template())
		return err
	}
	v := views.Detail{Page: s.page(r.Context(), "File format: "+strings.ToLower(f.Title), "Help")}
	v.Crumbs = []views.Link{{Label: "Help", URL: "/help"}}
	v.Intro = f.Intro
	if f.PerSection {
		v.Notes = append(v.Notes, "One file per section: the section is chosen when the file is imported, not named in the file.")
	}
	v.Notes = append(v.Notes, f.Notes...)
	v.Links = []views.Link{{Label: "Download a template with one example row (CSV)", URL: "/help/files/" + f.Kind + "?format=csv"}, {Label: "All file kinds", URL: "/help"}}
	t := views.Table{Caption: "Columns", Columns: []views.Column{
		{Label: "Column"}, {Label: "Needed"}, {Label: "What it holds"}, {Label: "Allowed values"}, {Label: "Example"},
	}}
	for _, c := range f.Columns {
		needed := "optional"
		if c.Required {
			needed = "required"
		}
		if c.Instead != "" {
			needed = "instead of " + c.Instead
		}
		var vals []string
		for _, v := range c.Values {
			if v.Label != v.Code {
				vals = append(vals, v.Code+" ("+v.Label+")")
			} else {
				vals = append(vals, v.Code)
			}
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: c.Name, Class: "code"}, {Text: needed}, {Text: c.Meaning},
			{Text: strings.Join(vals, ", ")}, {Text: c.Example}})
	}
	v.Tables = []views.Table{t}
	s.render(w, r, http.StatusOK, views.DetailPage(v))
	return nil
}
