package store

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"strings"
)

type actorKey struct{}

// WithActor marks ctx as acting for a user: the change batches written under it record who made them.
func WithActor(ctx context.Context, userID int64) context.Context {
	return context.WithValue(ctx, actorKey{}, userID)
}

func actor(ctx context.Context) *int64 {
	if id, ok := ctx.Value(actorKey{}).(int64); ok && id != 0 {
		return &id
	}
	return nil
}

// DateForm holds a date as typed in a form: the cells of the dates import format by column name.
type DateForm map[string]string

// FormOfDate gives the form cells of a stored date (uncertainties at its published level).
func FormOfDate(d Date) DateForm {
	var b strings.Builder
	WriteDatesCSV(&b, []Date{d})
	t, _ := readCSV("form", strings.NewReader(b.String()))
	f := DateForm{}
	for i, h := range t.header {
		f[h] = t.rows[0][i]
	}
	return f
}

// parseDateForm checks a form with exactly the rules of the dates importer. Problems name fields.
func parseDateForm(f DateForm) (Date, []Problem) {
	rw, t := formRow(dateColumns, Form(f))
	d := parseDateRow(rw, map[[2]string]int{})
	return d, t.problems
}

// resolveDateOwner fills UnitID/SectionID of a parsed date, creating a missing province or unit (as an
// import would), and records problems for unknown sections.
func (d *DB) resolveDateOwner(ctx context.Context, tx *sql.Tx, batch int64, dt *Date) ([]Problem, error) {
	res := &ImportResult{Added: map[string]int{}}
	switch {
	case dt.Section != "":
		sid, err := lookupID(ctx, tx, `SELECT id FROM sections WHERE name = ?`, dt.Section)
		if err != nil {
			return nil, err
		}
		if sid == 0 {
			return []Problem{{Column: "section", Message: fmt.Sprintf("unknown section %q", dt.Section)}}, nil
		}
		dt.SectionID, dt.UnitID = &sid, nil
	case dt.Unit != "":
		pid, err := d.provinceID(ctx, tx, batch, dt.Province, res)
		if err != nil {
			return nil, err
		}
		uid, err := lookupID(ctx, tx, `SELECT id FROM units WHERE province_id = ? AND name = ?`, pid, dt.Unit)
		if err != nil {
			return nil, err
		}
		if uid == 0 {
			if uid, err = d.insertUnit(ctx, tx, batch, Unit{ProvinceID: pid, Name: dt.Unit, Kind: "other"}); err != nil {
				return nil, err
			}
		}
		dt.UnitID, dt.SectionID = &uid, nil
	}
	return nil, nil
}

// CreateDate adds one date from a form, as the signed-in actor of ctx. A contributor's date starts
// pending (state is forced to pending unless asCurator).
func (d *DB) CreateDate(ctx context.Context, f DateForm, asCurator bool) (Date, error) {
	dt, problems := parseDateForm(f)
	if !asCurator {
		dt.ReviewState = ReviewPending
	}
	var out Date
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		if len(problems) > 0 {
			return &ValidationError{problems}
		}
		if id, err := lookupID(ctx, tx, `SELECT id FROM dates WHERE sample_code = ? AND method = ?`, dt.SampleCode, dt.Method); err != nil {
			return err
		} else if id != 0 {
			return &ValidationError{[]Problem{{Column: "sample_code", Message: fmt.Sprintf("a date of sample %q by this method exists (date %d)", dt.SampleCode, id)}}}
		}
		batch, err := d.newBatch(ctx, tx, "add date", "form")
		if err != nil {
			return err
		}
		if ps, err := d.resolveDateOwner(ctx, tx, batch, &dt); err != nil || len(ps) > 0 {
			if err == nil {
				err = &ValidationError{ps}
			}
			return err
		}
		if err := d.insertDate(ctx, tx, batch, &dt); err != nil {
			return err
		}
		out = dt
		return setBatchSummary(ctx, tx, batch, "added date "+dt.SampleCode)
	})
	if err != nil {
		return Date{}, err
	}
	return d.Date(ctx, out.ID)
}

