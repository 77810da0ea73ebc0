// Package store owns coeval's persistence: the SQLite database (modernc.org/sqlite), its migrations, the
// records, their queries, the CSV import and export formats, and revisions.
//
// Every exported method takes a context first and owns its transaction. It imports stats (for shared
// vocabularies) but never web or views.
package store

import (
	"context"
	"database/sql"
	"fmt"
	"io/fs"
	"net/url"
	"os"
	"sort"
	"strconv"
	"strings"
	"time"

	_ "modernc.org/sqlite" // registers the "sqlite" driver
)

// TimeFormat is the one format in which times are stored (UTC).
const TimeFormat = time.RFC3339

// DB is coeval's database. It is safe for concurrent use.
type DB struct {
	db         *sql.DB
	now        func() time.Time
	bcryptCost int  // 0 = bcrypt.DefaultCost
	readOnly   bool // opened with OpenReadOnly: every write fails with SQLITE_READONLY
	immutable  bool // opened as immutable (a release's snapshot): nothing can change it
	// uploadQuota is the bytes of checked but not imported uploads one account may keep (0 = default).
	uploadQuota int64
	// traceQuery, when set (tests), is told each query the dates list pages run, to check their plans.
	traceQuery func(q string, args []any)
	smallDates int // tests: the dates list's smallDateSet (0: the constant)
	// revCounts keeps how many revisions each change holds once counted (revisionCount).
	revCounts *revisionCounts // shared by the copies ReadSnapshot makes; nil: not kept
	// rq, when set, is the read transaction of a snapshot (ReadSnapshot): every read goes through it.
	rq querier
}

// Open opens (creating if needed) the SQLite file at path with the pragmas every pooled connection needs:
// WAL, a busy timeout, foreign keys on, and immediate transactions so that read-then-write transactions
// do not fail with SQLITE_BUSY under concurrency. It does not migrate; call Migrate.
func Open(ctx context.Context, path string) (*DB, error) {
	return open(ctx, path, "")
}

// OpenReadOnly opens the database file for reading only (SQLite's mode=ro): every write fails with
// SQLITE_READONLY, which IsUnwritable recognises. On read-only storage, where SQLite cannot create the
// WAL's shared-memory file beside the database, it opens the file as immutable (nothing can change it
// there anyway). ReadOnly reports true.
func OpenReadOnly(ctx context.Context, path string) (*DB, error) {
	db, err := open(ctx, path, "ro")
	if err != nil && isCantOpen(err) {
		if db, err2 := open(ctx, path, "immutable"); err2 == nil {
			return db, nil
		}
	}
	return db, err
}

// OpenSnapshot opens a file that never changes (a release's snapshot) for reading: immutable, so SQLite
// takes no locks and writes nothing beside it.
func OpenSnapshot(ctx context.Context, path string) (*DB, error) {
	if _, err := os.Stat(path); err != nil {
		return nil, fmt.Errorf("open snapshot: %w", err)
	}
	return open(ctx, path, "immutable")
}

// ReadOnly reports whether the database was opened for reading only.
func (d *DB) ReadOnly() bool { return d.readOnly }

// open opens the file in mode "" (read and write, creating it), "ro" or "immutable" (read-only storage).
func open(ctx context.Context, path string, mode string) (*DB, error) {
	q := url.Values{}
	switch mode {
	case "ro":
		q.Set("mode", "ro")
	case "immutable":
		q.Set("mode", "ro")
		q.Set("immutable", "1")
	}
	q.Add("_pragma", "busy_timeout(5000)")
	if mode != "immutable" {
		q.Add("_pragma", "journal_mode(WAL)")
	}
	q.Add("_pragma", "foreign_keys(1)")
	q.Add("_pragma", "synchronous(NORMAL)")
	// Statement journals in memory: the data versions' triggers (migration 018) make every insert, update
	// and delete write two tables, so SQLite keeps a statement journal for each; once one outgrew its
	// 64 KiB in-memory start it went to a temporary file for the rest of the transaction, and a 100,000-date
	// import wrote every journalled page with a system call (twice the CPU of the import without triggers).
	// Only what one statement touches is held.
	q.Add("_pragma", "temp_store(MEMORY)")
	q.Set("_txlock", "immediate")
	dsn := "file:" + escapePath(path) + "?" + q.Encode()
	sqldb, err := sql.Open("sqlite", dsn)
	if err != nil {
		return nil, fmt.Errorf("open database %s: %w", path, err)
	}
	// A read of the schema, not only a ping: a read-only file in WAL mode fails only when first read.
	var n int
	if err := sqldb.QueryRowContext(ctx, `SELECT count(*) FROM sqlite_schema`).Scan(&n); err != nil {
		sqldb.Close()
		return nil, fmt.Errorf("open database %s: %w", path, err)
	}
	// Connections kept open between requests: database/sql keeps two by default, so under many readers
	// the rest were closed after each request and opened again, each new one parsing the schema (with
	// migration 018's triggers) and starting with an empty page cache.
	sqldb.SetMaxIdleConns(16)
	return &DB{db: sqldb, now: func() time.Time { return time.Now().UTC() }, readOnly: mode != "", immutable: mode == "immutable", revCounts: &revisionCounts{}}, nil
}

