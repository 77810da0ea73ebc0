package web

import (
	"context"
	"fmt"
	"net/http"
	"net/url"
	"strings"
	"testing"
)

func TestTieForms(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	contrib, curator := signedIn(t, srv)
	secs, _ := db.Sections(ctx)
	sec := secs[0]
	id := checkEditFlow(t, srv, contrib, curator, editFlow{
		newPath: fmt.Sprintf("/sections/%d/ties/new", sec.ID), path: "/ties", recRev: "tie_point", db: db,
		form: url.Values{"label": {"Test ash"}, "height_m": {"12.5"}, "kind": {"radiometric"}, "distribution": {"normal"},
			"age_ma": {"155.1"}, "sigma_ma": {"0.08"}, "sigma_level": {"2"}, "notes": {"as typed"}},
		badField: "age_max_ma", badValue: "156", badMsg: "is for uniform ties; this tie is normal",
		text: []string{"label", "notes"},
		state: func(id int64) (string, bool) {
			tp, err := db.TiePoint(ctx, id)
			return tp.Notes, err == nil
		},
	})
	// Contributors add ties but do not edit existing ones.
	if s, _, _ := do(t, contrib, http.MethodGet, fmt.Sprintf("%s/ties/%d/edit", srv.URL, id), nil); s != http.StatusForbidden {
		t.Errorf("contributor opening a tie's edit form: %d, want 403", s)
	}
	// The tie's page gives its age at the σ level asked for; the section page links it.
	_, page, _ := do(t, curator, http.MethodGet, fmt.Sprintf("%s/ties/%d?sigma=1", srv.URL, id), nil)
	if !strings.Contains(page, "155.100 ± 0.040") || !strings.Contains(page, "Ma ± 1σ") {
		t.Error("the tie page does not give the age at 1σ")
	}
	_, secPage, _ := do(t, contrib, http.MethodGet, fmt.Sprintf("%s/sections/%d", srv.URL, sec.ID), nil)
	if !strings.Contains(secPage, fmt.Sprintf(`href="/ties/%d"`, id)) {
		t.Error("the section page does not link the tie to its page")
	}
}
