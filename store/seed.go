package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"path"
)

// DemoPassword is the password of the demo accounts (demo-reader, demo-contributor, demo-curator,
// demo-admin), which exist only in a database seeded with the demo scenario. It is published in the README.
const DemoPassword = "coeval-demo-only"

// SettingDemo is set when the database was seeded with the invented demo scenario; pages then say so.
const SettingDemo = "demo_scenario"

// Import runs the importer of one kind on a file; section is needed by the per-section kinds.
func (d *DB) Import(ctx context.Context, kind, section string, fsys fs.FS, name string) (ImportResult, error) {
	f, err := fsys.Open(name)
	if err != nil {
		return ImportResult{}, fmt.Errorf("import %s: %w", kind, err)
	}
	defer f.Close()
	return d.ImportReader(ctx, kind, section, path.Base(name), f)
}

// ImportReader runs the importer of one kind on r, named file in its messages.
func (d *DB) ImportReader(ctx context.Context, kind, section, file string, r io.Reader) (ImportResult, error) {
	switch kind {
	case "provinces":
		return d.ImportProvinces(ctx, file, r)
	case "units":
		return d.ImportUnits(ctx, file, r)
	case "sections":
		return d.ImportSections(ctx, file, r)
	case "dates":
		return d.ImportDates(ctx, file, r)
	case "measurements":
		return d.ImportMeasurements(ctx, section, file, r)
	case "ties":
		return d.ImportTies(ctx, section, file, r)
	case "events":
		return d.ImportEvents(ctx, section, file, r)
	case "hiatuses":
		return d.ImportHiatuses(ctx, section, file, r)
	}
	return ImportResult{}, fmt.Errorf("import: unknown kind %q", kind)
}

// settingDemoSeeding marks a demo seeding under way: set before the first file, cleared after the demo
// label. The files are imported one by one, each all-or-nothing, so a seeding stopped midway (killed, or
// the server stopped with Ctrl-C while it seeded) leaves some of them; the mark makes the next start
// finish it instead of serving half a scenario without its label and accounts.
const settingDemoSeeding = "demo_seeding"

// SeedDemo imports the demo scenario in fsys (manifest.csv: kind, section, file, in order) through the
// ordinary importers, when the compilation is empty, or finishes a seeding that was stopped midway
// (skipping the files whose import is recorded and the accounts that exist). It reports whether it
// seeded. Each file is its own all-or-nothing import; the demo files are tested, so a failure here is a bug.
func (d *DB) SeedDemo(ctx context.Context, fsys fs.FS, label string) (bool, []ImportResult, error) {
	resume, err := d.Setting(ctx, settingDemoSeeding)
	if err != nil {
		return false, nil, err
	}
	if resume == "" {
		empty, err := d.IsEmpty(ctx)
		if err != nil || !empty {
			return false, nil, err
		}
		if err := d.SetSetting(ctx, settingDemoSeeding, "started"); err != nil {
			return false, nil, fmt.Errorf("seed demo: %w", err)
		}
	}
	mf, err := fsys.Open("manifest.csv")
	if err != nil {
		return false, nil, fmt.Errorf("seed demo: %w", err)
	}
	defer mf.Close()
	t, err := readCSV("manifest.csv", mf)
	if err != nil {
		return false, nil, fmt.Errorf("seed demo: %w", err)
	}
	t.requireColumns([]string{"kind", "section", "file"}, []string{"kind", "section", "file"})
	if err := t.err(); err != nil {
		return false, nil, fmt.Errorf("seed demo: %w", err)
	}
	var results []ImportResult
	for i := range t.rows {
		rw := t.row(i)
		kind, file := rw.str("kind"), rw.str("file")
		if resume != "" {
			var done bool
			err := d.reader().QueryRowContext(ctx, `SELECT EXISTS (SELECT 1 FROM change_batches WHERE kind = ? AND source = ?)`,
				"import "+kind, path.Base(file)).Scan(&done)
			if err != nil {
				return false, results, fmt.Errorf("seed demo: %w", err)
			}
			if done {
				continue
			}
		}
		res, err := d.Import(ctx, kind, rw.str("section"), fsys, file)
		if err != nil {
			return false, results, fmt.Errorf("seed demo: %w", err)
		}
		results = append(results, res)
	}
	for _, role := range Roles() {
		name := "demo-" + role
		if resume != "" {
			var exists bool
			if err := d.reader().QueryRowContext(ctx, `SELECT EXISTS (SELECT 1 FROM users WHERE name = ?)`, name).Scan(&exists); err != nil {
				return false, results, fmt.Errorf("seed demo users: %w", err)
			}
			if exists {
				continue
			}
		}
		if _, err := d.CreateUser(ctx, name, role, DemoPassword); err != nil {
			return false, results, fmt.Errorf("seed demo users: %w", err)
		}
	}
	if err := d.SetSetting(ctx, SettingDemo, label); err != nil {
		return false, results, err
	}
	if _, err := d.db.ExecContext(ctx, `DELETE FROM settings WHERE key = ?`, settingDemoSeeding); err != nil {
		return false, results, fmt.Errorf("seed demo: %w", err)
	}
	return true, results, nil
}

// Setting returns a compilation setting ("" when unset).
func (d *DB) Setting(ctx context.Context, key string) (string, error) {
	var v string
	err := d.reader().QueryRowContext(ctx, `SELECT value FROM settings WHERE key = ?`, key).Scan(&v)
	if errors.Is(err, sql.ErrNoRows) {
		return "", nil
	}
	return v, err
}

// SetSetting sets a compilation setting.
func (d *DB) SetSetting(ctx context.Context, key, value string) error {
	_, err := d.db.ExecContext(ctx, `INSERT INTO settings (key, value) VALUES (?, ?)
		ON CONFLICT(key) DO UPDATE SET value = excluded.value`, key, value)
	return err
}
