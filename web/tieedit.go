package web

import (
	"context"
	"net/http"

	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
)

// tieEdit is the editing flow of tie points. Ties are reviewed like dates and events: a contributor's new tie
// is pending until a curator accepts it, and age models leave pending ties out unless the page's include=
// says otherwise. Only curators edit, review or delete an existing tie, since every age model of its
// section rests on it once accepted.
func (s *Server) tieEdit() recordEdit {
	sigmaLevels := func() []store.Term {
		return []store.Term{{Code: "", Label: "— (uniform tie)"}, {Code: "2", Label: "2σ"}, {Code: "1", Label: "1σ"}}
	}
	distributions := func() []store.Term {
		return []store.Term{{Code: "normal", Label: "normal: age ± σ"}, {Code: "uniform", Label: "uniform: between two ages"}}
	}
	return recordEdit{
		recordType: "tie_point", noun: "tie point", nav: "Tie points", path: "/ties", newPath: "/sections/{id}/ties/new",
		editRole: store.RoleCurator,
		intro:    "Heights in metres above the section's base, ages in Ma. A normal tie takes age ± σ at the σ level you choose (stored as 1σ); a uniform one the interval it is confined to. Every field is checked with the rules of the ties import. A contributor's tie is pending until a curator accepts it: until then age models leave it out.",
		fields: []formField{
			{"label", "Label", "unique within the section", nil},
			{"height_m", "Height (m)", "", nil},
			{"kind", "Kind", "", store.TieKinds},
			{"distribution", "Distribution", "", distributions},
			{"age_ma", "Age (Ma)", "normal ties", nil},
			{"sigma_ma", "± (Ma)", "normal ties, at the σ level below", nil},
			{"sigma_level", "σ level of the ±", "as published", sigmaLevels},
			{"age_min_ma", "Youngest age (Ma)", "uniform ties", nil},
			{"age_max_ma", "Oldest age (Ma)", "uniform ties", nil},
			{"date_sample_code", "Linked date: sample code", "optional; a date in the compilation", nil},
			{"date_method", "Linked date: method", "when the sample has dates by several methods", nil},
			{"review_state", "Review", "curators only; a contributor's tie is pending", store.ReviewStates},
			{"notes", "Notes", "", nil},
		},
		newForm: s.newInSection(store.Form{"kind": "radiometric", "distribution": "normal", "sigma_level": "2", "review_state": string(store.ReviewPending)}),
		create:  createdInSection(s.store.CreateTie, func(x store.TiePoint) int64 { return x.ID }),
		load: func(ctx context.Context, id int64) (stored, error) {
			tp, err := s.store.TiePoint(ctx, id)
			return stored{form: store.FormOfTie(tp), version: tp.Version, name: tp.Label, review: tp.ReviewState,
				crumbs: sectionCrumbs(store.Section{ID: tp.SectionID, Name: tp.Section})}, err
		},
		update: savedBy(s.store.UpdateTie),
		remove: s.store.DeleteTie,
	}
}

func (s *Server) registerTieEditRoutes(r chi.Router) {
	s.registerRecordEdit(r, s.tieEdit())
	r.Get("/ties/{id}", s.handle(s.handleTieShow))
}

// handleTieShow is the page of one tie point: its age as published, its linked date, its review (and, for
// curators, the accept and reject buttons), and its history.
func (s *Server) handleTieShow(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	p := newParams(r)
	format := p.oneOf("format", []string{"html", "json"}, "html")
	level := p.sigmaLevel()
	if err := p.err(); err != nil {
		return err
	}
	tp, err := s.store.TiePoint(ctx, id)
	if err != nil {
		return err
	}
	if format == "json" {
		writeJSON(w, http.StatusOK, map[string]any{"tie_point": tp, "uncertainties": jsonSigmaNote})
		return nil
	}
	v := views.Detail{Page: s.page(ctx, tp.Label, "Tie points")}
	v.Page.Crumbs = sectionCrumbs(store.Section{ID: tp.SectionID, Name: tp.Section})
	v.Page.Downloads = []views.Link{{Label: "JSON", URL: withQuery(r, "format", "json")}}
	t := tieTable([]store.TiePoint{tp}, level, false)
	t.Caption = "Tie point"
	v.Tables = []views.Table{t}
	review := reviewField(tp.ReviewState)
	v.Groups = []views.FieldGroup{{Title: "Record", Fields: append([]views.KV{review,
		{Label: "Section", Value: tp.Section, URL: idURL("/sections", tp.SectionID)},
		{Label: "Distribution", Value: tp.Distribution},
	}, recordFields(tp.ID, tp.Version, tp.CreatedAt, tp.UpdatedAt)...)}}
	v.Notes = append(v.Notes, ageModelReviewNotes("tie point", tp.Section, tp.ReviewState, tp.ReviewNote)...)
	v.Links, v.Actions = recordPage(r, s.tieEdit(), id, stored{version: tp.Version, review: tp.ReviewState})
	v.Links = append(v.Links, views.Link{Label: "Show the age at " + itoa(3-level) + "σ", URL: withQuery(r, "sigma", itoa(3-level))})
	s.render(w, r, http.StatusOK, views.DetailPage(v))
	return nil
}
