package web

import (
	"fmt"
	"io"
	"net/http"

	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
)

func (s *Server) registerUnitRoutes(r chi.Router) {
	r.Get("/units/{id}", s.handle(s.handleUnitShow))
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
	if err := p.err(); err != nil {
		return err
	}
	u, err := s.store.Unit(ctx, id)
	if err != nil {
		return err
	}
	ds, _, err := s.store.Dates(ctx, store.DateFilter{UnitID: id, Sort: "-age"})
	if err != nil {
		return err
	}
	switch format {
	case "csv":
		return writeDownload(w, fmt.Sprintf("unit-%d-dates.csv", id), func(w io.Writer) error { return store.WriteDatesCSV(w, ds) })
	case "json":
		writeJSON(w, http.StatusOK, map[string]any{"unit": u, "dates": ds, "uncertainties": jsonSigmaNote})
		return nil
	}
	v := views.Detail{Page: s.page(ctx, u.Name, "Provinces")}
	v.Page.Crumbs = []views.Link{{Label: "Provinces", URL: "/provinces"}, {Label: u.Province, URL: idURL("/provinces", u.ProvinceID)}}
	v.Page.Downloads = []views.Link{{Label: "CSV (dates)", URL: withQuery(r, "format", "csv")}, {Label: "JSON", URL: withQuery(r, "format", "json")}}
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
	other := 3 - level
	v.Links = []views.Link{{Label: fmt.Sprintf("Show uncertainties at %dσ", other), URL: withQuery(r, "sigma", itoa(other))},
		{Label: "These dates in the date list", URL: fmt.Sprintf("/dates?unit=%d", id)}}
	t := dateTable(r, ds, level, false)
	t.Caption = fmt.Sprintf("Dates of %s (%d)", u.Name, len(ds))
	v.Tables = []views.Table{t}
	s.render(w, r, http.StatusOK, views.DetailPage(v))
	return nil
}
