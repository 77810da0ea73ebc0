package web

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"reflect"
	"slices"
	"sync"
	"testing"

	"coeval/static"
	"coeval/store"
	"coeval/views"
	"coeval/web/analysis"
)

// countingServer is a server over the demo with a section cache that counts the analyses it computes,
// by section.
func countingServer(t *testing.T) (*Server, *store.DB, func() map[int64]int) {
	t.Helper()
	db := mustDemoDB(t)
	srv := &Server{store: db, secCache: newSectionCache(sectionCacheEntries, sectionCacheRows)}
	var mu sync.Mutex
	n := map[int64]int{}
	srv.secCache.computed = func(id int64) { mu.Lock(); n[id]++; mu.Unlock() }
	taken := func() map[int64]int {
		mu.Lock()
		defer mu.Unlock()
		out := n
		n = map[int64]int{}
		return out
	}
	return srv, db, taken
}

// The aligned view computes each section once; asked again it computes none; after an edit to section A
// (a new accepted event) only A is computed again, and A's new analysis holds the event, while every other
// section's cached analysis is used as it was.
func TestSectionCacheRecomputesOnlyTheEditedSection(t *testing.T) {
	srv, db, taken := countingServer(t)
	ctx := context.Background()
	o := alignedOptions{Series: "ratio", Draws: minSectionDraws, Seed: analysis.DefaultSectionSeed, Include: "accepted"}
	first, err := srv.alignedAnalyses(ctx, o)
	if err != nil {
		t.Fatal(err)
	}
	if len(first) < 2 {
		t.Fatalf("the demo has %d sections: the test needs two", len(first))
	}
	n := taken()
	for _, a := range first {
		if n[a.Sec.ID] != 1 {
			t.Errorf("section %s computed %d times on the first view, want 1", a.Sec.Name, n[a.Sec.ID])
		}
	}
	again, err := srv.alignedAnalyses(ctx, o)
	if err != nil {
		t.Fatal(err)
	}
	if n := taken(); len(n) != 0 {
		t.Errorf("the same view again computed %v, want nothing", n)
	}
	for i := range first {
		if !reflect.DeepEqual(first[i].Samples, again[i].Samples) || !reflect.DeepEqual(first[i].Anomalies, again[i].Anomalies) {
			t.Errorf("section %s: the cached analysis differs from the first", first[i].Sec.Name)
		}
	}
	secA := first[0].Sec
	base := fmt.Sprint(first[0].Samples[0].HeightM)
	ev, err := db.AddSectionEvent(ctx, secA.ID, store.EventForm{Name: "Cache test event", Kind: "cie_onset", BaseHeightM: base}, true)
	if err != nil {
		t.Fatal(err)
	}
	onlyA := func(edit, name string) {
		t.Helper()
		after, err := srv.alignedAnalyses(ctx, o)
		if err != nil {
			t.Fatal(err)
		}
		n := taken()
		if n[secA.ID] != 1 {
			t.Errorf("%s: edited section %s computed %d times, want 1", edit, secA.Name, n[secA.ID])
		}
		for _, a := range after[1:] {
			if n[a.Sec.ID] != 0 {
				t.Errorf("%s: section %s was not edited and was computed %d times, want its cached analysis", edit, a.Sec.Name, n[a.Sec.ID])
			}
		}
		if !slices.ContainsFunc(after[0].EventAges, func(e eventAge) bool { return e.Name == name }) {
			t.Errorf("%s: section %s's analysis lacks the event %q", edit, secA.Name, name)
		}
	}
	onlyA("a new event", "Cache test event")
	// An edit that leaves the section's counts as they were: the event renamed.
	if _, err := db.UpdateEvent(ctx, ev.ID, ev.Version, store.Form{"name": "Cache test event renamed", "kind": "cie_onset",
		"base_height_m": base, "review_state": string(store.ReviewAccepted)}, true); err != nil {
		t.Fatal(err)
	}
	onlyA("the event renamed", "Cache test event renamed")
}

// A cached analysis drops its age model's draws: what the section page, figure and tables show from it is
// the same as from the analysis computed without the cache (analysis.LoadSectionAnalysis), and the page
// served warm is byte for byte the page served cold.
func TestCachedSectionAnalysisShowsWhatTheComputedOneShows(t *testing.T) {
	srv, db, _ := countingServer(t)
	ctx := context.Background()
	secs, err := db.Sections(ctx)
	if err != nil {
		t.Fatal(err)
	}
	for _, sec := range secs {
		o := analysis.DefaultSectionOptions(sec)
		o.Draws = minSectionDraws
		plain, err := analysis.LoadSectionAnalysis(ctx, db, sec, o)
		if err != nil {
			t.Fatal(err)
		}
		cached, err := srv.loadSectionAnalysis(ctx, sec, o)
		if err != nil {
			t.Fatal(err)
		}
		if plain.Model != nil && cached.Model.MC != nil && cached.Model.MC.AgesMa != nil {
			t.Errorf("section %s: the cached analysis keeps the model's draws", sec.Name)
		}
		if plain.Model != nil && plain.Model.MC != nil && len(plain.Model.MC.AgesMa) == 0 {
			t.Errorf("section %s: the analysis without the cache has no draws", sec.Name)
		}
		if g, w := views.SectionSVG(sectionFigure(cached)), views.SectionSVG(sectionFigure(&sectionAnalysis{plain})); g != w {
			t.Errorf("section %s: the figure from the cache differs", sec.Name)
		}
		// What the downloads and the page's tables are made of (compared as text: NaN ≠ NaN for DeepEqual).
		show := func(a *sectionAnalysis) string {
			return fmt.Sprint(a.ratioRecords(), a.anomalyRecords(), a.ageModelRecords(), a.modelJSON(), a.segmentsJSON(),
				a.hostJSON(), a.modelParas(), a.cautions(), a.sampleTable(), a.EventAges, a.Decisions, a.OtherMatur)
		}
		if g, w := show(cached), show(&sectionAnalysis{plain}); g != w {
			t.Errorf("section %s: the cached analysis shows otherwise than the one computed without the cache:\n%s\n%s", sec.Name, g, w)
		}
	}
	h := NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS, WithSessionCleanup(0))
	ts := httptest.NewServer(h)
	t.Cleanup(ts.Close)
	for _, sec := range secs {
		path := idURL("/sections", sec.ID)
		c1, _, cold := get(t, ts, path)
		c2, _, warm := get(t, ts, path)
		if c1 != http.StatusOK || c2 != http.StatusOK {
			t.Fatalf("%s: status %d then %d", path, c1, c2)
		}
		if cold != warm {
			t.Errorf("%s: the page served from the cache differs from the page computed", path)
		}
	}
}
