package web

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"net/http"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
)

// formField describes one input of a record's form, named by its import format's column.
type formField struct {
	name, label, help string
	options           func() []store.Term
}

// shown is a field's value in words: a coded value (a method, a review state) by its label.
func (f formField) shown(v string) string {
	if f.options == nil || v == "" {
		return v
	}
	return store.Label(f.options(), v)
}

// stored is a record as the editing flow sees it: its form cells, version and name, where it sits
// (breadcrumbs), and its review state ("" for records that are not reviewed).
type stored struct {
	form    store.Form
	version int
	name    string
	crumbs  []views.Link
	review  store.ReviewState
}

// recordEdit is the one editing flow of every record (provinces, units, sections, dates, tie points, events,
// hiatuses): a form checked with the importer's rules, re-shown with its field errors (422), 303 after
// saving, an edit against an old version answered with both versions side by side (409), a delete refused
// while other records depend on the record, a curator's accept or reject for the kinds that are reviewed
// (store.Reviewed), and a history of field diffs with a restore. Each record type fills it in with closures
// over the store.
type recordEdit struct {
	recordType string // record_type of its revisions, e.g. "tie_point"
	noun       string // "tie point"
	nav        string
	path       string // the record's page is path/{id}
	newPath    string // route of the creation form
	editRole   string // least role that may open the edit form (mayEdit may refuse more)
	intro      string
	fields     []formField

	// newForm gives the blank form of a creation request: its default values and breadcrumbs (it reads
	// the owner of the new record, a province or section, from the request).
	newForm func(r *http.Request) (store.Form, []views.Link, error)
	// create adds a record from a form and returns its id.
	create func(r *http.Request, f store.Form, curator bool) (int64, error)
	load   func(ctx context.Context, id int64) (stored, error)
	update func(ctx context.Context, id int64, version int, f store.Form, curator bool) error
	remove func(ctx context.Context, id int64, version int) error
	// mayEdit refuses (forbidden) an edit the user may not make beyond the route's role; nil allows it.
	mayEdit func(r *http.Request, id int64, st stored) error
	// suggest gives, per field name, the known values offered as the field is typed (nil: none).
	suggest func(ctx context.Context) map[string][]views.Option
}

// registerRecordEdit adds the routes of one record's editing flow: creation for contributors, edits for
// e.editRole (and mayEdit), deletion (and review, for reviewed kinds) for curators, and the public history.
func (s *Server) registerRecordEdit(r chi.Router, e recordEdit) {
	r.With(s.requireRole(store.RoleContributor)).Group(func(r chi.Router) {
		r.Get(e.newPath, s.handle(s.handleRecordNew(e)))
		r.Post(e.newPath, s.handle(s.handleRecordCreate(e)))
	})
	r.With(s.requireRole(e.editRole)).Group(func(r chi.Router) {
		r.Get(e.path+"/{id}/edit", s.handle(s.handleRecordEdit(e)))
		r.Post(e.path+"/{id}/edit", s.handle(s.handleRecordUpdate(e)))
	})
	r.With(s.requireRole(store.RoleCurator)).Post(e.path+"/{id}/delete", s.handle(s.handleRecordDelete(e)))
	if store.Reviewed(e.recordType) {
		r.With(s.requireRole(store.RoleCurator)).Post(e.path+"/{id}/review", s.handle(s.handleReview(e)))
	}
	r.Get(e.path+"/{id}/history", s.handle(s.handleRecordHistory(e)))
}

// formView builds a record's form page from values and the problems of the last submission.
func (s *Server) formView(r *http.Request, e recordEdit, title, action string, crumbs []views.Link, version int,
	values store.Form, problems []store.Problem) views.Edit {
	v := views.Edit{Page: s.page(r.Context(), title, e.nav), Action: action, Submit: "Save", Intro: e.intro}
	v.Page.Crumbs = crumbs
	if version > 0 {
		v.Hidden = []views.KV{{Label: "version", Value: strconv.Itoa(version)}}
	}
	byField := map[string]string{}
	for _, p := range problems {
		if p.Column != "" {
			byField[p.Column] = p.Message
		} else {
			v.Errors = append(v.Errors, p.Message)
		}
	}
	curator := isCurator(r)
	var known map[string][]views.Option
	if e.suggest != nil {
		known = e.suggest(r.Context())
	}
	for _, f := range e.fields {
		if f.name == "review_state" && !curator {
			continue
		}
		in := views.Input{Name: f.name, Label: f.label, Help: f.help, Value: values[f.name], Error: byField[f.name], Kind: "text"}
		if f.name == "notes" || f.name == "description" {
			in.Kind = "textarea"
		}
		if opts, ok := known[f.name]; ok {
			in.Kind, in.Options = "choice", opts
		}
		if f.options != nil {
			in.Kind = "select"
			for _, t := range f.options() {
				in.Options = append(in.Options, views.Option{Value: t.Code, Label: t.Label, Selected: t.Code == values[f.name]})
			}
		}
		if in.Error != "" {
			v.Errors = append(v.Errors, f.label+": "+in.Error)
		}
		v.Inputs = append(v.Inputs, in)
	}
	return v
}

