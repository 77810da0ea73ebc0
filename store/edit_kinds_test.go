package store

import (
	"context"
	"encoding/json"
	"errors"
	"slices"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"
)

// Every kind writes, and so restores, every column of its table but the id, version and time stamps: a
// column left out of a kind's cols would not come back with a restore or an undo.
func TestEveryKindDescribesItsWholeTable(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	for _, k := range allKinds() {
		table, cols := k.describe()
		rows, err := db.db.QueryContext(ctx, `SELECT name FROM pragma_table_info(?)`, table)
		if err != nil {
			t.Fatal(err)
		}
		var want []string
		for rows.Next() {
			var c string
			rows.Scan(&c)
			if !slices.Contains([]string{"id", "version", "created_at", "updated_at"}, c) {
				want = append(want, c)
			}
		}
		rows.Close()
		if len(want) == 0 {
			t.Errorf("%s: table %q has no columns", k.recordName(), table)
		}
		got := slices.Sorted(slices.Values(cols))
		slices.Sort(want)
		if diff := cmp.Diff(want, got); diff != "" {
			t.Errorf("%s: the columns it writes differ from table %s's (-table +written):\n%s", k.recordName(), table, diff)
		}
	}
}

// kindCase is one record kind driven through its exported Create/Update/Delete, for the round trip.
type kindCase struct {
	recordType string
	form       Form   // a valid form
	notes      string // the free-text field the edit changes
	create     func(ctx context.Context, f Form, curator bool) (int64, error)
	update     func(ctx context.Context, id int64, version int, f Form, curator bool) error
	remove     func(ctx context.Context, id int64, version int) error
}

func kindCases(t *testing.T, db *DB) []kindCase {
	ctx := context.Background()
	sec, err := db.CreateSection(ctx, Form{"section": "Owner Core", "kind": "core"})
	if err != nil {
		t.Fatal(err)
	}
	noCurator := func(f func(context.Context, Form) (int64, error)) func(context.Context, Form, bool) (int64, error) {
		return func(ctx context.Context, x Form, _ bool) (int64, error) { return f(ctx, x) }
	}
	return []kindCase{
		{recordType: "province", form: Form{"province": "Round P", "description": "as made"}, notes: "description",
			create: noCurator(func(ctx context.Context, f Form) (int64, error) {
				x, err := db.CreateProvince(ctx, f)
				return x.ID, err
			}),
			update: func(ctx context.Context, id int64, v int, f Form, _ bool) error {
				_, err := db.UpdateProvince(ctx, id, v, f)
				return err
			},
			remove: db.DeleteProvince},
		{recordType: "unit", form: Form{"province": "Round P2", "unit": "Round U", "kind": "flow", "volume_km3": "12", "notes": "as made"}, notes: "notes",
			create: noCurator(func(ctx context.Context, f Form) (int64, error) { x, err := db.CreateUnit(ctx, f); return x.ID, err }),
			update: func(ctx context.Context, id int64, v int, f Form, _ bool) error {
				_, err := db.UpdateUnit(ctx, id, v, f)
				return err
			},
			remove: db.DeleteUnit},
		{recordType: "section", form: Form{"section": "Round S", "kind": "outcrop", "latitude": "60.5", "notes": "as made"}, notes: "notes",
			create: noCurator(func(ctx context.Context, f Form) (int64, error) { x, err := db.CreateSection(ctx, f); return x.ID, err }),
			update: func(ctx context.Context, id int64, v int, f Form, _ bool) error {
				_, err := db.UpdateSection(ctx, id, v, f)
				return err
			},
			remove: db.DeleteSection},
		{recordType: "date", form: Form{"province": "Round P3", "unit": "Round U3", "sample_code": "RT-1", "method": "upb_idtims",
			"material": "zircon", "interpretation": "eruption", "age_ma": "155.4", "sigma_ma": "0.06", "sigma_z_ma": "0.2",
			"sigma_level": "2", "laboratory": "Lab", "notes": "as made", FormNewUnit: "1"}, notes: "notes",
			create: func(ctx context.Context, f Form, c bool) (int64, error) {
				x, err := db.CreateDate(ctx, f, c)
				return x.ID, err
			},
			update: func(ctx context.Context, id int64, v int, f Form, c bool) error {
				_, err := db.UpdateDate(ctx, id, v, f, c)
				return err
			},
			remove: db.DeleteDate},
		{recordType: "tie_point", form: Form{"label": "Round tie", "height_m": "12.5", "kind": "biostratigraphic", "distribution": "uniform",
			"age_min_ma": "154.6", "age_max_ma": "155", "notes": "as made"}, notes: "notes",
			create: func(ctx context.Context, f Form, c bool) (int64, error) {
				x, err := db.CreateTie(ctx, sec.ID, f, c)
				return x.ID, err
			},
			update: func(ctx context.Context, id int64, v int, f Form, c bool) error {
				_, err := db.UpdateTie(ctx, id, v, f, c)
				return err
			},
			remove: db.DeleteTie},
		{recordType: "event", form: Form{"name": "Round event", "kind": "hg_anomaly", "base_height_m": "3", "top_height_m": "4.5", "notes": "as made"}, notes: "notes",
			create: func(ctx context.Context, f Form, c bool) (int64, error) {
				x, err := db.CreateEvent(ctx, sec.ID, f, c)
				return x.ID, err
			},
			update: func(ctx context.Context, id int64, v int, f Form, c bool) error {
				_, err := db.UpdateEvent(ctx, id, v, f, c)
				return err
			},
			remove: db.DeleteEvent},
		{recordType: "hiatus", form: Form{"height_m": "7.25", "min_duration_ma": "0.3", "notes": "as made"}, notes: "notes",
			create: func(ctx context.Context, f Form, c bool) (int64, error) {
				x, err := db.CreateHiatus(ctx, sec.ID, f, c)
				return x.ID, err
			},
			update: func(ctx context.Context, id int64, v int, f Form, c bool) error {
				_, err := db.UpdateHiatus(ctx, id, v, f, c)
				return err
			},
			remove: db.DeleteHiatus},
	}
}

