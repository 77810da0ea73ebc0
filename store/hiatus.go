package store

import (
	"context"
	"database/sql"
	"fmt"
	"io"
)

// Hiatus is a surface in a section where time is missing: at least MinDurationMa passes at HeightM.
// Hiatuses are reviewed like tie points, since the age–height model honours them.
type Hiatus struct {
	ID            int64       `json:"id"`
	SectionID     int64       `json:"section_id"`
	Section       string      `json:"section"`
	HeightM       float64     `json:"height_m"`
	MinDurationMa float64     `json:"min_duration_ma"`
	ReviewState   ReviewState `json:"review_state"` // pending, accepted, rejected: age models use accepted hiatuses by default
	ReviewNote    string      `json:"review_note"`
	Notes         string      `json:"notes"`
	Version       int         `json:"version"`
	CreatedAt     string      `json:"created_at"`
	UpdatedAt     string      `json:"updated_at"`
}

// hiatusColumns are the columns of the hiatuses file of a section (and the cells of the hiatus form, read
// with the same row parser).
var hiatusColumns = mustFormat("hiatuses").ColumnNames()

const hiatusSelect = `SELECT h.id, h.section_id, s.name, h.height_m, h.min_duration_ma, h.review_state, h.review_note,
	h.notes, h.version, h.created_at, h.updated_at FROM hiatuses h JOIN sections s ON s.id = h.section_id`

func scanHiatus(r interface{ Scan(...any) error }) (Hiatus, error) {
	var h Hiatus
	err := r.Scan(&h.ID, &h.SectionID, &h.Section, &h.HeightM, &h.MinDurationMa, &h.ReviewState, &h.ReviewNote,
		&h.Notes, &h.Version, &h.CreatedAt, &h.UpdatedAt)
	return h, err
}

// Hiatuses returns the hiatuses of a section, whatever their review state, lowest first.
func (d *DB) Hiatuses(ctx context.Context, sectionID int64) ([]Hiatus, error) {
	return queryAll(ctx, d.reader(), hiatusSelect+` WHERE h.section_id = ? ORDER BY h.height_m, h.id`, []any{sectionID}, scanHiatus)
}

// Hiatus returns one hiatus, or ErrNotFound.
func (d *DB) Hiatus(ctx context.Context, id int64) (Hiatus, error) {
	h, err := scanHiatus(d.reader().QueryRowContext(ctx, hiatusSelect+` WHERE h.id = ?`, id))
	return h, notFound(err, "hiatus", id)
}

func hiatusInTx(ctx context.Context, tx *sql.Tx, id int64) (Hiatus, error) {
	h, err := scanHiatus(tx.QueryRowContext(ctx, hiatusSelect+` WHERE h.id = ?`, id))
	return h, notFound(err, "hiatus", id)
}

func hiatusType() recordType[Hiatus] {
	return recordType[Hiatus]{
		name:  "hiatus",
		table: "hiatuses",
		cols:  []string{"section_id", "height_m", "min_duration_ma", "review_state", "review_note", "notes"},
		vals: func(h Hiatus) []any {
			return []any{h.SectionID, h.HeightM, h.MinDurationMa, h.ReviewState, h.ReviewNote, h.Notes}
		},
		meta:  func(h Hiatus) (int64, int, string) { return h.ID, h.Version, h.CreatedAt },
		label: hiatusLabel,
		load:  hiatusInTx,
		form:  FormOfHiatus,
		summary: func(done string, h Hiatus) string {
			return fmt.Sprintf("%s %s of %s", done, hiatusLabel(h), h.Section)
		},
		review: &reviewing[Hiatus]{
			of:    func(h *Hiatus) (*ReviewState, *string) { return &h.ReviewState, &h.ReviewNote },
			what:  func(h Hiatus) string { return fmt.Sprintf("at %s m of %s", formatNumber(h.HeightM), h.Section) },
			title: hiatusLabel,
		},
	}
}

// hiatusLabel names a hiatus by its height (it has no name), e.g. `hiatus at 31.5 m`.
func hiatusLabel(h Hiatus) string {
	return fmt.Sprintf("hiatus at %s m", formatNumber(h.HeightM))
}

// writeHiatusesCSV writes hiatuses in their columns (hiatusColumns), with their review state.
func writeHiatusesCSV(w io.Writer, hs []Hiatus) error {
	return writeCSV(w, hiatusColumns, func(emit func([]string) error) error {
		for _, h := range hs {
			if err := emit([]string{formatNumber(h.HeightM), formatNumber(h.MinDurationMa), string(h.ReviewState), h.Notes}); err != nil {
				return err
			}
		}
		return nil
	})
}

// FormOfHiatus gives the form cells of a stored hiatus: height, minimum duration, review state and notes.
func FormOfHiatus(h Hiatus) Form {
	return formOf(func(w io.Writer) error { return writeHiatusesCSV(w, []Hiatus{h}) })
}

