package web

import (
	"context"
	"fmt"
	"net/http"
	"net/http/httptest"
	"sync/atomic"
	"testing"

	"coeval/store"
)

// readCountingStore counts the reads of records a timeline or a comparison makes (a province's dates,
// a comparison's snapshot); the versions read to find a kept result are not counted.
type readCountingStore struct {
	*store.DB
	provinceDates, snapshots atomic.Int64
}

func (c *readCountingStore) ProvinceDates(ctx context.Context, id int64) (store.ProvinceDates, error) {
	c.provinceDates.Add(1)
	return c.DB.ProvinceDates(ctx, id)
}

func (c *readCountingStore) ReadSnapshot(ctx context.Context, fn func(*store.Snapshot) error) error {
	c.snapshots.Add(1)
	return c.DB.ReadSnapshot(ctx, fn)
}

// A kept timeline and a kept comparison are found after an edit to another province's date, or to a
// section the comparison does not read, without reading any record (the province's dates are not read
// again, no snapshot is taken); an edit to a date of the province they read computes both anew. The
// provinces and sections are chosen from the store.
func TestKeptResultsFoundWithoutReadingRecords(t *testing.T) {
	db := mustDemoDB(t)
	ctx := store.WithActor(context.Background(), 0)
	provs, err := db.Provinces(ctx)
	if err != nil {
		t.Fatal(err)
	}
	var withDates []store.Province
	for _, p := range provs {
		if p.NDates > 0 {
			withDates = append(withDates, p)
		}
	}
	secs, err := db.Sections(ctx)
	if err != nil || len(withDates) < 2 || len(secs) < 2 {
		t.Fatalf("the demo should hold two provinces with dates and two sections: %d, %d, %v", len(withDates), len(secs), err)
	}
	mine, other := withDates[0], withDates[1]
	cs := &readCountingStore{DB: db}
	s := &Server{store: cs, tlCache: newTimelineCache()}
	c := &comparer{Server: s, cache: newCompareCache(8)}
	path := "/provinces/1/timeline?reps=200"
	ch, err := s.densityChoice(ctx, newParams(httptest.NewRequest(http.MethodGet, path, nil)))
	if err != nil {
		t.Fatal(err)
	}
	compare := fmt.Sprintf("/compare?sens=0&n=1000&reps=100&draws=200&province=%d&sections=%d", mine.ID, secs[0].ID)
	first, err := s.timeline(ctx, mine.ID, ch)
	if err != nil {
		t.Fatal(err)
	}
	if _, cached, err := c.comparison(httptest.NewRequest(http.MethodGet, compare, nil)); err != nil || cached {
		t.Fatalf("first comparison: cached %v, %v", cached, err)
	}
	editDate := func(p store.Province) {
		t.Helper()
		ds, _, err := db.Dates(ctx, store.DateFilter{ProvinceID: p.ID, Limit: 1})
		if err != nil || len(ds) == 0 {
			t.Fatalf("no date in province %d: %v", p.ID, err)
		}
		f := store.FormOfDate(ds[0])
		f["notes"] = ds[0].Notes + " (edited)"
		if _, err := db.UpdateDate(ctx, ds[0].ID, ds[0].Version, f, true); err != nil {
			t.Fatal(err)
		}
	}
	keptUnread := func(edit string) {
		t.Helper()
		pd, snaps := cs.provinceDates.Load(), cs.snapshots.Load()
		tl, err := s.timeline(ctx, mine.ID, ch)
		if err != nil {
			t.Fatal(err)
		}
		if &tl.Summaries[0] != &first.Summaries[0] {
			t.Errorf("%s: the timeline was computed again", edit)
		}
		if _, cached, err := c.comparison(httptest.NewRequest(http.MethodGet, compare, nil)); err != nil || !cached {
			t.Errorf("%s: the comparison was computed again (%v)", edit, err)
		}
		if n, m := cs.provinceDates.Load()-pd, cs.snapshots.Load()-snaps; n != 0 || m != 0 {
			t.Errorf("%s: %d reads of the province's dates and %d snapshots to find the kept results, want none", edit, n, m)
		}
	}
	editDate(other)
	keptUnread("an edit to another province's date")
	sec := secs[1]
	f := store.FormOfSection(sec)
	f["notes"] = "edited elsewhere"
	if _, err := db.UpdateSection(ctx, sec.ID, sec.Version, f); err != nil {
		t.Fatal(err)
	}
	keptUnread("an edit to a section the comparison does not read")

	editDate(mine)
	pd := cs.provinceDates.Load()
	tl, err := s.timeline(ctx, mine.ID, ch)
	if err != nil {
		t.Fatal(err)
	}
	if &tl.Summaries[0] == &first.Summaries[0] || cs.provinceDates.Load() != pd+1 {
		t.Error("an edit to the province's date: the kept timeline was served, not computed anew from the dates")
	}
	if _, cached, err := c.comparison(httptest.NewRequest(http.MethodGet, compare, nil)); err != nil || cached {
		t.Errorf("an edit to the province's date: the comparison was served from the cache (%v)", err)
	}
}

// A comparison that chooses no section reads every section's ties (they decide which sections come near
// the province's dates), so an edit to any section computes it anew; one that chooses a section is kept
// after an edit to another.
func TestCompareWithoutSectionsFollowsEverySection(t *testing.T) {
	db := mustDemoDB(t)
	ctx := store.WithActor(context.Background(), 0)
	secs, err := db.Sections(ctx)
	if err != nil || len(secs) < 2 {
		t.Fatalf("%d sections, %v", len(secs), err)
	}
	c := &comparer{Server: &Server{store: db}, cache: newCompareCache(8)}
	cached := func(q string) bool {
		t.Helper()
		_, cached, err := c.comparison(httptest.NewRequest(http.MethodGet, q, nil))
		if err != nil {
			t.Fatal(err)
		}
		return cached
	}
	all := "/compare?sens=0&n=1000&reps=100&draws=200"
	one := fmt.Sprintf("%s&sections=%d", all, secs[0].ID)
	cached(all)
	cached(one)
	last := secs[len(secs)-1]
	f := store.FormOfSection(last)
	f["notes"] = "edited for the comparison test"
	if _, err := db.UpdateSection(ctx, last.ID, last.Version, f); err != nil {
		t.Fatal(err)
	}
	if cached(all) {
		t.Errorf("a comparison of every section was served from the cache after an edit to section %s", last.Name)
	}
	if !cached(one) {
		t.Errorf("a comparison of section %s was computed again after an edit to section %s", secs[0].Name, last.Name)
	}
}
