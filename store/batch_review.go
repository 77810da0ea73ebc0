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
	rt, ok := kinds()[rev.RecordType]
	if !ok {
		return false, &ValidationError{[]Problem{{Message: fmt.Sprintf("%s records cannot be undone as part of a change", strings.ReplaceAll(rev.RecordType, "_", " "))}}}
	}
	cur, err := rt.state(ctx, tx, rev.RecordID)
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
	rt, ok := kinds()[rev.RecordType]
	if !ok {
		return &ValidationError{[]Problem{{Message: fmt.Sprintf("%s records cannot be undone as part of a change", strings.ReplaceAll(rev.RecordType, "_", " "))}}}
	}
	return rt.revert(ctx, d, tx, batch, rev)
}

// AcceptBatch accepts, as one new change, every record of a reviewed kind (date, event, tie point,
// hiatus) that batch added and that still waits for review as it was added. Records changed since are left
// for review one by one; the second result names them. It returns how many records were accepted.
// Only records pending now can be accepted, so it reads the revisions that added them from the shorter
// side (pendingAdded): a large accepted import costs what its few pending records do.
func (d *DB) AcceptBatch(ctx context.Context, batchID int64) (int, []string, error) {
	n := 0
	var skipped []string
	byName := kinds()
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		n, skipped = 0, nil
		sides, args, err := pendingAdded(ctx, tx, batchID)
		if err != nil {
			return err
		}
		var revs []Revision
		if len(sides) > 0 {
			revs, err = queryAllTx(ctx, tx, revisionSelect+` WHERE r.id IN (`+strings.Join(sides, " UNION ALL ")+`) ORDER BY r.id`,
				args, scanRevision)
			if err != nil {
				return err
			}
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
			ok, skip, err := byName[rev.RecordType].acceptPending(ctx, d, tx, accept, rev.RecordID, same)
			if err != nil {
				return err
			}
			if skip != "" {
				skipped = append(skipped, skip)
			}
			if ok {
				n++
			}
		}
		if n == 0 {
			return &ValidationError{[]Problem{{Message: fmt.Sprintf("change %d has nothing waiting for review as it was added", batchID)}}}
		}
		return setBatchSummary(ctx, tx, accept, fmt.Sprintf("accepted %d records of change %d", n, batchID))
	})
	return n, skipped, err
}

// pendingAdded gives, one per reviewed kind that has pending records, a query of the ids of the revisions
// by which batch added a record of that kind that waits for review now, and their arguments. Each is
// joined from the shorter side: from the kind's pending records (by its partial index of pending rows,
// migration 012) to their revisions (revisions_record) when there are no more of them than batch has
// revisions, else from batch's revisions (revisions_batch) to their records. The batch's size is bounded
// by the span of its revision ids (two index look-ups), not counted. Both sides select the same pairs.
func pendingAdded(ctx context.Context, q querier, batchID int64) ([]string, []any, error) {
	type reviewed struct{ table, name string }
	var ks []reviewed
	counts := []string{`coalesce((SELECT max(id) FROM revisions WHERE batch_id = ?1) - (SELECT min(id) FROM revisions WHERE batch_id = ?1) + 1, 0)`}
	for _, k := range allKinds() {
		if table, ok := k.reviewTable(); ok {
			ks = append(ks, reviewed{table, k.recordName()})
			counts = append(counts, `(SELECT count(*) FROM `+table+` WHERE review_state = 'pending')`)
		}
	}
	dest := make([]any, len(counts))
	n := make([]int64, len(counts))
	for i := range n {
		dest[i] = &n[i]
	}
	if err := q.QueryRowContext(ctx, `SELECT `+strings.Join(counts, ", "), batchID).Scan(dest...); err != nil {
		return nil, nil, fmt.Errorf("pending records of change %d: %w", batchID, err)
	}
	span := n[0]
	var sides []string
	var args []any
	for i, k := range ks {
		pending := n[i+1]
		if pending == 0 || span == 0 {
			continue
		}
		// CROSS JOIN keeps the table written first as the outer loop (SQLite's rule), and a unary + keeps a
		// column's index from being used, so the side chosen here is the side read: from the pending records,
		// each one's revisions by revisions_record (not all the batch's by revisions_batch for each record, which
		// took minutes at 100,000 dates); from the batch, its revisions by revisions_batch.
		if pending <= span {
			sides = append(sides, `SELECT r.id FROM `+k.table+` x CROSS JOIN revisions r
				WHERE x.review_state = 'pending' AND r.record_type = ? AND r.record_id = x.id AND +r.batch_id = ? AND r.before_json IS NULL`)
		} else {
			sides = append(sides, `SELECT r.id FROM revisions r CROSS JOIN `+k.table+` x
				WHERE +r.record_type = ? AND r.batch_id = ? AND r.before_json IS NULL AND x.id = r.record_id AND x.review_state = 'pending'`)
		}
		args = append(args, k.name, batchID)
	}
	return sides, args, nil
}

// PendingInBatch counts the records of the reviewed kinds that batch added and that wait for review now,
// each kind read from its shorter side (pendingAdded).
func (d *DB) PendingInBatch(ctx context.Context, batchID int64) (int, error) {
	sides, args, err := pendingAdded(ctx, d.reader(), batchID)
	if err != nil || len(sides) == 0 {
		return 0, err
	}
	var n int
	err = d.reader().QueryRowContext(ctx, `SELECT count(*) FROM (`+strings.Join(sides, " UNION ALL ")+`)`, args...).Scan(&n)
	return n, err
}
