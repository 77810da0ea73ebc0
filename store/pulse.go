package store

import (
	"context"
	"database/sql"
	"fmt"
	"math"
	"strings"
)

// Pulse is an eruptive phase of a province: an age interval (found from the density of its dates, or
// entered) and/or a set of its units. StartMa is the older edge, so StartMa ≥ EndMa.
type Pulse struct {
	ID         int64    `json:"id"`
	ProvinceID int64    `json:"province_id"`
	Name       string   `json:"name"`
	StartMa    *float64 `json:"start_ma"`
	EndMa      *float64 `json:"end_ma"`
	Notes      string   `json:"notes"`
	UnitIDs    []int64  `json:"unit_ids"`
	Version    int      `json:"version"`
	CreatedAt  string   `json:"created_at"`
	UpdatedAt  string   `json:"updated_at"`
}

// SavePulses saves pulses of a province in one change batch (kind "save pulses", source as given, e.g.
// the address of the density they were found from): a pulse whose name the province already has is
// replaced — interval, notes and units — as a new version; the others are added. Every change is a
// revision. It returns the pulses as saved, with their ids, in the order given.
//
// It returns a *ValidationError, and saves nothing, for an empty or repeated name, an edge that is not
// finite, a start younger than the end, or a unit not of the province; ErrNotFound for an unknown
// province.
func (d *DB) SavePulses(ctx context.Context, provinceID int64, source string, ps []Pulse) ([]Pulse, error) {
	out := make([]Pulse, len(ps))
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		if id, err := lookupID(ctx, tx, `SELECT id FROM provinces WHERE id = ?`, provinceID); err != nil {
			return err
		} else if id == 0 {
			return ErrNotFound
		}
		if err := validatePulses(ctx, tx, provinceID, ps); err != nil {
			return err
		}
		batch, err := d.newBatch(ctx, tx, "save pulses", source)
		if err != nil {
			return err
		}
		var names []string
		for i, p := range ps {
			p.ProvinceID = provinceID
			p.UnitIDs = uniqueIDs(p.UnitIDs)
			saved, err := d.savePulse(ctx, tx, batch, p)
			if err != nil {
				return err
			}
			out[i] = saved
			names = append(names, p.Name)
		}
		return setBatchSummary(ctx, tx, batch, fmt.Sprintf("saved %d pulse(s): %s", len(ps), strings.Join(names, ", ")))
	})
	if err != nil {
		return nil, fmt.Errorf("save pulses: %w", err)
	}
	return out, nil
}

func validatePulses(ctx context.Context, tx *sql.Tx, provinceID int64, ps []Pulse) error {
	var probs []Problem
	seen := map[string]bool{}
	for i, p := range ps {
		where := fmt.Sprintf("pulse %d", i+1)
		switch {
		case strings.TrimSpace(p.Name) == "":
			probs = append(probs, Problem{Column: "name", Message: where + ": a name is required"})
		case seen[p.Name]:
			probs = append(probs, Problem{Column: "name", Message: fmt.Sprintf("%s: the name %q is given twice", where, p.Name)})
		}
		seen[p.Name] = true
		for _, e := range []struct {
			col string
			v   *float64
		}{{"start_ma", p.StartMa}, {"end_ma", p.EndMa}} {
			if e.v != nil && (math.IsNaN(*e.v) || math.IsInf(*e.v, 0) || *e.v < 0) {
				probs = append(probs, Problem{Column: e.col, Message: fmt.Sprintf("%s: want an age in Ma ≥ 0, got %v", where, *e.v)})
			}
		}
		if p.StartMa != nil && p.EndMa != nil && *p.StartMa < *p.EndMa {
			probs = append(probs, Problem{Column: "start_ma", Message: fmt.Sprintf("%s: the start (older edge, %v Ma) is younger than the end (%v Ma)", where, *p.StartMa, *p.EndMa)})
		}
		for _, u := range p.UnitIDs {
			var prov int64
			err := tx.QueryRowContext(ctx, `SELECT province_id FROM units WHERE id = ?`, u).Scan(&prov)
			if err != nil && err != sql.ErrNoRows {
				return err
			}
			if err == sql.ErrNoRows || prov != provinceID {
				probs = append(probs, Problem{Column: "units", Message: fmt.Sprintf("%s: unit %d is not a unit of this province", where, u)})
			}
		}
	}
	if len(probs) > 0 {
		return &ValidationError{Problems: probs}
	}
	return nil
}

func uniqueIDs(ids []int64) []int64 {
	seen := map[int64]bool{}
	var out []int64
	for _, id := range ids {
		if !seen[id] {
			seen[id] = true
			out = append(out, id)
		}
	}
	return out
}

