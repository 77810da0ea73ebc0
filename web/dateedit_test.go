package web

import (
	"context"
	"fmt"
	"net/http"
	"net/url"
	"slices"
	"testing"

	"coeval/store"
)

// Dates go through the editing flow every record shares: a refused form names the field, two edits from
// one version give 409 with both, history and restore, escaped text, delete at the current version; then
// the review through the shared review route, and the author-or-curator rule.
func TestDateForms(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	contrib, curator := signedIn(t, srv)
	id := checkEditFlow(t, srv, contrib, curator, editFlow{
		newPath: "/dates/new", path: "/dates", recRev: "date", db: db,
		form: url.Values{"province": {"Form Province"}, "unit": {"Form Flow"}, "sample_code": {"FORM-1"}, "method": {"upb_idtims"},
			"material": {"zircon"}, "interpretation": {"eruption"}, "age_ma": {"155.4"}, "sigma_ma": {"0.06"}, "sigma_level": {"2"},
			"notes": {"as typed"}},
		badField: "method", badValue: "spike", badMsg: `unknown value "spike"`,
		text:  []string{"laboratory", "citation", "notes"},
		again: url.Values{"sample_code": {"FORM-2"}},
		state: func(id int64) (string, bool) {
			d, err := db.Date(ctx, id)
			return d.Notes, err == nil
		},
	})
	d, _ := db.Date(ctx, id)
	if d.ReviewState != store.ReviewPending {
		t.Errorf("contributor's date is %q, want pending", d.ReviewState)
	}
	review := func(decision, note string, version int) int {
		s, _, _ := do(t, curator, http.MethodPost, fmt.Sprintf("%s/dates/%d/review", srv.URL, id),
			url.Values{"version": {fmt.Sprint(version)}, "decision": {decision}, "note": {note}})
		return s
	}
	if s := review("reject", "", d.Version); s != http.StatusBadRequest {
		t.Errorf("rejection without a reason: %d, want 400", s)
	}
	if s := review("accept", "", d.Version+1); s != http.StatusConflict {
		t.Errorf("review at a stale version: %d, want 409", s)
	}
	if s := review("accept", "checked", d.Version); s != http.StatusSeeOther {
		t.Fatalf("accept: %d, want 303", s)
	}
	if d, _ = db.Date(ctx, id); d.ReviewState != store.ReviewAccepted || d.ReviewNote != "checked" {
		t.Fatalf("after accept: %q %q", d.ReviewState, d.ReviewNote)
	}
	if s, _, _ := do(t, contrib, http.MethodGet, fmt.Sprintf("%s/dates/%d/edit", srv.URL, id), nil); s != http.StatusForbidden {
		t.Errorf("contributor editing an accepted date: %d, want 403", s)
	}
}

// Every record kind's editing flow agrees with the store's description of the kind: its form fields are
// the cells of the record's form (so the edit page, the conflict page and the history show every field),
// a reviewed kind offers the review state to curators and has the review route, and the other kinds have
// neither.
func TestEveryRecordKindHasOneEditFlow(t *testing.T) {
	srv, db := mustServer(t)
	s := &Server{store: db}
	ctx := context.Background()
	edits := []recordEdit{s.provinceEdit(), s.unitEdit(), s.sectionEdit(), s.dateEdit(), s.tieEdit(), s.eventEdit(), s.hiatusEdit()}
	_, curator := signedIn(t, srv)
	h, err := db.CreateHiatus(ctx, 1, store.Form{"height_m": "0.5", "min_duration_ma": "0"}, true) // the demo has none
	if err != nil {
		t.Fatal(err)
	}
	var kinds []string
	for _, e := range edits {
		kinds = append(kinds, e.recordType)
		id := int64(1)
		if e.recordType == "hiatus" {
			id = h.ID
		}
		st, err := e.load(ctx, id)
		if err != nil {
			t.Fatalf("%s 1 of the demo: %v", e.noun, err)
		}
		var names []string
		for _, f := range e.fields {
			names = append(names, f.name)
			if _, ok := st.form[f.name]; !ok {
				t.Errorf("%s: the field %q is not a cell of its form", e.noun, f.name)
			}
		}
		for cell := range st.form {
			if !slices.Contains(names, cell) {
				t.Errorf("%s: its form's cell %q has no field", e.noun, cell)
			}
		}
		reviewed := store.Reviewed(e.recordType)
		if slices.Contains(names, "review_state") != reviewed {
			t.Errorf("%s: review_state among the fields is %v, reviewed is %v", e.noun, !reviewed, reviewed)
		}
		status, _, _ := do(t, curator, http.MethodPost, fmt.Sprintf("%s%s/%d/review", srv.URL, e.path, id),
			url.Values{"version": {"999"}, "decision": {"accept"}})
		if want := map[bool]int{true: http.StatusConflict, false: http.StatusMethodNotAllowed}[reviewed]; status != want &&
			!(!reviewed && status == http.StatusNotFound) {
			t.Errorf("%s: a review at a stale version: %d, want %d", e.noun, status, want)
		}
	}
	for _, rt := range []string{"province", "unit", "section", "date", "tie_point", "event", "hiatus"} {
		if !store.Restorable(rt) || !slices.Contains(kinds, rt) {
			t.Errorf("%s: restorable %v, in the edit flows %v", rt, store.Restorable(rt), slices.Contains(kinds, rt))
		}
	}
}
