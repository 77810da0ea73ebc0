package store

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"reflect"
	"strings"
)

// UndoBatch takes back a whole change batch as one new batch: records it created are removed, records it
// edited or deleted get back the state they had just before it. So an import can be undone, and so can a
// batch review (undo the acceptance, then the import). It refuses, changing nothing, when a record was
// changed after the batch, or when removing a record would take records added later with it.
func (d *DB) UndoBatch(ctx context.Context, batchID int64) (int, error) {
	n := 0
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		revs, err := queryAllTx(ctx, tx, revisionSelect+` WHERE r.batch_id = ? ORDER BY r.id DESC`, []any{batchID}, scanRevision)
		if err != nil {
			return err
		}
		if len(revs) == 0 {
			return fmt.Errorf("change %d: %w", batchID, ErrNotFound)
		}
		undo, err := d.newBatch(ctx, tx, "undo", fmt.Sprintf("change %d", batchID))
		if err != nil {
			return err
		}
		var problems []Problem
		refuse := func(format string, args ...any) {
			problems = append(problems, Problem{Message: fmt.Sprintf(format, args...)})
		}
		for _, rev := range revs {
			what := strings.ReplaceAll(rev.RecordType, "_", " ")
			if rev.RecordType == "measurements" {
				if rev.Before != nil {
					refuse("change %d edited measurements, which are undone by importing them again", batchID)
					continue
				}
				r, err := tx.ExecContext(ctx, `DELETE FROM measurements WHERE batch_id = ?`, batchID)
				if err != nil {
					return err
				}
				k, _ := r.RowsAffected()
				n += int(k)
				if err := addRevision(ctx, tx, undo, "measurements", rev.RecordID, rev.After, nil); err != nil {
					return err
				}
				continue
			}
			same, err := d.leftAsIs(ctx, tx, rev)
			if err != nil {
				return err
			}
			if !same {
				refuse("%s %d was changed after change %d; undo or revert that later change first", what, rev.RecordID, batchID)
				continue
			}
			err = d.revertTx(ctx, tx, undo, rev)
			var inUse *InUseError
			var ve *ValidationError
			switch {
			case errors.As(err, &inUse):
				refuse("%s is now used by %s added later; undo or delete those first", inUse.Record, strings.Join(inUse.Uses, ", "))
				continue
			case errors.As(err, &ve):
				problems = append(problems, ve.Problems...)
				continue
			case errors.Is(err, ErrConflict):
				refuse("%s %d is already gone", what, rev.RecordID)
				continue
			case err != nil:
				return err
			}
			n++
		}
		if len(problems) > 0 {
			return &ValidationError{problems}
		}
		return setBatchSummary(ctx, tx, undo, fmt.Sprintf("undid change %d (%d records)", batchID, n))
	})
	return n, err
}

// leftAsIs reports whether the record of rev is still as rev left it (gone, when rev deleted it), apart
// from its version and time stamp: only then can rev be taken back without losing a later change.
func (d *DB) leftAsIs(ctx context.Context, tx *sql.Tx, rev Revision) (bool, error) {
	var cur any
	var err error
	switch rt, ok := reverters()[rev.RecordType]; {
	case rev.RecordType == "date":
		cur, err = dateInTx(ctx, tx, rev.RecordID)
	case ok:
		cur, err = rt.state(ctx, tx, rev.RecordID)
	default:
		return false, &ValidationError{[]Problem{{Message: fmt.Sprintf("%s records cannot be undone as part of a change", strings.ReplaceAll(rev.RecordType, "_", " "))}}}
	}
	if errors.Is(err, ErrNotFound) {
		return rev.After == nil, nil
	}
	if err != nil || rev.After == nil {
		return false, err
	}
	now, err := json.Marshal(cur)
	if err != nil {
		return false, err
	}
	return sameContent(now, rev.After)
}

// sameContent compares two stored states, leaving out version and time stamps and the names and ids
// joined in from the records a record belongs to (its own unit_id and section_id are compared).
func sameContent(a, b []byte) (bool, error) {
	var x, y map[string]any
	if err := json.Unmarshal(a, &x); err != nil {
		return false, err
	}
	if err := json.Unmarshal(b, &y); err != nil {
		return false, err
	}
	for _, m := range []map[string]any{x, y} {
		for _, k := range []string{"version", "created_at", "updated_at", "province_id", "province", "unit", "section"} {
			delete(m, k)
		}
	}
	return reflect.DeepEqual(x, y), nil
}

// revertTx gives the record of rev the state it had just before rev, recorded in batch.
func (d *DB) revertTx(ctx context.Context, tx *sql.Tx, batch int64, rev Revision) error {
	if rev.RecordType == "date" {
		return d.revertDateTx(ctx, tx, batch, rev)
	}
	rt, ok := reverters()[rev.RecordType]
	if !ok {
		return &ValidationError{[]Problem{{Message: fmt.Sprintf("%s records cannot be undone as part of a change", strings.ReplaceAll(rev.RecordType, "_", " "))}}}
	}
	return rt.revert(ctx, d, tx, batch, rev)
}

