package web

import (
	"net/http"
	"net/url"

	"coeval/views"
)

func (s *Server) handleHome(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	p := newParams(r)
	format := p.oneOf("format", []string{"html", "json"}, "html")
	if err := p.err(); err != nil {
		return err
	}
	c, err := s.store.Counts(ctx)
	if err != nil {
		return err
	}
	provinces, err := s.store.Provinces(ctx)
	if err != nil {
		return err
	}
	sections, err := s.store.Sections(ctx)
	if err != nil {
		return err
	}
	latest, err := s.store.LatestBatches(ctx, 8)
	if err != nil {
		return err
	}
	if format == "json" {
		writeJSON(w, http.StatusOK, map[string]any{"counts": c, "provinces": provinces, "sections": sections, "latest": latest})
		return nil
	}
	h := views.Home{Page: s.page(ctx, "The compilation", "Home")}
	h.Subtitle = "Eruption dates of large igneous provinces and ages of events in the sedimentary record, in one shared compilation."
	h.Page.Downloads = []views.Link{{Label: "JSON", URL: "/?format=json"}}
	h.Stats = []views.Stat{
		{Label: "provinces", Value: itoa(c.Provinces), URL: "/provinces"},
		{Label: "units", Value: itoa(c.Units), URL: "/provinces"},
		{Label: "dates", Value: itoa(c.Dates), URL: "/dates"},
		{Label: "pending review", Value: itoa(c.DatesPending), URL: "/dates?review=pending"},
		{Label: "sections", Value: itoa(c.Sections), URL: "/sections"},
		{Label: "samples", Value: itoa(c.Samples), URL: "/sections"},
		{Label: "tie points", Value: itoa(c.TiePoints), URL: "/ties"},
		{Label: "events", Value: itoa(c.Events), URL: "/events"},
	}
	if rs, ok := s.releaseStore(); ok {
		if rels, err := rs.Releases(ctx); err == nil && len(rels) > 0 {
			h.Citation = citation(rels[0])
			h.CitationURL = "/releases/" + url.PathEscape(rels[0].Version)
		}
	}
	h.Provinces = provinceTable(provinces)
	h.Sections = sectionTable(sections)
	h.Latest = views.Table{ID: "latest", Columns: []views.Column{{Label: "When"}, {Label: "Change"}, {Label: "Source"}, {Label: "Summary"}},
		Empty: "Nothing has been added yet."}
	for _, b := range latest {
		h.Latest.Rows = append(h.Latest.Rows, []views.Cell{{Text: when(b.At)}, {Text: b.Kind}, {Text: b.Source}, {Text: b.Summary}})
	}
	s.render(w, r, http.StatusOK, views.HomePage(h))
	return nil
}
