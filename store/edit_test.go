package store

import (
	"context"
	"errors"
	"sync"
	"testing"

	"github.com/google/go-cmp/cmp"
	"github.com/google/go-cmp/cmp/cmpopts"
)

func seededDate(t *testing.T) (*DB, Date) {
	t.Helper()
	db := mustOpenDB(t)
	if _, err := importString(t, db, "dates", "", dateHeader+goodDate); err != nil {
		t.Fatal(err)
	}
	d, err := db.Date(context.Background(), 1)
	if err != nil {
		t.Fatal(err)
	}
	return db, d
}

// Two edits made against the same version: exactly one wins, the other gets ErrConflict, and the stored
// date is the winner's, whole.
func TestConcurrentEditsOneWinsNothingLost(t *testing.T) {
	db, d := seededDate(t)
	ctx := context.Background()
	forms := []Form{FormOfDate(d), FormOfDate(d)}
	forms[0]["age_ma"], forms[0]["notes"] = "155.5", "edit A"
	forms[1]["age_ma"], forms[1]["notes"] = "155.3", "edit B"
	var wg sync.WaitGroup
	errs := make([]error, 2)
	for i := range forms {
		wg.Add(1)
		go func() {
			defer wg.Done()
			_, errs[i] = db.UpdateDate(ctx, d.ID, d.Version, forms[i], true)
		}()
	}
	wg.Wait()
	won := -1
	for i, err := range errs {
		switch {
		case err == nil:
			won = i
		case !errors.Is(err, ErrConflict):
			t.Fatalf("edit %d: %v, want success or ErrConflict", i, err)
		}
	}
	if won < 0 || (errs[0] == nil) == (errs[1] == nil) {
		t.Fatalf("errors %v: want exactly one edit to win", errs)
	}
	got, _ := db.Date(ctx, d.ID)
	if got.Notes != forms[won]["notes"] || got.Version != d.Version+1 {
		t.Errorf("stored notes %q version %d, want the winner's %q at version %d", got.Notes, got.Version, forms[won]["notes"], d.Version+1)
	}
}

// An edit, then a revert of that edit, gives back every field of the earlier state.
func TestRevertRestoresTheExactEarlierState(t *testing.T) {
	db, d := seededDate(t)
	ctx := context.Background()
	f := FormOfDate(d)
	f["age_ma"], f["sigma_ma"], f["laboratory"], f["doi"] = "150.1", "0.5", "elsewhere", "10.5555/x"
	if _, err := db.UpdateDate(ctx, d.ID, d.Version, f, true); err != nil {
		t.Fatal(err)
	}
	revs, err := db.Revisions(ctx, "date", d.ID)
	if err != nil || len(revs) != 2 {
		t.Fatalf("revisions %d (%v), want 2 (created, edited)", len(revs), err)
	}
	if err := db.RevertRevision(ctx, revs[0].ID); err != nil {
		t.Fatal(err)
	}
	got, _ := db.Date(ctx, d.ID)
	ignore := cmpopts.IgnoreFields(Date{}, "Version", "UpdatedAt")
	if diff := cmp.Diff(d, got, ignore); diff != "" {
		t.Errorf("after revert (-before +after):\n%s", diff)
	}
	// Deleting and reverting the deletion recreates the same record with the same id.
	if err := db.DeleteDate(ctx, d.ID, got.Version); err != nil {
		t.Fatal(err)
	}
	if _, err := db.Date(ctx, d.ID); !errors.Is(err, ErrNotFound) {
		t.Fatalf("after delete: %v, want ErrNotFound", err)
	}
	revs, _ = db.Revisions(ctx, "date", d.ID)
	if err := db.RevertRevision(ctx, revs[0].ID); err != nil {
		t.Fatal(err)
	}
	again, err := db.Date(ctx, d.ID)
	if err != nil {
		t.Fatal(err)
	}
	if diff := cmp.Diff(d, again, ignore, cmpopts.IgnoreFields(Date{}, "CreatedAt")); diff != "" {
		t.Errorf("after revert of the deletion (-before +after):\n%s", diff)
	}
}

func TestEditsByContributorsArePendingAndReviewNeedsAReason(t *testing.T) {
	db, d := seededDate(t)
	ctx := WithActor(context.Background(), 0)
	f := FormOfDate(d)
	f["notes"] = "contributor's correction"
	got, err := db.UpdateDate(ctx, d.ID, d.Version, f, false)
	if err != nil {
		t.Fatal(err)
	}
	if got.ReviewState != "pending" {
		t.Errorf("contributor's edit state %q, want pending", got.ReviewState)
	}
	if _, err := db.ReviewDate(ctx, d.ID, got.Version, false, " "); err == nil {
		t.Error("a rejection without a reason was accepted")
	}
	rej, err := db.ReviewDate(ctx, d.ID, got.Version, false, "age is a duplicate of HV-1")
	if err != nil {
		t.Fatal(err)
	}
	if rej.ReviewState != "rejected" || rej.ReviewNote != "age is a duplicate of HV-1" {
		t.Errorf("after rejection: %q %q", rej.ReviewState, rej.ReviewNote)
	}
	if _, err := db.ReviewDate(ctx, d.ID, got.Version, true, ""); !errors.Is(err, ErrConflict) {
		t.Errorf("review against a stale version: %v, want ErrConflict", err)
	}
	// The form is checked with the importer's rules and names the field.
	f["sigma_ma"] = "-1"
	_, err = db.UpdateDate(ctx, d.ID, rej.Version, f, true)
	ve, ok := AsValidation(err)
	if !ok || ve.Problems[0].Column != "sigma_ma" {
		t.Errorf("bad form: %v, want a problem naming sigma_ma", err)
	}
}

// A deleted record's id is never given to a new one: otherwise the new record would inherit the old
// one's history and its restore links.
func TestDeletedIDsAreNotReused(t *testing.T) {
	db, d := seededDate(t)
	ctx := context.Background()
	if err := db.DeleteDate(ctx, d.ID, d.Version); err != nil {
		t.Fatal(err)
	}
	if _, err := importString(t, db, "dates", "", dateHeader+"P,U1,S-2,upb_idtims,zircon,eruption,155.1,0.06,2,,,\n"); err != nil {
		t.Fatal(err)
	}
	fresh, _, err := db.Dates(ctx, DateFilter{Text: "S-2"})
	if err != nil || len(fresh) != 1 {
		t.Fatalf("the new date: %v (%v)", fresh, err)
	}
	if fresh[0].ID == d.ID {
		t.Fatalf("the new date took the deleted date's id %d", d.ID)
	}
	if revs, _ := db.Revisions(ctx, "date", fresh[0].ID); len(revs) != 1 {
		t.Errorf("the new date's history has %d revisions, want 1 (its creation)", len(revs))
	}
	// The same for a record type written through recordType (a unit) and for events.
	units, _ := db.Units(ctx, 0)
	var u1 Unit
	for _, u := range units {
		if u.Name == "U1" {
			u1 = u
		}
	}
	if err := db.DeleteDate(ctx, fresh[0].ID, fresh[0].Version); err != nil {
		t.Fatal(err)
	}
	if err := db.DeleteUnit(ctx, u1.ID, u1.Version); err != nil {
		t.Fatal(err)
	}
	if _, err := importString(t, db, "units", "", "province,unit\nP,U9\n"); err != nil {
		t.Fatal(err)
	}
	units, _ = db.Units(ctx, 0)
	for _, u := range units {
		if u.ID == u1.ID {
			t.Errorf("unit %q took the id %d of the deleted unit %q", u.Name, u.ID, u1.Name)
		}
	}
}
