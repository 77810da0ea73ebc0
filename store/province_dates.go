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
	if out.Version, err = provinceVersion(ctx, d, tx, id); err != nil {
		return out, err
	}
	// The dates' own columns only: their unit's name and province come from the units just read (every
	// date read belongs to one of them), and a date of a unit has no section (the dates table's CHECK).
	// Joining units, provinces and sections for every row was a fifth of the read at 10,000 dates.
	names := make(map[int64]string, len(out.Units))
	for _, u := range out.Units {
		names[u.ID] = u.Name
	}
	pid, pname := out.Province.ID, out.Province.Name
	scan := func(s interface{ Scan(...any) error }) (Date, error) {
		var x Date
		err := s.Scan(&x.ID, &x.UnitID, &x.SectionID, &x.HeightM, &x.SampleCode, &x.Method, &x.Material, &x.Interpretation,
			&x.AgeMa, &x.SigmaMa, &x.SigmaYMa, &x.SigmaZMa, &x.SigmaLevel, &x.Tracer, &x.Monitor, &x.MonitorAgeMa, &x.LambdaPerA,
			&x.Laboratory, &x.Citation, &x.DOI, &x.Latitude, &x.Longitude, &x.ReviewState, &x.ReviewNote, &x.Notes, &x.Version,
			&x.CreatedAt, &x.UpdatedAt)
		if err == nil && x.UnitID != nil {
			p := pid // a pointer of its own, as a joined read gives
			x.Unit, x.ProvinceID, x.Province = names[*x.UnitID], &p, pname
		}
		return x, err
	}
	// Sized by the province's count of dates (read with it): growing the slice row by row copied every
	// date ~2× over.
	out.Dates = make([]Date, 0, out.Province.NDates)
	if out.Dates, err = appendAllTx(ctx, tx, out.Dates, provinceDateSelect, []any{id}, scan); err != nil {
		return out, fmt.Errorf("dates of province %d: %w", id, err)
	}
	// The dates list's default order (oldest first, ties by id), sorted here: SQLite's sorter would copy every
	// column of every date into a temporary b-tree (a third of the read at 10,000 dates).
	slices.SortFunc(out.Dates, func(a, b Date) int { return cmp.Or(cmp.Compare(b.AgeMa, a.AgeMa), cmp.Compare(a.ID, b.ID)) })
	return out, nil
}

// provinceDateSelect reads a province's dates, their own columns only (ProvinceDates).
const provinceDateSelect = `SELECT d.id, d.unit_id, d.section_id, d.height_m, d.sample_code, d.method, d.material,
	d.interpretation, d.age_ma, d.sigma_ma, d.sigma_y_ma, d.sigma_z_ma, d.sigma_level, d.tracer, d.monitor, d.monitor_age_ma,
	d.lambda_per_a, d.laboratory, d.citation, d.doi, d.latitude, d.longitude, d.review_state, d.review_note, d.notes,
	d.version, d.created_at, d.updated_at
	FROM dates d WHERE d.unit_id IN (SELECT id FROM units WHERE province_id = ?)`

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
