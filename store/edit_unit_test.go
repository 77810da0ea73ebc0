package store

import (
	"context"
	"errors"
	"testing"

	"github.com/google/go-cmp/cmp"
	"github.com/google/go-cmp/cmp/cmpopts"
)

// problemOn returns the message of the problem of err naming column, failing when there is none.
func problemOn(t *testing.T, err error, column string) string {
	t.Helper()
	ve, ok := AsValidation(err)
	if !ok {
		t.Fatalf("error %v, want a validation error naming %s", err, column)
	}
	for _, p := range ve.Problems {
		if p.Column == column {
			return p.Message
		}
	}
	t.Fatalf("problems %v, want one naming %s", ve.Problems, column)
	return ""
}

// lastRevision returns the id of the newest revision of a record.
func lastRevision(t *testing.T, db *DB, recordType string, id int64) int64 {
	t.Helper()
	revs, err := db.Revisions(context.Background(), recordType, id)
	if err != nil || len(revs) == 0 {
		t.Fatalf("revisions of %s %d: %v (%d)", recordType, id, err, len(revs))
	}
	return revs[0].ID
}

func TestUnitCreateEditConflictDeleteRevert(t *testing.T) {
	db := mustOpenDB(t)
	ctx := WithActor(context.Background(), 0)
	f := Form{"province": "P", "unit": "Lower Flow", "kind": "flow", "pile_position": "1", "volume_km3": "120",
		"volume_sigma_km3": "10", "latitude": "64.1", "longitude": "-19.5", "notes": "first"}

	bad := Form{"province": "P", "unit": "X", "kind": "lava", "volume_sigma_km3": "3"}
	_, err := db.CreateUnit(ctx, bad)
	if msg := problemOn(t, err, "kind"); msg == "" {
		t.Error("unknown kind: no message")
	}
	problemOn(t, err, "volume_sigma_km3") // given without a volume, as the importer says
	if c, _ := db.Counts(ctx); c.Provinces != 0 || c.Units != 0 {
		t.Fatalf("a refused form wrote %+v", c)
	}

	u, err := db.CreateUnit(ctx, f)
	if err != nil {
		t.Fatal(err)
	}
	if u.Province != "P" || u.Kind != "flow" || *u.VolumeKm3 != 120 || u.Version != 1 {
		t.Errorf("created %+v", u)
	}
	if _, err := db.CreateUnit(ctx, f); problemOn(t, err, "unit") == "" {
		t.Error("a second unit of the same name was accepted")
	}

	g := FormOfUnit(u)
	if diff := cmp.Diff(f, g); diff != "" {
		t.Errorf("FormOfUnit gives back another form (-typed +stored):\n%s", diff)
	}
	g["notes"], g["volume_km3"] = "second", "150"
	edited, err := db.UpdateUnit(ctx, u.ID, u.Version, g)
	if err != nil {
		t.Fatal(err)
	}
	if edited.Notes != "second" || edited.Version != 2 {
		t.Errorf("after edit: %+v", edited)
	}
	// An edit made against the first version is refused and changes nothing.
	g["notes"] = "stale"
	if _, err := db.UpdateUnit(ctx, u.ID, u.Version, g); !errors.Is(err, ErrConflict) {
		t.Errorf("stale edit: %v, want ErrConflict", err)
	}
	if got, _ := db.Unit(ctx, u.ID); got.Notes != "second" {
		t.Errorf("after a stale edit notes %q", got.Notes)
	}

	// Restoring the state before the edit gives back every field of the first state.
	if err := db.RevertRevision(ctx, lastRevision(t, db, "unit", u.ID)); err != nil {
		t.Fatal(err)
	}
	got, _ := db.Unit(ctx, u.ID)
	ignore := cmpopts.IgnoreFields(Unit{}, "Version", "UpdatedAt")
	if diff := cmp.Diff(u, got, ignore); diff != "" {
		t.Errorf("after revert (-before +after):\n%s", diff)
	}

	// A unit with a date cannot be deleted; the refusal says why and deletes nothing.
	if _, err := importString(t, db, "dates", "", dateHeader+"P,Lower Flow,S-1,upb_idtims,zircon,eruption,155.4,0.06,2,,,\n"); err != nil {
		t.Fatal(err)
	}
	var inUse *InUseError
	if err := db.DeleteUnit(ctx, u.ID, got.Version); !errors.As(err, &inUse) || inUse.Uses[0] != "1 date" {
		t.Fatalf("delete of a dated unit: %v, want InUseError naming 1 date", err)
	}
	if err := db.DeleteDate(ctx, 1, 1); err != nil {
		t.Fatal(err)
	}
	if err := db.DeleteUnit(ctx, u.ID, got.Version-1); !errors.Is(err, ErrConflict) {
		t.Errorf("delete at an old version: %v, want ErrConflict", err)
	}
	if err := db.DeleteUnit(ctx, u.ID, got.Version); err != nil {
		t.Fatal(err)
	}
	if _, err := db.Unit(ctx, u.ID); !errors.Is(err, ErrNotFound) {
		t.Fatalf("after delete: %v", err)
	}
	// Restoring the deletion recreates the same unit with the same id and creation time.
	if err := db.RevertRevision(ctx, lastRevision(t, db, "unit", u.ID)); err != nil {
		t.Fatal(err)
	}
	again, err := db.Unit(ctx, u.ID)
	if err != nil {
		t.Fatal(err)
	}
	if diff := cmp.Diff(u, again, ignore); diff != "" {
		t.Errorf("after restoring the deletion (-before +after):\n%s", diff)
	}
	// Undoing the creation deletes it again; a second time there is nothing to undo.
	revs, _ := db.Revisions(ctx, "unit", u.ID)
	created := revs[len(revs)-1].ID
	if err := db.RevertRevision(ctx, created); err != nil {
		t.Fatal(err)
	}
	if err := db.RevertRevision(ctx, created); !errors.Is(err, ErrConflict) {
		t.Errorf("undoing a creation twice: %v, want ErrConflict", err)
	}
	// Every change is a revision: created, edited, restored, deleted, restored, deleted.
	if revs, _ := db.Revisions(ctx, "unit", u.ID); len(revs) != 6 {
		t.Errorf("%d revisions, want 6", len(revs))
	}
}
