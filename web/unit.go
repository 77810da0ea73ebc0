package web

import (
	"fmt"
	"io"
	"net/http"

	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
	"coeval/web/analysis"
)

func (s *Server) registerUnitRoutes(r chi.Router) {
	r.Get("/units/{id}", s.handle(s.handleUnitShow))
	r.Get("/units/{id}/summary", s.handle(s.handleUnitSummary))
}

func (s *Server) handleUnitShow(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	p := newParams(r)
	format := p.format()
	level := p.sigmaLevel()
	ch, err := s.summaryChoice(ctx, p)
	if err != nil {
		return err
	}
	if err := p.err(); err != nil {
		return err
	}
	data, us, err := analysis.SummarizeUnitByID(ctx, s.store, id, ch.options())
	if err != nil {
		return err
	}
	u, ds := data.Unit, data.Dates
	switch format {
	case "csv":
		return writeDownload(w, fmt.Sprintf("unit-%d-dates.csv", id), func(w io.Writer) error { return writeDatesCSV(w, ds, ch.Cal) })
	case "json":
		writeJSON(w, http.StatusOK, map[string]any{"unit": u, "dates": datesJSON(ds, ch.Cal), "uncertainties": jsonSigmaNote})
		return nil
	}
	v := views.Detail{Page: s.page(ctx, u.Name, "Provinces")}
	v.Page.Crumbs = []views.Link{{Label: "Provinces", URL: "/provinces"}, {Label: u.Province, URL: idURL("/provinces", u.ProvinceID)}}
	v.Page.Downloads = append([]views.Link{{Label: "CSV (dates)", URL: withQuery(r, "format", "csv")}, {Label: "JSON", URL: withQuery(r, "format", "json")}},
		toLinks(summaryDownloads(r, idURL("/units", id)+"/summary"))...)
	v.Form = summaryForm(r.URL.Path, ch)
	v.Notes = []string{summaryIntro(ch)}
	pos, vol := "—", "—"
	if u.PilePosition != nil {
		pos = itoa(*u.PilePosition) + " (1 = lowest)"
	}
	if u.VolumeKm3 != nil {
		vol = num(*u.VolumeKm3) + " km³"
		if u.VolumeSigmaKm3 != nil {
			vol = num(*u.VolumeKm3) + " ± " + num(*u.VolumeSigmaKm3) + " km³ (1σ)"
		}
	}
	v.Groups = []views.FieldGroup{{Title: "Unit", Fields: []views.KV{
		{Label: "Province", Value: u.Province, URL: idURL("/provinces", u.ProvinceID)},
		{Label: "Kind", Value: store.Label(store.UnitKinds(), u.Kind)},
		{Label: "Position in the pile", Value: pos},
		{Label: "Volume", Value: vol},
		{Label: "Location", Value: coord(u.Latitude, u.Longitude)},
		{Label: "Notes", Value: orDash(u.Notes)},
	}}}
	v.Groups = append(v.Groups, summaryGroups(us, ch)...)
	other := 3 - level
	v.Links = []views.Link{{Label: fmt.Sprintf("Show uncertainties at %dσ", other), URL: withQuery(r, "sigma", itoa(other))},
		{Label: "These dates in the date list", URL: fmt.Sprintf("/dates?unit=%d", id)}}
	links, acts := recordLinks(r, s.unitEdit(), id, stored{version: u.Version})
	v.Links, v.Actions = append(v.Links, links...), acts
	for _, sys := range us.Systems {
		v.Tables = append(v.Tables, entryTable(sys, ch))
	}
	t := dateTable(r, ds, level, false, ch.Cal)
	t.Caption = fmt.Sprintf("Dates of %s (%d), as published and recalculated", u.Name, len(ds))
	v.Tables = append(v.Tables, t)
	s.render(w, r, http.StatusOK, views.DetailPage(v))
	return nil
}