// AcceptBatch accepts, as one new change, every date, event, tie point and hiatus that batch added and that still
// waits for review as it was added. Records changed since are left for review one by one; the second result names
// them. It returns how many records were accepted.
func (d *DB) AcceptBatch(ctx context.Context, batchID int64) (int, []string, error) {
	n := 0
	var skipped []string
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		n, skipped = 0, nil
		revs, err := queryAllTx(ctx, tx, revisionSelect+` WHERE r.batch_id = ? AND r.before_json IS NULL AND r.record_type IN ('date', 'event', 'tie_point', 'hiatus') ORDER BY r.id`,
			[]any{batchID}, scanRevision)
		if err != nil {
			return err
		}
		accept, err := d.newBatch(ctx, tx, "accept change", fmt.Sprintf("change %d", batchID))
		if err != nil {
			return err
		}
		for _, rev := range revs {
			same, err := d.leftAsIs(ctx, tx, rev)
			if err != nil {
				return err
			}
			var ok bool
			var skip string
			switch rev.RecordType {
			case "date":
				ok, skip, err = d.acceptDateIfPending(ctx, tx, accept, rev.RecordID, same)
			case "event":
				ok, skip, err = acceptIfPending(ctx, d, tx, accept, eventType(), rev.RecordID, same,
					func(e Event) string { return "event " + e.Name }, func(e *Event) *ReviewState { return &e.ReviewState })
			case "tie_point":
				ok, skip, err = acceptIfPending(ctx, d, tx, accept, tieType(), rev.RecordID, same,
					func(t TiePoint) string { return "tie point " + t.Label }, func(t *TiePoint) *ReviewState { return &t.ReviewState })
			case "hiatus":
				ok, skip, err = acceptIfPending(ctx, d, tx, accept, hiatusType(), rev.RecordID, same,
					hiatusLabel, func(h *Hiatus) *ReviewState { return &h.ReviewState })
			}
			if err != nil {
				return err
			}
			if skip != "" {
				skipped = append(skipped, skip)
			}
			if !ok {
				continue
			}
			n++
		}
		if n == 0 {
			return &ValidationError{[]Problem{{Message: fmt.Sprintf("change %d has nothing waiting for review as it was added", batchID)}}}
		}
		return setBatchSummary(ctx, tx, accept, fmt.Sprintf("accepted %d records of change %d", n, batchID))
	})
	return n, skipped, err
}

// acceptDateIfPending is acceptIfPending for dates, which are written by writeDate, not a recordType.
func (d *DB) acceptDateIfPending(ctx context.Context, tx *sql.Tx, batch int64, id int64, same bool) (bool, string, error) {
	before, err := dateInTx(ctx, tx, id)
	if errors.Is(err, ErrNotFound) {
		return false, "", nil
	} else if err != nil {
		return false, "", err
	}
	if before.ReviewState != "pending" {
		return false, "", nil
	}
	if !same {
		return false, "date " + before.SampleCode, nil
	}
	dt := before
	dt.ReviewState = ReviewAccepted
	if err := d.writeDate(ctx, tx, &dt, before.Version); err != nil {
		return false, "", err
	}
	after, err := dateInTx(ctx, tx, id)
	if err != nil {
		return false, "", err
	}
	return true, "", addRevision(ctx, tx, batch, "date", id, before, after)
}

// acceptIfPending accepts record id of rt, in batch, when it still waits for review as it was added
// (same); a pending record changed since is not accepted, and skip names it (by name).
func acceptIfPending[T any](ctx context.Context, d *DB, tx *sql.Tx, batch int64, rt recordType[T], id int64, same bool,
	name func(T) string, state func(*T) *ReviewState) (accepted bool, skip string, err error) {
	x, err := rt.load(ctx, tx, id)
	if errors.Is(err, ErrNotFound) {
		return false, "", nil
	} else if err != nil {
		return false, "", err
	}
	if *state(&x) != ReviewPending {
		return false, "", nil
	}
	if !same {
		return false, name(x), nil
	}
	_, version, _ := rt.meta(x)
	*state(&x) = ReviewAccepted
	_, err = rt.update(ctx, d, tx, batch, id, version, x)
	return err == nil, "", err
}

// PendingInBatch counts the dates, events, tie points and hiatuses batch added that wait for review now.
func (d *DB) PendingInBatch(ctx context.Context, batchID int64) (int, error) {
	var n int
	err := d.db.QueryRowContext(ctx, `SELECT
		(SELECT count(*) FROM revisions r JOIN dates x ON x.id = r.record_id
			WHERE r.batch_id = ?1 AND r.record_type = 'date' AND r.before_json IS NULL AND x.review_state = 'pending') +
		(SELECT count(*) FROM revisions r JOIN events x ON x.id = r.record_id
			WHERE r.batch_id = ?1 AND r.record_type = 'event' AND r.before_json IS NULL AND x.review_state = 'pending') +
		(SELECT count(*) FROM revisions r JOIN tie_points x ON x.id = r.record_id
			WHERE r.batch_id = ?1 AND r.record_type = 'tie_point' AND r.before_json IS NULL AND x.review_state = 'pending') +
		(SELECT count(*) FROM revisions r JOIN hiatuses x ON x.id = r.record_id
			WHERE r.batch_id = ?1 AND r.record_type = 'hiatus' AND r.before_json IS NULL AND x.review_state = 'pending')`, batchID).Scan(&n)
	return n, err
}
