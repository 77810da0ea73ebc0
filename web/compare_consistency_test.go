package web

import (
	"context"
	"io"
	"log/slog"
	"net/http/httptest"
	"strings"
	"sync"
	"testing"

	"coeval/static"
	"coeval/store"
)

// writeDuringLoad is the real store with one real write committed in the middle of a comparison's data
// load (once its snapshot is open, before the sections are read): the race of an edit landing while the
// data are read, made to happen every time.
type writeDuringLoad struct {
	*store.DB
	t    *testing.T
	once sync.Once
}

func (w *writeDuringLoad) ReadSnapshot(ctx context.Context, fn func(*store.Snapshot) error) error {
	return w.DB.ReadSnapshot(ctx, func(s *store.Snapshot) error {
		w.once.Do(func() {
			body := "province,unit,sample_code,method,interpretation,age_ma,sigma_ma,sigma_level\n" +
				"Hvarn Plateau Basalts (invented),Haldruna Flow,RACE-1,upb_idtims,eruption,154.10,0.05,2\n"
			if _, err := w.DB.ImportDates(ctx, "race.csv", strings.NewReader(body)); err != nil {
				w.t.Errorf("the write during the load failed: %v", err)
			}
		})
		return fn(s)
	})
}

// A comparison whose data are read while a change is committed reads them as one snapshot, so the numbers
// shown belong to one state of the compilation, the one its data stamp names: here the state before the
// change, whatever a fresh server computed then; the next request, on a new snapshot, sees the change.
func TestCompareReadsOneStateOfTheCompilation(t *testing.T) {
	db := mustDemoDB(t)
	logger := slog.New(slog.NewTextHandler(io.Discard, nil))
	const q = "/compare?format=csv&sens=0&n=2000"
	fresh := httptest.NewServer(NewHandler(db, logger, static.FS, WithSessionCleanup(0)))
	defer fresh.Close()
	_, _, before := get(t, fresh, q)
	stamp, err := db.DataStamp(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	racy := httptest.NewServer(NewHandler(&writeDuringLoad{DB: db, t: t}, logger, static.FS, WithSessionCleanup(0)))
	defer racy.Close()
	_, _, got := get(t, racy, q)
	if got != before {
		t.Errorf("the comparison read during a change differs from the one on the state its snapshot began in (stamp %d):\n%.600s\n---\n%.600s", stamp, got, before)
	}
	if after, err := db.DataStamp(context.Background()); err != nil || after == stamp {
		t.Fatalf("the write during the load did not land (stamp %d → %d, %v)", stamp, after, err)
	}
	_, _, next := get(t, racy, q)
	if next == before {
		t.Error("the next comparison does not see the change committed during the previous one's load")
	}
}

// A contributor's event waits for review: the comparison leaves it out and says so by name, and
// include=pending compares it (the same rule as for dates and tie points).
func TestCompareLeavesPendingEventsOut(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	// The first section of the demo, which records the province the comparison opens on (the others lie
	// too far from it in age to be compared by default).
	sec, err := db.Section(ctx, 1)
	if err != nil {
		t.Fatal(err)
	}
	ev, err := db.AddSectionEvent(ctx, sec.ID, store.EventForm{Name: "Contributed horizon", Kind: "extinction", BaseHeightM: "40"}, false)
	if err != nil || ev.ReviewState != "pending" {
		t.Fatalf("contributor's event %+v (%v), want pending", ev, err)
	}
	_, _, page := get(t, srv, "/compare?sens=0&n=2000")
	_, _, table := get(t, srv, "/compare?sens=0&n=2000&format=csv")
	if strings.Contains(table, "Contributed horizon") {
		t.Error("the comparison compares an event no curator has accepted")
	}
	if !strings.Contains(page, "Left out of the comparison: 1 event waiting for a curator&#39;s review (Contributed horizon") {
		t.Error("the comparison page does not name the pending event it left out")
	}
	// A contributor's hiatus is named too (the age models leave it out).
	if _, err := db.CreateHiatus(ctx, sec.ID, store.Form{"height_m": "33.3", "min_duration_ma": "0.01"}, false); err != nil {
		t.Fatal(err)
	}
	if _, _, page = get(t, srv, "/compare?sens=0&n=2000"); !strings.Contains(page, "1 hiatus waiting for a curator&#39;s review") {
		t.Error("the comparison page does not name the pending hiatus its age models leave out")
	}
	_, _, table = get(t, srv, "/compare?sens=0&n=2000&format=csv&include=pending")
	_, _, page = get(t, srv, "/compare?sens=0&n=2000&include=pending")
	if !strings.Contains(table, "Contributed horizon") || !strings.Contains(page, "includes 1 pending event that no curator has reviewed yet") {
		t.Error("include=pending does not compare the pending event, or does not say it is unreviewed")
	}
}
