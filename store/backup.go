package store

import (
	"context"
	"fmt"
	"os"
)

// Backup writes a consistent snapshot of the database to path with VACUUM INTO, while other connections
// keep reading and writing. It refuses to overwrite an existing file.
func (d *DB) Backup(ctx context.Context, path string) error {
	if _, err := os.Stat(path); err == nil {
		return fmt.Errorf("backup: %s exists; choose a new file name", path)
	}
	if _, err := d.db.ExecContext(ctx, `VACUUM INTO ?`, path); err != nil {
		return fmt.Errorf("backup to %s: %w", path, err)
	}
	return nil
}
