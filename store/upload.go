package store

import (
	"bytes"
	"context"
	"database/sql"
	"errors"
	"fmt"
	"net/url"
	"os"
	"path"
	"path/filepath"
	"strings"

	"github.com/xuri/excelize/v2"
)

type dryRunKey struct{}

// errDryRun rolls back an import run as a preview.
var errDryRun = errors.New("dry run")

// withDryRun marks ctx so that an import checks and counts everything, then writes nothing.
func withDryRun(ctx context.Context) context.Context {
	return context.WithValue(ctx, dryRunKey{}, true)
}

func isDryRun(ctx context.Context) bool { v, _ := ctx.Value(dryRunKey{}).(bool); return v }

type contributionKey struct{}

// AsContribution marks ctx as an import by someone who is not a curator: its dates, events and tie points
// arrive pending review whatever the file's review_state column says, as they do from the forms.
func AsContribution(ctx context.Context) context.Context {
	return context.WithValue(ctx, contributionKey{}, true)
}

func isContribution(ctx context.Context) bool { v, _ := ctx.Value(contributionKey{}).(bool); return v }

// pendingNote sets every record's review state to pending when ctx is a contribution, and says so.
func pendingNote(ctx context.Context, res *ImportResult, n int, what string, state func(i int) *string) {
	if !isContribution(ctx) || n == 0 {
		return
	}
	for i := range n {
		*state(i) = "pending"
	}
	res.Notes = append(res.Notes, fmt.Sprintf("the %d %s arrive pending a curator's review; until accepted they are left out of computations unless a page's include= says otherwise", n, what))
}

// Upload is a file sent from the browser, kept between its preview and its commit.
type Upload struct {
	ID       int64  `json:"id"`
	UserID   int64  `json:"user_id"`
	Kind     string `json:"kind"`
	Section  string `json:"section"`
	FileName string `json:"file_name"`
	Body     []byte `json:"-"`
	BatchID  *int64 `json:"batch_id"`
}

// Preview is what an upload would do: the import's result with nothing written, every problem, and the
// rows as read (for display).
type Preview struct {
	Upload   Upload
	Result   ImportResult
	Problems []Problem
	Header   []string
	Rows     [][]string
	Lines    []int
}

// Limits on a workbook upload: a stray cell far to the right or far down would otherwise make a sheet of
// millions of empty cells.
const (
	maxSheetColumns = 500
	maxUnzipBytes   = 1 << 30
)

// ToCSV turns an uploaded file into CSV: .xlsx files (first sheet) are converted, anything else is taken
// as CSV text. Row N of the sheet is line N of the CSV, so problems name the sheet's rows.
func ToCSV(fileName string, body []byte) (out []byte, err error) {
	if !strings.EqualFold(path.Ext(fileName), ".xlsx") {
		return body, nil
	}
	refuse := func(msg string) error { return &ValidationError{[]Problem{{File: fileName, Message: msg}}} }
	defer func() {
		// excelize is a large parser of untrusted zip and XML; a panic inside it is a file we cannot read.
		if r := recover(); r != nil {
			out, err = nil, refuse("not readable as an .xlsx workbook: save it again as .xlsx or as CSV")
		}
	}()
	f, err := excelize.OpenReader(bytes.NewReader(body), excelize.Options{UnzipSizeLimit: maxUnzipBytes})
	if err != nil {
		return nil, refuse("not readable as an .xlsx workbook: save it again as .xlsx or as CSV")
	}
	defer f.Close()
	sheets := f.GetSheetList()
	if len(sheets) == 0 {
		return nil, refuse("the workbook has no sheet")
	}
	it, err := f.Rows(sheets[0])
	if err != nil {
		return nil, refuse("the first sheet cannot be read: " + err.Error())
	}
	defer it.Close()
	var rows [][]string
	width, size := 0, 0
	for n := 1; it.Next(); n++ {
		r, err := it.Columns()
		if err != nil {
			return nil, refuse(fmt.Sprintf("row %d of the first sheet cannot be read: %v", n, err))
		}
		for len(r) > 0 && r[len(r)-1] == "" {
			r = r[:len(r)-1]
		}
		if len(r) > maxSheetColumns {
			col, _ := excelize.ColumnNumberToName(len(r))
			return nil, refuse(fmt.Sprintf("row %d has a cell in column %s: a file holds at most %d columns; delete what lies beyond the table", n, col, maxSheetColumns))
		}
		width = max(width, len(r))
		size += 1 + width
		for _, c := range r {
			size += len(c)
		}
		if size > maxImportBytes {
			return nil, refuse(fmt.Sprintf("the first sheet is larger than %d MB as text (row %d); split it into several files", maxImportBytes>>20, n))
		}
		rows = append(rows, r)
	}
	if err := it.Error(); err != nil {
		return nil, refuse("the first sheet cannot be read: " + err.Error())
	}
	var buf bytes.Buffer
	w := NewCSVWriter(&buf) // quoted as downloads are, so that reading gives each cell back
	for _, r := range rows {
		for len(r) < width {
			r = append(r, "")
		}
		w.Write(r)
	}
	w.Flush()
	return buf.Bytes(), w.Error()
}