func postedForm(r *http.Request, fields []formField) store.Form {
	f := store.Form{}
	for _, ff := range fields {
		f[ff.name] = r.PostFormValue(ff.name)
	}
	return f
}

func (s *Server) handleRecordNew(e recordEdit) func(http.ResponseWriter, *http.Request) error {
	return func(w http.ResponseWriter, r *http.Request) error {
		values, crumbs, err := e.newForm(r)
		if err != nil {
			return err
		}
		v := s.formView(r, e, "New "+e.noun, r.URL.Path, crumbs, 0, values, nil)
		s.render(w, r, http.StatusOK, views.EditPage(v))
		return nil
	}
}

func (s *Server) handleRecordCreate(e recordEdit) func(http.ResponseWriter, *http.Request) error {
	return func(w http.ResponseWriter, r *http.Request) error {
		r = actingCtx(r)
		_, crumbs, err := e.newForm(r)
		if err != nil {
			return err
		}
		values := postedForm(r, e.fields)
		id, err := e.create(r, values, isCurator(r))
		if ve, ok := store.AsValidation(err); ok {
			v := s.formView(r, e, "New "+e.noun, r.URL.Path, crumbs, 0, values, ve.Problems)
			s.render(w, r, http.StatusUnprocessableEntity, views.EditPage(v))
			return nil
		}
		if err != nil {
			return err
		}
		setFlash(w, doneCode("created", e, isCurator(r)))
		http.Redirect(w, r, idURL(e.path, id), http.StatusSeeOther)
		return nil
	}
}

func (s *Server) loadEditable(r *http.Request, e recordEdit) (int64, stored, error) {
	id, err := pathID(r, "id")
	if err != nil {
		return 0, stored{}, err
	}
	st, err := e.load(r.Context(), id)
	if err != nil {
		return 0, stored{}, err
	}
	if e.mayEdit != nil {
		if err := e.mayEdit(r, id, st); err != nil {
			return 0, stored{}, err
		}
	}
	return id, st, nil
}

func (s *Server) handleRecordEdit(e recordEdit) func(http.ResponseWriter, *http.Request) error {
	return func(w http.ResponseWriter, r *http.Request) error {
		id, st, err := s.loadEditable(r, e)
		if err != nil {
			return err
		}
		crumbs := append(st.crumbs, views.Link{Label: st.name, URL: idURL(e.path, id)})
		v := s.formView(r, e, "Edit "+st.name, r.URL.Path, crumbs, st.version, st.form, nil)
		_, v.Actions = recordLinks(r, e, id, st)
		s.render(w, r, http.StatusOK, views.EditPage(v))
		return nil
	}
}

func (s *Server) handleRecordUpdate(e recordEdit) func(http.ResponseWriter, *http.Request) error {
	return func(w http.ResponseWriter, r *http.Request) error {
		r = actingCtx(r)
		version, err := strconv.Atoi(r.PostFormValue("version"))
		if err != nil {
			return badRequest{message: "The form lacks the version it was made from; open the edit page again."}
		}
		id, current, err := s.loadEditable(r, e)
		if err != nil {
			return err
		}
		values := postedForm(r, e.fields)
		crumbs := append(current.crumbs, views.Link{Label: current.name, URL: idURL(e.path, id)})
		err = e.update(r.Context(), id, version, values, isCurator(r))
		var ve *store.ValidationError
		switch {
		case errors.As(err, &ve):
			v := s.formView(r, e, "Edit "+current.name, r.URL.Path, crumbs, version, values, ve.Problems)
			s.render(w, r, http.StatusUnprocessableEntity, views.EditPage(v))
			return nil
		case errors.Is(err, store.ErrConflict):
			// Someone saved first: show both, keep the user's values, and let them resubmit against the
			// version now stored. Nothing is overwritten silently.
			v := s.formView(r, e, "Edit "+current.name+": changed meanwhile", r.URL.Path, crumbs, current.version, values, nil)
			v.Errors = []string{fmt.Sprintf("Someone saved this %s (version %d) after you opened it (version %d). Your changes are not saved. Compare below; submit again to replace the stored version with your values, or leave.", e.noun, current.version, version)}
			v.Tables = []views.Table{fieldDiff("Your values and the stored ones", e.fields, values, current.form, "yours", "stored now")}
			s.render(w, r, http.StatusConflict, views.EditPage(v))
			return nil
		case err != nil:
			return err
		}
		setFlash(w, doneCode("saved", e, isCurator(r)))
		http.Redirect(w, r, idURL(e.path, id), http.StatusSeeOther)
		return nil
	}
}