// parseHiatusRow reads one row of hiatus cells: a height in metres above the section's base and the least
// time the surface represents, in Ma (0 when only the surface is known).
func parseHiatusRow(rw row) Hiatus {
	h := Hiatus{ReviewState: reviewStateCell(rw, ReviewAccepted), Notes: rw.str("notes")}
	if z, ok := rw.float("height_m"); ok {
		h.HeightM = z
	}
	if dur, ok := rw.float("min_duration_ma"); ok {
		switch {
		case dur < 0:
			rw.problem("min_duration_ma", "want a duration in Ma of 0 or more, got %s", formatNumber(dur))
		case dur > 4600:
			rw.problem("min_duration_ma", "want a duration in Ma of at most 4600, got %s (years instead of Ma?)", formatNumber(dur))
		default:
			h.MinDurationMa = dur
		}
	}
	return h
}

// parseHiatusForm checks a form with the hiatus row parser, its review state included (a contributor's
// hiatus is pending whatever the form says). Problems name fields.
func parseHiatusForm(f Form, asCurator bool) (Hiatus, []Problem) {
	rw, t := formRow(hiatusColumns, f)
	h := parseHiatusRow(rw)
	if !asCurator {
		h.ReviewState = ReviewPending
	}
	return h, t.problems
}

// hiatusHeightProblem refuses a second hiatus at one height of a section: the age model cannot place two.
func hiatusHeightProblem(ctx context.Context, tx *sql.Tx, h *Hiatus) ([]Problem, error) {
	return uniqueProblem(ctx, tx, "height_m", fmt.Sprintf("the section already has a hiatus at %s m", formatNumber(h.HeightM)),
		`SELECT id FROM hiatuses WHERE section_id = ? AND height_m = ? AND id <> ?`, h.SectionID, h.HeightM, h.ID)
}

// CreateHiatus adds one hiatus to section sectionID from a form, as the actor of ctx. A contributor's
// hiatus (asCurator false) starts pending; a curator's takes the form's review_state (accepted when
// empty). It returns ErrNotFound for an unknown section and a *ValidationError naming fields.
func (d *DB) CreateHiatus(ctx context.Context, sectionID int64, f Form, asCurator bool) (Hiatus, error) {
	h, problems := parseHiatusForm(f, asCurator)
	return hiatusType().save(ctx, d, 0, 0, h, problems, inSection(sectionID, placeHiatus, hiatusHeightProblem))
}

// placeHiatus puts a new hiatus in its section; an edited one stays in its section and keeps its review
// note.
func placeHiatus(h, before *Hiatus, sectionID int64) {
	if before == nil {
		h.SectionID = sectionID
		return
	}
	h.ID, h.SectionID, h.ReviewNote = before.ID, before.SectionID, before.ReviewNote
}

// UpdateHiatus replaces hiatus id with the form's values when the stored version is still version;
// otherwise it returns ErrConflict and changes nothing. The hiatus stays in its section and keeps its
// review note; a contributor's edit (asCurator false) makes it pending.
func (d *DB) UpdateHiatus(ctx context.Context, id int64, version int, f Form, asCurator bool) (Hiatus, error) {
	h, problems := parseHiatusForm(f, asCurator)
	return hiatusType().save(ctx, d, id, version, h, problems, inSection(0, placeHiatus, hiatusHeightProblem))
}

// ReviewHiatus accepts or rejects hiatus id (at version), as a curator; a rejection needs a reason, which
// is kept as the review note (an acceptance's note is optional). It returns ErrConflict when the hiatus
// changed since version.
func (d *DB) ReviewHiatus(ctx context.Context, id int64, version int, accept bool, note string) (Hiatus, error) {
	return hiatusType().reviewRecord(ctx, d, id, version, accept, note)
}

// DeleteHiatus removes hiatus id (at version), keeping its last state in the revision; ErrConflict for a
// stale version.
func (d *DB) DeleteHiatus(ctx context.Context, id int64, version int) error {
	return hiatusType().deleteRecord(ctx, d, id, version)
}

// ImportHiatuses imports the hiatuses file of one section: height_m and min_duration_ma (required),
// review_state and notes. Heights must be new to the section and unique in the file. All or nothing.
func (d *DB) ImportHiatuses(ctx context.Context, section, file string, r io.Reader) (ImportResult, error) {
	var recs []Hiatus
	return d.importFile(ctx, "hiatuses", file, r, mustFormat("hiatuses").RequiredNames(), hiatusColumns,
		func(t *csvTable) {
			seen := firstLines{}
			for i := range t.rows {
				rw := t.row(i)
				h := parseHiatusRow(rw)
				seen.note(rw, "height_m", rw.str("height_m"))
				recs = append(recs, h)
			}
		},
		func(tx *sql.Tx, t *csvTable, batch int64, res *ImportResult) error {
			sid, err := sectionIDByName(ctx, tx, section, file)
			if err != nil {
				return err
			}
			pendingNote(ctx, res, len(recs), "hiatuses", func(i int) *ReviewState { return &recs[i].ReviewState })
			for i := range recs {
				recs[i].SectionID = sid
				ps, err := hiatusHeightProblem(ctx, tx, &recs[i])
				if err != nil {
					return err
				}
				for _, p := range ps {
					t.row(i).problem(p.Column, "%s", p.Message)
				}
			}
			if t.err() != nil {
				return nil
			}
			for _, h := range recs {
				if _, err := hiatusType().insert(ctx, d, tx, batch, h); err != nil {
					return err
				}
				res.Added["hiatuses"]++
			}
			return nil
		})
}