// UpdateDate replaces date id with the form's values when the stored version is still version;
// otherwise it returns ErrConflict and changes nothing. A contributor's edit makes the date pending.
func (d *DB) UpdateDate(ctx context.Context, id int64, version int, f DateForm, asCurator bool) (Date, error) {
	dt, problems := parseDateForm(f)
	if !asCurator {
		dt.ReviewState = ReviewPending
	}
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		before, err := dateInTx(ctx, tx, id)
		if err != nil {
			return err
		}
		if before.Version != version {
			return ErrConflict
		}
		if len(problems) > 0 {
			return &ValidationError{problems}
		}
		if other, err := lookupID(ctx, tx, `SELECT id FROM dates WHERE sample_code = ? AND method = ? AND id <> ?`, dt.SampleCode, dt.Method, id); err != nil {
			return err
		} else if other != 0 {
			return &ValidationError{[]Problem{{Column: "sample_code", Message: fmt.Sprintf("another date (%d) has this sample code and method", other)}}}
		}
		batch, err := d.newBatch(ctx, tx, "edit date", "form")
		if err != nil {
			return err
		}
		if ps, err := d.resolveDateOwner(ctx, tx, batch, &dt); err != nil || len(ps) > 0 {
			if err == nil {
				err = &ValidationError{ps}
			}
			return err
		}
		dt.ID, dt.ReviewNote = id, before.ReviewNote
		if err := d.writeDate(ctx, tx, &dt, version); err != nil {
			return err
		}
		after, err := dateInTx(ctx, tx, id)
		if err != nil {
			return err
		}
		if err := addRevision(ctx, tx, batch, "date", id, before, after); err != nil {
			return err
		}
		return setBatchSummary(ctx, tx, batch, "edited date "+after.SampleCode)
	})
	if err != nil {
		return Date{}, err
	}
	return d.Date(ctx, id)
}

// writeDate overwrites every column of a stored date whose version is still version, bumping it.
func (d *DB) writeDate(ctx context.Context, tx *sql.Tx, dt *Date, version int) error {
	r, err := tx.ExecContext(ctx, `UPDATE dates SET unit_id = ?, section_id = ?, height_m = ?, sample_code = ?, method = ?,
		material = ?, interpretation = ?, age_ma = ?, sigma_ma = ?, sigma_y_ma = ?, sigma_z_ma = ?, sigma_level = ?,
		tracer = ?, monitor = ?, monitor_age_ma = ?, lambda_per_a = ?, laboratory = ?, citation = ?, doi = ?,
		latitude = ?, longitude = ?, review_state = ?, review_note = ?, notes = ?, version = version + 1, updated_at = ?
		WHERE id = ? AND version = ?`,
		dt.UnitID, dt.SectionID, dt.HeightM, dt.SampleCode, dt.Method, dt.Material, dt.Interpretation, dt.AgeMa,
		dt.SigmaMa, dt.SigmaYMa, dt.SigmaZMa, dt.SigmaLevel, dt.Tracer, dt.Monitor, dt.MonitorAgeMa, dt.LambdaPerA,
		dt.Laboratory, dt.Citation, dt.DOI, dt.Latitude, dt.Longitude, dt.ReviewState, dt.ReviewNote, dt.Notes,
		d.stamp(), dt.ID, version)
	if err != nil {
		return fmt.Errorf("update date %d: %w", dt.ID, err)
	}
	if n, _ := r.RowsAffected(); n == 0 {
		return ErrConflict
	}
	return nil
}

func dateInTx(ctx context.Context, tx *sql.Tx, id int64) (Date, error) {
	x, err := scanDate(tx.QueryRowContext(ctx, dateSelect+` WHERE d.id = ?`, id))
	return x, notFound(err, "date", id)
}

// ReviewDate accepts or rejects date id (at version) with a reason, as a curator.
func (d *DB) ReviewDate(ctx context.Context, id int64, version int, accept bool, note string) (Date, error) {
	note = strings.TrimSpace(note)
	if !accept && note == "" {
		return Date{}, &ValidationError{[]Problem{{Column: "note", Message: "say why the date is rejected"}}}
	}
	if err := freeText("note", note, true); err != nil {
		return Date{}, err
	}
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		before, err := dateInTx(ctx, tx, id)
		if err != nil {
			return err
		}
		if before.Version != version {
			return ErrConflict
		}
		dt := before
		dt.ReviewState, dt.ReviewNote = "rejected", note
		kind := "reject date"
		if accept {
			dt.ReviewState, kind = "accepted", "accept date"
		}
		batch, err := d.newBatch(ctx, tx, kind, "review")
		if err != nil {
			return err
		}
		if err := d.writeDate(ctx, tx, &dt, version); err != nil {
			return err
		}
		after, err := dateInTx(ctx, tx, id)
		if err != nil {
			return err
		}
		if err := addRevision(ctx, tx, batch, "date", id, before, after); err != nil {
			return err
		}
		return setBatchSummary(ctx, tx, batch, fmt.Sprintf("%s %s: %s", kind, before.SampleCode, orNone(note)))
	})
	if err != nil {
		return Date{}, err
	}
	return d.Date(ctx, id)
}