// escapePath escapes the characters that would end a path in a URI or be decoded (a "#" in a path once
// truncated it): SQLite reads the name as a URI.
func escapePath(path string) string {
	return strings.NewReplacer("%", "%25", "?", "%3F", "#", "%23").Replace(path)
}

// Close closes the database.
func (d *DB) Close() error { return d.db.Close() }

// SetClock replaces the clock used for created/updated times (tests pin it).
func (d *DB) SetClock(now func() time.Time) { d.now = now }

func (d *DB) stamp() string { return d.now().UTC().Format(TimeFormat) }

// Migrate applies, in numeric order, every NNN_*.sql file of fsys not yet recorded in schema_migrations,
// each in its own transaction. It returns the versions applied.
func (d *DB) Migrate(ctx context.Context, fsys fs.FS) ([]int, error) {
	if _, err := d.db.ExecContext(ctx, `CREATE TABLE IF NOT EXISTS schema_migrations (
		version INTEGER PRIMARY KEY, name TEXT NOT NULL, applied_at TEXT NOT NULL)`); err != nil {
		return nil, fmt.Errorf("migrate: %w", err)
	}
	entries, err := fs.ReadDir(fsys, ".")
	if err != nil {
		return nil, fmt.Errorf("migrate: %w", err)
	}
	type mig struct {
		version int
		name    string
	}
	var migs []mig
	for _, e := range entries {
		name := e.Name()
		if !strings.HasSuffix(name, ".sql") {
			continue
		}
		num, _, ok := strings.Cut(name, "_")
		v, err := strconv.Atoi(num)
		if !ok || err != nil {
			return nil, fmt.Errorf("migrate: %s: want NNN_name.sql", name)
		}
		migs = append(migs, mig{v, name})
	}
	sort.Slice(migs, func(i, j int) bool { return migs[i].version < migs[j].version })
	var applied []int
	for _, m := range migs {
		done, err := d.applyMigration(ctx, fsys, m.version, m.name)
		if err != nil {
			return applied, err
		}
		if done {
			applied = append(applied, m.version)
		}
	}
	return applied, nil
}

// PendingMigrations lists, in order, the versions of fsys's migrations not yet recorded in the database,
// without writing anything (a read-only database can be served only when the list is empty).
func (d *DB) PendingMigrations(ctx context.Context, fsys fs.FS) ([]int, error) {
	entries, err := fs.ReadDir(fsys, ".")
	if err != nil {
		return nil, fmt.Errorf("migrations: %w", err)
	}
	done := map[int]bool{}
	var has int
	if err := d.reader().QueryRowContext(ctx, `SELECT count(*) FROM sqlite_schema WHERE name = 'schema_migrations'`).Scan(&has); err != nil {
		return nil, fmt.Errorf("migrations: %w", err)
	}
	if has > 0 {
		vs, err := queryAll(ctx, d.reader(), `SELECT version FROM schema_migrations`, nil,
			func(r interface{ Scan(...any) error }) (int, error) { var v int; return v, r.Scan(&v) })
		if err != nil {
			return nil, fmt.Errorf("migrations: %w", err)
		}
		for _, v := range vs {
			done[v] = true
		}
	}
	var pending []int
	for _, e := range entries {
		num, _, ok := strings.Cut(e.Name(), "_")
		v, err := strconv.Atoi(num)
		if !strings.HasSuffix(e.Name(), ".sql") || !ok || err != nil {
			continue
		}
		if !done[v] {
			pending = append(pending, v)
		}
	}
	sort.Ints(pending)
	return pending, nil
}

func (d *DB) applyMigration(ctx context.Context, fsys fs.FS, version int, name string) (bool, error) {
	tx, err := d.db.BeginTx(ctx, nil)
	if err != nil {
		return false, fmt.Errorf("migrate %s: %w", name, err)
	}
	defer tx.Rollback()
	var n int
	if err := tx.QueryRowContext(ctx, `SELECT count(*) FROM schema_migrations WHERE version = ?`, version).Scan(&n); err != nil {
		return false, fmt.Errorf("migrate %s: %w", name, err)
	}
	if n > 0 {
		return false, nil
	}
	body, err := fs.ReadFile(fsys, name)
	if err != nil {
		return false, fmt.Errorf("migrate %s: %w", name, err)
	}
	if _, err := tx.ExecContext(ctx, string(body)); err != nil {
		return false, fmt.Errorf("migrate %s: %w", name, err)
	}
	if _, err := tx.ExecContext(ctx, `INSERT INTO schema_migrations (version, name, applied_at) VALUES (?, ?, ?)`,
		version, name, d.stamp()); err != nil {
		return false, fmt.Errorf("migrate %s: %w", name, err)
	}
	return true, tx.Commit()
}
