package store

import (
	"context"
	"database/sql"
	"fmt"
	"io"
)

func provinceType() recordType[Province] {
	return recordType[Province]{
		name:  "province",
		table: "provinces",
		cols:  []string{"name", "description", "pole_latitude", "pole_longitude", "pole_a95", "pole_source"},
		vals: func(p Province) []any {
			return []any{p.Name, p.Description, p.PoleLatitude, p.PoleLongitude, p.PoleA95, p.PoleSource}
		},
		meta:  func(p Province) (int64, int, string) { return p.ID, p.Version, p.CreatedAt },
		label: func(p Province) string { return fmt.Sprintf("province %q", p.Name) },
		load:  provinceInTx,
		form:  FormOfProvince,
		// Pulses would go with the province (ON DELETE CASCADE) without a revision each.
		deps: []dependent{
			{"unit", `SELECT count(*) FROM units WHERE province_id = ?`},
			{"pulse", `SELECT count(*) FROM pulses WHERE province_id = ?`},
		},
	}
}

func provinceInTx(ctx context.Context, tx *sql.Tx, id int64) (Province, error) {
	p, err := scanProvince(tx.QueryRowContext(ctx, provinceSelect+` WHERE p.id = ?`, id))
	return p, notFound(err, "province", id)
}

// FormOfProvince gives the form cells of a stored province (the columns of the provinces import format).
func FormOfProvince(p Province) Form {
	return formOf(func(w io.Writer) error { return WriteProvincesCSV(w, []Province{p}) })
}

// parseProvinceForm checks a form with exactly the rules of the provinces importer. Problems name fields.
func parseProvinceForm(f Form) (Province, []Problem) {
	rw, t := formRow(provinceColumns, f)
	return parseProvinceRow(rw), t.problems
}

func provinceUnique() prepare[Province] {
	return provinceType().unique(func(x *Province, id int64) { x.ID = id }, provinceNameProblem)
}

func provinceNameProblem(ctx context.Context, tx *sql.Tx, p Province) ([]Problem, error) {
	return uniqueProblem(ctx, tx, "province", fmt.Sprintf("a province named %q is already in the compilation", p.Name),
		`SELECT id FROM provinces WHERE name = ? AND id <> ?`, p.Name, p.ID)
}

// CreateProvince adds one province from a form, as the actor of ctx.
func (d *DB) CreateProvince(ctx context.Context, f Form) (Province, error) {
	x, problems := parseProvinceForm(f)
	return provinceType().save(ctx, d, 0, 0, x, problems, provinceUnique())
}

// UpdateProvince replaces province id with the form's values when the stored version is still version;
// otherwise it returns ErrConflict and changes nothing.
func (d *DB) UpdateProvince(ctx context.Context, id int64, version int, f Form) (Province, error) {
	x, problems := parseProvinceForm(f)
	return provinceType().save(ctx, d, id, version, x, problems, provinceUnique())
}

// DeleteProvince removes province id (at version), keeping its last state in the revision. It refuses
// with an *InUseError while the province has units or pulses.
func (d *DB) DeleteProvince(ctx context.Context, id int64, version int) error {
	return provinceType().deleteRecord(ctx, d, id, version)
}
