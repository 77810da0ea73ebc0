package store

import (
	"cmp"
	"context"
	"database/sql"
	"fmt"
	"slices"
)

// ProvinceDates is what a province's unit summaries and density are computed from: the province, its
// units (lowest in the pile first, as Units) and their dates (in DateFilter's default order, as Dates).
type ProvinceDates struct {
	Province Province
	Units    []Unit
	Dates    []Date
	// Version is the province's data version (DataVersions) in the same read: what was read is the
	// same whenever the version is.
	Version int64 `json:"-"`
}

// ProvinceDates reads a province with its units and dates in one read transaction, so the three belong
// together even while an import or an edit writes (ErrNotFound for an unknown province).
func (d *DB) ProvinceDates(ctx context.Context, id int64) (ProvinceDates, error) {
	var out ProvinceDates
	tx, err := d.db.BeginTx(ctx, &sql.TxOptions{ReadOnly: true})
	if err != nil {
		return out, fmt.Errorf("province %d: %w", id, err)
	}
	defer tx.Rollback() // a read: nothing to commit
	if out.Province, err = scanProvince(tx.QueryRowContext(ctx, provinceSelect+` WHERE p.id = ?`, id)); err != nil {
		return out, notFound(err, "province", id)
	}
	out.Units, err = queryAllTx(ctx, tx, unitSelect+` WHERE u.province_id = ? ORDER BY p.name, u.pile_position IS NULL, u.pile_position, u.name`,
		[]any{id}, scanUnit)
	if err != nil {
		return out, fmt.Errorf("units of province %d: %w", id, err)
	}
	if out.Version, err = provinceVersion(ctx, tx, id); err != nil {
		return out, err
	}
	cond, args := dateWhere(DateFilter{ProvinceID: id})
	// Sized by the province's count of dates (read with it): growing the slice row by row copied every
	// date ~2× over, a fifth of the read at 10,000 dates.
	out.Dates = make([]Date, 0, out.Province.NDates)
	if out.Dates, err = appendAllTx(ctx, tx, out.Dates, dateSelect+cond, args, scanDate); err != nil {
		return out, fmt.Errorf("dates of province %d: %w", id, err)
	}
	// The dates list's default order (oldest first, ties by id), sorted here: SQLite's sorter would copy every
	// column of every date into a temporary b-tree (a third of the read at 10,000 dates).
	slices.SortFunc(out.Dates, func(a, b Date) int { return cmp.Or(cmp.Compare(b.AgeMa, a.AgeMa), cmp.Compare(a.ID, b.ID)) })
	return out, nil
}

// UnitDates is a unit with its dates (oldest first), read together.
type UnitDates struct {
	Unit  Unit
	Dates []Date
}

// UnitDates reads a unit and its dates in one read transaction (ErrNotFound for an unknown unit).
func (d *DB) UnitDates(ctx context.Context, id int64) (UnitDates, error) {
	var out UnitDates
	tx, err := d.db.BeginTx(ctx, &sql.TxOptions{ReadOnly: true})
	if err != nil {
		return out, fmt.Errorf("unit %d: %w", id, err)
	}
	defer tx.Rollback() // a read: nothing to commit
	if out.Unit, err = scanUnit(tx.QueryRowContext(ctx, unitSelect+` WHERE u.id = ?`, id)); err != nil {
		return out, notFound(err, "unit", id)
	}
	f := DateFilter{UnitID: id}
	cond, args := dateWhere(f)
	cols, desc := dateOrder(f)
	if out.Dates, err = queryAllTx(ctx, tx, dateSelect+cond+orderBy(cols, desc, false), args, scanDate); err != nil {
		return out, fmt.Errorf("dates of unit %d: %w", id, err)
	}
	return out, nil
}
