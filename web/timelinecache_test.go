package web

import (
	"context"
	"io"
	"log/slog"
	"net/http/httptest"
	"strconv"
	"testing"

	"coeval/static"
	"coeval/store"
)

// A timeline asked twice is computed once (the second answer is the kept one, the same shared result), an
// edit elsewhere in the compilation leaves it kept, and an accepted edit to one of its dates shows at once: the cached server then answers exactly what a
// server that never computed this timeline answers from the same database, and not what it answered
// before the edit.
func TestTimelineCacheShowsAnEditAtOnce(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	path := "/provinces/1/timeline?format=json&reps=200"
	_, _, before := get(t, srv, path)
	_, _, again := get(t, srv, path)
	if again != before {
		t.Fatal("the same timeline asked twice on unchanged data gave two answers")
	}

	// The cache hands out the one result it computed.
	s := &Server{store: db, tlCache: newTimelineCache()}
	ch, err := s.densityChoice(ctx, newParams(httptest.NewRequest("GET", path, nil)))
	if err != nil {
		t.Fatal(err)
	}
	a, err := s.timeline(ctx, 1, ch)
	if err != nil {
		t.Fatal(err)
	}
	b, err := s.timeline(ctx, 1, ch)
	if err != nil {
		t.Fatal(err)
	}
	if len(a.Summaries) == 0 || &a.Summaries[0] != &b.Summaries[0] {
		t.Fatal("the second timeline on unchanged data was computed again, not taken from the cache")
	}

	// An edit the timeline does not read (an event added to a section) moves the compilation's stamp but
	// not the digest of the province's data: the kept timeline is found again, not computed.
	secs, err := db.Sections(ctx)
	if err != nil || len(secs) == 0 {
		t.Fatalf("no section in the demo: %v", err)
	}
	stamp0, _ := db.DataStamp(ctx)
	if _, err := db.AddSectionEvent(ctx, secs[0].ID, store.EventForm{Name: "Timeline cache test event", Kind: "cie_onset", BaseHeightM: "1"}, true); err != nil {
		t.Fatal(err)
	}
	if stamp1, _ := db.DataStamp(ctx); stamp1 == stamp0 {
		t.Fatal("adding an event did not move the compilation's stamp: the test would prove nothing")
	}
	elsewhere, err := s.timeline(ctx, 1, ch)
	if err != nil {
		t.Fatal(err)
	}
	if &elsewhere.Summaries[0] != &a.Summaries[0] {
		t.Fatal("an edit the timeline does not read made it compute again")
	}

	ds, _, err := db.Dates(ctx, store.DateFilter{ProvinceID: 1, ReviewState: store.ReviewAccepted, Sort: "added", Limit: 1})
	if err != nil || len(ds) == 0 {
		t.Fatalf("no accepted date in province 1: %v", err)
	}
	form := store.FormOfDate(ds[0])
	form["age_ma"] = strconv.FormatFloat(ds[0].AgeMa+0.5, 'f', -1, 64)
	if _, err := db.UpdateDate(ctx, ds[0].ID, ds[0].Version, form, true); err != nil {
		t.Fatal(err)
	}
	_, _, after := get(t, srv, path)
	fresh := httptest.NewServer(NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS, WithSessionCleanup(0)))
	defer fresh.Close()
	_, _, want := get(t, fresh, path)
	if after == before {
		t.Fatal("after the edit the timeline still gives the answer from before it")
	}
	if after != want {
		t.Fatal("after the edit the timeline differs from the one a server without a cache computes")
	}
	c, err := s.timeline(ctx, 1, ch)
	if err != nil {
		t.Fatal(err)
	}
	if &c.Summaries[0] == &a.Summaries[0] {
		t.Fatal("after the edit the cache gave back the timeline from before it")
	}
}