// SaveUpload keeps an uploaded file (already converted to CSV) for its preview and commit.
func (d *DB) SaveUpload(ctx context.Context, u Upload) (int64, error) {
	if _, ok := ExportKinds[u.Kind]; !ok {
		return 0, &ValidationError{[]Problem{{Column: "kind", Message: "choose what the file holds"}}}
	}
	r, err := d.db.ExecContext(ctx, `INSERT INTO uploads (user_id, kind, section, file_name, body, created_at) VALUES (?,?,?,?,?,?)`,
		u.UserID, u.Kind, u.Section, u.FileName, u.Body, d.stamp())
	if err != nil {
		return 0, fmt.Errorf("save upload: %w", err)
	}
	return r.LastInsertId()
}

// UploadByID returns a kept upload, or ErrNotFound.
func (d *DB) UploadByID(ctx context.Context, id int64) (Upload, error) {
	var u Upload
	err := d.db.QueryRowContext(ctx, `SELECT id, user_id, kind, section, file_name, body, batch_id FROM uploads WHERE id = ?`, id).
		Scan(&u.ID, &u.UserID, &u.Kind, &u.Section, &u.FileName, &u.Body, &u.BatchID)
	return u, notFound(err, "upload", id)
}

// PreviewUpload runs the upload's import without writing anything. It runs on a snapshot of the
// database in a temporary file (see snapshot), so a long preview holds no lock of the database: signed-in
// readers and other writers go on meanwhile.
func (d *DB) PreviewUpload(ctx context.Context, u Upload) (Preview, error) {
	p := Preview{Upload: u}
	if t, err := readCSV(u.FileName, bytes.NewReader(u.Body)); err == nil {
		p.Header, p.Rows, p.Lines = t.header, t.rows, t.lines
	}
	snap, done, err := d.snapshot(ctx)
	if err != nil {
		return p, err
	}
	defer done()
	res, err := snap.ImportReader(withDryRun(ctx), u.Kind, u.Section, u.FileName, bytes.NewReader(u.Body))
	p.Result = res
	if ve, ok := AsValidation(err); ok {
		p.Problems = ve.Problems
		return p, nil
	}
	return p, err
}

