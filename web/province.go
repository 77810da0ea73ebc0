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

func (s *Server) registerProvinceRoutes(r chi.Router) {
	r.Get("/provinces", s.handle(s.handleProvinceList))
	r.Get("/provinces/{id}", s.handle(s.handleProvinceShow))
	r.Get("/provinces/{id}/summary", s.handle(s.handleProvinceSummary))
}

func provinceTable(ps []store.Province) views.Table {
	t := views.Table{ID: "provinces", Columns: []views.Column{{Label: "Province"}, {Label: "Units", Num: true},
		{Label: "Dates", Num: true}, {Label: "Description"}}, Empty: "No province yet: import units or dates."}
	for _, p := range ps {
		t.Rows = append(t.Rows, []views.Cell{{Text: p.Name, URL: idURL("/provinces", p.ID)}, {Text: itoa(p.NUnits), Num: true},
			{Text: itoa(p.NDates), Num: true}, {Text: p.Description}})
	}
	return t
}

func (s *Server) handleProvinceList(w http.ResponseWriter, r *http.Request) error {
	ps, err := s.store.Provinces(r.Context())
	if err != nil {
		return err
	}
	return respondList(s, w, r, "provinces", ps, store.WriteProvincesCSV, func() views.List {
		l := views.List{Page: s.page(r.Context(), "Provinces", "Provinces"), Table: provinceTable(ps)}
		addLink(r, &l.Page, "New province", "/provinces/new")
		return l
	})
}

// unitAgeRange summarises the published ages of each unit ("min – max Ma", or one age).
func unitAgeRange(ds []store.Date) map[int64]string {
	lo, hi := map[int64]float64{}, map[int64]float64{}
	for _, d := range ds {
		if d.UnitID == nil {
			continue
		}
		id := *d.UnitID
		if v, ok := lo[id]; !ok || d.AgeMa < v {
			lo[id] = d.AgeMa
		}
		if v, ok := hi[id]; !ok || d.AgeMa > v {
			hi[id] = d.AgeMa
		}
	}
	out := map[int64]string{}
	for id := range lo {
		if lo[id] == hi[id] {
			out[id] = fixed(lo[id], 3)
		} else {
			out[id] = fixed(hi[id], 3) + " – " + fixed(lo[id], 3)
		}
	}
	return out
}

func unitTable(us []store.Unit, ranges map[int64]string) views.Table {
	t := views.Table{ID: "units", Caption: "Units, lowest in the pile first",
		Columns: []views.Column{{Label: "Pile position", Num: true, Title: "1 = lowest (oldest) in the pile"}, {Label: "Unit"},
			{Label: "Kind"}, {Label: "Volume", Unit: "km³ ± 1σ", Num: true}, {Label: "Dates", Num: true},
			{Label: "Published ages", Unit: "Ma, as published", Num: true}},
		Empty: "No units yet."}
	for _, u := range us {
		pos := "—"
		if u.PilePosition != nil {
			pos = itoa(*u.PilePosition)
		}
		vol := "—"
		if u.VolumeKm3 != nil {
			vol = num(*u.VolumeKm3)
			if u.VolumeSigmaKm3 != nil {
				vol += " ± " + num(*u.VolumeSigmaKm3)
			}
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: pos, Num: true}, {Text: u.Name, URL: idURL("/units", u.ID)},
			{Text: store.Label(store.UnitKinds(), u.Kind)}, {Text: vol, Num: true}, {Text: itoa(u.NDates), Num: true},
			{Text: orDash(ranges[u.ID]), Num: true}})
	}
	return t
}

func (s *Server) handleProvinceShow(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	p := newParams(r)
	format := p.format()
	ch, err := s.summaryChoice(ctx, p)
	if err != nil {
		return err
	}
	if err := p.err(); err != nil {
		return err
	}
	data, sums, err := analysis.SummarizeProvince(ctx, s.store, id, ch.options())
	if err != nil {
		return err
	}
	prov, units, ds := data.Province, data.Units, data.Dates
	switch format {
	case "csv":
		return writeDownload(w, fmt.Sprintf("province-%d-units.csv", id), func(w io.Writer) error { return store.WriteUnitsCSV(w, units) })
	case "json":
		writeJSON(w, http.StatusOK, map[string]any{"province": prov, "units": units, "uncertainties": jsonSigmaNote})
		return nil
	}
	d := views.Detail{Page: s.page(ctx, prov.Name, "Provinces"), Intro: prov.Description}
	d.Page.Crumbs = []views.Link{{Label: "Provinces", URL: "/provinces"}}
	d.Page.Downloads = append([]views.Link{{Label: "CSV (units)", URL: withQuery(r, "format", "csv")}, {Label: "JSON", URL: withQuery(r, "format", "json")}},
		toLinks(summaryDownloads(r, idURL("/provinces", id)+"/summary"))...)
	d.Form = summaryForm(r.URL.Path, ch)
	d.Groups = []views.FieldGroup{{Title: "Province", Fields: []views.KV{
		{Label: "Units", Value: itoa(prov.NUnits)},
		{Label: "Dates of units", Value: itoa(prov.NDates), URL: fmt.Sprintf("/dates?province=%d", id)},
		{Label: "Palaeomagnetic pole", Value: poleText(prov)},
	}}}
	if prov.HasPole() {
		d.Groups[0].Fields = append(d.Groups[0].Fields, views.KV{Label: "Pole source", Value: prov.PoleSource},
			views.KV{Label: "Palaeolatitudes of its units", Value: "on the map", URL: "/map"})
	}
	d.Groups[0].Fields = append(d.Groups[0].Fields, views.KV{Label: "Added", Value: when(prov.CreatedAt)})
	d.Tables = []views.Table{summaryTable(sums, ch), unitTable(units, unitAgeRange(ds))}
	d.Links = []views.Link{{Label: "Eruptive history: density, pulses and timeline →", URL: timelineURL(r, id)}}
	links, acts := s.provinceRecordLinks(r, prov)
	d.Links, d.Actions = append(d.Links, links...), acts
	s.render(w, r, http.StatusOK, views.DetailPage(d))
	return nil
}

// poleText writes a province's palaeomagnetic pole: "62.5° N, 145.0° W, A95 5.5° (95 % confidence)".
func poleText(p store.Province) string {
	if !p.HasPole() {
		return "none recorded"
	}
	hemi := func(v float64, pos, neg string) string {
		if v < 0 {
			return fixed(-v, 1) + "° " + neg
		}
		return fixed(v, 1) + "° " + pos
	}
	return fmt.Sprintf("%s, %s, A95 %s° (95 %% confidence)", hemi(*p.PoleLatitude, "N", "S"), hemi(*p.PoleLongitude, "E", "W"), fixed(*p.PoleA95, 1))
}
