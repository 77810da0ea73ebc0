package store

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"strings"

	"modernc.org/sqlite"
)

// Form holds a record as typed in a form: the cells of its import format by column name (plus
// review_state for records that are reviewed).
type Form map[string]string

// formRow makes a one-row table of a form over the columns of an import format, so that a form is checked
// by the importer's own row parser. The problems recorded in the table name form fields.
func formRow(columns []string, f Form) (row, *csvTable) {
	t := &csvTable{idx: map[string]int{}, header: columns}
	rec := make([]string, len(columns))
	for i, c := range columns {
		t.idx[c] = i
		rec[i] = f[c]
	}
	t.rows, t.lines = [][]string{rec}, []int{0}
	t.checkText(0)
	return t.row(0), t
}

// formOf gives the form cells of one record as its exporter writes them.
func formOf(write func(io.Writer) error) Form {
	var b strings.Builder
	f := Form{}
	if err := write(&b); err != nil {
		return f
	}
	t, err := readCSV("form", strings.NewReader(b.String()))
	if err != nil || len(t.rows) == 0 {
		return f
	}
	for i, h := range t.header {
		f[h] = t.rows[0][i]
	}
	return f
}

// InUseError refuses to delete a record (or to undo its creation) while other records depend on it.
// Nothing was changed when it is returned.
type InUseError struct {
	Record string   // what was to be deleted, e.g. `unit "Haldruna Flow"`
	Uses   []string // what depends on it, e.g. "3 dates"
}

func (e *InUseError) Error() string {
	return fmt.Sprintf("%s is used by %s: delete or move those first", e.Record, strings.Join(e.Uses, ", "))
}

// dependent is a kind of record that refers to another: query counts those referring to id (?).
type dependent struct {
	noun  string // singular; "s" is added for more than one
	query string
}

func dependents(ctx context.Context, tx *sql.Tx, id int64, deps []dependent) ([]string, error) {
	var uses []string
	for _, dep := range deps {
		var n int
		if err := tx.QueryRowContext(ctx, dep.query, id).Scan(&n); err != nil {
			return nil, fmt.Errorf("count %ss: %w", dep.noun, err)
		}
		switch {
		case n == 1:
			uses = append(uses, "1 "+dep.noun)
		case n > 1:
			uses = append(uses, fmt.Sprintf("%d %ss", n, dep.noun))
		}
	}
	return uses, nil
}

// isUniqueViolation recognises a UNIQUE or PRIMARY KEY refusal by its SQLite extended code (2067, 1555).
func isUniqueViolation(err error) bool {
	var se *sqlite.Error
	if !errors.As(err, &se) {
		return false
	}
	return se.Code() == 2067 || se.Code() == 1555
}

// recordType is how one kind of record is written, deleted, reviewed and restored: its table, the
// columns a form or a restore writes (everything but id, version and the times), what depends on it, and,
// for the kinds curators review, where it keeps its review. Every record of the app goes through it: the
// exported Create/Update/Review/Delete methods of each record are a parse of the form and a call of save,
// reviewRecord or deleteRecord, and history, undo and restore find the kind by its record_type (kinds).
type recordType[T any] struct {
	name  string // record_type of its revisions, e.g. "unit"
	table string
	cols  []string
	vals  func(T) []any
	meta  func(T) (id int64, version int, created string)
	label func(T) string // e.g. `unit "Haldruna Flow"`
	load  func(ctx context.Context, tx *sql.Tx, id int64) (T, error)
	deps  []dependent
	// form gives the form cells of a record (the columns of its import format), for history pages; nil
	// for records without a form.
	form func(T) Form
	// summary says in the feed of changes what a form did ("added" or "edited" x); nil gives done + label.
	summary func(done string, x T) string
	// review is set for the kinds curators review (dates, events, tie points, hiatuses).
	review *reviewing[T]
}

// addedOf is the summary of a record that belongs to another: "added event E of S", "edited event E"
// (nameOwner gives the record's name and its owner's).
func addedOf[T any](noun string, nameOwner func(T) (string, string)) func(string, T) string {
	return func(done string, x T) string {
		name, owner := nameOwner(x)
		if done == "added" {
			return fmt.Sprintf("added %s %s of %s", noun, name, owner)
		}
		return "edited " + noun + " " + name
	}
}

func (rt recordType[T]) noun() string { return strings.ReplaceAll(rt.name, "_", " ") }

