package store

import (
	"context"
	"errors"
	"testing"

	"github.com/google/go-cmp/cmp"
	"github.com/google/go-cmp/cmp/cmpopts"
)

func TestSectionCreateEditConflictDeleteRevert(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	f := Form{"section": "Test Core", "kind": "core", "latitude": "60.5", "longitude": "5.25", "palaeolatitude": "40",
		"thermal_maturity": "immature", "toc_threshold_wt_pct": "0.3", "notes": "first"}

	bad := Form{"section": "", "kind": "trench", "toc_threshold_wt_pct": "9"}
	_, err := db.CreateSection(ctx, bad)
	for _, col := range []string{"section", "kind", "toc_threshold_wt_pct"} {
		problemOn(t, err, col)
	}
	s, err := db.CreateSection(ctx, f)
	if err != nil {
		t.Fatal(err)
	}
	if diff := cmp.Diff(f, FormOfSection(s)); diff != "" {
		t.Errorf("FormOfSection gives back another form (-typed +stored):\n%s", diff)
	}
	if _, err := db.CreateSection(ctx, f); problemOn(t, err, "section") == "" {
		t.Error("a second section of the same name was accepted")
	}

	g := FormOfSection(s)
	g["notes"], g["toc_threshold_wt_pct"] = "second", "0.5"
	if _, err := db.UpdateSection(ctx, s.ID, s.Version, g); err != nil {
		t.Fatal(err)
	}
	if _, err := db.UpdateSection(ctx, s.ID, s.Version, g); !errors.Is(err, ErrConflict) {
		t.Errorf("stale edit: %v, want ErrConflict", err)
	}
	if err := db.RevertRevision(ctx, lastRevision(t, db, "section", s.ID)); err != nil {
		t.Fatal(err)
	}
	got, _ := db.Section(ctx, s.ID)
	ignore := cmpopts.IgnoreFields(Section{}, "Version", "UpdatedAt")
	if diff := cmp.Diff(s, got, ignore); diff != "" {
		t.Errorf("after revert (-before +after):\n%s", diff)
	}

	// A section with tie points would lose them (ON DELETE CASCADE): the delete is refused instead.
	if _, err := importString(t, db, "ties", "Test Core", "label,height_m,kind,distribution,age_ma,sigma_ma,sigma_level\nT1,3,radiometric,normal,150,0.1,2\n"); err != nil {
		t.Fatal(err)
	}
	var inUse *InUseError
	if err := db.DeleteSection(ctx, s.ID, got.Version); !errors.As(err, &inUse) || inUse.Uses[0] != "1 tie point" {
		t.Fatalf("delete of a section with a tie: %v, want InUseError naming 1 tie point", err)
	}
	if ties, _ := db.TiePoints(ctx, s.ID); len(ties) != 1 {
		t.Fatal("the refused delete removed the tie")
	}
	if _, err := db.db.ExecContext(ctx, `DELETE FROM tie_points`); err != nil {
		t.Fatal(err)
	}
	if err := db.DeleteSection(ctx, s.ID, got.Version); err != nil {
		t.Fatal(err)
	}
	if err := db.RevertRevision(ctx, lastRevision(t, db, "section", s.ID)); err != nil {
		t.Fatal(err)
	}
	again, err := db.Section(ctx, s.ID)
	if err != nil {
		t.Fatal(err)
	}
	if diff := cmp.Diff(s, again, ignore); diff != "" {
		t.Errorf("after restoring the deletion (-before +after):\n%s", diff)
	}
}
