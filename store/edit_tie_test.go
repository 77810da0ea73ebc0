package store

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"io/fs"
	"path/filepath"
	"strings"
	"testing"
	"testing/fstest"

	"coeval/migrations"

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
		"date_method": "upb_idtims", "review_state": "accepted", "notes": "first"}

	// The importer's rules: a normal tie takes no range; an unknown sample is named.
	bad := Form{"label": "B", "height_m": "1", "kind": "radiometric", "distribution": "normal", "age_ma": "150",
		"sigma_ma": "0.1", "sigma_level": "2", "age_min_ma": "149", "date_sample_code": "nope"}
	_, err = db.CreateTie(ctx, sec.ID, bad, true)
	problemOn(t, err, "age_min_ma")
	bad["age_min_ma"] = ""
	_, err = db.CreateTie(ctx, sec.ID, bad, true)
	problemOn(t, err, "date_sample_code")

	tp, err := db.CreateTie(ctx, sec.ID, f, true)
	if err != nil {
		t.Fatal(err)
	}
	if tp.DateID == nil || *tp.SigmaMa != 0.03 || *tp.SigmaLevel != 2 {
		t.Errorf("created %+v: want the date linked and σ stored at 1σ", tp)
	}
	if diff := cmp.Diff(f, FormOfTie(tp)); diff != "" {
		t.Errorf("FormOfTie (-typed +stored):\n%s", diff)
	}
	if _, err := db.CreateTie(ctx, sec.ID, f, true); problemOn(t, err, "label") == "" {
		t.Error("a second tie of the same label in the section was accepted")
	}

	// A normal tie edited into a uniform one, then restored.
	g := FormOfTie(tp)
	g["distribution"], g["age_ma"], g["sigma_ma"], g["sigma_level"], g["age_min_ma"], g["age_max_ma"] = "uniform", "", "", "", "155", "156"
	g["date_sample_code"], g["date_method"] = "", ""
	edited, err := db.UpdateTie(ctx, tp.ID, tp.Version, g, true)
	if err != nil {
		t.Fatal(err)
	}
	if edited.AgeMa != nil || edited.DateID != nil || *edited.AgeMaxMa != 156 {
		t.Errorf("after edit %+v", edited)
	}
	if _, err := db.UpdateTie(ctx, tp.ID, tp.Version, f, true); !errors.Is(err, ErrConflict) {
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

// Tie points are reviewed like dates and events (common practice of a reviewed compilation: nothing a
// contributor adds counts before a curator's second reading): a contributor's tie is pending whatever the
// form says, a curator's takes the form's state, a rejection needs a reason, and a contributor's edit of an
// accepted tie makes it pending again with its review note kept.
func TestTieReviewStates(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	sec, err := db.CreateSection(ctx, Form{"section": "Test Core"})
	if err != nil {
		t.Fatal(err)
	}
	form := func(label, state string) Form {
		return Form{"label": label, "height_m": "10", "kind": "biostratigraphic", "distribution": "uniform",
			"age_min_ma": "154.6", "age_max_ma": "155.0", "review_state": state}
	}
	for _, tc := range []struct {
		label, state string
		curator      bool
		want         ReviewState
	}{
		{"contributor says accepted", "accepted", false, "pending"},
		{"contributor says nothing", "", false, "pending"},
		{"curator says nothing", "", true, "accepted"},
		{"curator says pending", "pending", true, "pending"},
		{"curator says rejected", "rejected", true, "rejected"},
	} {
		tp, err := db.CreateTie(ctx, sec.ID, form(tc.label, tc.state), tc.curator)
		if err != nil {
			t.Fatalf("%s: %v", tc.label, err)
		}
		if got, _ := db.TiePoint(ctx, tp.ID); got.ReviewState != tc.want {
			t.Errorf("%s: stored %q, want %q", tc.label, got.ReviewState, tc.want)
		}
	}
	if _, err := db.CreateTie(ctx, sec.ID, form("bad state", "maybe"), true); problemOn(t, err, "review_state") == "" {
		t.Error("an unknown review state was accepted")
	}

	tp, err := db.CreateTie(ctx, sec.ID, form("Ash 9", ""), false)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := db.ReviewTie(ctx, tp.ID, tp.Version, false, "  "); problemOn(t, err, "note") == "" {
		t.Error("a rejection without a reason was accepted")
	}
	if got, _ := db.TiePoint(ctx, tp.ID); got.ReviewState != "pending" || got.Version != tp.Version {
		t.Errorf("a refused review changed the tie: %q, version %d", got.ReviewState, got.Version)
	}
	rej, err := db.ReviewTie(ctx, tp.ID, tp.Version, false, "the ash is reworked")
	if err != nil {
		t.Fatal(err)
	}
	if rej.ReviewState != "rejected" || rej.ReviewNote != "the ash is reworked" {
		t.Errorf("after rejection %q %q", rej.ReviewState, rej.ReviewNote)
	}
	if _, err := db.ReviewTie(ctx, tp.ID, tp.Version, true, ""); !errors.Is(err, ErrConflict) {
		t.Errorf("review at a stale version: %v, want ErrConflict", err)
	}
	acc, err := db.ReviewTie(ctx, tp.ID, rej.Version, true, "checked against the log")
	if err != nil || acc.ReviewState != "accepted" {
		t.Fatalf("accept: %+v, %v", acc, err)
	}
	edited, err := db.UpdateTie(ctx, tp.ID, acc.Version, FormOfTie(acc), false)
	if err != nil {
		t.Fatal(err)
	}
	if edited.ReviewState != "pending" || edited.ReviewNote != "checked against the log" {
		t.Errorf("a contributor's edit of an accepted tie: %q %q, want pending with the note kept", edited.ReviewState, edited.ReviewNote)
	}
	b, _, err := db.Batches(ctx, BatchFilter{Kind: "reject tie point"})
	if err != nil || len(b) != 1 || !strings.Contains(b[0].Summary, "the ash is reworked") {
		t.Errorf("the rejection's change %+v (%v): want one naming the reason", b, err)
	}
}

// The ties format carries review_state: an import without the column gives accepted ties, a file's
// states are kept, and import → export → import gives the same file.
func TestTiesReviewStateRoundTrip(t *testing.T) {
	ctx := context.Background()
	body := "label,height_m,kind,distribution,age_ma,sigma_ma,sigma_level,age_min_ma,age_max_ma,review_state,notes\n" +
		"ash,12.5,radiometric,normal,155.2,0.08,2,,,pending,\n" +
		"zone,30,biostratigraphic,uniform,,,,154.6,155.0,rejected,misread zone\n" +
		"boundary,40,boundary,normal,154.8,0.8,2,,,,\n"
	export := func(db *DB) string {
		var b bytes.Buffer
		if err := db.Export(ctx, "ties", "S", &b); err != nil {
			t.Fatal(err)
		}
		return b.String()
	}
	db1 := mustOpenDB(t)
	importString(t, db1, "sections", "", "section\nS\n")
	if _, err := importString(t, db1, "ties", "S", body); err != nil {
		t.Fatal(err)
	}
	got := map[string]string{}
	tps, _ := db1.TiePoints(ctx, 0)
	for _, tp := range tps {
		got[tp.Label] = string(tp.ReviewState)
	}
	if diff := cmp.Diff(map[string]string{"ash": "pending", "zone": "rejected", "boundary": "accepted"}, got); diff != "" {
		t.Errorf("review states after import (-want +got):\n%s", diff)
	}
	a := export(db1)
	if !strings.HasPrefix(a, "label,height_m,kind,distribution,age_ma,sigma_ma,sigma_level,age_min_ma,age_max_ma,date_sample_code,date_method,review_state,notes\n") {
		t.Errorf("export header:\n%s", a)
	}
	db2 := mustOpenDB(t)
	importString(t, db2, "sections", "", "section\nS\n")
	if _, err := importString(t, db2, "ties", "S", a); err != nil {
		t.Fatalf("the export does not re-import: %v\n%s", err, a)
	}
	if b := export(db2); a != b {
		t.Errorf("round trip differs:\n%s\n---\n%s", a, b)
	}
	if _, err := importString(t, db2, "ties", "S", "label,height_m,kind,distribution,age_min_ma,age_max_ma,review_state\nx,1,other,uniform,1,2,maybe\n"); err == nil {
		t.Error("an unknown review_state was imported")
	}
}

// Ties stored before migration 006 become accepted, and a change made before it can still be undone: the
// migration gives their recorded states the review fields too, so they compare equal to the ties now.
func TestTiesBeforeTheReviewMigration(t *testing.T) {
	ctx := context.Background()
	db, err := Open(ctx, filepath.Join(t.TempDir(), "old.db"))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	before005 := fstest.MapFS{}
	entries, _ := fs.ReadDir(migrations.FS, ".")
	for _, e := range entries {
		if e.Name() < "006" {
			b, _ := fs.ReadFile(migrations.FS, e.Name())
			before005[e.Name()] = &fstest.MapFile{Data: b}
		}
	}
	if _, err := db.Migrate(ctx, before005); err != nil {
		t.Fatal(err)
	}
	// A tie imported then, as that code wrote it: the row without the review columns, and its recorded
	// state without the review fields.
	importString(t, db, "sections", "", "section\nS\n")
	lo, hi := 154.6, 155.0
	old := TiePoint{ID: 1, SectionID: 1, Label: "zone", HeightM: 30, Kind: "biostratigraphic", Distribution: "uniform",
		AgeMinMa: &lo, AgeMaxMa: &hi, Version: 1}
	raw, _ := json.Marshal(old)
	var m map[string]any
	json.Unmarshal(raw, &m)
	delete(m, "review_state")
	delete(m, "review_note")
	raw, _ = json.Marshal(m)
	for _, q := range []string{
		`INSERT INTO change_batches (id, kind, source, at) VALUES (100, 'import ties', 'old.csv', '2025-01-01T00:00:00Z')`,
		`INSERT INTO tie_points (id, section_id, label, height_m, kind, distribution, age_min_ma, age_max_ma, created_at, updated_at)
			VALUES (1, 1, 'zone', 30, 'biostratigraphic', 'uniform', 154.6, 155.0, '2025-01-01T00:00:00Z', '2025-01-01T00:00:00Z')`,
	} {
		if _, err := db.db.ExecContext(ctx, q); err != nil {
			t.Fatal(err)
		}
	}
	if _, err := db.db.ExecContext(ctx, `INSERT INTO revisions (batch_id, record_type, record_id, after_json) VALUES (100, 'tie_point', 1, ?)`, string(raw)); err != nil {
		t.Fatal(err)
	}
	if applied, err := db.Migrate(ctx, migrations.FS); err != nil || len(applied) == 0 || applied[0] != 6 {
		t.Fatalf("migrate on: applied %v, %v; want 006 first", applied, err)
	}
	tps, _ := db.TiePoints(ctx, 0)
	if len(tps) != 1 || tps[0].ReviewState != "accepted" {
		t.Fatalf("ties after the migration: %+v, want one accepted", tps)
	}
	if n, err := db.UndoBatch(ctx, 100); err != nil || n != 1 {
		t.Errorf("undo an import made before the migration: %d (%v), want 1", n, err)
	}
}
