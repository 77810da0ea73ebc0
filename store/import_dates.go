package store

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
)

// dateWriter holds the statements a dates import runs once per row, prepared once per import in its
// transaction, and hands out date ids in sequence (nothing else writes dates inside the transaction).
type dateWriter struct {
	d                                  *DB
	tx                                 *sql.Tx
	cacheSize                          int64
	batch                              int64
	nextID                             int64
	bySample, section, unit, duplicate *sql.Stmt
	insertDate, insertRevision         *sql.Stmt
}

// likelyDuplicateQuery finds the lowest id of a date of a unit by a method at an age (see likelyDuplicate).
// The range on age_ma lets the index dates_unit_method_age answer; the abs() test is the rule itself.
const likelyDuplicateQuery = `SELECT coalesce(min(id), 0) FROM dates WHERE unit_id = ? AND method = ?
	AND age_ma BETWEEN ? AND ? AND abs(age_ma - ?) <= 1e-9 * age_ma`

func (d *DB) newDateWriter(ctx context.Context, tx *sql.Tx, batch int64) (*dateWriter, error) {
	w := &dateWriter{d: d, batch: batch, tx: tx}
	// A long import touches index pages all over the file; with SQLite's default 2 MB page cache it reads
	// them back from disk again and again. The connection's cache grows for the import and is put back.
	if err := tx.QueryRowContext(ctx, `PRAGMA cache_size`).Scan(&w.cacheSize); err != nil {
		return nil, err
	}
	if _, err := tx.ExecContext(ctx, fmt.Sprintf(`PRAGMA cache_size = %d`, importCacheKiB)); err != nil {
		return nil, err
	}
	id, err := nextID(ctx, tx, "dates", "date")
	if err != nil {
		return nil, err
	}
	w.nextID = id
	for _, s := range []struct {
		to *(*sql.Stmt)
		q  string
	}{
		{&w.bySample, `SELECT id FROM dates WHERE sample_code = ? AND method = ?`},
		{&w.section, `SELECT id FROM sections WHERE name = ?`},
		{&w.unit, `SELECT id FROM units WHERE province_id = ? AND name = ?`},
		{&w.duplicate, likelyDuplicateQuery},
		{&w.insertDate, `INSERT INTO dates (id, unit_id, section_id, height_m, sample_code, method, material,
			interpretation, age_ma, sigma_ma, sigma_y_ma, sigma_z_ma, sigma_level, tracer, monitor, monitor_age_ma,
			lambda_per_a, laboratory, citation, doi, latitude, longitude, review_state, notes, created_at, updated_at)
			VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)`},
		{&w.insertRevision, `INSERT INTO revisions (batch_id, record_type, record_id, before_json, after_json)
			VALUES (?, 'date', ?, NULL, ?)`},
	} {
		st, err := tx.PrepareContext(ctx, s.q)
		if err != nil {
			w.close()
			return nil, fmt.Errorf("prepare dates import: %w", err)
		}
		*s.to = st
	}
	return w, nil
}

// importCacheKiB is the page cache of a connection running a dates import (negative: KiB, SQLite's rule).
const importCacheKiB = -16384

func (w *dateWriter) close() {
	if w.cacheSize != 0 {
		w.tx.Exec(fmt.Sprintf(`PRAGMA cache_size = %d`, w.cacheSize))
	}
	for _, st := range []*sql.Stmt{w.bySample, w.section, w.unit, w.duplicate, w.insertDate, w.insertRevision} {
		if st != nil {
			st.Close()
		}
	}
}

// lookup returns the id selected by st, or 0 when there is none.
func (w *dateWriter) lookup(ctx context.Context, st *sql.Stmt, args ...any) (int64, error) {
	var id int64
	err := st.QueryRowContext(ctx, args...).Scan(&id)
	if errors.Is(err, sql.ErrNoRows) {
		return 0, nil
	}
	return id, err
}

// likelyDuplicate returns the lowest id of a date of unit uid by method at age ageMa (|a − ageMa| ≤ 10⁻⁹·a),
// or 0. Ages are positive (the row parser refuses others), so the rule holds only for a in
// [ageMa/(1+10⁻⁹), ageMa/(1−10⁻⁹)]; the range searched is that one widened by 10⁻¹² each side, so rounding
// of its bounds cannot leave out a date the rule takes in.
func (w *dateWriter) likelyDuplicate(ctx context.Context, uid int64, method string, ageMa float64) (int64, error) {
	lo := ageMa / (1 + 1e-9) * (1 - 1e-12)
	hi := ageMa / (1 - 1e-9) * (1 + 1e-12)
	return w.lookup(ctx, w.duplicate, uid, method, lo, hi, ageMa)
}

// insert writes dt and its revision in the import's change batch (as insertDate does for one date).
func (w *dateWriter) insert(ctx context.Context, dt *Date) error {
	now := w.d.stamp()
	id := w.nextID
	_, err := w.insertDate.ExecContext(ctx,
		id, dt.UnitID, dt.SectionID, dt.HeightM, dt.SampleCode, dt.Method, dt.Material, dt.Interpretation, dt.AgeMa,
		dt.SigmaMa, dt.SigmaYMa, dt.SigmaZMa, dt.SigmaLevel, dt.Tracer, dt.Monitor, dt.MonitorAgeMa, dt.LambdaPerA,
		dt.Laboratory, dt.Citation, dt.DOI, dt.Latitude, dt.Longitude, dt.ReviewState, dt.Notes, now, now)
	if err != nil {
		return fmt.Errorf("insert date %q: %w", dt.SampleCode, err)
	}
	w.nextID++
	dt.ID = id
	dt.Version, dt.CreatedAt, dt.UpdatedAt = 1, now, now
	after, err := json.Marshal(dt)
	if err != nil {
		return err
	}
	if _, err := w.insertRevision.ExecContext(ctx, w.batch, id, string(after)); err != nil {
		return fmt.Errorf("record revision: %w", err)
	}
	return nil
}
