package web

import (
	"errors"
	"fmt"
	"net/http"
	"strconv"

	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
)

// registerDateEditRoutes adds the routes that change dates: contributors add and edit drafts, curators
// review, edit anything, delete and revert.
func (s *Server) registerDateEditRoutes(r chi.Router) {
	r.With(s.requireRole(store.RoleContributor)).Group(func(r chi.Router) {
		r.Get("/dates/new", s.handle(s.handleDateNew))
		r.Post("/dates/new", s.handle(s.handleDateCreate))
		r.Get("/dates/{id}/edit", s.handle(s.handleDateEdit))
		r.Post("/dates/{id}/edit", s.handle(s.handleDateUpdate))
	})
	r.With(s.requireRole(store.RoleCurator)).Group(func(r chi.Router) {
		r.Post("/dates/{id}/review", s.handle(s.handleDateReview))
		r.Post("/dates/{id}/delete", s.handle(s.handleDateDelete))
		r.Post("/revisions/{id}/revert", s.handle(s.handleRevisionRevert))
	})
	r.Get("/dates/{id}/history", s.handle(s.handleDateHistory))
}

// dateField describes one input of the date form, in the import format's column names.
type dateField struct {
	name, label, help string
	options           func() []store.Term
}

func dateFields() []dateField {
	methods := func() []store.Term {
		var ts []store.Term
		for _, m := range store.Methods() {
			ts = append(ts, m.Term)
		}
		return ts
	}
	return []dateField{
		{"province", "Province", "for a unit's date", nil},
		{"unit", "Unit", "created if new", nil},
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

// dateEditView builds the form page from values and the problems of the last submission.
func (s *Server) dateEditView(r *http.Request, title, action string, version int, values store.Form, problems []store.Problem, curator bool) views.Edit {
	e := views.Edit{Page: s.page(r.Context(), title, "Dates"), Action: action, Submit: "Save"}
	e.Page.Crumbs = []views.Link{{Label: "Dates", URL: "/dates"}}
	e.Intro = "Enter values as published: uncertainties at the σ level you choose below (they are stored as 1σ). Every field is checked with the rules of the dates import."
	if version > 0 {
		e.Hidden = []views.KV{{Label: "version", Value: strconv.Itoa(version)}}
	}
	byField := map[string]string{}
	for _, p := range problems {
		if p.Column != "" {
			byField[p.Column] = p.Message
		} else {
			e.Errors = append(e.Errors, p.Message)
		}
	}
	for _, f := range dateFields() {
		if f.name == "review_state" && !curator {
			continue
		}
		in := views.Input{Name: f.name, Label: f.label, Help: f.help, Value: values[f.name], Error: byField[f.name], Kind: "text"}
		if f.name == "notes" {
			in.Kind = "textarea"
		}
		if f.options != nil {
			in.Kind = "select"
			for _, t := range f.options() {
				in.Options = append(in.Options, views.Option{Value: t.Code, Label: t.Label, Selected: t.Code == values[f.name]})
			}
		}
		if in.Error != "" {
			e.Errors = append(e.Errors, f.label+": "+in.Error)
		}
		e.Inputs = append(e.Inputs, in)
	}
	return e
}

func formValues(r *http.Request) store.Form {
	f := store.Form{}
	for _, df := range dateFields() {
		f[df.name] = r.PostFormValue(df.name)
	}
	return f
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

func (s *Server) handleDateNew(w http.ResponseWriter, r *http.Request) error {
	values := store.Form{"sigma_level": "2", "interpretation": "eruption", "review_state": "pending"}
	s.render(w, r, http.StatusOK, views.EditPage(s.dateEditView(r, "New date", "/dates/new", 0, values, nil, isCurator(r))))
	return nil
}

func (s *Server) handleDateCreate(w http.ResponseWriter, r *http.Request) error {
	r = actingCtx(r)
	values := formValues(r)
	d, err := s.store.CreateDate(r.Context(), values, isCurator(r))
	if ve, ok := store.AsValidation(err); ok {
		s.render(w, r, http.StatusUnprocessableEntity, views.EditPage(s.dateEditView(r, "New date", "/dates/new", 0, values, ve.Problems, isCurator(r))))
		return nil
	}
	if err != nil {
		return err
	}
	http.Redirect(w, r, idURL("/dates", d.ID), http.StatusSeeOther)
	return nil
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

// mayEdit says whether the user may edit date d (see mayEditDraft).
func (s *Server) mayEdit(r *http.Request, d store.Date) error {
	return s.mayEditDraft(r, "date", "date", d.ID, d.ReviewState)
}

func (s *Server) handleDateEdit(w http.ResponseWriter, r *http.Request) error {
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	d, err := s.store.Date(r.Context(), id)
	if err != nil {
		return err
	}
	if err := s.mayEdit(r, d); err != nil {
		return err
	}
	e := s.dateEditView(r, "Edit "+d.SampleCode, fmt.Sprintf("/dates/%d/edit", id), d.Version, store.FormOfDate(d), nil, isCurator(r))
	s.render(w, r, http.StatusOK, views.EditPage(e))
	return nil
}

func (s *Server) handleDateUpdate(w http.ResponseWriter, r *http.Request) error {
	r = actingCtx(r)
	ctx := r.Context()
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	version, err := strconv.Atoi(r.PostFormValue("version"))
	if err != nil {
		return badRequest{message: "The form lacks the version it was made from; open the edit page again."}
	}
	current, err := s.store.Date(ctx, id)
	if err != nil {
		return err
	}
	if err := s.mayEdit(r, current); err != nil {
		return err
	}
	values := formValues(r)
	action := fmt.Sprintf("/dates/%d/edit", id)
	_, err = s.store.UpdateDate(ctx, id, version, values, isCurator(r))
	var ve *store.ValidationError
	switch {
	case errors.As(err, &ve):
		s.render(w, r, http.StatusUnprocessableEntity, views.EditPage(s.dateEditView(r, "Edit "+current.SampleCode, action, version, values, ve.Problems, isCurator(r))))
		return nil
	case errors.Is(err, store.ErrConflict):
		// Someone saved first: show both, keep the user's values, and let them resubmit against the
		// version now stored. Nothing is overwritten silently.
		e := s.dateEditView(r, "Edit "+current.SampleCode+": changed meanwhile", action, current.Version, values, nil, isCurator(r))
		e.Errors = []string{fmt.Sprintf("Someone saved this date (version %d) after you opened it (version %d). Your changes are not saved. Compare below; submit again to replace the stored version with your values, or leave.", current.Version, version)}
		e.Tables = []views.Table{diffTable("Your values and the stored ones", values, store.FormOfDate(current), "yours", "stored now")}
		s.render(w, r, http.StatusConflict, views.EditPage(e))
		return nil
	case err != nil:
		return err
	}
	http.Redirect(w, r, idURL("/dates", id), http.StatusSeeOther)
	return nil
}

// diffTable lists the fields where a and b differ.
func diffTable(caption string, a, b store.Form, aLabel, bLabel string) views.Table {
	t := views.Table{ID: "diff", Caption: caption, Columns: []views.Column{{Label: "Field"}, {Label: aLabel}, {Label: bLabel}},
		Empty: "No field differs."}
	for _, f := range dateFields() {
		if a[f.name] != b[f.name] {
			t.Rows = append(t.Rows, []views.Cell{{Text: f.label}, {Text: orDash(a[f.name]), Class: "diff-before"}, {Text: orDash(b[f.name]), Class: "diff-after"}})
		}
	}
	return t
}

func (s *Server) handleDateReview(w http.ResponseWriter, r *http.Request) error {
	r = actingCtx(r)
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	version, err := strconv.Atoi(r.PostFormValue("version"))
	if err != nil {
		return badRequest{message: "The review lacks the version it was made on; open the date again."}
	}
	accept := r.PostFormValue("decision") == "accept"
	_, err = s.store.ReviewDate(r.Context(), id, version, accept, r.PostFormValue("note"))
	if ve, ok := store.AsValidation(err); ok {
		return badRequest{message: "The review was not saved:", problems: problemTexts(ve.Problems)}
	}
	if errors.Is(err, store.ErrConflict) {
		return conflictError{"The date changed since you opened it; it was not reviewed. Reload it and review the current version."}
	}
	if err != nil {
		return err
	}
	http.Redirect(w, r, idURL("/dates", id), http.StatusSeeOther)
	return nil
}

func (s *Server) handleDateDelete(w http.ResponseWriter, r *http.Request) error {
	r = actingCtx(r)
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	version, err := strconv.Atoi(r.PostFormValue("version"))
	if err != nil {
		return badRequest{message: "The request lacks the version; open the date again."}
	}
	err = s.store.DeleteDate(r.Context(), id, version)
	if errors.Is(err, store.ErrConflict) {
		return conflictError{"The date changed since you opened it; it was not deleted."}
	}
	if err != nil {
		return err
	}
	http.Redirect(w, r, fmt.Sprintf("/dates/%d/history", id), http.StatusSeeOther)
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