// snapshot copies the database into a temporary file with VACUUM INTO, which reads in one read
// transaction (in WAL mode it waits for no writer and blocks none), and opens the copy for a dry run:
// the dry run's inserts then take the copy's write lock, not the database's. done closes and removes
// the copy. The copy costs a read of the whole database and as much temporary disk space.
func (d *DB) snapshot(ctx context.Context) (*DB, func(), error) {
	dir, err := os.MkdirTemp("", "coeval-preview-*")
	if err != nil {
		return nil, nil, fmt.Errorf("snapshot for a preview: %w", err)
	}
	path := filepath.Join(dir, "snapshot.db")
	if _, err := d.db.ExecContext(ctx, `VACUUM INTO ?`, path); err != nil {
		os.RemoveAll(dir)
		return nil, nil, fmt.Errorf("snapshot for a preview: %w", err)
	}
	// A scratch copy: no journal to keep, nothing to sync.
	q := url.Values{}
	q.Add("_pragma", "foreign_keys(1)")
	q.Add("_pragma", "journal_mode(MEMORY)")
	q.Add("_pragma", "synchronous(OFF)")
	sqldb, err := sql.Open("sqlite", "file:"+escapePath(path)+"?"+q.Encode())
	if err != nil {
		os.RemoveAll(dir)
		return nil, nil, fmt.Errorf("snapshot for a preview: %w", err)
	}
	sqldb.SetMaxOpenConns(1) // one dry run on its own copy: one connection is all it needs
	snap := &DB{db: sqldb, now: d.now, bcryptCost: d.bcryptCost}
	return snap, func() { sqldb.Close(); os.RemoveAll(dir) }, nil
}

// CommitUpload imports a previewed upload for real, as one change batch, and marks the upload used.
func (d *DB) CommitUpload(ctx context.Context, u Upload) (ImportResult, error) {
	if u.BatchID != nil {
		return ImportResult{}, fmt.Errorf("upload %d was already imported (change %d): %w", u.ID, *u.BatchID, ErrConflict)
	}
	res, err := d.ImportReader(ctx, u.Kind, u.Section, u.FileName, bytes.NewReader(u.Body))
	if err != nil {
		return res, err
	}
	_, err = d.db.ExecContext(ctx, `UPDATE uploads SET batch_id = ?, body = x'' WHERE id = ?`, res.BatchID, u.ID)
	return res, err
}

func queryAllTx[T any](ctx context.Context, tx *sql.Tx, q string, args []any, scan func(interface{ Scan(...any) error }) (T, error)) ([]T, error) {
	rows, err := tx.QueryContext(ctx, q, args...)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []T
	for rows.Next() {
		v, err := scan(rows)
		if err != nil {
			return nil, err
		}
		out = append(out, v)
	}
	return out, rows.Err()
}

// BatchFilter selects change batches for the feed.
type BatchFilter struct {
	Kind   string // prefix, e.g. "import"
	User   string
	Limit  int
	Offset int
}

// BatchRow is a change batch with who made it and how many records it touched.
type BatchRow struct {
	Batch
	User      string `json:"user"`
	Revisions int    `json:"revisions"`
}

// Batches returns change batches, newest first, and how many match.
func (d *DB) Batches(ctx context.Context, f BatchFilter) ([]BatchRow, int, error) {
	where, args := []string{"1=1"}, []any{}
	if f.Kind != "" {
		where, args = append(where, "b.kind LIKE ? ESCAPE '\\'"), append(args, escapeLike(f.Kind)+"%")
	}
	if f.User != "" {
		where, args = append(where, "u.name = ?"), append(args, f.User)
	}
	cond := " WHERE " + strings.Join(where, " AND ")
	var total int
	if err := d.db.QueryRowContext(ctx, `SELECT count(*) FROM change_batches b LEFT JOIN users u ON u.id = b.user_id`+cond, args...).Scan(&total); err != nil {
		return nil, 0, err
	}
	q := `SELECT b.id, b.kind, b.source, b.at, b.summary, coalesce(u.name, ''),
		(SELECT count(*) FROM revisions r WHERE r.batch_id = b.id)
		FROM change_batches b LEFT JOIN users u ON u.id = b.user_id` + cond + ` ORDER BY b.id DESC`
	if f.Limit > 0 {
		q += fmt.Sprintf(" LIMIT %d OFFSET %d", f.Limit, max(f.Offset, 0))
	}
	out, err := queryAll(ctx, d.db, q, args, func(s interface{ Scan(...any) error }) (BatchRow, error) {
		var b BatchRow
		return b, s.Scan(&b.ID, &b.Kind, &b.Source, &b.At, &b.Summary, &b.User, &b.Revisions)
	})
	return out, total, err
}
