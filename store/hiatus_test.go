package store

import (
	"context"
	"errors"
	"io/fs"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"testing/fstest"

	"coeval/migrations"

	"github.com/google/go-cmp/cmp"
	"github.com/google/go-cmp/cmp/cmpopts"
)

func mustSection(t *testing.T, db *DB, name string) Section {
	t.Helper()
	sec, err := db.CreateSection(context.Background(), Form{"section": name})
	if err != nil {
		t.Fatal(err)
	}
	return sec
}

// A hiatus form is checked field by field, every problem naming its field, and nothing is written.
func TestHiatusFormProblemsNameFields(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	sec := mustSection(t, db, "S")
	if _, err := db.CreateHiatus(ctx, sec.ID, Form{"height_m": "20", "min_duration_ma": "0.5"}, true); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name   string
		form   Form
		column string
		msg    string
	}{
		{"no height", Form{"min_duration_ma": "0.1"}, "height_m", "is empty; a number is required"},
		{"height not a number", Form{"height_m": "12 m", "min_duration_ma": "0.1"}, "height_m", `want a number, got "12 m"`},
		{"no duration", Form{"height_m": "12"}, "min_duration_ma", "is empty; a number is required"},
		{"negative duration", Form{"height_m": "12", "min_duration_ma": "-0.2"}, "min_duration_ma", "want a duration in Ma of 0 or more, got -0.2"},
		{"duration in years", Form{"height_m": "12", "min_duration_ma": "250000"}, "min_duration_ma", "want a duration in Ma of at most 4600"},
		{"unknown review state", Form{"height_m": "12", "min_duration_ma": "0.1", "review_state": "maybe"}, "review_state", `unknown value "maybe"`},
		{"a second hiatus at one height", Form{"height_m": "20", "min_duration_ma": "1"}, "height_m", "the section already has a hiatus at 20 m"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := db.CreateHiatus(ctx, sec.ID, tc.form, true)
			if got := problemOn(t, err, tc.column); !strings.HasPrefix(got, tc.msg) {
				t.Errorf("problem on %s: %q, want it to start with %q", tc.column, got, tc.msg)
			}
		})
	}
	if hs, _ := db.Hiatuses(ctx, sec.ID); len(hs) != 1 {
		t.Errorf("%d hiatuses stored, want only the first", len(hs))
	}
	if _, err := db.CreateHiatus(ctx, sec.ID+99, Form{"height_m": "1", "min_duration_ma": "0"}, true); !errors.Is(err, ErrNotFound) {
		t.Errorf("a hiatus in an unknown section: %v, want ErrNotFound", err)
	}
}

