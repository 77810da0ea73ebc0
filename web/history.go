package web

import (
	"cmp"
	"encoding/json"
	"errors"
	"fmt"
	"net/http"
	"strings"

	"coeval/store"
	"coeval/views"
)

// handleDateHistory lists every recorded change of a date, newest first, with what changed; curators can
// restore the state before any change. A deleted date's history stays readable.
func (s *Server) handleDateHistory(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	p := newParams(r)
	format := p.oneOf("format", []string{"html", "json"}, "html")
	if err := p.err(); err != nil {
		return err
	}
	revs, err := s.store.Revisions(ctx, "date", id)
	if err != nil {
		return err
	}
	if len(revs) == 0 {
		return notFoundError{what: fmt.Sprintf("history for date %d", id)}
	}
	if format == "json" {
		return writeList(w, "revisions", len(revs), 0, len(revs), revs)
	}
	title := fmt.Sprintf("History of date %d", id)
	if d, err := s.store.Date(ctx, id); err == nil {
		title = "History of " + d.SampleCode
	} else if !errors.Is(err, store.ErrNotFound) {
		return err
	}
	v := views.Detail{Page: s.page(ctx, title, "Dates")}
	v.Page.Crumbs = []views.Link{{Label: "Dates", URL: "/dates"}, {Label: fmt.Sprintf("date %d", id), URL: idURL("/dates", id)}}
	v.Page.Downloads = []views.Link{{Label: "JSON", URL: withQuery(r, "format", "json")}}
	v.Intro = "Every change of this date, newest first: who made it, when, and each field before and after. Restoring the state before a change is itself recorded here."
	curator := isCurator(r)
	for _, rev := range revs {
		before, after := revForm(rev.Before), revForm(rev.After)
		who := orDash(rev.User)
		if rev.User == "" {
			who = "command line or import"
		}
		t := diffTable(fmt.Sprintf("%s · %s · %s (%s)", when(rev.At), who, rev.Kind, orDash(rev.Source)), before, after, "before", "after")
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

// revForm turns a revision's JSON state of a date into form cells (empty for none).
func revForm(raw json.RawMessage) store.Form {
	if raw == nil {
		return store.Form{}
	}
	var d store.Date
	if err := json.Unmarshal(raw, &d); err != nil {
		return store.Form{"notes": "(unreadable revision)"}
	}
	f := store.FormOfDate(d)
	f["review_state"] = string(d.ReviewState)
	return f
}

func (s *Server) handleRevisionRevert(w http.ResponseWriter, r *http.Request) error {
	r = actingCtx(r)
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	rev, err := s.store.RevisionByID(r.Context(), id)
	if err != nil {
		return err
	}
	if !store.Restorable(rev.RecordType) {
		return badRequest{message: "Changes of this kind of record (" + rev.RecordType + ") cannot be restored one by one; undo the whole change from the feed of changes."}
	}
	err = s.store.RevertRevision(r.Context(), id)
	if errors.Is(err, store.ErrConflict) {
		return conflictError{"There is nothing to restore: the record this change created no longer exists."}
	}
	if err := refusal(strings.ReplaceAll(rev.RecordType, "_", " "), "restored", err); err != nil {
		return err
	}
	http.Redirect(w, r, cmp.Or(historyURL(rev.RecordType, rev.RecordID), "/changes"), http.StatusSeeOther)
	return nil
}
