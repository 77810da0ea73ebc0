package web

import (
	"context"
	"fmt"
	"net/http"
	"net/url"
	"strings"
	"testing"
)

func TestProvinceForms(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	contrib, curator := signedIn(t, srv)
	id := checkEditFlow(t, srv, contrib, curator, editFlow{
		newPath: "/provinces/new", path: "/provinces", recRev: "province", db: db,
		form:     url.Values{"province": {"Test Traps"}, "description": {"as typed"}},
		badField: "province", badValue: "", badMsg: "is empty; a value is required",
		text: []string{"province", "description"}, notes: "description",
		state: func(id int64) (string, bool) {
			p, err := db.Province(ctx, id)
			return p.Description, err == nil
		},
	})
	// Contributors add provinces and units to them, but do not edit existing provinces.
	if s, _, _ := do(t, contrib, http.MethodGet, fmt.Sprintf("%s/provinces/%d/edit", srv.URL, id), nil); s != http.StatusForbidden {
		t.Errorf("contributor opening a province's edit form: %d, want 403", s)
	}
	_, page, _ := do(t, contrib, http.MethodGet, fmt.Sprintf("%s/provinces/%d", srv.URL, id), nil)
	if !strings.Contains(page, fmt.Sprintf("/units/new?province=%d", id)) {
		t.Error("the province page does not offer to add a unit")
	}
	if _, list, _ := do(t, contrib, http.MethodGet, srv.URL+"/provinces", nil); !strings.Contains(list, `href="/provinces/new"`) {
		t.Error("the province list does not offer a new province to contributors")
	}
	// The demo province has units: its delete is refused and says so.
	ps, _ := db.Provinces(ctx)
	for _, p := range ps {
		if p.NUnits == 0 {
			continue
		}
		s, body, _ := do(t, curator, http.MethodPost, fmt.Sprintf("%s/provinces/%d/delete", srv.URL, p.ID), url.Values{"version": {fmt.Sprint(p.Version)}})
		if s != http.StatusConflict || !strings.Contains(body, fmt.Sprintf("used by %d units", p.NUnits)) {
			t.Errorf("deleting %s: status %d, want 409 naming its %d units", p.Name, s, p.NUnits)
		}
		// Undoing its creation is refused the same way, from the history page's restore.
		revs, _ := db.Revisions(ctx, "province", p.ID)
		s, body, _ = do(t, curator, http.MethodPost, fmt.Sprintf("%s/revisions/%d/revert", srv.URL, revs[len(revs)-1].ID), url.Values{})
		if s != http.StatusConflict || !strings.Contains(body, "was not restored") {
			t.Errorf("undoing the creation of %s: status %d, want 409", p.Name, s)
		}
	}
}
