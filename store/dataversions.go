package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
)

// DataVersions are the versions of what the computed results read, kept by the database's triggers
// (migration 018) on every insert, update and delete, whichever way it is written: a province's (its
// record, units and their dates), a section's (its record, measurements, tie points, hiatuses, events
// and the dates its tie points are linked to), the calibrations', the direct events' (events without a
// section) and the events' (any event added or deleted). A version only grows, so a result kept under
// the versions of what it read is still right while they are unchanged, however much else was written.
type DataVersions struct {
	Provinces     map[int64]int64
	Sections      map[int64]int64
	Calibrations  int64
	DirectEvents  int64
	Events        int64
	FirstProvince int64 // the first province by name (the one shown when none is chosen); 0 when none
}

// DataVersions reads every version in one small read (a row per province and section), and the first
// province by name.
func (d *DB) DataVersions(ctx context.Context) (DataVersions, error) {
	v := DataVersions{Provinces: map[int64]int64{}, Sections: map[int64]int64{}}
	q := `SELECT kind, id, version FROM data_versions`
	if d.immutable && !d.hasVersions(ctx) {
		q = unchangingVersions
	}
	rows, err := d.reader().QueryContext(ctx, q)
	if err != nil {
		return v, fmt.Errorf("data versions: %w", err)
	}
	defer rows.Close()
	for rows.Next() {
		var kind string
		var id, n int64
		if err := rows.Scan(&kind, &id, &n); err != nil {
			return v, fmt.Errorf("data versions: %w", err)
		}
		switch kind {
		case "province":
			v.Provinces[id] = n
		case "section":
			v.Sections[id] = n
		case "calibrations":
			v.Calibrations = n
		case "direct_events":
			v.DirectEvents = n
		case "events":
			v.Events = n
		}
	}
	if err := rows.Err(); err != nil {
		return v, fmt.Errorf("data versions: %w", err)
	}
	err = d.reader().QueryRowContext(ctx, `SELECT id FROM provinces ORDER BY name LIMIT 1`).Scan(&v.FirstProvince)
	if err != nil && !errors.Is(err, sql.ErrNoRows) {
		return v, fmt.Errorf("data versions: %w", err)
	}
	return v, nil
}

// ProvinceVersion is the version of what a province's timeline reads (its record, units and dates); 0
// for a province the store never held (a deleted province keeps its last version).
func (d *DB) ProvinceVersion(ctx context.Context, id int64) (int64, error) {
	return provinceVersion(ctx, d, d.reader(), id)
}

// unchangingVersions are the versions of a database that cannot change and keeps none (a release's
// snapshot cut before the versions were kept): 1 for everything it holds.
const unchangingVersions = `SELECT 'province', id, 1 FROM provinces UNION ALL SELECT 'section', id, 1 FROM sections
	UNION ALL SELECT 'calibrations', 0, 1 UNION ALL SELECT 'direct_events', 0, 1 UNION ALL SELECT 'events', 0, 1`

// hasVersions says whether the database keeps the data versions (migration 018).
func (d *DB) hasVersions(ctx context.Context) bool {
	var n int
	err := d.reader().QueryRowContext(ctx, `SELECT count(*) FROM sqlite_schema WHERE type = 'table' AND name = 'data_versions'`).Scan(&n)
	return err == nil && n == 1
}

func provinceVersion(ctx context.Context, d *DB, q querier, id int64) (int64, error) {
	query := `SELECT version FROM data_versions WHERE kind = 'province' AND id = ?`
	if d.immutable && !d.hasVersions(ctx) {
		query = `SELECT 1 FROM provinces WHERE id = ?`
	}
	var n int64
	err := q.QueryRowContext(ctx, query, id).Scan(&n)
	if errors.Is(err, sql.ErrNoRows) {
		return 0, nil
	}
	if err != nil {
		return 0, fmt.Errorf("version of province %d: %w", id, err)
	}
	return n, nil
}
