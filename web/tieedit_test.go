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

// A contributor's tie point is pending: the section's age model leaves it out (its model ages stay as they
// were, byte for byte) and the pages say so, until a curator accepts it; then the model is the one that
// include=pending showed before (same seed and draws, same ties).
func TestContributorTieIsPendingAndLeftOutOfTheModel(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	contrib, curator := signedIn(t, srv)
	base := demoSectionIDs(t, srv)["Skarfell Creek"]
	model := func(query string) string {
		t.Helper()
		status, _, body := get(t, srv, base+"/agemodel?format=csv&draws=500"+query)
		if status != http.StatusOK {
			t.Fatalf("age model%s: status %d", query, status)
		}
		return body
	}
	before := model("")
	if before != model("&include=pending") {
		t.Fatal("the demo's ties are all accepted: include=pending must give the same model")
	}

	// Between the ashes S-1 (12.4 m, 155.745 Ma) and S-2 (52.7 m, 155.330 Ma), tighter than either.
	form := url.Values{"label": {"Ash S-1b (contributed)"}, "height_m": {"30"}, "kind": {"radiometric"}, "distribution": {"normal"},
		"age_ma": {"155.55"}, "sigma_ma": {"0.02"}, "sigma_level": {"2"}, "review_state": {"accepted"}}
	status, _, h := do(t, contrib, http.MethodPost, srv.URL+base+"/ties/new", form)
	if status != http.StatusSeeOther {
		t.Fatalf("contributor adds a tie: status %d, want 303", status)
	}
	var id int64
	if _, err := fmt.Sscanf(h.Get("Location"), "/ties/%d", &id); err != nil {
		t.Fatalf("create went to %q", h.Get("Location"))
	}
	tp, err := db.TiePoint(ctx, id)
	if err != nil || tp.ReviewState != "pending" {
		t.Fatalf("the contributor's tie: %q (%v), want pending whatever the form says", tp.ReviewState, err)
	}
	_, page, _ := do(t, contrib, http.MethodGet, srv.URL+h.Get("Location"), nil)
	if !strings.Contains(page, "waits for a curator") || !strings.Contains(page, `class="pending"`) || strings.Contains(page, "/review") {
		t.Error("the contributor's tie page does not say it waits for review (or offers the contributor a review)")
	}

	if after := model(""); after != before {
		t.Error("a pending tie changed the section's model ages")
	}
	withPending := model("&include=pending")
	if withPending == before {
		t.Fatal("include=pending: the model does not use the pending tie")
	}
	_, _, secPage := get(t, srv, base+"?draws=500")
	for _, want := range []string{"Left out of the age–height model: 1 tie point waiting for a curator&#39;s review (Ash S-1b (contributed))",
		"Tie points in use: accepted tie points only; left out: Ash S-1b (contributed) (pending)", `name="include"`} {
		if !strings.Contains(secPage, want) {
			t.Errorf("the section page lacks %q", want)
		}
	}
	_, _, withPage := get(t, srv, base+"?draws=500&include=pending")
	if !strings.Contains(withPage, "The age–height model uses 1 pending tie point that no curator has reviewed yet (as chosen: accepted and pending tie points): Ash S-1b (contributed).") {
		t.Error("include=pending: the section page does not say the model rests on an unreviewed tie")
	}
	if status, _, body := get(t, srv, base+"?include=maybe"); status != http.StatusBadRequest || !strings.Contains(body, "include: unknown value") {
		t.Errorf("include=maybe: status %d, want 400 naming include", status)
	}

	// Only a curator reviews, and a rejection needs a reason.
	review := func(c *http.Client, decision, note string, version int) int {
		s, _, _ := do(t, c, http.MethodPost, fmt.Sprintf("%s/ties/%d/review", srv.URL, id),
			url.Values{"version": {fmt.Sprint(version)}, "decision": {decision}, "note": {note}})
		return s
	}
	if s := review(contrib, "accept", "", tp.Version); s != http.StatusForbidden {
		t.Errorf("contributor reviewing a tie: %d, want 403", s)
	}
	if s := review(curator, "reject", " ", tp.Version); s != http.StatusBadRequest {
		t.Errorf("rejection without a reason: %d, want 400", s)
	}
	if s := review(curator, "accept", "", tp.Version+1); s != http.StatusConflict {
		t.Errorf("review of a stale version: %d, want 409", s)
	}
	_, curPage, _ := do(t, curator, http.MethodGet, fmt.Sprintf("%s/ties/%d", srv.URL, id), nil)
	if !strings.Contains(curPage, fmt.Sprintf(`action="/ties/%d/review"`, id)) {
		t.Error("the curator's tie page has no review buttons")
	}
	if s := review(curator, "accept", "checked against the log", tp.Version); s != http.StatusSeeOther {
		t.Fatalf("accept: %d, want 303", s)
	}
	if after := model(""); after != withPending {
		t.Error("after the curator's acceptance the model is not the one include=pending showed")
	}
	_, _, secPage = get(t, srv, base+"?draws=500")
	if strings.Contains(secPage, "Left out of the age–height model") {
		t.Error("the caution stays after the tie was accepted")
	}
}
