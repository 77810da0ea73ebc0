package store

import (
	"context"
	"errors"
	"testing"
)

func TestSetTargetCalibration(t *testing.T) {
	ctx := context.Background()
	db := mustOpenDB(t)
	got, err := db.TargetCalibration(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if got.Code != "min00-fcs28201" { // migrations/002_calibrations.sql marks it the target
		t.Fatalf("seeded target = %q, want min00-fcs28201", got.Code)
	}
	if err := db.SetTargetCalibration(ctx, "renne11-fcs28294", "test"); err != nil {
		t.Fatal(err)
	}
	if got, _ = db.TargetCalibration(ctx); got.Code != "renne11-fcs28294" {
		t.Fatalf("target after set = %q, want renne11-fcs28294", got.Code)
	}
	cals, err := db.Calibrations(ctx)
	if err != nil {
		t.Fatal(err)
	}
	n := 0
	for _, c := range cals {
		if c.IsTarget {
			n++
		}
	}
	if n != 1 || !cals[0].IsTarget {
		t.Fatalf("%d targets (first listed target: %v), want exactly one, listed first", n, cals[0].IsTarget)
	}
	if revs, _ := db.RevisionCount(ctx, "calibration", cals[0].ID); revs != 1 {
		t.Errorf("revisions of the new target = %d, want 1", revs)
	}
	if err := db.SetTargetCalibration(ctx, "nope", "test"); !errors.Is(err, ErrNotFound) {
		t.Errorf("unknown code: err = %v, want ErrNotFound", err)
	}
	if got, _ = db.TargetCalibration(ctx); got.Code != "renne11-fcs28294" {
		t.Errorf("target after a failed set = %q, want it unchanged", got.Code)
	}
}
