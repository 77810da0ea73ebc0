package web

import (
	"context"
	"encoding/json"
	"fmt"
	"html"
	"math"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"testing"

	"coeval/store"
)

// A comparison pinned to a release: saved with the release chosen, its page sets the probabilities as
// released beside today's. Right after the release nothing differs (same records, same seeds: every
// difference is exactly 0); the "as released" column holds the numbers the live comparison gave at
// release time; once an event is deleted, the page says today's data would change it and names the pairs
// that are gone. A release that does not exist is refused by name.
func TestSavedComparisonPinnedToARelease(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	curator := client(t)
	signIn(t, curator, srv, "demo-curator")
	pending, _, _ := db.Dates(ctx, store.DateFilter{ReviewState: "pending"})
	for _, d := range pending {
		if _, err := db.ReviewDate(ctx, d.ID, d.Version, true, ""); err != nil {
			t.Fatal(err)
		}
	}
	status, atRelease, _ := do(t, curator, http.MethodGet, srv.URL+"/compare?format=json&"+cheap, nil)
	if status != http.StatusOK {
		t.Fatalf("comparison: status %d", status)
	}
	if status, body, _ := do(t, curator, http.MethodPost, srv.URL+"/releases", url.Values{"version": {"2027.1"}, "title": {"Invented compilation"}}); status != http.StatusSeeOther {
		t.Fatalf("making a release: status %d: %.300s", status, body)
	}
	c := client(t)
	signIn(t, c, srv, "demo-contributor")
	_, page, _ := do(t, c, http.MethodGet, srv.URL+"/compare?"+cheap, nil)
	if !strings.Contains(page, `<option value="2027.1">release 2027.1 of`) {
		t.Error("the save form does not offer the release to pin to")
	}
	status, body, _ := do(t, c, http.MethodPost, srv.URL+"/compare/saved", url.Values{"name": {"x"}, "query": {cheap}, "release": {"9999"}})
	if status != http.StatusBadRequest || !strings.Contains(body, "release: there is no release") {
		t.Errorf("pinned to a release that does not exist: status %d: %.300s", status, body)
	}
	status, _, h := do(t, c, http.MethodPost, srv.URL+"/compare/saved", url.Values{"name": {"As released"}, "query": {cheap}, "release": {"2027.1"}})
	if status != http.StatusSeeOther {
		t.Fatalf("save: status %d", status)
	}
	saved := h.Get("Location")
	status, body, _ = do(t, c, http.MethodGet, srv.URL+saved, nil)
	if status != http.StatusOK {
		t.Fatalf("pinned page: status %d: %.300s", status, body)
	}
	text := html.UnescapeString(body)
	if !strings.Contains(text, "Today's data would not change it") || !strings.Contains(text, "largest difference 0.000") {
		t.Errorf("right after the release the pinned comparison is not the same as today's: %s", between(text, "Pinned to", "Both are computed"))
	}
	// The "as released" column: the live comparison's numbers at release time, to the digits shown.
	var doc struct {
		Rows []map[string]string `json:"rows"`
	}
	if err := json.Unmarshal([]byte(atRelease), &doc); err != nil || len(doc.Rows) == 0 {
		t.Fatalf("comparison JSON: %v (%d rows)", err, len(doc.Rows))
	}
	for _, row := range doc.Rows {
		p, _ := strconv.ParseFloat(row["p_within"], 64)
		se, _ := strconv.ParseFloat(row["p_within_se"], 64)
		if want := fmt.Sprintf("%.3f ± %.3f", p, se); !strings.Contains(text, want) {
			t.Errorf("%s × %s: P(within) %s not on the pinned page", row["event"], row["pulse"], want)
		}
	}
	_, list, _ := do(t, c, http.MethodGet, srv.URL+"/compare/saved", nil)
	if !strings.Contains(list, "pinned to release 2027.1") {
		t.Error("the saved list does not say the comparison is pinned")
	}

	// The compilation moves on: an event of the demo's first section (which records the compared
	// province) is deleted.
	evs, _ := db.Events(ctx, 1)
	if err := db.DeleteEvent(ctx, evs[0].ID, evs[0].Version); err != nil {
		t.Fatal(err)
	}
	_, body, _ = do(t, c, http.MethodGet, srv.URL+saved, nil)
	text = html.UnescapeString(body)
	if !strings.Contains(text, "Today's data would change it") || !strings.Contains(text, "pair gone") {
		t.Errorf("after deleting an event the pinned page does not say today's data change it: %s", between(text, "Pinned to", "Both are computed"))
	}
	if !strings.Contains(text, `/releases/2027.1/view/compare?`) {
		t.Error("the pinned page does not link to the comparison as of the release")
	}
}

func between(s, from, to string) string {
	i := strings.Index(s, from)
	if i < 0 {
		return s[:min(len(s), 400)]
	}
	j := strings.Index(s[i:], to)
	if j < 0 {
		return s[i:min(len(s), i+800)]
	}
	return s[i : i+j]
}

// The rule by which a pinned page calls a probability changed, on values worked by hand: 0.97 ± 0.002
// against 0.90 ± 0.003 differ by 0.07, far beyond 3·√(0.002² + 0.003²) = 0.0108, and cross 0.95;
// 0.500 ± 0.005 against 0.515 ± 0.005 differ by 0.015, within 3·0.00707 = 0.0212; 0.500 ± 0 against
// 0.505 ± 0 differ by 0.005, below the 0.01 floor; 0.04 against 0.06 crosses 0.05.
func TestPinnedRuleOnHandValues(t *testing.T) {
	for _, c := range []struct {
		p1, se1, p2, se2 float64
		changed, crossed bool
	}{
		{0.97, 0.002, 0.90, 0.003, true, true},
		{0.500, 0.005, 0.515, 0.005, false, false},
		{0.500, 0, 0.505, 0, false, false},
		{0.04, 0.001, 0.06, 0.001, true, true},
		{0.96, 0.001, 0.999, 0.001, true, false},
		{math.NaN(), 0, 0.5, 0.01, true, false},
	} {
		if got := probChanged(c.p1, c.se1, c.p2, c.se2); got != c.changed {
			t.Errorf("%g ± %g vs %g ± %g: changed %v, want %v", c.p1, c.se1, c.p2, c.se2, got, c.changed)
		}
		if got := crosses(c.p1, c.p2); got != c.crossed {
			t.Errorf("%g vs %g: crosses %v, want %v", c.p1, c.p2, got, c.crossed)
		}
	}
}
