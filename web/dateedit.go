package web

import (
	"context"
	"fmt"
	"net/http"

	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
)

// dateEdit is the editing flow of dates, the same as every other record's (recordEdit): contributors add
// dates and edit the drafts they added (a contributor's date, new or edited, is pending), curators edit
// anything, review, delete and restore.
func (s *Server) dateEdit() recordEdit {
	return recordEdit{
		recordType: "date", noun: "date", nav: "Dates", path: "/dates", newPath: "/dates/new",
		editRole: store.RoleContributor,
		intro:    "Enter values as published: uncertainties at the σ level you choose below (they are stored as 1σ). Every field is checked with the rules of the dates import.",
		fields:   dateFields(),
		newForm: func(r *http.Request) (store.Form, []views.Link, error) {
			return store.Form{"sigma_level": "2", "interpretation": "eruption", "review_state": string(store.ReviewPending)}, dateCrumbs(), nil
		},
		create: func(r *http.Request, f store.Form, curator bool) (int64, error) {
			d, err := s.store.CreateDate(r.Context(), f, curator)
			return d.ID, err
		},
		load: func(ctx context.Context, id int64) (stored, error) {
			d, err := s.store.Date(ctx, id)
			return stored{form: store.FormOfDate(d), version: d.Version, name: d.SampleCode, review: d.ReviewState,
				crumbs: dateCrumbs()}, err
		},
		update: savedBy(s.store.UpdateDate),
		remove: s.store.DeleteDate,
		mayEdit: func(r *http.Request, id int64, st stored) error {
			return s.mayEditDraft(r, "date", "date", id, st.review)
		},
		suggest: s.dateOwnerChoices,
	}
}

// dateOwnerChoices are the known provinces, units and sections, offered as a date's form is filled in.
func (s *Server) dateOwnerChoices(ctx context.Context) map[string][]views.Option {
	out := map[string][]views.Option{}
	provs, err := s.store.Provinces(ctx)
	if err != nil {
		return nil
	}
	for _, p := range provs {
		out["province"] = append(out["province"], views.Option{Value: p.Name})
		units, err := s.store.Units(ctx, p.ID)
		if err != nil {
			return nil
		}
		for _, u := range units {
			out["unit"] = append(out["unit"], views.Option{Value: u.Name, Label: p.Name})
		}
	}
	secs, err := s.store.Sections(ctx)
	if err != nil {
		return nil
	}
	for _, sec := range secs {
		out["section"] = append(out["section"], views.Option{Value: sec.Name})
	}
	return out
}

func dateCrumbs() []views.Link { return []views.Link{{Label: "Dates", URL: "/dates"}} }

// registerDateEditRoutes adds the editing flow of dates and the restore of any record's earlier state.
func (s *Server) registerDateEditRoutes(r chi.Router) {
	s.registerRecordEdit(r, s.dateEdit())
	r.With(s.requireRole(store.RoleCurator)).Post("/revisions/{id}/revert", s.handle(s.handleRevisionRevert))
}

// dateFields are the inputs of the date form, in the import format's column names.
func dateFields() []formField {
	methods := func() []store.Term {
		var ts []store.Term
		for _, m := range store.Methods() {
			ts = append(ts, m.Term)
		}
		return ts
	}
	return []formField{
		{"province", "Province", "for a unit's date: one of the list", nil},
		{"unit", "Unit", "one of the province's units", nil},
		{store.FormNewUnit, "Create a new unit", "only for a unit (or province) not yet in the compilation", func() []store.Term {
			return []store.Term{{Code: "", Label: "no: the unit is in the list"}, {Code: "1", Label: "yes: create it"}}
		}},
		{"section", "Section", "for a horizon's date (instead of a unit)", nil},
		{"height_m", "Height (m)", "of the horizon in the section", nil},
		{"sample_code", "Sample code", "unique per method", nil},
		{"method", "Method", "", methods},
		{"material", "Material", "e.g. zircon, plagioclase", nil},
		{"interpretation", "Interpretation", "", store.Interpretations},
		{"age_ma", "Age (Ma)", "as published", nil},
		{"sigma_ma", "± analytical (Ma)", "U–Pb: X", nil},
		{"sigma_y_ma", "± with tracer (Ma)", "U–Pb: Y, optional", nil},
		{"sigma_z_ma", "± full external (Ma)", "U–Pb: Z; ⁴⁰Ar/³⁹Ar: with monitor and λ; optional", nil},
		{"sigma_level", "σ level of the ±", "as published", func() []store.Term { return []store.Term{{Code: "2", Label: "2σ"}, {Code: "1", Label: "1σ"}} }},
		{"tracer", "Tracer", "U–Pb isotope tracer", nil},
		{"monitor", "Fluence monitor", "⁴⁰Ar/³⁹Ar, e.g. FCs", nil},
		{"monitor_age_ma", "Monitor age (Ma)", "as used by the authors", nil},
		{"lambda_per_a", "Total ⁴⁰K λ (a⁻¹)", "as used by the authors, e.g. 5.463e-10", nil},
		{"laboratory", "Laboratory", "", nil},
		{"citation", "Citation", "", nil},
		{"doi", "DOI", "10.xxxx/…", nil},
		{"latitude", "Latitude (°)", "", nil},
		{"longitude", "Longitude (°)", "", nil},
		{"review_state", "Review", "curators only; a contributor's change is pending", store.ReviewStates},
		{"notes", "Notes", "", nil},
	}
}

func isCurator(r *http.Request) bool {
	u, ok := currentUser(r.Context())
	return ok && store.RoleAtLeast(u.Role, store.RoleCurator)
}

func actingCtx(r *http.Request) *http.Request {
	if u, ok := currentUser(r.Context()); ok {
		return r.WithContext(store.WithActor(r.Context(), u.ID))
	}
	return r
}

// mayEditDraft refuses (forbidden) an edit of a reviewed record the user may not make: curators edit
// anything, a contributor only the drafts (pending or rejected records) they added themselves.
func (s *Server) mayEditDraft(r *http.Request, recordType, noun string, id int64, review store.ReviewState) error {
	if isCurator(r) {
		return nil
	}
	if review == store.ReviewAccepted {
		return forbidden{fmt.Sprintf("This %s is accepted: only a curator may change it. Ask a curator, or add a corrected %s as a new record.", noun, noun)}
	}
	u, ok := currentUser(r.Context())
	if !ok {
		return forbidden{"Sign in to do this."}
	}
	author, err := s.store.RecordAuthor(r.Context(), recordType, id)
	if err != nil {
		return err
	}
	if author != u.ID {
		return forbidden{fmt.Sprintf("This %s was added by someone else: only its author or a curator may change it. Ask a curator, or add your version as a new record.", noun)}
	}
	return nil
}

func problemTexts(ps []store.Problem) []string {
	out := make([]string, len(ps))
	for i, p := range ps {
		out[i] = p.String()
	}
	return out
}

// conflictError is an edit refused because the record changed meanwhile (409).
type conflictError struct{ message string }

func (e conflictError) Error() string { return e.message }
