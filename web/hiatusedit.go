package web

import (
	"context"
	"net/http"

	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
)

// hiatusEdit is the editing flow of hiatuses. They are reviewed like tie points, since the age–height model
// honours them: a contributor's new hiatus is pending until a curator accepts it, and age models leave
// pending hiatuses out unless the page's include= says otherwise. Only curators edit, review or delete an
// existing hiatus.
func (s *Server) hiatusEdit() recordEdit {
	return recordEdit{
		recordType: "hiatus", noun: "hiatus", nav: "Sections", path: "/hiatuses", newPath: "/sections/{id}/hiatuses/new",
		editRole: store.RoleCurator,
		intro:    "A hiatus is a surface where deposition stopped: at least the minimum duration passes at its height, and the age–height model adds that time (and possibly more) between the ties around it. Heights in metres above the section's base, durations in Ma. A contributor's hiatus is pending until a curator accepts it: until then age models leave it out.",
		fields: []formField{
			{"height_m", "Height (m)", "above the section's base; one hiatus per height", nil},
			{"min_duration_ma", "Minimum duration (Ma)", "the least time missing; 0 when only the surface is known", nil},
			{"review_state", "Review", "curators only; a contributor's hiatus is pending", store.ReviewStates},
			{"notes", "Notes", "the evidence: surface, lag, missing zones", nil},
		},
		newForm: s.newInSection(store.Form{"min_duration_ma": "0", "review_state": string(store.ReviewPending)}),
		create:  createdInSection(s.store.CreateHiatus, func(x store.Hiatus) int64 { return x.ID }),
		load: func(ctx context.Context, id int64) (stored, error) {
			h, err := s.store.Hiatus(ctx, id)
			return stored{form: store.FormOfHiatus(h), version: h.Version, name: hiatusTitle(h), review: h.ReviewState,
				crumbs: sectionCrumbs(store.Section{ID: h.SectionID, Name: h.Section})}, err
		},
		update: savedBy(s.store.UpdateHiatus),
		remove: s.store.DeleteHiatus,
	}
}

func (s *Server) registerHiatusEditRoutes(r chi.Router) {
	s.registerRecordEdit(r, s.hiatusEdit())
	r.Get("/hiatuses/{id}", s.handle(s.handleHiatusShow))
}

// hiatusTitle is what a hiatus's page is called: it has no name, only a height.
func hiatusTitle(h store.Hiatus) string { return "Hiatus at " + num(h.HeightM) + " m" }

// hiatusTable lists a section's hiatuses with their review state (pending and rejected marked as for tie
// points), each linked to its page.
func hiatusTable(hs []store.Hiatus) views.Table {
	t := views.Table{ID: "hiatuses", Caption: "Hiatuses", Columns: []views.Column{{Label: "Hiatus"}, {Label: "Height", Unit: "m", Num: true},
		{Label: "Minimum duration", Unit: "Ma", Num: true}, {Label: "Review"}, {Label: "Notes"}}, Empty: "No hiatuses."}
	for _, h := range hs {
		review := views.Cell{Text: store.Label(store.ReviewStates(), h.ReviewState)}
		if h.ReviewState != store.ReviewAccepted {
			review.Class = "pending"
			review.Title = h.ReviewNote
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: hiatusName(h), URL: idURL("/hiatuses", h.ID)}, {Text: num(h.HeightM), Num: true},
			{Text: num(h.MinDurationMa), Num: true}, review, {Text: orDash(h.Notes)}})
	}
	return t
}

// handleHiatusShow is the page of one hiatus: its height and minimum duration, its review (and, for
// curators, the accept and reject buttons), and its history.
func (s *Server) handleHiatusShow(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	id, format, err := idAndFormat(r)
	if err != nil {
		return err
	}
	h, err := s.store.Hiatus(ctx, id)
	if err != nil {
		return err
	}
	if format == "json" {
		writeJSON(w, http.StatusOK, map[string]any{"hiatus": h})
		return nil
	}
	v := views.Detail{Page: s.page(ctx, hiatusTitle(h), "Sections")}
	v.Page.Crumbs = sectionCrumbs(store.Section{ID: h.SectionID, Name: h.Section})
	v.Page.Downloads = []views.Link{{Label: "JSON", URL: withQuery(r, "format", "json")}}
	review := reviewField(h.ReviewState)
	v.Groups = []views.FieldGroup{{Title: "Hiatus", Fields: []views.KV{
		{Label: "Section", Value: h.Section, URL: idURL("/sections", h.SectionID)},
		{Label: "Height", Value: num(h.HeightM) + " m above the base"},
		{Label: "Minimum duration", Value: num(h.MinDurationMa) + " Ma"},
		{Label: "Notes", Value: orDash(h.Notes)},
	}}, {Title: "Record", Fields: append([]views.KV{review}, recordFields(h.ID, h.Version, h.CreatedAt, h.UpdatedAt)...)}}
	v.Notes = append(v.Notes, "The age–height model honours a hiatus that lies between its lowest and highest tie points: at least the minimum duration passes at this height. The naive linear model ignores hiatuses.")
	v.Notes = append(v.Notes, ageModelReviewNotes("hiatus", h.Section, h.ReviewState, h.ReviewNote)...)
	v.Links, v.Actions = recordPage(r, s.hiatusEdit(), id, stored{version: h.Version, review: h.ReviewState})
	s.render(w, r, http.StatusOK, views.DetailPage(v))
	return nil
}
