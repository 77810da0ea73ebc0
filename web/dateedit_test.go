package web

import (
	"context"
	"fmt"
	"html"
	"net/http"
	"net/url"
	"slices"
	"strings"
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
			"notes": {"as typed"}, store.FormNewUnit: {"1"}},
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
			if f.name == store.FormNewUnit {
				continue // an instruction of the date form, not a field of the record
			}
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

// The date form offers the known provinces and units as they are typed; a unit typed with a typo is
// refused beside its field, naming the nearest known unit, and nothing is added; answering "create it"
// makes the new unit.
func TestDateFormRefusesAnUnknownUnitUnlessAsked(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	contrib, _ := signedIn(t, srv)
	_, page, _ := do(t, contrib, http.MethodGet, srv.URL+"/dates/new", nil)
	units, _ := db.Units(ctx, 1)
	prov, _ := db.Province(ctx, 1)
	if !strings.Contains(page, `list="unit-known"`) || !strings.Contains(page, `<option value="`+html.EscapeString(units[0].Name)+`">`) {
		t.Error("the date form does not offer the known units")
	}
	typo := units[0].Name[:len(units[0].Name)-1]
	form := url.Values{"province": {prov.Name}, "unit": {typo}, "sample_code": {"TYPO-1"}, "method": {"upb_idtims"},
		"material": {"zircon"}, "interpretation": {"eruption"}, "age_ma": {"155.4"}, "sigma_ma": {"0.06"}, "sigma_level": {"2"}}
	before, _ := db.Counts(ctx)
	status, body, _ := do(t, contrib, http.MethodPost, srv.URL+"/dates/new", form)
	if status != http.StatusUnprocessableEntity || !strings.Contains(html.UnescapeString(body), `(nearest: "`+units[0].Name+`"`) {
		t.Errorf("a unit with a typo: status %d, want 422 naming %q", status, units[0].Name)
	}
	if after, _ := db.Counts(ctx); after != before {
		t.Errorf("the refused form changed the compilation: %+v → %+v", before, after)
	}
	form.Set(store.FormNewUnit, "1")
	if status, _, _ := do(t, contrib, http.MethodPost, srv.URL+"/dates/new", form); status != http.StatusSeeOther {
		t.Errorf("with “create it”: status %d, want 303", status)
	}
	if after, _ := db.Counts(ctx); after.Units != before.Units+1 {
		t.Errorf("units %d → %d, want one more", before.Units, after.Units)
	}
}

// A saved form is confirmed once on the page it leads to, in words that say whether the record waits for
// review; the page after that no longer says it.
func TestSavedFormIsConfirmedOnce(t *testing.T) {
	srv, db := mustServer(t)
	contrib, _ := signedIn(t, srv)
	units, _ := db.Units(context.Background(), 1)
	prov, _ := db.Province(context.Background(), 1)
	form := url.Values{"province": {prov.Name}, "unit": {units[0].Name}, "sample_code": {"DONE-1"}, "method": {"upb_idtims"},
		"material": {"zircon"}, "interpretation": {"eruption"}, "age_ma": {"155.4"}, "sigma_ma": {"0.06"}, "sigma_level": {"2"}}
	status, _, h := do(t, contrib, http.MethodPost, srv.URL+"/dates/new", form)
	if status != http.StatusSeeOther {
		t.Fatalf("new date: status %d", status)
	}
	_, body, _ := do(t, contrib, http.MethodGet, srv.URL+h.Get("Location"), nil)
	if !strings.Contains(body, `class="done-banner"`) || !strings.Contains(body, "Added. It is pending") {
		t.Errorf("the new date's page does not confirm it was added (pending): %.300s", between(body, "<main", "</h1>"))
	}
	_, again, _ := do(t, contrib, http.MethodGet, srv.URL+h.Get("Location"), nil)
	if strings.Contains(again, `class="done-banner"`) {
		t.Error("the confirmation is shown a second time")
	}
}
