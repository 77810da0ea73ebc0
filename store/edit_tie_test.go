package store

import (
	"context"
	"errors"
	"testing"

	"github.com/google/go-cmp/cmp"
	"github.com/google/go-cmp/cmp/cmpopts"
)

func TestTieCreateEditConflictDeleteRevert(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	sec, err := db.CreateSection(ctx, Form{"section": "Test Core"})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := importString(t, db, "dates", "", dateHeader+goodDate); err != nil {
		t.Fatal(err)
	}
	f := Form{"label": "Ash 1", "height_m": "31.6", "kind": "radiometric", "distribution": "normal", "age_ma": "155.4",
		"sigma_ma": "0.06", "sigma_level": "2", "age_min_ma": "", "age_max_ma": "", "date_sample_code": "S-1",
		"date_method": "upb_idtims", "notes": "first"}

	// The importer's rules: a normal tie takes no range; an unknown sample is named.
	bad := Form{"label": "B", "height_m": "1", "kind": "radiometric", "distribution": "normal", "age_ma": "150",
		"sigma_ma": "0.1", "sigma_level": "2", "age_min_ma": "149", "date_sample_code": "nope"}
	_, err = db.CreateTie(ctx, sec.ID, bad)
	problemOn(t, err, "age_min_ma")
	bad["age_min_ma"] = ""
	_, err = db.CreateTie(ctx, sec.ID, bad)
	problemOn(t, err, "date_sample_code")

	tp, err := db.CreateTie(ctx, sec.ID, f)
	if err != nil {
		t.Fatal(err)
	}
	if tp.DateID == nil || *tp.SigmaMa != 0.03 || *tp.SigmaLevel != 2 {
		t.Errorf("created %+v: want the date linked and σ stored at 1σ", tp)
	}
	if diff := cmp.Diff(f, FormOfTie(tp)); diff != "" {
		t.Errorf("FormOfTie (-typed +stored):\n%s", diff)
	}
	if _, err := db.CreateTie(ctx, sec.ID, f); problemOn(t, err, "label") == "" {
		t.Error("a second tie of the same label in the section was accepted")
	}

	// A normal tie edited into a uniform one, then restored.
	g := FormOfTie(tp)
	g["distribution"], g["age_ma"], g["sigma_ma"], g["sigma_level"], g["age_min_ma"], g["age_max_ma"] = "uniform", "", "", "", "155", "156"
	g["date_sample_code"], g["date_method"] = "", ""
	edited, err := db.UpdateTie(ctx, tp.ID, tp.Version, g)
	if err != nil {
		t.Fatal(err)
	}
	if edited.AgeMa != nil || edited.DateID != nil || *edited.AgeMaxMa != 156 {
		t.Errorf("after edit %+v", edited)
	}
	if _, err := db.UpdateTie(ctx, tp.ID, tp.Version, f); !errors.Is(err, ErrConflict) {
		t.Errorf("stale edit: %v, want ErrConflict", err)
	}
	if err := db.RevertRevision(ctx, lastRevision(t, db, "tie_point", tp.ID)); err != nil {
		t.Fatal(err)
	}
	got, _ := db.TiePoint(ctx, tp.ID)
	ignore := cmpopts.IgnoreFields(TiePoint{}, "Version", "UpdatedAt")
	if diff := cmp.Diff(tp, got, ignore); diff != "" {
		t.Errorf("after revert (-before +after):\n%s", diff)
	}
	if err := db.DeleteTie(ctx, tp.ID, got.Version); err != nil {
		t.Fatal(err)
	}
	if err := db.RevertRevision(ctx, lastRevision(t, db, "tie_point", tp.ID)); err != nil {
		t.Fatal(err)
	}
	again, err := db.TiePoint(ctx, tp.ID)
	if err != nil {
		t.Fatal(err)
	}
	if diff := cmp.Diff(tp, again, ignore); diff != "" {
		t.Errorf("after restoring the deletion (-before +after):\n%s", diff)
	}
	// Restoring a state that links a date deleted since is refused, and says why.
	if err := db.DeleteTie(ctx, tp.ID, again.Version); err != nil {
		t.Fatal(err)
	}
	if err := db.DeleteDate(ctx, 1, 1); err != nil {
		t.Fatal(err)
	}
	err = db.RevertRevision(ctx, lastRevision(t, db, "tie_point", tp.ID))
	if ve, ok := AsValidation(err); !ok || len(ve.Problems) != 1 {
		t.Errorf("restoring a tie whose date is gone: %v, want a validation error", err)
	}
}