// current reads record id of recordType as its form shows it, through the kind's descriptor, with its
// version (ok false when it is gone).
func current(t *testing.T, db *DB, recordType string, id int64) (Form, int, bool) {
	t.Helper()
	ctx := context.Background()
	tx, err := db.db.BeginTx(ctx, nil)
	if err != nil {
		t.Fatal(err)
	}
	defer tx.Rollback()
	x, err := kinds()[recordType].state(ctx, tx, id)
	if errors.Is(err, ErrNotFound) {
		return nil, 0, false
	}
	if err != nil {
		t.Fatal(err)
	}
	raw, _ := json.Marshal(x)
	f, err := FormOfState(recordType, raw)
	if err != nil {
		t.Fatal(err)
	}
	var v struct{ Version int }
	json.Unmarshal(raw, &v)
	return f, v.Version, true
}

// Every record kind, dates included, goes through one path: created, edited, its history read back as
// forms, restored to before the edit (every field), the restore undone, deleted and restored from the
// deletion, all by record_type; the reviewed kinds are accepted with their batch and rejected with a
// reason by DB.Review. A kind mis-described (a column, a form, a label, its review fields) fails here.
func TestEveryKindRoundTripsEditHistoryRestoreUndo(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	cases := kindCases(t, db)
	var covered []string
	for _, tc := range cases {
		covered = append(covered, tc.recordType)
	}
	for _, k := range allKinds() {
		if k.recordName() != "anomaly_decision" && !slices.Contains(covered, k.recordName()) { // decisions have no form
			t.Errorf("kind %s has no case here", k.recordName())
		}
	}
	for _, tc := range cases {
		t.Run(tc.recordType, func(t *testing.T) {
			id, err := tc.create(ctx, tc.form, true)
			if err != nil {
				t.Fatal(err)
			}
			made, _, _ := current(t, db, tc.recordType, id)
			for k, v := range tc.form {
				if k == FormNewUnit {
					continue // an instruction of the form, not a field of the record
				}
				if made[k] != v {
					t.Errorf("created %s = %q, want the form's %q", k, made[k], v)
				}
			}
			edited := Form{}
			for k, v := range made {
				edited[k] = v
			}
			edited[tc.notes] = "edited"
			if err := tc.update(ctx, id, 1, edited, true); err != nil {
				t.Fatal(err)
			}
			if err := tc.update(ctx, id, 1, edited, true); !errors.Is(err, ErrConflict) {
				t.Errorf("a second edit from version 1: %v, want ErrConflict", err)
			}
			now, _, _ := current(t, db, tc.recordType, id)
			if diff := cmp.Diff(edited, now); diff != "" {
				t.Errorf("after the edit (-form +stored):\n%s", diff)
			}
			// History: the edit's revision reads back as the forms before and after.
			revs, err := db.Revisions(ctx, tc.recordType, id)
			if err != nil || len(revs) != 2 || revs[1].Before != nil {
				t.Fatalf("history %d revisions (%v), want created and edited", len(revs), err)
			}
			before, _ := FormOfState(tc.recordType, revs[0].Before)
			after, _ := FormOfState(tc.recordType, revs[0].After)
			if diff := cmp.Diff(made, before); diff != "" {
				t.Errorf("the edit's before (-created +revision):\n%s", diff)
			}
			if diff := cmp.Diff(now, after); diff != "" {
				t.Errorf("the edit's after (-stored +revision):\n%s", diff)
			}
			// Restore to before the edit: every field comes back.
			if err := db.RevertRevision(ctx, revs[0].ID); err != nil {
				t.Fatal(err)
			}
			back, _, _ := current(t, db, tc.recordType, id)
			if diff := cmp.Diff(made, back); diff != "" {
				t.Errorf("after the restore (-created +stored):\n%s", diff)
			}
			// Undo the restore: the edit is back.
			revs, _ = db.Revisions(ctx, tc.recordType, id)
			if _, err := db.UndoBatch(ctx, revs[0].BatchID); err != nil {
				t.Fatal(err)
			}
			if again, _, _ := current(t, db, tc.recordType, id); again[tc.notes] != "edited" {
				t.Errorf("after undoing the restore %s = %q, want the edit's", tc.notes, again[tc.notes])
			}
			// Delete, then restore from the deletion: the record is back with its id and a newer version.
			last, version, _ := current(t, db, tc.recordType, id)
			if err := tc.remove(ctx, id, version); err != nil {
				t.Fatal(err)
			}
			if _, _, ok := current(t, db, tc.recordType, id); ok {
				t.Fatal("still there after the delete")
			}
			revs, _ = db.Revisions(ctx, tc.recordType, id)
			if err := db.RevertRevision(ctx, revs[0].ID); err != nil {
				t.Fatal(err)
			}
			restored, v, ok := current(t, db, tc.recordType, id)
			if diff := cmp.Diff(last, restored); !ok || diff != "" {
				t.Errorf("restored from the deletion (-deleted +restored):\n%s", diff)
			}
			if v <= version {
				t.Errorf("restored at version %d, want past the deleted one's %d (an old form must not apply)", v, version)
			}

			wantReviewed := slices.Contains([]string{"date", "event", "tie_point", "hiatus"}, tc.recordType)
			if Reviewed(tc.recordType) != wantReviewed {
				t.Fatalf("Reviewed(%s) = %v, want %v", tc.recordType, !wantReviewed, wantReviewed)
			}
			if !wantReviewed {
				if err := db.Review(ctx, tc.recordType, id, v, true, ""); err == nil {
					t.Error("a review of a kind that is not reviewed went through")
				}
				return
			}
			// A contributor's record arrives pending; accepting its change accepts it; a rejection needs a reason.
			second := Form{}
			for k, x := range tc.form {
				second[k] = x
			}
			for _, k := range []string{"sample_code", "label", "name"} {
				if second[k] != "" {
					second[k] += " 2"
				}
			}
			if tc.recordType == "hiatus" {
				second["height_m"] = "8.5"
			}
			pid, err := tc.create(ctx, second, false)
			if err != nil {
				t.Fatal(err)
			}
			if f, _, _ := current(t, db, tc.recordType, pid); f["review_state"] != "pending" {
				t.Errorf("a contributor's %s is %q, want pending", tc.recordType, f["review_state"])
			}
			revs, _ = db.Revisions(ctx, tc.recordType, pid)
			if n, _, err := db.AcceptBatch(ctx, revs[0].BatchID); err != nil || n != 1 {
				t.Errorf("accepting the change: %d (%v), want 1", n, err)
			}
			f, pv, _ := current(t, db, tc.recordType, pid)
			if f["review_state"] != "accepted" {
				t.Errorf("after the batch accept: %q", f["review_state"])
			}
			err = db.Review(ctx, tc.recordType, pid, pv, false, " ")
			if ve, ok := AsValidation(err); !ok || ve.Problems[0].Column != "note" {
				t.Errorf("a rejection without a reason: %v, want a problem on the note", err)
			}
			if err := db.Review(ctx, tc.recordType, pid, pv, false, "not this one"); err != nil {
				t.Fatal(err)
			}
			if f, _, _ := current(t, db, tc.recordType, pid); f["review_state"] != "rejected" || f[tc.notes] != tc.form[tc.notes] {
				t.Errorf("after the rejection: %q, %s %q; want rejected, %s unchanged", f["review_state"], tc.notes, f[tc.notes], tc.notes)
			}
			revs, _ = db.Revisions(ctx, tc.recordType, pid)
			var kept struct {
				Note string `json:"review_note"`
			}
			if err := json.Unmarshal(revs[0].After, &kept); err != nil || kept.Note != "not this one" || revs[0].Kind != "reject "+strings.ReplaceAll(tc.recordType, "_", " ") {
				t.Errorf("the rejection's revision (%s) keeps the note %q (%v), want the reason", revs[0].Kind, kept.Note, err)
			}
			if err := db.Review(ctx, tc.recordType, pid, pv, true, ""); !errors.Is(err, ErrConflict) {
				t.Errorf("a review at a stale version: %v, want ErrConflict", err)
			}
		})
	}
}