// insert adds a new record (id 0) and records its creation in batch.
func (rt recordType[T]) insert(ctx context.Context, d *DB, tx *sql.Tx, batch int64, x T) (T, error) {
	now := d.stamp()
	id, err := nextID(ctx, tx, rt.table, rt.name)
	if err != nil {
		var zero T
		return zero, err
	}
	cols := append([]string{"id"}, rt.cols...)
	cols = append(cols, "created_at", "updated_at")
	args := append(append([]any{id}, rt.vals(x)...), now, now)
	if _, err := tx.ExecContext(ctx, `INSERT INTO `+rt.table+` (`+strings.Join(cols, ", ")+`) VALUES (`+
		strings.TrimSuffix(strings.Repeat("?, ", len(cols)), ", ")+`)`, args...); err != nil {
		var zero T
		return zero, fmt.Errorf("insert %s: %w", rt.label(x), err)
	}
	after, err := rt.load(ctx, tx, id)
	if err != nil {
		return after, err
	}
	return after, addRevision(ctx, tx, batch, rt.name, id, nil, after)
}

// write overwrites every column of record id when its stored version is still version, bumping the
// version; ErrConflict otherwise.
func (rt recordType[T]) write(ctx context.Context, d *DB, tx *sql.Tx, id int64, version int, x T) error {
	set := make([]string, len(rt.cols))
	for i, c := range rt.cols {
		set[i] = c + " = ?"
	}
	args := append(rt.vals(x), d.stamp(), id, version)
	r, err := tx.ExecContext(ctx, `UPDATE `+rt.table+` SET `+strings.Join(set, ", ")+
		`, version = version + 1, updated_at = ? WHERE id = ? AND version = ?`, args...)
	if err != nil {
		return fmt.Errorf("update %s: %w", rt.label(x), err)
	}
	if n, _ := r.RowsAffected(); n == 0 {
		return ErrConflict
	}
	return nil
}

// update replaces record id (at version) with x and records the change in batch; ErrConflict when the
// stored version is another.
func (rt recordType[T]) update(ctx context.Context, d *DB, tx *sql.Tx, batch int64, id int64, version int, x T) (T, error) {
	before, err := rt.load(ctx, tx, id)
	if err != nil {
		return before, err
	}
	if _, v, _ := rt.meta(before); v != version {
		return before, ErrConflict
	}
	if err := rt.write(ctx, d, tx, id, version, x); err != nil {
		return before, err
	}
	after, err := rt.load(ctx, tx, id)
	if err != nil {
		return after, err
	}
	return after, addRevision(ctx, tx, batch, rt.name, id, before, after)
}

// remove deletes record id (at version), keeping its last state in the revision. It refuses with an
// *InUseError while records depend on it: those with ON DELETE RESTRICT would make the delete fail, and
// those with ON DELETE CASCADE would vanish unrecorded.
func (rt recordType[T]) remove(ctx context.Context, tx *sql.Tx, batch int64, id int64, version int) (T, error) {
	before, err := rt.load(ctx, tx, id)
	if err != nil {
		return before, err
	}
	if _, v, _ := rt.meta(before); v != version {
		return before, ErrConflict
	}
	return before, rt.removeLoaded(ctx, tx, batch, before)
}

func (rt recordType[T]) removeLoaded(ctx context.Context, tx *sql.Tx, batch int64, before T) error {
	id, _, _ := rt.meta(before)
	uses, err := dependents(ctx, tx, id, rt.deps)
	if err != nil {
		return err
	}
	if len(uses) > 0 {
		return &InUseError{Record: rt.label(before), Uses: uses}
	}
	if _, err := tx.ExecContext(ctx, `DELETE FROM `+rt.table+` WHERE id = ?`, id); err != nil {
		if isForeignKeyViolation(err) {
			return &InUseError{Record: rt.label(before), Uses: []string{"other records"}}
		}
		return fmt.Errorf("delete %s: %w", rt.label(before), err)
	}
	return addRevision(ctx, tx, batch, rt.name, id, before, nil)
}

