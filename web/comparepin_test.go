package web

import (
	"context"
	"encoding/json"
	"fmt"
	"html"
	"math"
	"net/http"
	"net/url"
	"slices"
	"strconv"
	"strings"
	"testing"

	"coeval/stats"
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

// A pinned comparison's pairs follow the same pulse, not its place: today an extra, older pulse appears
// before the pulse of the release (built by hand; ranges in Ma). The release's pulse at ~155.4 Ma is
// today's at ~155.45 Ma (they overlap wholly); the extra one is new; no pair is "gone".
func TestPinnedPairsFollowThePulseByAge(t *testing.T) {
	row := func(code string, old, mode, young, within float64) pinnedRow {
		return pinnedRow{Key: "X\x00\x00E1\x00S\x00base", Event: "Ashfall", Section: "S", Pulse: code, PulseLabel: codeWords(code),
			Span: stats.PulseSpan{ModeMa: mode, OldMa: old, YoungMa: young}, Within: within, WithinSE: 0.001, After: within, AfterSE: 0.001}
	}
	then := []pinnedRow{row("P155.4", 155.7, 155.4, 155.1, 0.98)}
	now := []pinnedRow{row("P156.6", 157.0, 156.6, 156.2, 0.0), row("P155.45", 155.72, 155.45, 155.12, 0.98)}
	diffs := pinDiffs(then, now)
	if len(diffs) != 2 {
		t.Fatalf("%d pairs, want 2", len(diffs))
	}
	for _, d := range diffs {
		switch {
		case d.Then != nil && d.Now != nil:
			if d.Now.Pulse != "P155.45" || d.Changed {
				t.Errorf("the release's pulse was paired with %s (changed %v), want P155.45 unchanged", d.Now.Pulse, d.Changed)
			}
		case d.Now != nil && d.Now.Pulse != "P156.6":
			t.Errorf("new pair with %s, want P156.6", d.Now.Pulse)
		case d.Now == nil:
			t.Errorf("pair gone: %+v", d.Then)
		}
	}
	got := pulseChanges(pinPulses(then), pinPulses(now), "of the comparison as released")
	want := []string{"The pulse at ~155.4 Ma of the comparison as released is today's pulse at ~155.45 Ma (the same pulse, its age moved within its range).",
		"Today's pulse at ~156.6 Ma has no counterpart in the comparison as released."}
	if !slices.Equal(got, want) {
		t.Errorf("changes %q, want %q", got, want)
	}
	// The pulse gone today: said in words, never given another pulse's number.
	gone := pulseChanges(pinPulses(then), pinPulses(now[:1]), "of the saved comparison")
	if !slices.Contains(gone, "The pulse at ~155.4 Ma of the saved comparison has no counterpart in today's data.") {
		t.Errorf("vanished: %q", gone)
	}
	if d := pinDiffs(then, now[:1]); len(d) != 2 || d[0].Now != nil && d[0].Then != nil || d[1].Now != nil && d[1].Then != nil {
		t.Errorf("vanished: the release's pair was matched with another pulse: %+v", d)
	}
}