// doneCode is the confirmation of a saved form: a contributor's record of a reviewed kind is pending.
func doneCode(what string, e recordEdit, curator bool) string {
	if !curator && store.Reviewed(e.recordType) {
		return what + "-pending"
	}
	return what
}

func (s *Server) handleRecordDelete(e recordEdit) func(http.ResponseWriter, *http.Request) error {
	return func(w http.ResponseWriter, r *http.Request) error {
		r = actingCtx(r)
		id, version, err := idAndVersion(r, fmt.Sprintf("The request lacks the version; open the %s again.", e.noun))
		if err != nil {
			return err
		}
		if err := refusal(e.noun, "deleted", e.remove(r.Context(), id, version)); err != nil {
			return err
		}
		http.Redirect(w, r, fmt.Sprintf("%s/%d/history", e.path, id), http.StatusSeeOther)
		return nil
	}
}

// refusal turns the store's refusals of a change into what the user reads (409): a record changed
// meanwhile, or still used by others, or an earlier state that cannot be written back.
func refusal(noun, done string, err error) error {
	var inUse *store.InUseError
	switch {
	case errors.As(err, &inUse):
		return conflictError{fmt.Sprintf("This %s was not %s: it is used by %s. Delete or move those first.", noun, done, strings.Join(inUse.Uses, ", "))}
	case errors.Is(err, store.ErrConflict):
		return conflictError{fmt.Sprintf("The %s changed since you opened it; it was not %s. Open it again.", noun, done)}
	}
	if ve, ok := store.AsValidation(err); ok {
		return conflictError{fmt.Sprintf("This %s was not %s: %s", noun, done, strings.Join(problemTexts(ve.Problems), "; "))}
	}
	return err
}

// fieldDiff lists the fields where a and b differ, in the form's order.
func fieldDiff(caption string, fields []formField, a, b store.Form, aLabel, bLabel string) views.Table {
	t := views.Table{ID: "diff", Caption: caption, Columns: []views.Column{{Label: "Field"}, {Label: aLabel}, {Label: bLabel}},
		Empty: "No field differs."}
	for _, f := range fields {
		if a[f.name] != b[f.name] {
			t.Rows = append(t.Rows, []views.Cell{{Text: f.label}, {Text: orDash(f.shown(a[f.name])), Class: "diff-before"}, {Text: orDash(f.shown(b[f.name])), Class: "diff-after"}})
		}
	}
	return t
}

// handleRecordHistory lists every recorded change of a record, newest first, with what changed; curators
// can restore the state before any change. A deleted record's history stays readable.
func (s *Server) handleRecordHistory(e recordEdit) func(http.ResponseWriter, *http.Request) error {
	return func(w http.ResponseWriter, r *http.Request) error {
		ctx := r.Context()
		id, format, err := idAndFormat(r)
		if err != nil {
			return err
		}
		revs, err := s.store.Revisions(ctx, e.recordType, id)
		if err != nil {
			return err
		}
		if len(revs) == 0 {
			return notFoundError{what: fmt.Sprintf("history for %s %d", e.noun, id)}
		}
		if format == "json" {
			return writeList(w, "revisions", len(revs), 0, len(revs), revs)
		}
		title := fmt.Sprintf("History of %s %d", e.noun, id)
		var crumbs []views.Link
		if st, err := e.load(ctx, id); err == nil {
			title = "History of " + st.name
			crumbs = append(st.crumbs, views.Link{Label: st.name, URL: idURL(e.path, id)})
		} else if !errors.Is(err, store.ErrNotFound) {
			return err
		}
		v := views.Detail{Page: s.page(ctx, title, e.nav)}
		v.Page.Crumbs = crumbs
		v.Page.Downloads = []views.Link{{Label: "JSON", URL: withQuery(r, "format", "json")}}
		v.Intro = fmt.Sprintf("Every change of this %s, newest first: who made it, when, and each field before and after. Restoring the state before a change is itself recorded here.", e.noun)
		curator := isCurator(r)
		for _, rev := range revs {
			before, err := revisionForm(e, rev.Before)
			if err != nil {
				return err
			}
			after, err := revisionForm(e, rev.After)
			if err != nil {
				return err
			}
			who := rev.User
			if who == "" {
				who = "command line or import"
			}
			t := fieldDiff(fmt.Sprintf("%s · %s · %s (%s)", when(rev.At), who, rev.Kind, orDash(rev.Source)), e.fields, before, after, "before", "after")
			if rev.Before == nil {
				t.Caption += " — created"
			}
			if rev.After == nil {
				t.Caption += " — deleted"
			}
			v.Tables = append(v.Tables, t)
			if curator {
				v.Actions = append(v.Actions, views.Action{Label: fmt.Sprintf("Restore the state before “%s” of %s", rev.Kind, when(rev.At)),
					URL: fmt.Sprintf("/revisions/%d/revert", rev.ID)})
			}
		}
		s.render(w, r, http.StatusOK, views.DetailPage(v))
		return nil
	}
}

