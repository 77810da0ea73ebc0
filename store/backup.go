package store

import (
	"context"
	"database/sql"
	"fmt"
	"os"
	"strings"
)

// Backup writes a consistent snapshot of the database to path with VACUUM INTO, while other connections
// keep reading and writing. It refuses to overwrite an existing file. The snapshot leaves out the sign-in
// sessions (a restored copy would otherwise accept the cookies of the moment of the backup) and the files
// uploaded for a preview and not imported; it is vacuumed again after removing them, so no free page keeps
// their bytes. On any failure the file is removed.
func (d *DB) Backup(ctx context.Context, path string) (err error) {
	if _, err := os.Stat(path); err == nil {
		return fmt.Errorf("backup: %s exists; choose a new file name", path)
	}
	if _, err := d.db.ExecContext(ctx, `VACUUM INTO ?`, path); err != nil {
		os.Remove(path)
		return fmt.Errorf("backup to %s: %w", path, err)
	}
	if err := scrubBackup(ctx, path); err != nil {
		os.Remove(path)
		return fmt.Errorf("backup to %s: %w", path, err)
	}
	return nil
}

// scrubBackup deletes the sessions and uploads of a snapshot and vacuums it. The snapshot is opened on
// its own (rollback journal, one connection), never through the pool of the live database.
func scrubBackup(ctx context.Context, path string) error {
	// As in open: SQLite reads the name as a URI.
	escaped := strings.NewReplacer("%", "%25", "?", "%3F", "#", "%23").Replace(path)
	bk, err := sql.Open("sqlite", "file:"+escaped+"?_pragma=busy_timeout(5000)")
	if err != nil {
		return err
	}
	defer bk.Close()
	bk.SetMaxOpenConns(1)
	for _, q := range []string{`DELETE FROM sessions`, `DELETE FROM uploads`, `VACUUM`} {
		if _, err := bk.ExecContext(ctx, q); err != nil {
			return fmt.Errorf("leave out sessions and uploads: %w", err)
		}
	}
	return bk.Close()
}