// revert gives record rev.RecordID back the state it had just before rev: it deletes the record when rev
// created it, recreates it with the same id (and its creation time) when rev deleted it, and otherwise
// overwrites every column. The revert is recorded in batch like any change.
func (rt recordType[T]) revert(ctx context.Context, d *DB, tx *sql.Tx, batch int64, rev Revision) error {
	current, err := rt.load(ctx, tx, rev.RecordID)
	exists := err == nil
	if err != nil && !errors.Is(err, ErrNotFound) {
		return err
	}
	if rev.Before == nil { // rev created it: remove it
		if !exists {
			return ErrConflict
		}
		return rt.removeLoaded(ctx, tx, batch, current)
	}
	var old T
	if err := json.Unmarshal(rev.Before, &old); err != nil {
		return fmt.Errorf("revert revision %d: %w", rev.ID, err)
	}
	id, version, created := rt.meta(old)
	if exists {
		_, cur, _ := rt.meta(current)
		err = rt.write(ctx, d, tx, id, cur, old)
	} else {
		cols := append([]string{"id"}, rt.cols...)
		cols = append(cols, "version", "created_at", "updated_at")
		args := append([]any{id}, rt.vals(old)...)
		args = append(args, version+1, created, d.stamp())
		_, err = tx.ExecContext(ctx, `INSERT INTO `+rt.table+` (`+strings.Join(cols, ", ")+`) VALUES (`+
			strings.TrimSuffix(strings.Repeat("?, ", len(cols)), ", ")+`)`, args...)
	}
	switch {
	case isForeignKeyViolation(err):
		return &ValidationError{[]Problem{{Message: fmt.Sprintf("%s refers to a record that no longer exists; restore that first", rt.label(old))}}}
	case isUniqueViolation(err):
		return &ValidationError{[]Problem{{Message: fmt.Sprintf("another record now has the name or place of %s; change that one first", rt.label(old))}}}
	case err != nil:
		return fmt.Errorf("restore %s: %w", rt.label(old), err)
	}
	after, err := rt.load(ctx, tx, id)
	if err != nil {
		return err
	}
	var before any
	if exists {
		before = current
	}
	return addRevision(ctx, tx, batch, rt.name, id, before, after)
}

// kind is a recordType of any record: what history, restore, undo and review do with a record known
// only by the record_type of its revisions.
type kind interface {
	recordName() string
	describe() (table string, cols []string)
	revert(ctx context.Context, d *DB, tx *sql.Tx, batch int64, rev Revision) error
	state(ctx context.Context, tx *sql.Tx, id int64) (any, error)
	formOfState(raw json.RawMessage) (Form, error)
	reviewTable() (table string, reviewed bool)
	reviewByID(ctx context.Context, d *DB, id int64, version int, accept bool, note string) error
	acceptPending(ctx context.Context, d *DB, tx *sql.Tx, batch int64, id int64, same bool) (bool, string, error)
}

func (rt recordType[T]) recordName() string { return rt.name }

func (rt recordType[T]) describe() (string, []string) { return rt.table, rt.cols }

// state is the record's current state as a revision stores it.
func (rt recordType[T]) state(ctx context.Context, tx *sql.Tx, id int64) (any, error) {
	return rt.load(ctx, tx, id)
}

// formOfState gives the form cells of a state a revision stored.
func (rt recordType[T]) formOfState(raw json.RawMessage) (Form, error) {
	if rt.form == nil {
		return nil, fmt.Errorf("%s records have no form", rt.noun())
	}
	var x T
	if err := json.Unmarshal(raw, &x); err != nil {
		return nil, fmt.Errorf("read %s revision: %w", rt.noun(), err)
	}
	return rt.form(x), nil
}

// allKinds lists every kind of record that is edited one by one, in a fixed order.
func allKinds() []kind {
	return []kind{provinceType(), unitType(), sectionType(), dateType(), tieType(), eventType(), hiatusType(),
		anomalyDecisionType()}
}

// kinds gives the kinds by record_type.
func kinds() map[string]kind {
	m := map[string]kind{}
	for _, k := range allKinds() {
		m[k.recordName()] = k
	}
	return m
}

// Restorable reports whether RevertRevision can restore records of recordType.
func Restorable(recordType string) bool {
	_, ok := kinds()[recordType]
	return ok
}

// FormOfState gives the form cells of a record's state as a revision of recordType stored it (the
// columns of its import format, review state included for reviewed records).
func FormOfState(recordType string, raw json.RawMessage) (Form, error) {
	k, ok := kinds()[recordType]
	if !ok {
		return nil, fmt.Errorf("%s records have no form", strings.ReplaceAll(recordType, "_", " "))
	}
	return k.formOfState(raw)
}

// RevertRevision restores the record of revision revID to the state it had just before that revision: it
// deletes the record when the revision created it, and recreates it (same id) when the revision deleted it.
// Later changes are undone too, since the whole record goes back; the revert is itself a recorded change. It
// returns ErrConflict when there is nothing to revert (a created record already gone), an *InUseError when
// undoing a creation would delete a record others depend on, and a *ValidationError when the earlier state
// cannot be written back (its references are gone).
func (d *DB) RevertRevision(ctx context.Context, revID int64) error {
	rev, err := d.RevisionByID(ctx, revID)
	if err != nil {
		return err
	}
	rt, ok := kinds()[rev.RecordType]
	if !ok {
		return fmt.Errorf("revert revision %d: %s records cannot be restored one by one", revID, rev.RecordType)
	}
	return d.inTx(ctx, func(tx *sql.Tx) error {
		batch, err := d.newBatch(ctx, tx, "revert "+strings.ReplaceAll(rev.RecordType, "_", " "), fmt.Sprintf("revision %d", revID))
		if err != nil {
			return err
		}
		if err := rt.revert(ctx, d, tx, batch, rev); err != nil {
			return err
		}
		return setBatchSummary(ctx, tx, batch, fmt.Sprintf("reverted revision %d of %s %d", revID, strings.ReplaceAll(rev.RecordType, "_", " "), rev.RecordID))
	})
}

