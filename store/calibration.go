package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
)

// TargetCalibration returns the compilation's target calibration: the one every ⁴⁰Ar/³⁹Ar date is
// recalculated to unless a view chooses another. It returns ErrNotFound when no calibration is marked.
func (d *DB) TargetCalibration(ctx context.Context) (Calibration, error) {
	cals, err := d.Calibrations(ctx)
	if err != nil {
		return Calibration{}, err
	}
	for _, c := range cals {
		if c.IsTarget {
			return c, nil
		}
	}
	return Calibration{}, fmt.Errorf("target calibration: %w", ErrNotFound)
}

// SetTargetCalibration makes the calibration with the given code the compilation's target. The target
// is the is_target flag of the calibrations table (a partial unique index keeps it to one row), so there
// is no second copy of it to disagree. The change is one batch (source says who or what made it) with a
// revision of each calibration whose flag changed. An unknown code gives ErrNotFound and changes nothing.
func (d *DB) SetTargetCalibration(ctx context.Context, code, source string) error {
	return d.inTx(ctx, func(tx *sql.Tx) error {
		var id int64
		err := tx.QueryRowContext(ctx, `SELECT id FROM calibrations WHERE code = ?`, code).Scan(&id)
		if errors.Is(err, sql.ErrNoRows) {
			return fmt.Errorf("set target calibration %q: %w", code, ErrNotFound)
		}
		if err != nil {
			return fmt.Errorf("set target calibration: %w", err)
		}
		var old int64
		err = tx.QueryRowContext(ctx, `SELECT id FROM calibrations WHERE is_target = 1`).Scan(&old)
		if err != nil && !errors.Is(err, sql.ErrNoRows) {
			return fmt.Errorf("set target calibration: %w", err)
		}
		if old == id {
			return nil
		}
		batch, err := d.newBatch(ctx, tx, "set target calibration", source)
		if err != nil {
			return err
		}
		// Two statements: the unique index on the flag is checked row by row, so the old target must be
		// cleared before the new one is set.
		if _, err := tx.ExecContext(ctx, `UPDATE calibrations SET is_target = 0 WHERE is_target = 1`); err != nil {
			return fmt.Errorf("set target calibration: %w", err)
		}
		if _, err := tx.ExecContext(ctx, `UPDATE calibrations SET is_target = 1 WHERE id = ?`, id); err != nil {
			return fmt.Errorf("set target calibration: %w", err)
		}
		type flag struct {
			Code     string `json:"code"`
			IsTarget bool   `json:"is_target"`
		}
		var oldCode string
		if old != 0 {
			if err := tx.QueryRowContext(ctx, `SELECT code FROM calibrations WHERE id = ?`, old).Scan(&oldCode); err != nil {
				return fmt.Errorf("set target calibration: %w", err)
			}
			if err := addRevision(ctx, tx, batch, "calibration", old, flag{oldCode, true}, flag{oldCode, false}); err != nil {
				return err
			}
		}
		if err := addRevision(ctx, tx, batch, "calibration", id, flag{code, false}, flag{code, true}); err != nil {
			return err
		}
		summary := fmt.Sprintf("target calibration %s", code)
		if oldCode != "" {
			summary = fmt.Sprintf("target calibration %s (was %s)", code, oldCode)
		}
		return setBatchSummary(ctx, tx, batch, summary)
	})
}
