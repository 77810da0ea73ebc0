package store

import (
	"context"
	"database/sql"
	"fmt"
)

// querier is what a read needs: the database's pool, or the one read transaction of a snapshot.
type querier interface {
	QueryContext(ctx context.Context, query string, args ...any) (*sql.Rows, error)
	QueryRowContext(ctx context.Context, query string, args ...any) *sql.Row
}

// reader is where reads go: the snapshot's transaction inside ReadSnapshot, the pool otherwise.
func (d *DB) reader() querier {
	if d.rq != nil {
		return d.rq
	}
	return d.db
}

// Snapshot reads the compilation as it stood when its transaction began: every read through it sees the
// same state, whatever is committed meanwhile. It offers reads only.
type Snapshot struct{ d *DB }

// ReadSnapshot runs fn with a Snapshot: one read transaction (a deferred BEGIN, so it takes no write
// lock; in WAL mode writers go on meanwhile), pinned to the state of the first read, which is made
// before fn runs. The transaction ends when fn returns; fn must not keep the Snapshot.
func (d *DB) ReadSnapshot(ctx context.Context, fn func(*Snapshot) error) error {
	// ReadOnly makes the driver begin a plain (deferred) transaction rather than the pool's immediate one.
	tx, err := d.db.BeginTx(ctx, &sql.TxOptions{ReadOnly: true})
	if err != nil {
		return fmt.Errorf("read snapshot: %w", err)
	}
	defer tx.Rollback() // a read: nothing to commit
	var n int
	// SQLite fixes a deferred transaction's view of the database at its first read.
	if err := tx.QueryRowContext(ctx, `SELECT count(*) FROM sqlite_schema`).Scan(&n); err != nil {
		return fmt.Errorf("read snapshot: %w", err)
	}
	snap := *d
	snap.rq = tx
	return fn(&Snapshot{d: &snap})
}

// The reads of a snapshot, as the DB methods of the same names.

func (s *Snapshot) DataStamp(ctx context.Context) (int64, error) { return s.d.DataStamp(ctx) }
func (s *Snapshot) DataVersions(ctx context.Context) (DataVersions, error) {
	return s.d.DataVersions(ctx)
}
func (s *Snapshot) Provinces(ctx context.Context) ([]Province, error) { return s.d.Provinces(ctx) }
func (s *Snapshot) Province(ctx context.Context, id int64) (Province, error) {
	return s.d.Province(ctx, id)
}
func (s *Snapshot) Units(ctx context.Context, provinceID int64) ([]Unit, error) {
	return s.d.Units(ctx, provinceID)
}
func (s *Snapshot) Dates(ctx context.Context, f DateFilter) ([]Date, int, error) {
	return s.d.Dates(ctx, f)
}
func (s *Snapshot) Date(ctx context.Context, id int64) (Date, error) { return s.d.Date(ctx, id) }
func (s *Snapshot) Calibrations(ctx context.Context) ([]Calibration, error) {
	return s.d.Calibrations(ctx)
}
func (s *Snapshot) Sections(ctx context.Context) ([]Section, error) { return s.d.Sections(ctx) }
func (s *Snapshot) Section(ctx context.Context, id int64) (Section, error) {
	return s.d.Section(ctx, id)
}
func (s *Snapshot) Samples(ctx context.Context, sectionID int64) ([]Sample, []string, error) {
	return s.d.Samples(ctx, sectionID)
}
func (s *Snapshot) TiePoints(ctx context.Context, sectionID int64) ([]TiePoint, error) {
	return s.d.TiePoints(ctx, sectionID)
}
func (s *Snapshot) Events(ctx context.Context, sectionID int64) ([]Event, error) {
	return s.d.Events(ctx, sectionID)
}
func (s *Snapshot) Hiatuses(ctx context.Context, sectionID int64) ([]Hiatus, error) {
	return s.d.Hiatuses(ctx, sectionID)
}
func (s *Snapshot) AnomalyDecisions(ctx context.Context, sectionID int64) ([]AnomalyDecision, error) {
	return s.d.AnomalyDecisions(ctx, sectionID)
}
