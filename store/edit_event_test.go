package store

import (
	"context"
	"errors"
	"testing"

	"github.com/google/go-cmp/cmp"
	"github.com/google/go-cmp/cmp/cmpopts"
)

func TestEventCreateEditReviewConflictDeleteRevert(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	sec, err := db.CreateSection(ctx, Form{"section": "Test Core"})
	if err != nil {
		t.Fatal(err)
	}
	f := Form{"name": "Hg anomaly", "kind": "hg_anomaly", "base_height_m": "10.5", "top_height_m": "12", "notes": "first",
		"review_state": "accepted"}

	bad := Form{"name": "X", "kind": "hg_anomaly", "base_height_m": "12", "top_height_m": "10"}
	_, err = db.CreateEvent(ctx, sec.ID, bad, true)
	if msg := problemOn(t, err, "top_height_m"); msg != "want the top (10 m) at or above the base (12 m)" {
		t.Errorf("top below base: %q", msg)
	}
	if _, err := db.CreateEvent(ctx, 99, f, true); !errors.Is(err, ErrNotFound) {
		t.Errorf("event of an unknown section: %v, want ErrNotFound", err)
	}

	// A contributor's event is pending whatever the form says.
	e, err := db.CreateEvent(ctx, sec.ID, f, false)
	if err != nil {
		t.Fatal(err)
	}
	if e.ReviewState != "pending" || e.Origin != "entered" || *e.SectionID != sec.ID {
		t.Errorf("created %+v", e)
	}
	if _, err := db.CreateEvent(ctx, sec.ID, f, true); problemOn(t, err, "name") == "" {
		t.Error("a second event of the same name in the section was accepted")
	}
	want := f
	want["review_state"] = "pending"
	if diff := cmp.Diff(want, FormOfEvent(e)); diff != "" {
		t.Errorf("FormOfEvent (-typed +stored):\n%s", diff)
	}

	if _, err := db.ReviewEvent(ctx, e.ID, e.Version, false, " "); err == nil {
		t.Error("a rejection without a reason was accepted")
	}
	rej, err := db.ReviewEvent(ctx, e.ID, e.Version, false, "not above background")
	if err != nil {
		t.Fatal(err)
	}
	if rej.ReviewState != "rejected" || rej.ReviewNote != "not above background" {
		t.Errorf("after rejection %q %q", rej.ReviewState, rej.ReviewNote)
	}
	if _, err := db.ReviewEvent(ctx, e.ID, e.Version, true, ""); !errors.Is(err, ErrConflict) {
		t.Errorf("review at a stale version: %v, want ErrConflict", err)
	}

	g := FormOfEvent(rej)
	g["notes"], g["base_height_m"] = "second", "11"
	edited, err := db.UpdateEvent(ctx, e.ID, rej.Version, g, false)
	if err != nil {
		t.Fatal(err)
	}
	if edited.ReviewState != "pending" || edited.ReviewNote != "not above background" || *edited.BaseHeightM != 11 {
		t.Errorf("after a contributor's edit: %+v", edited)
	}
	if _, err := db.UpdateEvent(ctx, e.ID, rej.Version, g, true); !errors.Is(err, ErrConflict) {
		t.Errorf("stale edit: %v, want ErrConflict", err)
	}
	// Restoring the state before the edit gives back the rejected event, field for field.
	if err := db.RevertRevision(ctx, lastRevision(t, db, "event", e.ID)); err != nil {
		t.Fatal(err)
	}
	got, _ := db.Event(ctx, e.ID)
	ignore := cmpopts.IgnoreFields(Event{}, "Version", "UpdatedAt")
	if diff := cmp.Diff(rej, got, ignore); diff != "" {
		t.Errorf("after revert (-before +after):\n%s", diff)
	}
	if err := db.DeleteEvent(ctx, e.ID, got.Version); err != nil {
		t.Fatal(err)
	}
	if err := db.RevertRevision(ctx, lastRevision(t, db, "event", e.ID)); err != nil {
		t.Fatal(err)
	}
	again, err := db.Event(ctx, e.ID)
	if err != nil {
		t.Fatal(err)
	}
	if diff := cmp.Diff(rej, again, ignore); diff != "" {
		t.Errorf("after restoring the deletion (-before +after):\n%s", diff)
	}
	// The section now has an event, so it cannot be deleted.
	var inUse *InUseError
	s, _ := db.Section(ctx, sec.ID)
	if err := db.DeleteSection(ctx, sec.ID, s.Version); !errors.As(err, &inUse) {
		t.Errorf("deleting a section with an event: %v, want InUseError", err)
	}
}