func orNone(s string) string {
	if s == "" {
		return "no note"
	}
	return s
}

// DeleteDate removes date id (at version), keeping its last state in the revision.
func (d *DB) DeleteDate(ctx context.Context, id int64, version int) error {
	return d.inTx(ctx, func(tx *sql.Tx) error {
		before, err := dateInTx(ctx, tx, id)
		if err != nil {
			return err
		}
		if before.Version != version {
			return ErrConflict
		}
		batch, err := d.newBatch(ctx, tx, "delete date", "form")
		if err != nil {
			return err
		}
		if _, err := tx.ExecContext(ctx, `DELETE FROM dates WHERE id = ?`, id); err != nil {
			return fmt.Errorf("delete date %d: %w", id, err)
		}
		if err := addRevision(ctx, tx, batch, "date", id, before, nil); err != nil {
			return err
		}
		return setBatchSummary(ctx, tx, batch, "deleted date "+before.SampleCode)
	})
}

// Revision is one recorded change of one record, with the batch it belongs to.
type Revision struct {
	ID         int64           `json:"id"`
	BatchID    int64           `json:"batch_id"`
	Kind       string          `json:"kind"`
	Source     string          `json:"source"`
	At         string          `json:"at"`
	User       string          `json:"user"`
	RecordType string          `json:"record_type"`
	RecordID   int64           `json:"record_id"`
	Before     json.RawMessage `json:"before"`
	After      json.RawMessage `json:"after"`
}

const revisionSelect = `SELECT r.id, r.batch_id, b.kind, b.source, b.at, coalesce(u.name, ''), r.record_type, r.record_id,
	r.before_json, r.after_json FROM revisions r JOIN change_batches b ON b.id = r.batch_id
	LEFT JOIN users u ON u.id = b.user_id`

func scanRevision(s interface{ Scan(...any) error }) (Revision, error) {
	var r Revision
	var before, after sql.NullString
	err := s.Scan(&r.ID, &r.BatchID, &r.Kind, &r.Source, &r.At, &r.User, &r.RecordType, &r.RecordID, &before, &after)
	if before.Valid {
		r.Before = json.RawMessage(before.String)
	}
	if after.Valid {
		r.After = json.RawMessage(after.String)
	}
	return r, err
}

// Revisions returns the history of one record, newest first.
func (d *DB) Revisions(ctx context.Context, recordType string, id int64) ([]Revision, error) {
	return queryAll(ctx, d.db, revisionSelect+` WHERE r.record_type = ? AND r.record_id = ? ORDER BY r.id DESC`,
		[]any{recordType, id}, scanRevision)
}

// RevisionByID returns one revision, or ErrNotFound.
func (d *DB) RevisionByID(ctx context.Context, id int64) (Revision, error) {
	r, err := scanRevision(d.db.QueryRowContext(ctx, revisionSelect+` WHERE r.id = ?`, id))
	return r, notFound(err, "revision", id)
}

// RevertDate restores the date of revision revID to the state it had just before that revision: it
// deletes the date when the revision created it, and recreates it (same id) when the revision deleted it.
// Later changes are undone too, since the whole record goes back; the revert is itself a recorded change.
// It returns ErrConflict when there is nothing to revert (a created date already gone).
func (d *DB) RevertDate(ctx context.Context, revID int64) error {
	rev, err := d.RevisionByID(ctx, revID)
	if err != nil {
		return err
	}
	if rev.RecordType != "date" {
		return fmt.Errorf("revert revision %d: only date revisions can be reverted here", revID)
	}
	return d.inTx(ctx, func(tx *sql.Tx) error {
		batch, err := d.newBatch(ctx, tx, "revert date", fmt.Sprintf("revision %d", revID))
		if err != nil {
			return err
		}
		if err := d.revertDateTx(ctx, tx, batch, rev); err != nil {
			return err
		}
		return setBatchSummary(ctx, tx, batch, fmt.Sprintf("reverted revision %d of date %d", revID, rev.RecordID))
	})
}

