package store

import (
	"context"
	"errors"
	"testing"

	"github.com/google/go-cmp/cmp"
	"github.com/google/go-cmp/cmp/cmpopts"
)

func TestProvinceCreateEditConflictDeleteRevert(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	if _, err := db.CreateProvince(ctx, Form{"province": " ", "description": "x"}); problemOn(t, err, "province") != "is empty; a value is required" {
		t.Error("an empty name: wrong message")
	}
	f := Form{"province": "Test Traps", "description": "first", "pole_latitude": "", "pole_longitude": "", "pole_a95": "", "pole_source": ""}
	p, err := db.CreateProvince(ctx, f)
	if err != nil {
		t.Fatal(err)
	}
	if diff := cmp.Diff(f, FormOfProvince(p)); diff != "" {
		t.Errorf("FormOfProvince (-typed +stored):\n%s", diff)
	}
	if _, err := db.CreateProvince(ctx, f); problemOn(t, err, "province") == "" {
		t.Error("a second province of the same name was accepted")
	}
	g := Form{"province": "Test Traps (renamed)", "description": "second"}
	if _, err := db.UpdateProvince(ctx, p.ID, p.Version, g); err != nil {
		t.Fatal(err)
	}
	if _, err := db.UpdateProvince(ctx, p.ID, p.Version, f); !errors.Is(err, ErrConflict) {
		t.Errorf("stale edit: %v, want ErrConflict", err)
	}
	if err := db.RevertRevision(ctx, lastRevision(t, db, "province", p.ID)); err != nil {
		t.Fatal(err)
	}
	got, _ := db.Province(ctx, p.ID)
	ignore := cmpopts.IgnoreFields(Province{}, "Version", "UpdatedAt")
	if diff := cmp.Diff(p, got, ignore); diff != "" {
		t.Errorf("after revert (-before +after):\n%s", diff)
	}

	// A province with a unit cannot be deleted, nor can its creation be undone.
	u, err := db.CreateUnit(ctx, Form{"province": "Test Traps", "unit": "U"})
	if err != nil {
		t.Fatal(err)
	}
	var inUse *InUseError
	if err := db.DeleteProvince(ctx, p.ID, got.Version); !errors.As(err, &inUse) || inUse.Uses[0] != "1 unit" {
		t.Fatalf("delete of a province with a unit: %v, want InUseError naming 1 unit", err)
	}
	revs, _ := db.Revisions(ctx, "province", p.ID)
	if err := db.RevertRevision(ctx, revs[len(revs)-1].ID); !errors.As(err, &inUse) {
		t.Errorf("undoing the creation of a province with a unit: %v, want InUseError", err)
	}
	if err := db.DeleteUnit(ctx, u.ID, u.Version); err != nil {
		t.Fatal(err)
	}
	if err := db.DeleteProvince(ctx, p.ID, got.Version); err != nil {
		t.Fatal(err)
	}
	// Restoring the unit now fails: its province is gone. Restoring the province first, then the unit, works.
	if err := db.RevertRevision(ctx, lastRevision(t, db, "unit", u.ID)); err == nil {
		t.Error("a unit of a deleted province was restored")
	}
	if err := db.RevertRevision(ctx, lastRevision(t, db, "province", p.ID)); err != nil {
		t.Fatal(err)
	}
	if err := db.RevertRevision(ctx, lastRevision(t, db, "unit", u.ID)); err != nil {
		t.Fatal(err)
	}
	again, err := db.Province(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	if diff := cmp.Diff(p, again, ignore, cmpopts.IgnoreFields(Province{}, "NUnits")); diff != "" || again.NUnits != 1 {
		t.Errorf("after restoring province and unit (-before +after):\n%s", diff)
	}
}
