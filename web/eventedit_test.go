package web

import (
	"context"
	"fmt"
	"net/http"
	"net/url"
	"strings"
	"testing"
)

func TestEventForms(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	contrib, curator := signedIn(t, srv)
	secs, _ := db.Sections(ctx)
	sec := secs[0]
	newPath := fmt.Sprintf("/sections/%d/events/new", sec.ID)
	id := checkEditFlow(t, srv, contrib, curator, editFlow{
		newPath: newPath, path: "/events", recRev: "event", db: db,
		form:     url.Values{"name": {"Test anomaly"}, "kind": {"hg_anomaly"}, "base_height_m": {"20"}, "top_height_m": {"22.5"}, "notes": {"as typed"}},
		badField: "kind", badValue: "spike", badMsg: `unknown value "spike"`,
		text: []string{"name", "notes"},
		state: func(id int64) (string, bool) {
			e, err := db.Event(ctx, id)
			return e.Notes, err == nil
		},
	})
	// A contributor's event is pending; a curator accepts it; then only curators edit it.
	e, _ := db.Event(ctx, id)
	if e.ReviewState != "pending" {
		t.Errorf("contributor's event is %q, want pending", e.ReviewState)
	}
	if s, _, _ := do(t, contrib, http.MethodGet, fmt.Sprintf("%s/events/%d/edit", srv.URL, id), nil); s != http.StatusOK {
		t.Errorf("contributor editing a pending event: %d, want 200", s)
	}
	if s, _, _ := do(t, curator, http.MethodPost, fmt.Sprintf("%s/events/%d/review", srv.URL, id), url.Values{"version": {fmt.Sprint(e.Version)}, "decision": {"reject"}}); s != http.StatusBadRequest {
		t.Errorf("rejection without a reason: %d, want 400", s)
	}
	if s, _, _ := do(t, curator, http.MethodPost, fmt.Sprintf("%s/events/%d/review", srv.URL, id), url.Values{"version": {fmt.Sprint(e.Version)}, "decision": {"accept"}}); s != http.StatusSeeOther {
		t.Fatalf("accept: %d, want 303", s)
	}
	if e, _ = db.Event(ctx, id); e.ReviewState != "accepted" {
		t.Fatalf("after accept: %q", e.ReviewState)
	}
	if s, _, _ := do(t, contrib, http.MethodGet, fmt.Sprintf("%s/events/%d/edit", srv.URL, id), nil); s != http.StatusForbidden {
		t.Errorf("contributor editing an accepted event: %d, want 403", s)
	}
	// The section page links each event to its page.
	_, page, _ := do(t, contrib, http.MethodGet, fmt.Sprintf("%s/sections/%d", srv.URL, sec.ID), nil)
	if !strings.Contains(page, fmt.Sprintf(`href="/events/%d"`, id)) {
		t.Error("the section page does not link the event to its page")
	}
	// An unknown section has no event form.
	if s, _, _ := do(t, contrib, http.MethodGet, srv.URL+"/sections/999/events/new", nil); s != http.StatusNotFound {
		t.Errorf("event form of an unknown section: %d, want 404", s)
	}
}
