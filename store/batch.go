package store

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"sync"
)

// inTx runs fn in one transaction, committing when it returns nil and rolling back otherwise.
func (d *DB) inTx(ctx context.Context, fn func(tx *sql.Tx) error) error {
	tx, err := d.db.BeginTx(ctx, nil)
	if err != nil {
		return err
	}
	defer tx.Rollback()
	if err := fn(tx); err != nil {
		return err
	}
	return tx.Commit()
}

// newBatch records a set of changes about to be made together.
func (d *DB) newBatch(ctx context.Context, tx *sql.Tx, kind, source string) (int64, error) {
	res, err := tx.ExecContext(ctx, `INSERT INTO change_batches (kind, source, user_id, at) VALUES (?, ?, ?, ?)`,
		kind, source, actor(ctx), d.stamp())
	if err != nil {
		return 0, fmt.Errorf("record change batch: %w", err)
	}
	return res.LastInsertId()
}

func setBatchSummary(ctx context.Context, tx *sql.Tx, batch int64, summary string) error {
	_, err := tx.ExecContext(ctx, `UPDATE change_batches SET summary = ? WHERE id = ?`, summary, batch)
	return err
}

// addRevision records one change of one record; before or after is nil for a creation or a deletion.
func addRevision(ctx context.Context, tx *sql.Tx, batch int64, recordType string, id int64, before, after any) error {
	enc := func(v any) (*string, error) {
		if v == nil {
			return nil, nil
		}
		b, err := json.Marshal(v)
		if err != nil {
			return nil, err
		}
		s := string(b)
		return &s, nil
	}
	b, err := enc(before)
	if err != nil {
		return err
	}
	a, err := enc(after)
	if err != nil {
		return err
	}
	if b == nil && a == nil {
		return errors.New("revision without before or after")
	}
	_, err = tx.ExecContext(ctx, `INSERT INTO revisions (batch_id, record_type, record_id, before_json, after_json)
		VALUES (?, ?, ?, ?, ?)`, batch, recordType, id, b, a)
	if err != nil {
		return fmt.Errorf("record revision: %w", err)
	}
	return nil
}

// LatestBatches returns the most recent change batches, newest first.
func (d *DB) LatestBatches(ctx context.Context, limit int) ([]Batch, error) {
	rows, err := d.reader().QueryContext(ctx, `SELECT id, kind, source, at, summary FROM change_batches ORDER BY id DESC LIMIT ?`, limit)
	if err != nil {
		return nil, fmt.Errorf("latest batches: %w", err)
	}
	defer rows.Close()
	var out []Batch
	for rows.Next() {
		var b Batch
		if err := rows.Scan(&b.ID, &b.Kind, &b.Source, &b.At, &b.Summary); err != nil {
			return nil, err
		}
		out = append(out, b)
	}
	return out, rows.Err()
}

// RevisionCount returns how many revisions reference a record.
func (d *DB) RevisionCount(ctx context.Context, recordType string, id int64) (int, error) {
	var n int
	err := d.reader().QueryRowContext(ctx, `SELECT count(*) FROM revisions WHERE record_type = ? AND record_id = ?`, recordType, id).Scan(&n)
	return n, err
}

// nextID is the id a new record of table gets: one more than any id the table or the history of its
// record type (recordType in revisions) has ever held. SQLite would otherwise give a new record the id of
// the last one deleted, and with it that record's history and restore links.
func nextID(ctx context.Context, tx *sql.Tx, table, recordType string) (int64, error) {
	var id int64
	err := tx.QueryRowContext(ctx, `SELECT max(coalesce((SELECT max(id) FROM `+table+`), 0),
		coalesce((SELECT max(record_id) FROM revisions WHERE record_type = ?), 0)) + 1`, recordType).Scan(&id)
	if err != nil {
		return 0, fmt.Errorf("next id of %s: %w", table, err)
	}
	return id, nil
}

// revisionCounts remembers how many revisions a change holds. A change is written whole in the one
// transaction that makes it (newBatch and every addRevision of it share a transaction, as do an import's
// rows), and no revision is ever added to it later or removed, so once a reader sees the change its count
// is final. Counting the 100,000 revisions of a large import reads 100,000 index entries (10 ms); the
// feed of changes and a change's page then answer from here.
type revisionCounts struct {
	mu sync.Mutex
	m  map[int64]int
}

// revisionCountsKept bounds how many counts are kept (a few bytes each); past it they are counted again.
const revisionCountsKept = 10_000

// revisionCount returns how many revisions change batch holds.
func (d *DB) revisionCount(ctx context.Context, batch int64) (int, error) {
	c := d.revCounts
	if c != nil {
		c.mu.Lock()
		n, ok := c.m[batch]
		c.mu.Unlock()
		if ok {
			return n, nil
		}
	}
	var n int
	if err := d.reader().QueryRowContext(ctx, `SELECT count(*) FROM revisions WHERE batch_id = ?`, batch).Scan(&n); err != nil {
		return 0, fmt.Errorf("revisions of change %d: %w", batch, err)
	}
	if n == 0 || c == nil {
		return n, nil // not kept: a change without revisions is no change (its page answers 404)
	}
	c.mu.Lock()
	if c.m == nil || len(c.m) >= revisionCountsKept {
		c.m = map[int64]int{}
	}
	c.m[batch] = n
	c.mu.Unlock()
	return n, nil
}
