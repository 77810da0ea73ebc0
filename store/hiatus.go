package store

import "context"

// Hiatus is a surface in a section where time is missing: at least MinDurationMa passes at HeightM.
type Hiatus struct {
	ID            int64   `json:"id"`
	SectionID     int64   `json:"section_id"`
	HeightM       float64 `json:"height_m"`
	MinDurationMa float64 `json:"min_duration_ma"`
	Notes         string  `json:"notes"`
}

// Hiatuses returns the hiatuses of a section, lowest first.
func (d *DB) Hiatuses(ctx context.Context, sectionID int64) ([]Hiatus, error) {
	return queryAll(ctx, d.db, `SELECT id, section_id, height_m, min_duration_ma, notes FROM hiatuses
		WHERE section_id = ? ORDER BY height_m, id`, []any{sectionID}, func(r interface{ Scan(...any) error }) (Hiatus, error) {
		var h Hiatus
		return h, r.Scan(&h.ID, &h.SectionID, &h.HeightM, &h.MinDurationMa, &h.Notes)
	})
}