// Create, edit, a stale edit, restore, delete and restore the deletion, each a revision of its change; an
// undo of the creating change removes the hiatus.
func TestHiatusCreateEditConflictDeleteRevert(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	sec := mustSection(t, db, "Test Core")
	f := Form{"height_m": "31.6", "min_duration_ma": "0.25", "review_state": "accepted", "notes": "karst surface"}
	h, err := db.CreateHiatus(ctx, sec.ID, f, true)
	if err != nil {
		t.Fatal(err)
	}
	if h.Section != "Test Core" || h.Version != 1 || h.ReviewState != "accepted" {
		t.Errorf("created %+v", h)
	}
	if diff := cmp.Diff(f, FormOfHiatus(h)); diff != "" {
		t.Errorf("FormOfHiatus (-typed +stored):\n%s", diff)
	}
	if revs, _ := db.Revisions(ctx, "hiatus", h.ID); len(revs) != 1 || revs[0].Before != nil || revs[0].Kind != "add hiatus" {
		t.Errorf("the creation's revisions: %+v, want one of kind add hiatus", revs)
	}

	g := FormOfHiatus(h)
	g["height_m"], g["notes"] = "32", "moved after relogging"
	edited, err := db.UpdateHiatus(ctx, h.ID, h.Version, g, true)
	if err != nil {
		t.Fatal(err)
	}
	if edited.HeightM != 32 || edited.Version != 2 {
		t.Errorf("after edit %+v", edited)
	}
	if _, err := db.UpdateHiatus(ctx, h.ID, h.Version, f, true); !errors.Is(err, ErrConflict) {
		t.Errorf("stale edit: %v, want ErrConflict", err)
	}
	if err := db.RevertRevision(ctx, lastRevision(t, db, "hiatus", h.ID)); err != nil {
		t.Fatal(err)
	}
	ignore := cmpopts.IgnoreFields(Hiatus{}, "Version", "UpdatedAt")
	got, _ := db.Hiatus(ctx, h.ID)
	if diff := cmp.Diff(h, got, ignore); diff != "" {
		t.Errorf("after restore (-before +after):\n%s", diff)
	}
	if err := db.DeleteHiatus(ctx, h.ID, got.Version-1); !errors.Is(err, ErrConflict) {
		t.Errorf("delete at a stale version: %v, want ErrConflict", err)
	}
	if err := db.DeleteHiatus(ctx, h.ID, got.Version); err != nil {
		t.Fatal(err)
	}
	if _, err := db.Hiatus(ctx, h.ID); !errors.Is(err, ErrNotFound) {
		t.Fatalf("after delete: %v, want ErrNotFound", err)
	}
	if err := db.RevertRevision(ctx, lastRevision(t, db, "hiatus", h.ID)); err != nil {
		t.Fatal(err)
	}
	again, err := db.Hiatus(ctx, h.ID)
	if err != nil {
		t.Fatal(err)
	}
	if diff := cmp.Diff(h, again, ignore); diff != "" {
		t.Errorf("after restoring the deletion (-before +after):\n%s", diff)
	}

	// A deleted hiatus is not restored onto the height another hiatus took meanwhile. (A hiatus above it
	// keeps SQLite from giving the newcomer the deleted one's id, which is the highest.)
	if _, err := db.CreateHiatus(ctx, sec.ID, Form{"height_m": "45", "min_duration_ma": "0"}, true); err != nil {
		t.Fatal(err)
	}
	if err := db.DeleteHiatus(ctx, h.ID, again.Version); err != nil {
		t.Fatal(err)
	}
	other, err := db.CreateHiatus(ctx, sec.ID, Form{"height_m": "31.6", "min_duration_ma": "1"}, true)
	if err != nil {
		t.Fatal(err)
	}
	err = db.RevertRevision(ctx, lastRevision(t, db, "hiatus", h.ID))
	if ve, ok := AsValidation(err); !ok || len(ve.Problems) != 1 || !strings.Contains(ve.Problems[0].Message, "hiatus at 31.6 m") {
		t.Errorf("restoring onto an occupied height: %v, want a validation error naming the hiatus", err)
	}

	// The change that added the other hiatus is undone as a whole.
	b, _, err := db.Batches(ctx, BatchFilter{Kind: "add hiatus"})
	if err != nil || len(b) != 3 {
		t.Fatalf("add hiatus changes: %d (%v), want 3", len(b), err)
	}
	if n, err := db.UndoBatch(ctx, b[0].ID); err != nil || n != 1 {
		t.Fatalf("undo the creation of the other hiatus: %d (%v)", n, err)
	}
	if _, err := db.Hiatus(ctx, other.ID); !errors.Is(err, ErrNotFound) {
		t.Errorf("after the undo: %v, want the hiatus gone", err)
	}
	if !Restorable("hiatus") {
		t.Error("hiatuses are not restorable")
	}
}