func revisionForm(e recordEdit, raw json.RawMessage) (store.Form, error) {
	if raw == nil {
		return store.Form{}, nil
	}
	return store.FormOfState(e.recordType, raw)
}

// historyURL is the history page of a record, or "" for records without one (anomaly decisions are
// shown on their section's page and in the feed of changes).
func historyURL(recordType string, id int64) string {
	paths := map[string]string{"date": "/dates", "province": "/provinces", "unit": "/units", "section": "/sections",
		"tie_point": "/ties", "event": "/events", "hiatus": "/hiatuses"}
	if paths[recordType] == "" {
		return ""
	}
	return fmt.Sprintf("%s/%d/history", paths[recordType], id)
}

// recordLinks are the links and buttons of a record's page: its history for everyone, its edit form for
// who may edit it, and deletion for curators.
func recordLinks(r *http.Request, e recordEdit, id int64, st stored) ([]views.Link, []views.Action) {
	links := []views.Link{{Label: "History of this " + e.noun, URL: fmt.Sprintf("%s/%d/history", e.path, id)}}
	u, ok := currentUser(r.Context())
	if !ok {
		return links, nil
	}
	if store.RoleAtLeast(u.Role, e.editRole) && (e.mayEdit == nil || e.mayEdit(r, id, st) == nil) {
		links = append(links, views.Link{Label: "Edit this " + e.noun, URL: fmt.Sprintf("%s/%d/edit", e.path, id)})
	}
	var acts []views.Action
	if store.RoleAtLeast(u.Role, store.RoleCurator) {
		acts = append(acts, views.Action{Label: "Delete", URL: fmt.Sprintf("%s/%d/delete", e.path, id),
			Hidden: []views.KV{{Label: "version", Value: strconv.Itoa(st.version)}}, Danger: true})
	}
	return links, acts
}

// idAndVersion reads the record id of the path and the version a POST was made on; missing is the
// message when the version is not there.
func idAndVersion(r *http.Request, missing string) (int64, int, error) {
	id, err := pathID(r, "id")
	if err != nil {
		return 0, 0, err
	}
	version, err := strconv.Atoi(r.PostFormValue("version"))
	if err != nil {
		return 0, 0, badRequest{message: missing}
	}
	return id, version, nil
}

// createdInSection adapts a store's creation of a record in the section of the path (/sections/{id}/…)
// to recordEdit.create.
func createdInSection[T any](create func(context.Context, int64, store.Form, bool) (T, error), id func(T) int64) func(*http.Request, store.Form, bool) (int64, error) {
	return func(r *http.Request, f store.Form, curator bool) (int64, error) {
		sec, err := pathID(r, "id")
		if err != nil {
			return 0, err
		}
		x, err := create(r.Context(), sec, f, curator)
		return id(x), err
	}
}

// newInSection is the newForm of records added to the section of the path (/sections/{id}/…): the form's
// defaults, and the section's breadcrumbs (404 for an unknown section).
func (s *Server) newInSection(defaults store.Form) func(*http.Request) (store.Form, []views.Link, error) {
	return func(r *http.Request) (store.Form, []views.Link, error) {
		sec, err := s.sectionOfPath(r)
		return defaults, sectionCrumbs(sec), err
	}
}

