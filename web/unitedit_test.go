package web

import (
	"context"
	"fmt"
	"net/http"
	"net/url"
	"strings"
	"testing"
)

func TestUnitForms(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	contrib, curator := signedIn(t, srv)
	units, _ := db.Units(ctx, 0)
	prov := units[0].Province
	id := checkEditFlow(t, srv, contrib, curator, editFlow{
		newPath: "/units/new", path: "/units", recRev: "unit", db: db,
		form: url.Values{"province": {prov}, "unit": {"Test Flow"}, "kind": {"flow"}, "pile_position": {"9"},
			"volume_km3": {"40"}, "notes": {"as typed"}},
		badField: "latitude", badValue: "95", badMsg: "want a number from -90 to 90, got 95",
		text: []string{"unit", "notes"},
		state: func(id int64) (string, bool) {
			u, err := db.Unit(ctx, id)
			return u.Notes, err == nil
		},
	})
	// Contributors add units but do not edit existing ones.
	if s, _, _ := do(t, contrib, http.MethodGet, fmt.Sprintf("%s/units/%d/edit", srv.URL, id), nil); s != http.StatusForbidden {
		t.Errorf("contributor opening a unit's edit form: %d, want 403", s)
	}
	// A unit with dates cannot be deleted, and the refusal says why.
	u := units[0]
	s, body, _ := do(t, curator, http.MethodPost, fmt.Sprintf("%s/units/%d/delete", srv.URL, u.ID), url.Values{"version": {fmt.Sprint(u.Version)}})
	if s != http.StatusConflict || !strings.Contains(body, fmt.Sprintf("used by %d dates", u.NDates)) {
		t.Errorf("deleting a dated unit: status %d, want 409 saying it is used by %d dates", s, u.NDates)
	}
	if _, err := db.Unit(ctx, u.ID); err != nil {
		t.Errorf("the refused delete removed the unit: %v", err)
	}
	// The creation form is prefilled with the province it was opened from.
	_, form, _ := do(t, contrib, http.MethodGet, fmt.Sprintf("%s/units/new?province=%d", srv.URL, u.ProvinceID), nil)
	if !strings.Contains(form, `value="`+u.Province) {
		t.Error("the new-unit form does not carry the province")
	}
}
