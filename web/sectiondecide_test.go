package web

import (
	"context"
	"encoding/csv"
	"fmt"
	"net/http"
	"net/url"
	"regexp"
	"strings"
	"testing"

	"coeval/store"
)

// formFields reads the hidden fields of the form with the given id from a page.
func formFields(t *testing.T, page, id string) (string, url.Values) {
	t.Helper()
	m := regexp.MustCompile(`(?s)<form id="` + regexp.QuoteMeta(id) + `" method="post" action="([^"]+)".*?</form>`).FindStringSubmatch(page)
	if m == nil {
		t.Fatalf("no form %q on the page", id)
	}
	v := url.Values{}
	for _, h := range regexp.MustCompile(`<input type="hidden" name="([^"]+)" value="([^"]*)"`).FindAllStringSubmatch(m[0], -1) {
		v.Set(h[1], unescapeHTML(h[2]))
	}
	return unescapeHTML(m[1]), v
}

func unescapeHTML(s string) string {
	return strings.NewReplacer("&amp;", "&", "&#34;", `"`, "&#39;", "'", "&lt;", "<", "&gt;", ">", "&quot;", `"`).Replace(s)
}

// A curator makes one anomaly an event and rejects another with a reason; the page shows both decisions,
// the event is stored with origin detected and the settings, each change is a batch; readers and
// contributors see no decision forms and may not post them.
func TestCuratorDecidesOnAnomalies(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	ids := demoSectionIDs(t, srv)
	curator, contrib := client(t), client(t)
	signIn(t, curator, srv, "demo-curator")
	signIn(t, contrib, srv, "demo-contributor")
	sec := ids["Skarfell Creek"]
	_, page, _ := do(t, contrib, http.MethodGet, srv.URL+sec, nil)
	if strings.Contains(page, `id="anomaly-1-event"`) {
		t.Error("a contributor sees the curators' anomaly forms")
	}
	_, page, _ = do(t, curator, http.MethodGet, srv.URL+sec, nil)
	action, hidden := formFields(t, page, "anomaly-1-event")
	if status, _, _ := do(t, contrib, http.MethodPost, srv.URL+action, hidden); status != http.StatusForbidden {
		t.Errorf("a contributor posting a decision: status %d, want 403", status)
	}
	events, _ := db.Events(ctx, 0)
	status, _, h := do(t, curator, http.MethodPost, srv.URL+action, withName(hidden, "Hg anomaly X"))
	if status != http.StatusSeeOther || !strings.Contains(h.Get("Location"), "#anomalies") {
		t.Fatalf("make event: status %d, location %q", status, h.Get("Location"))
	}
	after, _ := db.Events(ctx, 0)
	if len(after) != len(events)+1 {
		t.Fatalf("events %d → %d, want one more", len(events), len(after))
	}
	var ev store.Event
	for _, e := range after {
		if e.Name == "Hg anomaly X" {
			ev = e
		}
	}
	if ev.Kind != "hg_anomaly" || ev.Origin != "detected" || ev.BaseHeightM == nil || hidden.Get("base_height_m") != csvF(*ev.BaseHeightM) ||
		!strings.Contains(ev.Notes, hidden.Get("settings")) {
		t.Errorf("event %+v (form %v)", ev, hidden)
	}
	// The same anomaly again: refused, 409.
	if status, _, _ := do(t, curator, http.MethodPost, srv.URL+action, withName(hidden, "Hg anomaly Y")); status != http.StatusConflict {
		t.Errorf("deciding twice: status %d, want 409", status)
	}
	// An existing event name is a field error, shown on the page again (422).
	_, page, _ = do(t, curator, http.MethodGet, srv.URL+sec+"?z_min=2.5", nil)
	eAction, eHidden := formFields(t, page, "anomaly-1-event")
	status, body, _ := do(t, curator, http.MethodPost, srv.URL+eAction, withName(eHidden, "Hg anomaly X"))
	if status != http.StatusUnprocessableEntity || !strings.Contains(body, "already has an event named") {
		t.Errorf("a taken name: status %d, want 422 naming the problem", status)
	}
	// Found with other settings (z_min=2.5), it is another finding: rejecting it without a reason is a
	// field error (422); with one, 303.
	rAction, rHidden := formFields(t, page, "anomaly-1-reject")
	if !strings.Contains(rAction, "z_min=2.5") || !strings.Contains(rHidden.Get("settings"), "z_min=2.5") {
		t.Fatalf("the reject form %q %v does not carry the page's settings", rAction, rHidden)
	}
	status, body, _ = do(t, curator, http.MethodPost, srv.URL+rAction, rHidden)
	if status != http.StatusUnprocessableEntity || !strings.Contains(body, "say why the anomaly is rejected") || !strings.Contains(body, `href="#anomaly-1-reject"`) {
		t.Errorf("reject without reason: status %d", status)
	}
	rHidden.Set("reason", "one bed of plant debris, not a horizon")
	if status, _, _ := do(t, curator, http.MethodPost, srv.URL+rAction, rHidden); status != http.StatusSeeOther {
		t.Fatalf("reject: status %d", status)
	}
	_, page, _ = do(t, client(t), http.MethodGet, srv.URL+sec, nil)
	_, other, _ := do(t, client(t), http.MethodGet, srv.URL+sec+"?z_min=2.5", nil)
	for _, want := range []string{"made the event “Hg anomaly X” by demo-curator", "Curators&#39; decisions on anomalies", "(as on this page)",
		"one bed of plant debris"} {
		if !strings.Contains(page, want) {
			t.Errorf("the default page lacks %q", want)
		}
	}
	if !strings.Contains(other, "rejected by demo-curator: one bed of plant debris, not a horizon") {
		t.Error("the z_min=2.5 page does not show the anomaly as rejected with its reason")
	}
	// A form made under other settings, or for an anomaly that moved, changes nothing (409).
	stale := withName(hidden, "Hg anomaly Z")
	stale.Set("base_height_m", "-1")
	if status, _, _ := do(t, curator, http.MethodPost, srv.URL+action, stale); status != http.StatusConflict {
		t.Errorf("stale form: status %d, want 409", status)
	}
	batches, _ := db.LatestBatches(ctx, 2)
	if batches[0].Kind != "reject anomaly" || batches[1].Kind != "anomaly to event" {
		t.Errorf("latest batches %+v", batches)
	}
	// The anomalies download carries the decision beside each anomaly.
	_, csvBody, _ := do(t, client(t), http.MethodGet, srv.URL+sec+"/anomalies?format=csv", nil)
	recs, err := csv.NewReader(strings.NewReader(csvBody)).ReadAll()
	if err != nil || len(recs) < 2 {
		t.Fatalf("anomalies CSV: %v\n%s", err, csvBody)
	}
	col := map[string]int{}
	for i, h := range recs[0] {
		col[h] = i
	}
	var decided bool
	for _, rec := range recs[1:] {
		if rec[col["decision"]] == "event" && rec[col["decision_detail"]] == "Hg anomaly X" && rec[col["decided_by"]] == "demo-curator" {
			decided = true
		}
	}
	if !decided {
		t.Errorf("the anomalies CSV does not carry the decision:\n%s", csvBody)
	}
	// Withdrawing the event decision: the curator undoes its change; the event and the decision go, and
	// the anomaly is open again.
	if status, body, _ := do(t, curator, http.MethodPost, fmt.Sprintf("%s/changes/%d/undo", srv.URL, batches[1].ID), url.Values{}); status != http.StatusSeeOther {
		t.Fatalf("undo of the decision's change: %d\n%.500s", status, body)
	}
	if evs, _ := db.Events(ctx, 0); len(evs) != len(events) {
		t.Errorf("after withdrawing, %d events, want %d", len(evs), len(events))
	}
	_, page, _ = do(t, curator, http.MethodGet, srv.URL+sec, nil)
	if strings.Contains(page, "Hg anomaly X") || !strings.Contains(page, `id="anomaly-1-event"`) {
		t.Error("after withdrawing the decision, the anomaly is not open for a decision again")
	}
}