// Hiatuses are reviewed like tie points (the age model honours them): a contributor's hiatus is pending
// whatever the form says, a curator's takes the form's state, a rejection needs a reason, a contributor's
// edit of an accepted hiatus makes it pending again with its note kept, and a form's change is accepted
// as one.
func TestHiatusReviewStates(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	sec := mustSection(t, db, "Test Core")
	for i, tc := range []struct {
		name, state string
		curator     bool
		want        ReviewState
	}{
		{"contributor says accepted", "accepted", false, "pending"},
		{"contributor says nothing", "", false, "pending"},
		{"curator says nothing", "", true, "accepted"},
		{"curator says pending", "pending", true, "pending"},
		{"curator says rejected", "rejected", true, "rejected"},
	} {
		h, err := db.CreateHiatus(ctx, sec.ID, Form{"height_m": strconv.Itoa(i + 1), "min_duration_ma": "0.1", "review_state": tc.state}, tc.curator)
		if err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		if got, _ := db.Hiatus(ctx, h.ID); got.ReviewState != tc.want {
			t.Errorf("%s: stored %q, want %q", tc.name, got.ReviewState, tc.want)
		}
	}

	h, err := db.CreateHiatus(ctx, sec.ID, Form{"height_m": "40", "min_duration_ma": "0.3"}, false)
	if err != nil {
		t.Fatal(err)
	}
	b, _, _ := db.Batches(ctx, BatchFilter{Kind: "add hiatus"})
	if n, err := db.PendingInBatch(ctx, b[0].ID); err != nil || n != 1 {
		t.Errorf("pending in the contributor's change: %d (%v), want 1", n, err)
	}
	if _, err := db.ReviewHiatus(ctx, h.ID, h.Version, false, "  "); problemOn(t, err, "note") == "" {
		t.Error("a rejection without a reason was accepted")
	}
	rej, err := db.ReviewHiatus(ctx, h.ID, h.Version, false, "no surface in the core photographs")
	if err != nil || rej.ReviewState != "rejected" || rej.ReviewNote != "no surface in the core photographs" {
		t.Fatalf("after rejection %+v (%v)", rej, err)
	}
	if _, err := db.ReviewHiatus(ctx, h.ID, h.Version, true, ""); !errors.Is(err, ErrConflict) {
		t.Errorf("review at a stale version: %v, want ErrConflict", err)
	}
	acc, err := db.ReviewHiatus(ctx, h.ID, rej.Version, true, "seen in the outcrop")
	if err != nil || acc.ReviewState != "accepted" {
		t.Fatalf("accept: %+v, %v", acc, err)
	}
	edited, err := db.UpdateHiatus(ctx, h.ID, acc.Version, FormOfHiatus(acc), false)
	if err != nil {
		t.Fatal(err)
	}
	if edited.ReviewState != "pending" || edited.ReviewNote != "seen in the outcrop" {
		t.Errorf("a contributor's edit of an accepted hiatus: %q %q, want pending with the note kept", edited.ReviewState, edited.ReviewNote)
	}
	if rb, _, err := db.Batches(ctx, BatchFilter{Kind: "reject hiatus"}); err != nil || len(rb) != 1 || !strings.Contains(rb[0].Summary, "no surface in the core photographs") {
		t.Errorf("the rejection's change %+v (%v): want one naming the reason", rb, err)
	}

	// A contributor's hiatus added through the form is one change, which a curator accepts as such.
	h2, err := db.CreateHiatus(ctx, sec.ID, Form{"height_m": "50", "min_duration_ma": "0"}, false)
	if err != nil {
		t.Fatal(err)
	}
	b, _, _ = db.Batches(ctx, BatchFilter{Kind: "add hiatus"})
	if n, _, err := db.AcceptBatch(ctx, b[0].ID); err != nil || n != 1 {
		t.Fatalf("accept the change: %d (%v), want 1", n, err)
	}
	if got, _ := db.Hiatus(ctx, h2.ID); got.ReviewState != "accepted" {
		t.Errorf("after accepting the change: %q", got.ReviewState)
	}
}