// savePulse inserts a pulse, or replaces the province's pulse of the same name, with its units and revision.
func (d *DB) savePulse(ctx context.Context, tx *sql.Tx, batch int64, p Pulse) (Pulse, error) {
	now := d.stamp()
	before, err := pulseByName(ctx, tx, p.ProvinceID, p.Name)
	if err != nil {
		return p, err
	}
	if before == nil {
		id, err := nextID(ctx, tx, "pulses", "pulse")
		if err != nil {
			return p, err
		}
		_, err = tx.ExecContext(ctx, `INSERT INTO pulses (id, province_id, name, start_ma, end_ma, notes, created_at, updated_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?)`,
			id, p.ProvinceID, p.Name, p.StartMa, p.EndMa, p.Notes, now, now)
		if err != nil {
			return p, fmt.Errorf("insert pulse %q: %w", p.Name, err)
		}
		p.ID = id
		p.Version, p.CreatedAt, p.UpdatedAt = 1, now, now
	} else {
		p.ID, p.Version, p.CreatedAt, p.UpdatedAt = before.ID, before.Version+1, before.CreatedAt, now
		if _, err := tx.ExecContext(ctx, `UPDATE pulses SET start_ma = ?, end_ma = ?, notes = ?, version = ?, updated_at = ? WHERE id = ?`,
			p.StartMa, p.EndMa, p.Notes, p.Version, now, p.ID); err != nil {
			return p, fmt.Errorf("update pulse %q: %w", p.Name, err)
		}
		if _, err := tx.ExecContext(ctx, `DELETE FROM pulse_units WHERE pulse_id = ?`, p.ID); err != nil {
			return p, fmt.Errorf("update pulse %q: %w", p.Name, err)
		}
	}
	for _, u := range p.UnitIDs {
		if _, err := tx.ExecContext(ctx, `INSERT INTO pulse_units (pulse_id, unit_id) VALUES (?, ?)`, p.ID, u); err != nil {
			return p, fmt.Errorf("pulse %q unit %d: %w", p.Name, u, err)
		}
	}
	var b any
	if before != nil {
		b = *before
	}
	return p, addRevision(ctx, tx, batch, "pulse", p.ID, b, p)
}

// pulseByName returns the province's pulse of that name with its units, or nil.
func pulseByName(ctx context.Context, tx *sql.Tx, provinceID int64, name string) (*Pulse, error) {
	var p Pulse
	err := tx.QueryRowContext(ctx, `SELECT id, province_id, name, start_ma, end_ma, notes, version, created_at, updated_at
		FROM pulses WHERE province_id = ? AND name = ?`, provinceID, name).
		Scan(&p.ID, &p.ProvinceID, &p.Name, &p.StartMa, &p.EndMa, &p.Notes, &p.Version, &p.CreatedAt, &p.UpdatedAt)
	if err == sql.ErrNoRows {
		return nil, nil
	}
	if err != nil {
		return nil, fmt.Errorf("pulse %q: %w", name, err)
	}
	rows, err := tx.QueryContext(ctx, `SELECT unit_id FROM pulse_units WHERE pulse_id = ? ORDER BY unit_id`, p.ID)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	for rows.Next() {
		var u int64
		if err := rows.Scan(&u); err != nil {
			return nil, err
		}
		p.UnitIDs = append(p.UnitIDs, u)
	}
	return &p, rows.Err()
}

// Pulses returns the saved pulses of a province, oldest first (by start, then end; pulses without an
// interval last, by name), each with its units.
func (d *DB) Pulses(ctx context.Context, provinceID int64) ([]Pulse, error) {
	rows, err := d.reader().QueryContext(ctx, `SELECT p.id, p.province_id, p.name, p.start_ma, p.end_ma, p.notes, p.version, p.created_at, p.updated_at,
		coalesce((SELECT group_concat(unit_id, ' ') FROM (SELECT unit_id FROM pulse_units WHERE pulse_id = p.id ORDER BY unit_id)), '')
		FROM pulses p WHERE p.province_id = ?
		ORDER BY p.start_ma IS NULL, p.start_ma DESC, p.end_ma DESC, p.name`, provinceID)
	if err != nil {
		return nil, fmt.Errorf("pulses: %w", err)
	}
	defer rows.Close()
	var out []Pulse
	for rows.Next() {
		var p Pulse
		var units string
		if err := rows.Scan(&p.ID, &p.ProvinceID, &p.Name, &p.StartMa, &p.EndMa, &p.Notes, &p.Version, &p.CreatedAt, &p.UpdatedAt, &units); err != nil {
			return nil, fmt.Errorf("pulses: %w", err)
		}
		for _, f := range strings.Fields(units) {
			var u int64
			fmt.Sscan(f, &u)
			p.UnitIDs = append(p.UnitIDs, u)
		}
		out = append(out, p)
	}
	return out, rows.Err()
}