// uniqueProblem returns a problem for column when q (with args) finds another record.
func uniqueProblem(ctx context.Context, tx *sql.Tx, column, message string, q string, args ...any) ([]Problem, error) {
	id, err := lookupID(ctx, tx, q, args...)
	if err != nil || id == 0 {
		return nil, err
	}
	return []Problem{{Column: column, Message: fmt.Sprintf(message+" (record %d)", id)}}, nil
}

// deleteRecord removes record id (at version) in a change batch of its own, keeping its last state in
// the revision; it returns ErrConflict for a stale version and an *InUseError while others depend on it.
func (rt recordType[T]) deleteRecord(ctx context.Context, d *DB, id int64, version int) error {
	noun := strings.ReplaceAll(rt.name, "_", " ")
	return d.inTx(ctx, func(tx *sql.Tx) error {
		batch, err := d.newBatch(ctx, tx, "delete "+noun, "form")
		if err != nil {
			return err
		}
		before, err := rt.remove(ctx, tx, batch, id, version)
		if err != nil {
			return err
		}
		return setBatchSummary(ctx, tx, batch, "deleted "+rt.label(before))
	})
}

// prepare completes a record read from a form inside the change's transaction: it resolves names to ids
// (it may add records to batch, e.g. a new province), copies into x what an edit keeps from before (nil for
// a new record) and checks for clashes with stored records. It gets the form's problems and returns the
// whole list, so that a kind may list clashes alongside them or look for them only in a clean form.
type prepare[T any] func(ctx context.Context, tx *sql.Tx, batch int64, before *T, x *T, problems []Problem) ([]Problem, error)

// save adds x (id 0) or replaces record id with x when its stored version is still version (else
// ErrConflict, changing nothing), in a change batch of its own; problems are the form's. Nothing is
// written while prep finds problems.
func (rt recordType[T]) save(ctx context.Context, d *DB, id int64, version int, x T, problems []Problem, prep prepare[T]) (T, error) {
	verb, done := "add", "added"
	if id != 0 {
		verb, done = "edit", "edited"
	}
	var out T
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		var before *T
		if id != 0 {
			b, err := rt.load(ctx, tx, id)
			if err != nil {
				return err
			}
			if _, v, _ := rt.meta(b); v != version {
				return ErrConflict
			}
			before = &b
		}
		batch, err := d.newBatch(ctx, tx, verb+" "+rt.noun(), "form")
		if err != nil {
			return err
		}
		if prep != nil {
			if problems, err = prep(ctx, tx, batch, before, &x, problems); err != nil {
				return err
			}
		}
		if len(problems) > 0 {
			return &ValidationError{problems}
		}
		if before == nil {
			out, err = rt.insert(ctx, d, tx, batch, x)
		} else {
			out, err = rt.update(ctx, d, tx, batch, id, version, x)
		}
		if err != nil {
			return err
		}
		if rt.summary != nil {
			return setBatchSummary(ctx, tx, batch, rt.summary(done, out))
		}
		return setBatchSummary(ctx, tx, batch, done+" "+rt.label(out))
	})
	return out, err
}

// unique is the prepare of records whose only rule beyond the form is a unique name: an edit gives x the
// record's id (withID), and clash is looked for only in a clean form.
func (rt recordType[T]) unique(withID func(*T, int64), clash func(context.Context, *sql.Tx, T) ([]Problem, error)) prepare[T] {
	return func(ctx context.Context, tx *sql.Tx, batch int64, before *T, x *T, problems []Problem) ([]Problem, error) {
		if len(problems) > 0 {
			return problems, nil
		}
		if before != nil {
			id, _, _ := rt.meta(*before)
			withID(x, id)
		}
		return clash(ctx, tx, *x)
	}
}

// inSection is the prepare of a record that belongs to a section (tie points, hiatuses): a new one goes
// into section sectionID (ErrNotFound when there is none, before any problem of the form), an edit stays
// where it is (place); check looks for clashes in a clean form.
func inSection[T any](sectionID int64, place func(x, before *T, sectionID int64), check func(context.Context, *sql.Tx, *T) ([]Problem, error)) prepare[T] {
	return func(ctx context.Context, tx *sql.Tx, batch int64, before *T, x *T, problems []Problem) ([]Problem, error) {
		if before == nil {
			if _, err := sectionInTx(ctx, tx, sectionID); err != nil {
				return nil, err
			}
		}
		if len(problems) > 0 {
			return problems, nil
		}
		place(x, before, sectionID)
		return check(ctx, tx, x)
	}
}
