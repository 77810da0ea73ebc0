package store

import (
	"context"
	"database/sql"
	"fmt"
	"strings"
)

// EventForm holds an event of a section as typed in a form, by the column names of the events import.
type EventForm struct {
	Name        string
	Kind        string
	BaseHeightM string
	TopHeightM  string // empty for a horizon
	Notes       string
}

// maxEventName bounds an event's name so a page can show it in one table cell.
const maxEventName = 200

// parseEventForm checks a form with the rules of the events importer; problems name fields.
func parseEventForm(f EventForm) (Event, []Problem) {
	cols := []string{"name", "kind", "base_height_m", "top_height_m", "notes"}
	t := &csvTable{idx: map[string]int{}, header: cols, lines: []int{0}}
	for i, c := range cols {
		t.idx[c] = i
	}
	t.rows = [][]string{{f.Name, f.Kind, f.BaseHeightM, f.TopHeightM, f.Notes}}
	rw := t.row(0)
	ev := Event{Name: rw.requiredStr("name"), Kind: rw.enum("kind", codes(EventKinds()), ""),
		TopHeightM: rw.optFloat("top_height_m"), Notes: rw.str("notes")}
	if len([]rune(ev.Name)) > maxEventName {
		rw.problem("name", "is %d characters long; at most %d", len([]rune(ev.Name)), maxEventName)
	}
	if b, ok := rw.float("base_height_m"); ok {
		ev.BaseHeightM = &b
		if ev.TopHeightM != nil && *ev.TopHeightM < b {
			rw.problem("top_height_m", "want the top (%s m) at or above the base (%s m)", formatNumber(*ev.TopHeightM), formatNumber(b))
		}
	}
	return ev, t.problems
}

// AddSectionEvent adds an entered event (a horizon, or an interval when the top is given) to section
// sectionID, as the actor of ctx, in one change batch. A contributor's event is pending until a curator
// accepts it; a curator's is accepted. Problems with the form come back as a *ValidationError whose
// problems name the fields (name, kind, base_height_m, top_height_m); nothing is written then.
func (d *DB) AddSectionEvent(ctx context.Context, sectionID int64, f EventForm, asCurator bool) (Event, error) {
	ev, problems := parseEventForm(f)
	ev.Origin, ev.ReviewState = "entered", "pending"
	if asCurator {
		ev.ReviewState = "accepted"
	}
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		var name string
		if err := tx.QueryRowContext(ctx, `SELECT name FROM sections WHERE id = ?`, sectionID).Scan(&name); err != nil {
			return notFound(err, "section", sectionID)
		}
		if ev.Name != "" {
			if id, err := lookupID(ctx, tx, `SELECT id FROM events WHERE section_id = ? AND name = ?`, sectionID, ev.Name); err != nil {
				return err
			} else if id != 0 {
				problems = append(problems, Problem{Column: "name", Message: fmt.Sprintf("section %s already has an event named %q", name, ev.Name)})
			}
		}
		if len(problems) > 0 {
			return &ValidationError{problems}
		}
		batch, err := d.newBatch(ctx, tx, "add event", "form")
		if err != nil {
			return err
		}
		ev.SectionID, ev.Section = &sectionID, name
		if err := d.insertEvent(ctx, tx, batch, &ev); err != nil {
			return err
		}
		return setBatchSummary(ctx, tx, batch, fmt.Sprintf("added event %s to %s (%s)", ev.Name, name, ev.ReviewState))
	})
	if err != nil {
		return Event{}, err
	}
	return ev, nil
}

// insertEvent writes a new event of a section and records its creation in batch; it sets ev.ID and
// ev.Version.
func (d *DB) insertEvent(ctx context.Context, tx *sql.Tx, batch int64, ev *Event) error {
	now := d.stamp()
	r, err := tx.ExecContext(ctx, `INSERT INTO events (section_id, name, kind, base_height_m, top_height_m,
		origin, review_state, notes, created_at, updated_at) VALUES (?,?,?,?,?,?,?,?,?,?)`,
		ev.SectionID, ev.Name, ev.Kind, ev.BaseHeightM, ev.TopHeightM, ev.Origin, ev.ReviewState, strings.TrimSpace(ev.Notes), now, now)
	if err != nil {
		return fmt.Errorf("insert event %q: %w", ev.Name, err)
	}
	ev.ID, _ = r.LastInsertId()
	ev.Version = 1
	return addRevision(ctx, tx, batch, "event", ev.ID, nil, *ev)
}
