package web

import (
	"context"
	"fmt"
	"net/http"
	"net/url"
	"strings"
	"testing"
)

func TestSectionForms(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	contrib, curator := signedIn(t, srv)
	checkEditFlow(t, srv, contrib, curator, editFlow{
		newPath: "/sections/new", path: "/sections", recRev: "section", db: db,
		form: url.Values{"section": {"Test Creek"}, "kind": {"outcrop"}, "latitude": {"61"}, "longitude": {"7"},
			"thermal_maturity": {"immature"}, "toc_threshold_wt_pct": {"0.2"}, "notes": {"as typed"}},
		badField: "toc_threshold_wt_pct", badValue: "0.2 wt%", badMsg: `want a number, got "0.2 wt%"`,
		text: []string{"section", "thermal_maturity", "notes"},
		state: func(id int64) (string, bool) {
			s, err := db.Section(ctx, id)
			return s.Notes, err == nil
		},
	})
	// A section with samples, ties and events cannot be deleted; nothing of it goes.
	secs, _ := db.Sections(ctx)
	sec := secs[0]
	s, body, _ := do(t, curator, http.MethodPost, fmt.Sprintf("%s/sections/%d/delete", srv.URL, sec.ID), url.Values{"version": {fmt.Sprint(sec.Version)}})
	if s != http.StatusConflict || !strings.Contains(body, fmt.Sprintf("%d samples", sec.NSamples)) || !strings.Contains(body, "tie point") {
		t.Errorf("deleting a section with samples: status %d, want 409 naming its samples and tie points", s)
	}
	if got, err := db.Section(ctx, sec.ID); err != nil || got.NSamples != sec.NSamples {
		t.Errorf("the refused delete changed the section: %v", err)
	}
	// The section page leads contributors to the forms adding tie points and events.
	_, page, _ := do(t, contrib, http.MethodGet, fmt.Sprintf("%s/sections/%d", srv.URL, sec.ID), nil)
	for _, want := range []string{fmt.Sprintf("/sections/%d/ties/new", sec.ID), fmt.Sprintf("/sections/%d/events/new", sec.ID), fmt.Sprintf("/sections/%d/history", sec.ID)} {
		if !strings.Contains(page, want) {
			t.Errorf("section page lacks a link to %s", want)
		}
	}
}
