package store

import (
	"archive/zip"
	"bufio"
	"bytes"
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"net/url"
	"os"
	"path"
	"path/filepath"
	"slices"
	"strings"
	"time"

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
func pendingNote(ctx context.Context, res *ImportResult, n int, what string, state func(i int) *ReviewState) {
	if !isContribution(ctx) || n == 0 {
		return
	}
	for i := range n {
		*state(i) = ReviewPending
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
	// Mapped says the file is a table as published, whose columns are mapped onto ours (Body is then the
	// file as sent, .xlsx or CSV); Mapping is the mapping confirmed for it, nil until then.
	Mapped  bool     `json:"mapped"`
	Mapping *Mapping `json:"mapping,omitempty"`
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
	// Mapped is the file read through its mapping: the original cells beside the converted ones, and the
	// rows skipped (nil for a file in our format).
	Mapped *Mapped
}

// Limits on a workbook upload. A stray cell far to the right or far down would otherwise make a sheet of
// millions of empty cells, and a few MB of zip can unpack to gigabytes of sheet XML (a 2 MB workbook
// holding 955 MB took 95 s and 5 GB of memory). maxUnzipBytes bounds what the workbook unpacks to, read
// from the zip's directory before anything is unpacked (archive/zip refuses an entry that unpacks to more
// than its directory says); maxSheetCells bounds the cells of the first sheet, counted row by row as the
// sheet is streamed, as the padded CSV will hold them (rows × the widest row so far). A million cells is
// 50,000 rows of 20 columns, far more than a file of dates or measurements holds (common practice: limits
// a few times above the largest real input).
const (
	maxSheetColumns = 500
	maxSheetCells   = 1_000_000
	maxFormatTags   = 200_000
	maxUnzipBytes   = 64 << 20
)

// ToCSV turns an uploaded file into CSV: .xlsx files (first sheet) are converted, anything else is taken
// as CSV text. Row N of the sheet is line N of the CSV, so problems name the sheet's rows.
func ToCSV(fileName string, body []byte) (out []byte, err error) {
	if !strings.EqualFold(path.Ext(fileName), ".xlsx") {
		return body, nil
	}
	out, _, _, err = workbookToCSV(fileName, body, "")
	return out, err
}

// workbookToCSV converts one sheet of a workbook ("" = the first) to CSV as ToCSV does, and lists its
// sheets.
func workbookToCSV(fileName string, body []byte, sheet string) (out []byte, sheets []string, used string, err error) {
	refuse := func(msg string) error { return &ValidationError{[]Problem{{File: fileName, Message: msg}}} }
	defer func() {
		// excelize is a large parser of untrusted zip and XML; a panic inside it is a file we cannot read.
		if r := recover(); r != nil {
			out, err = nil, refuse("not readable as an .xlsx workbook: save it again as .xlsx or as CSV")
		}
	}()
	zr, err := zip.NewReader(bytes.NewReader(body), int64(len(body)))
	if err != nil {
		return nil, nil, "", refuse("not readable as an .xlsx workbook: save it again as .xlsx or as CSV")
	}
	var unzipped uint64
	for _, zf := range zr.File {
		unzipped += zf.UncompressedSize64
		if unzipped > maxUnzipBytes || zf.UncompressedSize64 > maxUnzipBytes {
			return nil, nil, "", refuse(fmt.Sprintf("the workbook unpacks to more than %d MiB, the most a workbook upload may unpack to: save its first sheet as CSV (a CSV file may be up to the upload limit), or split it into several files", maxUnzipBytes>>20))
		}
	}
	if msg := countWorkbookCells(zr); msg != "" {
		return nil, nil, "", refuse(msg)
	}
	// The same limit for excelize, and no part is unpacked to a temporary file (XML size limit = the
	// whole): the workbook is held in memory only, within maxUnzipBytes.
	f, err := excelize.OpenReader(bytes.NewReader(body), excelize.Options{UnzipSizeLimit: maxUnzipBytes, UnzipXMLSizeLimit: maxUnzipBytes})
	if err != nil {
		return nil, nil, "", refuse("not readable as an .xlsx workbook: save it again as .xlsx or as CSV")
	}
	defer f.Close()
	sheets = f.GetSheetList()
	if len(sheets) == 0 {
		return nil, nil, "", refuse("the workbook has no sheet")
	}
	used = sheets[0]
	if sheet != "" {
		if !slices.Contains(sheets, sheet) {
			return nil, sheets, "", refuse(fmt.Sprintf("the workbook has no sheet %q; its sheets are %s", sheet, quoteList(sheets)))
		}
		used = sheet
	}
	out, err = sheetToCSV(f, used, used == sheets[0], refuse)
	return out, sheets, used, err
}

// sheetToCSV converts one sheet, within the limits of an upload.
func sheetToCSV(f *excelize.File, sheet string, first bool, refuse func(string) error) ([]byte, error) {
	which := "the first sheet"
	if !first {
		which = fmt.Sprintf("sheet %q", sheet)
	}
	it, err := f.Rows(sheet)
	if err != nil {
		return nil, refuse(which + " cannot be read: " + err.Error())
	}
	defer it.Close()
	var rows [][]string
	width, size := 0, 0
	for n := 1; it.Next(); n++ {
		r, err := it.Columns()
		if err != nil {
			return nil, refuse(fmt.Sprintf("row %d of %s cannot be read: %v", n, which, err))
		}
		for len(r) > 0 && r[len(r)-1] == "" {
			r = r[:len(r)-1]
		}
		if len(r) > maxSheetColumns {
			col, _ := excelize.ColumnNumberToName(len(r))
			return nil, refuse(fmt.Sprintf("row %d has a cell in column %s: a file holds at most %d columns; delete what lies beyond the table", n, col, maxSheetColumns))
		}
		width = max(width, len(r))
		if cells := n * max(width, 1); cells > maxSheetCells {
			return nil, refuse(fmt.Sprintf("%s holds more than %d cells by row %d (%d columns wide), the most a workbook upload may hold: delete what lies below or beside the table, or save it as CSV", which, maxSheetCells, n, max(width, 1)))
		}
		size += 1 + width
		for _, c := range r {
			size += len(c)
		}
		if size > maxImportBytes {
			return nil, refuse(fmt.Sprintf("%s is larger than %d MB as text (row %d); split it into several files", which, maxImportBytes>>20, n))
		}
		rows = append(rows, r)
	}
	if err := it.Error(); err != nil {
		return nil, refuse(which + " cannot be read: " + err.Error())
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

// An upload that is checked but never imported is kept for uploadKeep, then purged; while kept, its body
// counts against its account's quota (DefaultUploadQuota unless SetUploadQuota says otherwise), so that
// nobody can fill the disk with files checked and left. Four uploads of the largest size fit the default.
const (
	uploadKeep         = 24 * time.Hour
	DefaultUploadQuota = 256 << 20
)

// SetUploadQuota sets how many bytes of checked but not imported uploads one account may keep (0: the
// default).
func (d *DB) SetUploadQuota(bytes int64) { d.uploadQuota = bytes }

func (d *DB) quota() int64 {
	if d.uploadQuota > 0 {
		return d.uploadQuota
	}
	return DefaultUploadQuota
}

// PurgeUploads deletes the bodies of uploads checked more than a day ago and never imported, and returns
// how many it deleted. SaveUpload calls it; the server also calls it on start.
func (d *DB) PurgeUploads(ctx context.Context) (int64, error) {
	r, err := d.db.ExecContext(ctx, `DELETE FROM uploads WHERE batch_id IS NULL AND created_at < ?`, d.uploadCutoff())
	if err != nil {
		return 0, fmt.Errorf("purge uploads: %w", err)
	}
	return r.RowsAffected()
}

func (d *DB) uploadCutoff() string { return d.now().Add(-uploadKeep).UTC().Format(TimeFormat) }

// countWorkbookCells streams every part of the workbook once, counting XML start tags, and says what is
// wrong when there are too many; excelize decodes each (a cell in about 5 µs, empty ones included, a
// style in about 12 µs), so the 64 MiB unpacked limit alone would still allow minutes of work: 16 M empty
// cells, or a 100 kB workbook whose 60 MiB of styles took 154 s. Each count stops at its cap.
//   - parts excelize reads whole at fixed names on opening (styles, theme, calculation chain, content
//     types, package relationships): at most maxFormatTags tags together;
//   - the shared strings: at most 3 tags per possible cell;
//   - every other part (the sheets, and the workbook and its relationships, which name the sheets'
//     parts): at most maxSheetCells cell elements and 4 tags per possible cell in all.
//
// Anything the scan cannot read is left for excelize to refuse.
func countWorkbookCells(zr *zip.Reader) string {
	fixed := map[string]bool{"xl/styles.xml": true, "xl/calcchain.xml": true, "xl/theme/theme1.xml": true, "[content_types].xml": true, "_rels/.rels": true}
	formatTags, cells, tags := 0, 0, 0
	for _, zf := range zr.File {
		switch name := strings.ToLower(strings.ReplaceAll(zf.Name, "\\", "/")); {
		case fixed[name]:
			n, _, _ := countElements(zf, "", maxFormatTags-formatTags, 0)
			if formatTags += n; formatTags > maxFormatTags {
				return fmt.Sprintf("the workbook's formatting holds more than %d entries, the most a workbook upload may hold: copy the table into a new workbook, or save it as CSV", maxFormatTags)
			}
		case name == "xl/sharedstrings.xml":
			if n, _, _ := countElements(zf, "", 3*maxSheetCells, 0); n > 3*maxSheetCells {
				return fmt.Sprintf("the workbook's texts take more than %d entries, the most a workbook upload may hold: keep only the table to import, or save it as CSV", 3*maxSheetCells)
			}
		default:
			n, c, _ := countElements(zf, "c", 4*maxSheetCells-tags, maxSheetCells-cells)
			tags, cells = tags+n, cells+c
			if cells > maxSheetCells || tags > 4*maxSheetCells {
				return fmt.Sprintf("the workbook's sheets hold more than %d cells, the most a workbook upload may hold: keep only the table to import (in the first sheet), delete what lies below or beside it, or save it as CSV", maxSheetCells)
			}
		}
	}
	return ""
}

// countElements counts the start tags of an XML part (all) and those whose local name (after any prefix)
// is local (matched), stopping once all passes maxAll or matched passes maxMatched. Text cannot hold a
// bare "<", so outside comments and CDATA (where counting too many only refuses sooner) every "<" that
// is not followed by "/", "?" or "!" starts a tag.
func countElements(zf *zip.File, local string, maxAll, maxMatched int) (all, matched int, err error) {
	rc, err := zf.Open()
	if err != nil {
		return 0, 0, err
	}
	defer rc.Close()
	br := bufio.NewReaderSize(rc, 64<<10)
	for all <= maxAll && (local == "" || matched <= maxMatched) {
		if _, err := br.ReadSlice('<'); err == bufio.ErrBufferFull {
			continue
		} else if err != nil {
			return all, matched, err
		}
		// The tag's name up to a delimiter; only what follows its last ':' is matched.
		match, seen, first := local != "", 0, true
		for {
			b, err := br.ReadByte()
			if err != nil {
				return all, matched, err
			}
			if b == ' ' || b == '>' || b == '/' || b == '\t' || b == '\n' || b == '\r' || (first && (b == '?' || b == '!')) {
				if !first {
					all++
				}
				break
			}
			first = false
			if b == ':' {
				match, seen = local != "", 0
				continue
			}
			if seen >= len(local) || b != local[seen] {
				match = false
			}
			seen++
		}
		if match && seen == len(local) {
			matched++
		}
	}
	return all, matched, nil
}

// SaveUpload keeps an uploaded file (already converted to CSV) for its preview and commit. It first purges
// uploads left for more than a day, then refuses (a ValidationError naming the file and the quota) an
// upload that would take its account's kept uploads over the quota.
func (d *DB) SaveUpload(ctx context.Context, u Upload) (int64, error) {
	if _, ok := ExportKinds[u.Kind]; !ok {
		return 0, &ValidationError{[]Problem{{Column: "kind", Message: "choose what the file holds"}}}
	}
	var id int64
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		if _, err := tx.ExecContext(ctx, `DELETE FROM uploads WHERE batch_id IS NULL AND created_at < ?`, d.uploadCutoff()); err != nil {
			return fmt.Errorf("purge uploads: %w", err)
		}
		var kept int64
		var oldest sql.NullString
		if err := tx.QueryRowContext(ctx, `SELECT coalesce(sum(length(body)), 0), min(created_at) FROM uploads WHERE user_id = ? AND batch_id IS NULL`, u.UserID).
			Scan(&kept, &oldest); err != nil {
			return fmt.Errorf("upload quota: %w", err)
		}
		if q := d.quota(); kept+int64(len(u.Body)) > q {
			msg := fmt.Sprintf("not kept: the files you checked in the last day but did not import take %s, and with this one (%s) they would pass the %s one account may keep waiting. Import the files you checked, or wait: a file not imported is dropped a day after it was checked",
				mebibytes(kept), mebibytes(int64(len(u.Body))), mebibytes(q))
			if t, err := time.Parse(TimeFormat, oldest.String); err == nil && kept > 0 {
				msg += fmt.Sprintf(" (the oldest at %s UTC)", t.Add(uploadKeep).UTC().Format("2006-01-02 15:04"))
			}
			return &ValidationError{[]Problem{{File: u.FileName, Message: msg}}}
		}
		r, err := tx.ExecContext(ctx, `INSERT INTO uploads (user_id, kind, section, file_name, body, created_at, mapped) VALUES (?,?,?,?,?,?,?)`,
			u.UserID, u.Kind, u.Section, u.FileName, u.Body, d.stamp(), u.Mapped)
		if err != nil {
			return fmt.Errorf("save upload: %w", err)
		}
		id, err = r.LastInsertId()
		return err
	})
	return id, err
}

// mebibytes writes a byte count in MiB with one decimal.
func mebibytes(n int64) string { return fmt.Sprintf("%.1f MiB", float64(n)/(1<<20)) }

// UploadByID returns a kept upload, or ErrNotFound.
func (d *DB) UploadByID(ctx context.Context, id int64) (Upload, error) {
	var u Upload
	var mapping sql.NullString
	err := d.reader().QueryRowContext(ctx, `SELECT id, user_id, kind, section, file_name, body, batch_id, mapped, mapping_json FROM uploads WHERE id = ?`, id).
		Scan(&u.ID, &u.UserID, &u.Kind, &u.Section, &u.FileName, &u.Body, &u.BatchID, &u.Mapped, &mapping)
	if err == nil && mapping.Valid {
		m := NewMapping()
		if err = json.Unmarshal([]byte(mapping.String), &m); err != nil {
			err = fmt.Errorf("upload %d: its mapping cannot be read: %w", id, err)
		}
		u.Mapping = &m
	}
	return u, notFound(err, "upload", id)
}

// SetUploadMapping keeps the mapping confirmed for a mapped upload not yet imported.
func (d *DB) SetUploadMapping(ctx context.Context, id int64, m Mapping) error {
	body, err := json.Marshal(m)
	if err != nil {
		return err
	}
	r, err := d.db.ExecContext(ctx, `UPDATE uploads SET mapping_json = ? WHERE id = ? AND mapped = 1 AND batch_id IS NULL`, string(body), id)
	if err != nil {
		return fmt.Errorf("keep the mapping of upload %d: %w", id, err)
	}
	if n, _ := r.RowsAffected(); n == 0 {
		return fmt.Errorf("upload %d is not a mapped upload waiting to be imported: %w", id, ErrConflict)
	}
	return nil
}

// PreviewUpload runs the upload's import without writing anything. It runs on a snapshot of the
// database in a temporary file (see snapshot), so a long preview holds no lock of the database: signed-in
// readers and other writers go on meanwhile.
func (d *DB) PreviewUpload(ctx context.Context, u Upload) (Preview, error) {
	p := Preview{Upload: u}
	if u.Mapped {
		return d.previewMapped(ctx, u)
	}
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
	var res ImportResult
	var err error
	if u.Mapped {
		if u.Mapping == nil {
			return res, &ValidationError{[]Problem{{File: u.FileName, Message: "map the file's columns before importing it"}}}
		}
		res, _, err = d.ImportMapped(ctx, *u.Mapping, u.FileName, u.Body)
	} else {
		res, err = d.ImportReader(ctx, u.Kind, u.Section, u.FileName, bytes.NewReader(u.Body))
	}
	if err != nil {
		return res, err
	}
	_, err = d.db.ExecContext(ctx, `UPDATE uploads SET batch_id = ?, body = x'' WHERE id = ?`, res.BatchID, u.ID)
	return res, err
}

func queryAllTx[T any](ctx context.Context, tx *sql.Tx, q string, args []any, scan func(interface{ Scan(...any) error }) (T, error)) ([]T, error) {
	return appendAllTx(ctx, tx, nil, q, args, scan)
}

// appendAllTx is queryAllTx appending to out (sized by the caller when the count is known).
func appendAllTx[T any](ctx context.Context, tx *sql.Tx, out []T, q string, args []any, scan func(interface{ Scan(...any) error }) (T, error)) ([]T, error) {
	rows, err := tx.QueryContext(ctx, q, args...)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
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
	if err := d.reader().QueryRowContext(ctx, `SELECT count(*) FROM change_batches b LEFT JOIN users u ON u.id = b.user_id`+cond, args...).Scan(&total); err != nil {
		return nil, 0, err
	}
	q := `SELECT b.id, b.kind, b.source, b.at, b.summary, coalesce(u.name, '')
		FROM change_batches b LEFT JOIN users u ON u.id = b.user_id` + cond + ` ORDER BY b.id DESC`
	if f.Limit > 0 {
		q += fmt.Sprintf(" LIMIT %d OFFSET %d", f.Limit, max(f.Offset, 0))
	}
	out, err := queryAll(ctx, d.reader(), q, args, func(s interface{ Scan(...any) error }) (BatchRow, error) {
		var b BatchRow
		return b, s.Scan(&b.ID, &b.Kind, &b.Source, &b.At, &b.Summary, &b.User)
	})
	if err != nil {
		return nil, 0, err
	}
	for i := range out {
		if out[i].Revisions, err = d.revisionCount(ctx, out[i].ID); err != nil {
			return nil, 0, err
		}
	}
	return out, total, nil
}

// previewMapped previews a mapped upload: the file read through its mapping, then imported on a snapshot
// as previewUpload does, the problems of both listed together.
func (d *DB) previewMapped(ctx context.Context, u Upload) (Preview, error) {
	p := Preview{Upload: u}
	if u.Mapping == nil {
		p.Problems = []Problem{{File: u.FileName, Message: "map the file's columns before checking it"}}
		return p, nil
	}
	mp, ps, err := MapFile(*u.Mapping, u.FileName, u.Body)
	if ve, ok := AsValidation(err); ok {
		p.Problems = ve.Problems
		return p, nil
	} else if err != nil {
		return p, err
	}
	p.Mapped = &mp
	if mp.CSV == nil {
		p.Problems = ps
		return p, nil
	}
	if t, err := readCSV(u.FileName, bytes.NewReader(mp.CSV)); err == nil {
		p.Header, p.Rows, p.Lines = t.header, t.rows, t.lines
	}
	snap, done, err := d.snapshot(ctx)
	if err != nil {
		return p, err
	}
	defer done()
	res, err := snap.ImportReader(withDryRun(withMappingUse(ctx, *u.Mapping)), u.Mapping.Kind, "", u.FileName, bytes.NewReader(mp.CSV))
	p.Result = res
	if err != nil {
		if _, ok := AsValidation(err); !ok {
			return p, err
		}
	}
	p.Problems = mergeProblems(*u.Mapping, ps, err)
	if len(p.Problems) == 0 {
		p.Result.Notes = append(p.Result.Notes, mappedNote(*u.Mapping, mp))
	}
	return p, nil
}
