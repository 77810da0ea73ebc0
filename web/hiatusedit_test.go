package web

import (
	"context"
	"encoding/json"
	"fmt"
	"net/http"
	"net/url"
	"strings"
	"testing"
)

func TestHiatusForms(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	contrib, curator := signedIn(t, srv)
	secs, _ := db.Sections(ctx)
	sec := secs[0]
	id := checkEditFlow(t, srv, contrib, curator, editFlow{
		newPath: fmt.Sprintf("/sections/%d/hiatuses/new", sec.ID), path: "/hiatuses", recRev: "hiatus", db: db,
		form:     url.Values{"height_m": {"33.3"}, "min_duration_ma": {"0.2"}, "notes": {"as typed"}},
		badField: "min_duration_ma", badValue: "-1", badMsg: "want a duration in Ma of 0 or more",
		text:  []string{"notes"},
		again: url.Values{"height_m": {"34.5"}},
		state: func(id int64) (string, bool) {
			h, err := db.Hiatus(ctx, id)
			return h.Notes, err == nil
		},
	})
	// Contributors add hiatuses but do not edit existing ones.
	if s, _, _ := do(t, contrib, http.MethodGet, fmt.Sprintf("%s/hiatuses/%d/edit", srv.URL, id), nil); s != http.StatusForbidden {
		t.Errorf("contributor opening a hiatus's edit form: %d, want 403", s)
	}
	// A second hiatus at a height already taken is refused beside the height.
	status, body, _ := do(t, curator, http.MethodPost, srv.URL+fmt.Sprintf("/sections/%d/hiatuses/new", sec.ID),
		url.Values{"height_m": {"33.3"}, "min_duration_ma": {"1"}})
	if status != http.StatusUnprocessableEntity || !fieldError(body, "height_m", "the section already has a hiatus at 33.3 m") {
		t.Errorf("a second hiatus at 33.3 m: status %d, want 422 naming height_m", status)
	}
	// The section page lists the hiatus and links it to its page; the section's JSON carries it.
	_, secPage, _ := do(t, contrib, http.MethodGet, fmt.Sprintf("%s/sections/%d", srv.URL, sec.ID), nil)
	for _, want := range []string{fmt.Sprintf(`href="/hiatuses/%d"`, id), "hiatus at 33.3 m", fmt.Sprintf(`href="/sections/%d/hiatuses/new"`, sec.ID)} {
		if !strings.Contains(secPage, want) {
			t.Errorf("the section page lacks %q", want)
		}
	}
	_, _, js := get(t, srv, fmt.Sprintf("/sections/%d?format=json", sec.ID))
	var got struct {
		Hiatuses []struct {
			HeightM     float64 `json:"height_m"`
			ReviewState string  `json:"review_state"`
		} `json:"hiatuses"`
	}
	if err := json.Unmarshal([]byte(js), &got); err != nil || len(got.Hiatuses) != 1 || got.Hiatuses[0].HeightM != 33.3 {
		t.Errorf("the section's JSON hiatuses: %+v (%v), want the one at 33.3 m", got.Hiatuses, err)
	}
}

// A contributor's hiatus is pending: the section's age model leaves it out (its model ages stay as they
// were, byte for byte) and the pages say so, until a curator accepts it; then the model is the one that
// include=pending showed before (same seed and draws, same ties and hiatuses).
func TestContributorHiatusIsPendingAndLeftOutOfTheModel(t *testing.T) {
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

	// Between the ashes S-1 (12.4 m, 155.745 Ma) and S-2 (52.7 m, 155.330 Ma): 0.3 of their 0.415 Ma missing
	// at one surface.
	form := url.Values{"height_m": {"30"}, "min_duration_ma": {"0.3"}, "review_state": {"accepted"}, "notes": {"hardground"}}
	status, _, h := do(t, contrib, http.MethodPost, srv.URL+base+"/hiatuses/new", form)
	if status != http.StatusSeeOther {
		t.Fatalf("contributor adds a hiatus: status %d, want 303", status)
	}
	var id int64
	if _, err := fmt.Sscanf(h.Get("Location"), "/hiatuses/%d", &id); err != nil {
		t.Fatalf("create went to %q", h.Get("Location"))
	}
	hi, err := db.Hiatus(ctx, id)
	if err != nil || hi.ReviewState != "pending" {
		t.Fatalf("the contributor's hiatus: %q (%v), want pending whatever the form says", hi.ReviewState, err)
	}
	_, page, _ := do(t, contrib, http.MethodGet, srv.URL+h.Get("Location"), nil)
	if !strings.Contains(page, "waits for a curator") || !strings.Contains(page, `class="pending"`) || strings.Contains(page, "/review") {
		t.Error("the contributor's hiatus page does not say it waits for review (or offers the contributor a review)")
	}

	if after := model(""); after != before {
		t.Error("a pending hiatus changed the section's model ages")
	}
	withPending := model("&include=pending")
	if withPending == before {
		t.Fatal("include=pending: the model does not honour the pending hiatus")
	}
	_, _, secPage := get(t, srv, base+"?draws=500")
	for _, want := range []string{"Left out of the age–height model: 1 hiatus waiting for a curator&#39;s review (hiatus at 30 m) — the model uses accepted hiatuses only.",
		"Hiatuses honoured: accepted hiatuses only; left out: hiatus at 30 m (pending).",
		"The age–height model leaves out 1 hiatus: it honours accepted hiatuses only."} {
		if !strings.Contains(secPage, want) {
			t.Errorf("the section page lacks %q", want)
		}
	}
	_, _, withPage := get(t, srv, base+"?draws=500&include=pending")
	if !strings.Contains(withPage, "The age–height model uses 1 pending hiatus that no curator has reviewed yet (as chosen: accepted and pending hiatuses): hiatus at 30 m.") {
		t.Error("include=pending: the section page does not say the model rests on an unreviewed hiatus")
	}

	// Only a curator reviews, and a rejection needs a reason.
	review := func(c *http.Client, decision, note string, version int) int {
		s, _, _ := do(t, c, http.MethodPost, fmt.Sprintf("%s/hiatuses/%d/review", srv.URL, id),
			url.Values{"version": {fmt.Sprint(version)}, "decision": {decision}, "note": {note}})
		return s
	}
	if s := review(contrib, "accept", "", hi.Version); s != http.StatusForbidden {
		t.Errorf("contributor reviewing a hiatus: %d, want 403", s)
	}
	if s := review(curator, "reject", " ", hi.Version); s != http.StatusBadRequest {
		t.Errorf("rejection without a reason: %d, want 400", s)
	}
	if s := review(curator, "accept", "", hi.Version+1); s != http.StatusConflict {
		t.Errorf("review of a stale version: %d, want 409", s)
	}
	_, curPage, _ := do(t, curator, http.MethodGet, fmt.Sprintf("%s/hiatuses/%d", srv.URL, id), nil)
	if !strings.Contains(curPage, fmt.Sprintf(`action="/hiatuses/%d/review"`, id)) {
		t.Error("the curator's hiatus page has no review buttons")
	}
	if s := review(curator, "accept", "seen in the outcrop", hi.Version); s != http.StatusSeeOther {
		t.Fatalf("accept: %d, want 303", s)
	}
	if after := model(""); after != withPending {
		t.Error("after the curator's acceptance the model is not the one include=pending showed")
	}
	_, _, secPage = get(t, srv, base+"?draws=500")
	if strings.Contains(secPage, "Left out of the age–height model") {
		t.Error("the caution stays after the hiatus was accepted")
	}
}