// Hiatuses stored before migration 007 stay accepted, and the migration applies to a database holding them.
func TestHiatusesBeforeTheReviewMigration(t *testing.T) {
	ctx := context.Background()
	db, err := Open(ctx, filepath.Join(t.TempDir(), "old.db"))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	before := fstest.MapFS{}
	entries, _ := fs.ReadDir(migrations.FS, ".")
	for _, e := range entries {
		if e.Name() < "007" {
			b, _ := fs.ReadFile(migrations.FS, e.Name())
			before[e.Name()] = &fstest.MapFile{Data: b}
		}
	}
	if _, err := db.Migrate(ctx, before); err != nil {
		t.Fatal(err)
	}
	importString(t, db, "sections", "", "section\nS\n")
	if _, err := db.db.ExecContext(ctx, `INSERT INTO hiatuses (section_id, height_m, min_duration_ma, created_at, updated_at)
		VALUES (1, 30, 0.2, '2025-01-01T00:00:00Z', '2025-01-01T00:00:00Z')`); err != nil {
		t.Fatal(err)
	}
	if applied, err := db.Migrate(ctx, migrations.FS); err != nil || len(applied) == 0 || applied[0] != 7 {
		t.Fatalf("migrate on: applied %v, %v; want 007 first", applied, err)
	}
	hs, err := db.Hiatuses(ctx, 1)
	if err != nil || len(hs) != 1 || hs[0].ReviewState != "accepted" || hs[0].Section != "S" {
		t.Fatalf("hiatuses after the migration: %+v (%v), want one accepted", hs, err)
	}
}

// The hiatuses file: all or nothing with every problem by line and column; a contribution arrives
// pending; export → import gives the same file.
func TestImportHiatusesRoundTrip(t *testing.T) {
	ctx := context.Background()
	db := mustOpenDB(t)
	if _, err := importString(t, db, "sections", "", "section\nS\n"); err != nil {
		t.Fatal(err)
	}
	bad := "height_m,min_duration_ma\n12.5,-1\n12.5,0.01\nabc,5000\n"
	_, err := db.ImportHiatuses(ctx, "S", "h.csv", strings.NewReader(bad))
	ve, ok := AsValidation(err)
	if !ok {
		t.Fatalf("bad file: %v, want problems", err)
	}
	want := map[string]int{"min_duration_ma": 2, "height_m": 2}
	got := map[string]int{}
	for _, p := range ve.Problems {
		got[p.Column]++
		if p.Line < 2 || p.File != "h.csv" {
			t.Errorf("problem without its line and file: %+v", p)
		}
	}
	if got["min_duration_ma"] < want["min_duration_ma"] || got["height_m"] < want["height_m"] {
		t.Errorf("problems by column %v, want at least %v: %+v", got, want, ve.Problems)
	}
	if hs, _ := db.Hiatuses(ctx, 1); len(hs) != 0 {
		t.Fatal("a refused file wrote hiatuses")
	}
	good := "height_m,min_duration_ma,review_state,notes\n12.5,0.02,accepted,erosion surface\n30,0,pending,hardground\n"
	if _, err := db.ImportHiatuses(ctx, "S", "h.csv", strings.NewReader(good)); err != nil {
		t.Fatal(err)
	}
	var out strings.Builder
	if err := db.Export(ctx, "hiatuses", "S", &out); err != nil {
		t.Fatal(err)
	}
	if out.String() != good {
		t.Errorf("export differs from the imported file:\n%s---\n%s", out.String(), good)
	}
	if _, err := db.ImportHiatuses(ctx, "S", "again.csv", strings.NewReader(good)); err == nil || !strings.Contains(err.Error(), "already has a hiatus at 12.5 m") {
		t.Errorf("importing the same heights again: %v, want a refusal naming the height", err)
	}
	res, err := db.ImportHiatuses(AsContribution(ctx), "S", "c.csv", strings.NewReader("height_m,min_duration_ma,review_state\n40,0.1,accepted\n"))
	if err != nil || res.Added["hiatuses"] != 1 {
		t.Fatalf("contributed file: %+v, %v", res, err)
	}
	hs, _ := db.Hiatuses(ctx, 1)
	if len(hs) != 3 || hs[2].ReviewState != "pending" {
		t.Errorf("a contributor's hiatus arrived %q, want pending", hs[len(hs)-1].ReviewState)
	}
}