// revertDateTx gives the date of rev the state it had just before rev, recorded in batch (see RevertDate).
func (d *DB) revertDateTx(ctx context.Context, tx *sql.Tx, batch int64, rev Revision) error {
	current, cerr := dateInTx(ctx, tx, rev.RecordID)
	exists := cerr == nil
	if cerr != nil && !errors.Is(cerr, ErrNotFound) {
		return cerr
	}
	if rev.Before == nil { // the revision created it: remove it
		if !exists {
			return ErrConflict
		}
		if _, err := tx.ExecContext(ctx, `DELETE FROM dates WHERE id = ?`, rev.RecordID); err != nil {
			if isForeignKeyViolation(err) {
				return &InUseError{Record: "date " + current.SampleCode, Uses: []string{"records added later"}}
			}
			return err
		}
		return addRevision(ctx, tx, batch, "date", rev.RecordID, current, nil)
	}
	var old Date
	if err := json.Unmarshal(rev.Before, &old); err != nil {
		return fmt.Errorf("revert revision %d: %w", rev.ID, err)
	}
	if !exists { // the revision deleted it: recreate with its id
		if _, err := tx.ExecContext(ctx, `INSERT INTO dates (id, unit_id, section_id, height_m, sample_code, method,
			interpretation, age_ma, sigma_ma, sigma_level, created_at, updated_at) VALUES (?,?,?,?,?,?,?,?,?,?,?,?)`,
			old.ID, old.UnitID, old.SectionID, old.HeightM, old.SampleCode, old.Method, old.Interpretation,
			old.AgeMa, old.SigmaMa, old.SigmaLevel, old.CreatedAt, old.UpdatedAt); err != nil {
			return fmt.Errorf("recreate date %d: %w", old.ID, err)
		}
	}
	if err := d.writeDate(ctx, tx, &old, currentVersion(ctx, tx, old.ID)); err != nil {
		return err
	}
	after, err := dateInTx(ctx, tx, old.ID)
	if err != nil {
		return err
	}
	var before any
	if exists {
		before = current
	}
	return addRevision(ctx, tx, batch, "date", old.ID, before, after)
}

func currentVersion(ctx context.Context, tx *sql.Tx, id int64) int {
	var v int
	tx.QueryRowContext(ctx, `SELECT version FROM dates WHERE id = ?`, id).Scan(&v)
	return v
}

// BatchRevisions returns the revisions of one change batch, in the order they were made.
func (d *DB) BatchRevisions(ctx context.Context, batchID int64) ([]Revision, error) {
	return queryAll(ctx, d.db, revisionSelect+` WHERE r.batch_id = ? ORDER BY r.id`, []any{batchID}, scanRevision)
}

// BatchRevisionsAfter returns up to limit revisions of one change batch made after revision after (0: from
// the first), in the order they were made: one page of a change, keyset on the revision id (index
// revisions_batch), so that every page costs the same.
func (d *DB) BatchRevisionsAfter(ctx context.Context, batchID, after int64, limit int) ([]Revision, error) {
	return queryAll(ctx, d.db, revisionSelect+` WHERE r.batch_id = ? AND r.id > ? ORDER BY r.id LIMIT ?`,
		[]any{batchID, after, max(limit, 1)}, scanRevision)
}

// BatchByID returns one change batch with who made it and how many revisions it holds, or ErrNotFound.
func (d *DB) BatchByID(ctx context.Context, id int64) (BatchRow, error) {
	var b BatchRow
	err := d.db.QueryRowContext(ctx, `SELECT b.id, b.kind, b.source, b.at, b.summary, coalesce(u.name, ''),
		(SELECT count(*) FROM revisions r WHERE r.batch_id = b.id)
		FROM change_batches b LEFT JOIN users u ON u.id = b.user_id WHERE b.id = ?`, id).
		Scan(&b.ID, &b.Kind, &b.Source, &b.At, &b.Summary, &b.User, &b.Revisions)
	return b, notFound(err, "change", id)
}
