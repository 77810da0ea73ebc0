package store

import (
	"context"
	"database/sql"
	"fmt"
	"io"
)

func unitType() recordType[Unit] {
	return recordType[Unit]{
		name:  "unit",
		table: "units",
		cols: []string{"province_id", "name", "kind", "pile_position", "volume_km3", "volume_sigma_km3",
			"latitude", "longitude", "notes"},
		vals: func(u Unit) []any {
			return []any{u.ProvinceID, u.Name, u.Kind, u.PilePosition, u.VolumeKm3, u.VolumeSigmaKm3, u.Latitude,
				u.Longitude, u.Notes}
		},
		meta:    func(u Unit) (int64, int, string) { return u.ID, u.Version, u.CreatedAt },
		label:   func(u Unit) string { return fmt.Sprintf("unit %q", u.Name) },
		load:    unitInTx,
		form:    FormOfUnit,
		summary: addedOf("unit", func(u Unit) (string, string) { return u.Name, u.Province }),
		deps: []dependent{
			{"date", `SELECT count(*) FROM dates WHERE unit_id = ?`},
			{"pulse membership", `SELECT count(*) FROM pulse_units WHERE unit_id = ?`},
		},
	}
}

func unitInTx(ctx context.Context, tx *sql.Tx, id int64) (Unit, error) {
	u, err := scanUnit(tx.QueryRowContext(ctx, unitSelect+` WHERE u.id = ?`, id))
	return u, notFound(err, "unit", id)
}

// FormOfUnit gives the form cells of a stored unit (the columns of the units import format).
func FormOfUnit(u Unit) Form {
	return formOf(func(w io.Writer) error { return WriteUnitsCSV(w, []Unit{u}) })
}

// parseUnitForm checks a form with exactly the rules of the units importer. Problems name fields.
func parseUnitForm(f Form) (Unit, []Problem) {
	rw, t := formRow(unitColumns, f)
	return parseUnitRow(rw), t.problems
}

// resolveUnit fills ProvinceID from the province's name, creating the province when it is new (as an
// import would), and checks that no other unit of the province has the name.
func (d *DB) resolveUnit(ctx context.Context, tx *sql.Tx, batch int64, u *Unit) ([]Problem, error) {
	pid, err := d.provinceID(ctx, tx, batch, u.Province, &ImportResult{Added: map[string]int{}})
	if err != nil {
		return nil, err
	}
	u.ProvinceID = pid
	return uniqueProblem(ctx, tx, "unit", fmt.Sprintf("%q already has a unit %q", u.Province, u.Name),
		`SELECT id FROM units WHERE province_id = ? AND name = ? AND id <> ?`, pid, u.Name, u.ID)
}

// prepareUnit fills ProvinceID from the province's name, creating the province when it is new (as an
// import would), and checks that no other unit of the province has the name.
func (d *DB) prepareUnit(ctx context.Context, tx *sql.Tx, batch int64, before *Unit, u *Unit, problems []Problem) ([]Problem, error) {
	if len(problems) > 0 {
		return problems, nil
	}
	if before != nil {
		u.ID = before.ID
	}
	return d.resolveUnit(ctx, tx, batch, u)
}

// CreateUnit adds one unit from a form, as the actor of ctx. A province not yet known is created with it.
func (d *DB) CreateUnit(ctx context.Context, f Form) (Unit, error) {
	u, problems := parseUnitForm(f)
	return unitType().save(ctx, d, 0, 0, u, problems, d.prepareUnit)
}

// UpdateUnit replaces unit id with the form's values when the stored version is still version; otherwise
// it returns ErrConflict and changes nothing.
func (d *DB) UpdateUnit(ctx context.Context, id int64, version int, f Form) (Unit, error) {
	u, problems := parseUnitForm(f)
	return unitType().save(ctx, d, id, version, u, problems, d.prepareUnit)
}

// DeleteUnit removes unit id (at version), keeping its last state in the revision. It refuses with an
// *InUseError while dates or pulses refer to the unit.
func (d *DB) DeleteUnit(ctx context.Context, id int64, version int) error {
	return unitType().deleteRecord(ctx, d, id, version)
}

// orProblems returns err, or a *ValidationError of ps when err is nil.
func orProblems(err error, ps []Problem) error {
	if err != nil {
		return err
	}
	return &ValidationError{ps}
}
