package store

import (
	"context"
	"database/sql"
	"fmt"
	"io"
)

func sectionType() recordType[Section] {
	return recordType[Section]{
		name:  "section",
		table: "sections",
		cols: []string{"name", "kind", "latitude", "longitude", "palaeolatitude", "thermal_maturity",
			"toc_threshold_wt_pct", "notes"},
		vals: func(s Section) []any {
			return []any{s.Name, s.Kind, s.Latitude, s.Longitude, s.Palaeolatitude, s.ThermalMaturity,
				s.TocThresholdWtPct, s.Notes}
		},
		meta:  func(s Section) (int64, int, string) { return s.ID, s.Version, s.CreatedAt },
		label: func(s Section) string { return fmt.Sprintf("section %q", s.Name) },
		load:  sectionInTx,
		form:  FormOfSection,
		// Measurements, ties, events and hiatuses would go with the section (ON DELETE CASCADE) without a
		// revision each, so they block a delete as the horizon dates do.
		deps: []dependent{
			{"horizon date", `SELECT count(*) FROM dates WHERE section_id = ?`},
			{"sample", `SELECT count(DISTINCT sample) FROM measurements WHERE section_id = ?`},
			{"tie point", `SELECT count(*) FROM tie_points WHERE section_id = ?`},
			{"event", `SELECT count(*) FROM events WHERE section_id = ?`},
			{"hiatus", `SELECT count(*) FROM hiatuses WHERE section_id = ?`},
		},
	}
}

func sectionInTx(ctx context.Context, tx *sql.Tx, id int64) (Section, error) {
	s, err := scanSection(tx.QueryRowContext(ctx, sectionSelect+` WHERE s.id = ?`, id))
	return s, notFound(err, "section", id)
}

// FormOfSection gives the form cells of a stored section (the columns of the sections import format).
func FormOfSection(s Section) Form {
	return formOf(func(w io.Writer) error { return WriteSectionsCSV(w, []Section{s}) })
}

// parseSectionForm checks a form with exactly the rules of the sections importer. Problems name fields.
func parseSectionForm(f Form) (Section, []Problem) {
	rw, t := formRow(sectionColumns, f)
	return parseSectionRow(rw), t.problems
}

func sectionUnique() prepare[Section] {
	return sectionType().unique(func(x *Section, id int64) { x.ID = id }, sectionNameProblem)
}

func sectionNameProblem(ctx context.Context, tx *sql.Tx, s Section) ([]Problem, error) {
	return uniqueProblem(ctx, tx, "section", fmt.Sprintf("a section named %q is already in the compilation", s.Name),
		`SELECT id FROM sections WHERE name = ? AND id <> ?`, s.Name, s.ID)
}

// CreateSection adds one section from a form, as the actor of ctx.
func (d *DB) CreateSection(ctx context.Context, f Form) (Section, error) {
	x, problems := parseSectionForm(f)
	return sectionType().save(ctx, d, 0, 0, x, problems, sectionUnique())
}

// UpdateSection replaces section id with the form's values when the stored version is still version;
// otherwise it returns ErrConflict and changes nothing.
func (d *DB) UpdateSection(ctx context.Context, id int64, version int, f Form) (Section, error) {
	x, problems := parseSectionForm(f)
	return sectionType().save(ctx, d, id, version, x, problems, sectionUnique())
}

// DeleteSection removes section id (at version), keeping its last state in the revision. It refuses with
// an *InUseError while the section has horizon dates, samples, tie points, events or hiatuses.
func (d *DB) DeleteSection(ctx context.Context, id int64, version int) error {
	return sectionType().deleteRecord(ctx, d, id, version)
}
