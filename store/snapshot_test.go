package store

import (
	"context"
	"testing"
)

// A snapshot sees the compilation as it stood at its start: a date imported and committed by a writer
// while the snapshot is open is not in it (nor is the change batch that moves the data stamp), and is
// there for a read after it. This is SQLite's snapshot isolation of a read transaction in WAL mode
// (sqlite.org/isolation.html): the property the comparison relies on instead of reading again.
func TestReadSnapshotSeesOneStateWhileAWriterCommits(t *testing.T) {
	db, _ := seededDate(t)
	ctx := context.Background()
	stamp0, err := db.DataStamp(ctx)
	if err != nil {
		t.Fatal(err)
	}
	var before, inside []Date
	var stampIn int64
	err = db.ReadSnapshot(ctx, func(s *Snapshot) error {
		var err error
		if before, _, err = s.Dates(ctx, DateFilter{}); err != nil {
			return err
		}
		// A writer commits meanwhile, on another connection of the pool.
		if _, err := importString(t, db, "dates", "", dateHeader+"P,U1,S-2,upb_idtims,zircon,eruption,155.5,0.06,2,,,\n"); err != nil {
			t.Fatalf("the writer must not wait for the snapshot: %v", err)
		}
		if n, _, err := db.Dates(ctx, DateFilter{}); err != nil || len(n) != len(before)+1 {
			t.Fatalf("outside the snapshot the writer's date is there: %d dates, want %d (%v)", len(n), len(before)+1, err)
		}
		if inside, _, err = s.Dates(ctx, DateFilter{}); err != nil {
			return err
		}
		stampIn, err = s.DataStamp(ctx)
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	if len(before) != 1 || len(inside) != len(before) {
		t.Fatalf("inside the snapshot: %d dates before the write and %d after, want 1 and 1", len(before), len(inside))
	}
	if stampIn != stamp0 {
		t.Errorf("data stamp inside the snapshot %d, want the one at its start %d", stampIn, stamp0)
	}
	after, _, err := db.Dates(ctx, DateFilter{})
	if err != nil || len(after) != 2 {
		t.Fatalf("after the snapshot: %d dates, want 2 (%v)", len(after), err)
	}
	if s, _ := db.DataStamp(ctx); s == stamp0 {
		t.Errorf("the write must move the data stamp (still %d)", s)
	}
}