func withName(v url.Values, name string) url.Values {
	out := url.Values{}
	for k, x := range v {
		out[k] = x
	}
	out.Set("name", name)
	return out
}

// Contributors add events by height or interval from the section page: errors are shown by field (422),
// success is 303; a contributor's event is pending, a curator's accepted.
func TestAddEventFromSectionPage(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	sec := demoSectionIDs(t, srv)["Skarfell Creek"]
	contrib, curator := client(t), client(t)
	signIn(t, contrib, srv, "demo-contributor")
	signIn(t, curator, srv, "demo-curator")
	if _, page, _ := do(t, client(t), http.MethodGet, srv.URL+sec, nil); strings.Contains(page, `id="event-form"`) {
		t.Error("an anonymous visitor sees the event form")
	}
	_, page, _ := do(t, contrib, http.MethodGet, srv.URL+sec+"?z_min=4", nil)
	action, _ := formFields(t, page, "event-form")
	if !strings.Contains(action, "z_min=4") {
		t.Errorf("the form's action %q drops the page's settings", action)
	}
	bad := url.Values{"name": {"CIE onset (form)"}, "kind": {"cie_onset"}, "base_height_m": {"12,5"}, "top_height_m": {"3"}}
	status, body, _ := do(t, contrib, http.MethodPost, srv.URL+action, bad)
	if status != http.StatusUnprocessableEntity || !strings.Contains(body, `class="field-error"`) || !strings.Contains(body, "want a number") ||
		!strings.Contains(body, `value="CIE onset (form)"`) {
		t.Fatalf("bad event: status %d, want 422 with the field's message and the values kept", status)
	}
	bad.Set("base_height_m", "12.5")
	bad.Set("top_height_m", "")
	status, _, h := do(t, contrib, http.MethodPost, srv.URL+action, bad)
	if status != http.StatusSeeOther || !strings.Contains(h.Get("Location"), "z_min=4") {
		t.Fatalf("good event: status %d, location %q", status, h.Get("Location"))
	}
	curForm := url.Values{"name": {"extinction (form)"}, "kind": {"extinction"}, "base_height_m": {"14"}, "top_height_m": {"15.5"}}
	if status, _, _ := do(t, curator, http.MethodPost, srv.URL+action, curForm); status != http.StatusSeeOther {
		t.Fatalf("curator's event: status %d", status)
	}
	got := map[string]store.Event{}
	evs, _ := db.Events(ctx, 0)
	for _, e := range evs {
		got[e.Name] = e
	}
	if e := got["CIE onset (form)"]; e.ReviewState != "pending" || e.TopHeightM != nil || *e.BaseHeightM != 12.5 {
		t.Errorf("contributor's event %+v", e)
	}
	if e := got["extinction (form)"]; e.ReviewState != "accepted" || e.TopHeightM == nil || *e.TopHeightM != 15.5 {
		t.Errorf("curator's event %+v", e)
	}
	_, page, _ = do(t, client(t), http.MethodGet, srv.URL+sec, nil)
	if !strings.Contains(page, "CIE onset (form)") || !strings.Contains(page, "extinction (form)") {
		t.Error("the section page does not list the new events")
	}
}
