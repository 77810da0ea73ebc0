package store

import (
	"context"
	"database/sql"
	"fmt"
	"io"
)

func tieType() recordType[TiePoint] {
	return recordType[TiePoint]{
		name:  "tie_point",
		table: "tie_points",
		cols: []string{"section_id", "label", "height_m", "kind", "distribution", "age_ma", "sigma_ma", "sigma_level",
			"age_min_ma", "age_max_ma", "date_id", "review_state", "review_note", "notes"},
		vals: func(t TiePoint) []any {
			return []any{t.SectionID, t.Label, t.HeightM, t.Kind, t.Distribution, t.AgeMa, t.SigmaMa, t.SigmaLevel,
				t.AgeMinMa, t.AgeMaxMa, t.DateID, t.ReviewState, t.ReviewNote, t.Notes}
		},
		meta:    func(t TiePoint) (int64, int, string) { return t.ID, t.Version, t.CreatedAt },
		label:   func(t TiePoint) string { return fmt.Sprintf("tie point %q", t.Label) },
		load:    tieInTx,
		form:    FormOfTie,
		summary: addedOf("tie point", func(t TiePoint) (string, string) { return t.Label, t.Section }),
		review: &reviewing[TiePoint]{
			of:    func(t *TiePoint) (*ReviewState, *string) { return &t.ReviewState, &t.ReviewNote },
			what:  func(t TiePoint) string { return t.Label + " of " + t.Section },
			title: func(t TiePoint) string { return "tie point " + t.Label },
		},
	}
}

func tieInTx(ctx context.Context, tx *sql.Tx, id int64) (TiePoint, error) {
	t, err := scanTie(tx.QueryRowContext(ctx, tieSelect+` WHERE t.id = ?`, id))
	return t, notFound(err, "tie point", id)
}

// TiePoint returns one tie point, or ErrNotFound.
func (d *DB) TiePoint(ctx context.Context, id int64) (TiePoint, error) {
	t, err := scanTie(d.reader().QueryRowContext(ctx, tieSelect+` WHERE t.id = ?`, id))
	return t, notFound(err, "tie point", id)
}

// FormOfTie gives the form cells of a stored tie point (the columns of the ties import format, σ at the
// level it was published at, and its review state).
func FormOfTie(t TiePoint) Form {
	return formOf(func(w io.Writer) error { return WriteTiesCSV(w, []TiePoint{t}) })
}

// parseTieForm checks a form with exactly the rules of the ties importer, its review state included (a
// contributor's tie is pending whatever the form says). Problems name fields.
func parseTieForm(f Form, asCurator bool) (TiePoint, []Problem) {
	rw, t := formRow(tieColumns, f)
	tp := parseTieRow(rw)
	if !asCurator {
		tp.ReviewState = ReviewPending
	}
	return tp, t.problems
}

// resolveTie links the date a tie names (by sample code, and method when given) and checks that no other
// tie of the section has its label.
func (d *DB) resolveTie(ctx context.Context, tx *sql.Tx, tp *TiePoint) ([]Problem, error) {
	tp.DateID = nil
	var ps []Problem
	if tp.DateSampleCode != "" {
		id, err := d.dateBySample(ctx, tx, tp.DateSampleCode, tp.DateMethod)
		if err != nil {
			ps = append(ps, Problem{Column: "date_sample_code", Message: err.Error()})
		} else {
			tp.DateID = &id
		}
	}
	dup, err := uniqueProblem(ctx, tx, "label", fmt.Sprintf("the section already has a tie point %q", tp.Label),
		`SELECT id FROM tie_points WHERE section_id = ? AND label = ? AND id <> ?`, tp.SectionID, tp.Label, tp.ID)
	return append(ps, dup...), err
}

// CreateTie adds one tie point to section sectionID from a form, as the actor of ctx. A contributor's tie
// (asCurator false) starts pending; a curator's takes the form's review_state (accepted when empty).
func (d *DB) CreateTie(ctx context.Context, sectionID int64, f Form, asCurator bool) (TiePoint, error) {
	tp, problems := parseTieForm(f, asCurator)
	return tieType().save(ctx, d, 0, 0, tp, problems, inSection(sectionID, placeTie, d.resolveTie))
}

// placeTie puts a new tie in its section; an edited one stays in its section and keeps its review note.
func placeTie(tp, before *TiePoint, sectionID int64) {
	if before == nil {
		tp.SectionID = sectionID
		return
	}
	tp.ID, tp.SectionID, tp.ReviewNote = before.ID, before.SectionID, before.ReviewNote
}

// UpdateTie replaces tie point id with the form's values when the stored version is still version;
// otherwise it returns ErrConflict and changes nothing. The tie stays in its section and keeps its review
// note; a contributor's edit (asCurator false) makes it pending.
func (d *DB) UpdateTie(ctx context.Context, id int64, version int, f Form, asCurator bool) (TiePoint, error) {
	tp, problems := parseTieForm(f, asCurator)
	return tieType().save(ctx, d, id, version, tp, problems, inSection(0, placeTie, d.resolveTie))
}

// ReviewTie accepts or rejects tie point id (at version), as a curator; a rejection needs a reason, which
// is kept as the review note (an acceptance's note is optional). It returns ErrConflict when the tie
// changed since version.
func (d *DB) ReviewTie(ctx context.Context, id int64, version int, accept bool, note string) (TiePoint, error) {
	return tieType().reviewRecord(ctx, d, id, version, accept, note)
}

// DeleteTie removes tie point id (at version), keeping its last state in the revision.
func (d *DB) DeleteTie(ctx context.Context, id int64, version int) error {
	return tieType().deleteRecord(ctx, d, id, version)
}