// recordFields are the fields that end the "Record" group of every record's page.
func recordFields(id int64, version int, created, updated string) []views.KV {
	return []views.KV{
		{Label: "Record number", Value: strconv.FormatInt(id, 10)},
		{Label: "Version", Value: itoa(version)},
		{Label: "Added", Value: when(created)},
		{Label: "Last changed", Value: when(updated)},
	}
}

// idAndFormat reads the record id of the path and format= (html or json) of a record's page.
func idAndFormat(r *http.Request) (int64, string, error) {
	id, err := pathID(r, "id")
	if err != nil {
		return 0, "", err
	}
	p := newParams(r)
	format := p.oneOf("format", []string{"html", "json"}, "html")
	return id, format, p.err()
}

// savedBy adapts a store's update of a record with a review state to recordEdit.update.
func savedBy[T any](update func(context.Context, int64, int, store.Form, bool) (T, error)) func(context.Context, int64, int, store.Form, bool) error {
	return func(ctx context.Context, id int64, version int, f store.Form, curator bool) error {
		_, err := update(ctx, id, version, f, curator)
		return err
	}
}

// recordPage gives a record's page its links and buttons: those of recordLinks, preceded for a reviewed
// kind by the curator's accept and reject.
func recordPage(r *http.Request, e recordEdit, id int64, st stored) ([]views.Link, []views.Action) {
	links, acts := recordLinks(r, e, id, st)
	if store.Reviewed(e.recordType) {
		acts = append(reviewActions(r, e.path, id, st.version, st.review), acts...)
	}
	return links, acts
}

// reviewField is a reviewed record's review state as its page shows it, marked when not accepted.
func reviewField(state store.ReviewState) views.KV {
	kv := views.KV{Label: "Review", Value: store.Label(store.ReviewStates(), state)}
	if state != store.ReviewAccepted {
		kv.Class = "pending"
	}
	return kv
}

// ageModelReviewNotes say what the review of a tie point or hiatus means for the age–height model of
// section, and give the review note.
func ageModelReviewNotes(noun, section string, state store.ReviewState, note string) []string {
	var out []string
	switch state {
	case store.ReviewPending:
		out = append(out, "This "+noun+" waits for a curator's review. Until it is accepted, the age–height model of "+section+
			" and the comparison leave it out, unless the address says include=pending or include=all.")
	case store.ReviewRejected:
		out = append(out, "This "+noun+" was rejected: the age–height model and the comparison leave it out unless the address says include=all.")
	}
	if note != "" {
		out = append(out, "Review note: "+note)
	}
	return out
}

// reviewActions are the accept and reject buttons a curator sees on a reviewed record's page.
func reviewActions(r *http.Request, path string, id int64, version int, state store.ReviewState) []views.Action {
	if !isCurator(r) {
		return nil
	}
	hidden := func(decision string) []views.KV {
		return []views.KV{{Label: "version", Value: strconv.Itoa(version)}, {Label: "decision", Value: decision}}
	}
	var acts []views.Action
	if state != store.ReviewAccepted {
		acts = append(acts, views.Action{Label: "Accept", URL: fmt.Sprintf("%s/%d/review", path, id), Hidden: hidden("accept"), Reason: "note (optional)"})
	}
	if state != store.ReviewRejected {
		acts = append(acts, views.Action{Label: "Reject", URL: fmt.Sprintf("%s/%d/review", path, id), Hidden: hidden("reject"), Reason: "reason (required)"})
	}
	return acts
}

// handleReview is the POST of a curator's accept or reject (with a reason) of a reviewed record at
// e.path/{id}.
func (s *Server) handleReview(e recordEdit) func(http.ResponseWriter, *http.Request) error {
	return func(w http.ResponseWriter, r *http.Request) error {
		r = actingCtx(r)
		id, version, err := idAndVersion(r, fmt.Sprintf("The review lacks the version it was made on; open the %s again.", e.noun))
		if err != nil {
			return err
		}
		err = s.store.Review(r.Context(), e.recordType, id, version, r.PostFormValue("decision") == "accept", r.PostFormValue("note"))
		if ve, ok := store.AsValidation(err); ok {
			return badRequest{message: "The review was not saved:", problems: problemTexts(ve.Problems)}
		}
		if errors.Is(err, store.ErrConflict) {
			return conflictError{fmt.Sprintf("The %s changed since you opened it; it was not reviewed. Reload it and review the current version.", e.noun)}
		}
		if err != nil {
			return err
		}
		http.Redirect(w, r, idURL(e.path, id), http.StatusSeeOther)
		return nil
	}
}
