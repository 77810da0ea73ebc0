package store

import (
	"context"
	"database/sql"
	"fmt"
	"io"
)

func eventType() recordType[Event] {
	return recordType[Event]{
		name:  "event",
		table: "events",
		cols: []string{"section_id", "group_id", "name", "kind", "base_height_m", "top_height_m", "age_ma", "sigma_ma",
			"date_id", "origin", "review_state", "review_note", "notes"},
		vals: func(e Event) []any {
			return []any{e.SectionID, e.GroupID, e.Name, e.Kind, e.BaseHeightM, e.TopHeightM, e.AgeMa, e.SigmaMa,
				e.DateID, e.Origin, e.ReviewState, e.ReviewNote, e.Notes}
		},
		meta:    func(e Event) (int64, int, string) { return e.ID, e.Version, e.CreatedAt },
		label:   func(e Event) string { return fmt.Sprintf("event %q", e.Name) },
		load:    eventInTx,
		form:    FormOfEvent,
		summary: addedOf("event", func(e Event) (string, string) { return e.Name, e.Section }),
		review: &reviewing[Event]{
			of:    func(e *Event) (*ReviewState, *string) { return &e.ReviewState, &e.ReviewNote },
			what:  func(e Event) string { return e.Name },
			title: func(e Event) string { return "event " + e.Name },
		},
	}
}

func eventInTx(ctx context.Context, tx *sql.Tx, id int64) (Event, error) {
	e, err := scanEvent(tx.QueryRowContext(ctx, eventSelect+` WHERE e.id = ?`, id))
	return e, notFound(err, "event", id)
}

// Event returns one event, or ErrNotFound.
func (d *DB) Event(ctx context.Context, id int64) (Event, error) {
	e, err := scanEvent(d.reader().QueryRowContext(ctx, eventSelect+` WHERE e.id = ?`, id))
	return e, notFound(err, "event", id)
}

// FormOfEvent gives the form cells of a stored event: the columns of the events import format and its
// review state.
func FormOfEvent(e Event) Form {
	f := formOf(func(w io.Writer) error { return WriteEventsCSV(w, []Event{e}) })
	f["review_state"] = string(e.ReviewState)
	return f
}

// parseEventForm checks a form with exactly the rules of the events importer, and its review state (a
// contributor's event is pending whatever the form says). Problems name fields.
func parseEventForm(f Form, asCurator bool) (Event, []Problem) {
	rw, t := formRow(append(eventColumns[:len(eventColumns):len(eventColumns)], "review_state"), f)
	ev := parseEventRow(rw)
	ev.ReviewState = reviewStateCell(rw, ReviewAccepted)
	if !asCurator {
		ev.ReviewState = ReviewPending
	}
	return ev, t.problems
}

func eventNameProblem(ctx context.Context, tx *sql.Tx, e Event) ([]Problem, error) {
	return uniqueProblem(ctx, tx, "name", fmt.Sprintf("the section already has an event named %q", e.Name),
		`SELECT id FROM events WHERE section_id = ? AND name = ? AND id <> ?`, e.SectionID, e.Name, e.ID)
}

// CreateEvent adds one entered event to section sectionID from a form, as the actor of ctx. A
// contributor's event starts pending.
func (d *DB) CreateEvent(ctx context.Context, sectionID int64, f Form, asCurator bool) (Event, error) {
	ev, problems := parseEventForm(f, asCurator)
	return eventType().save(ctx, d, 0, 0, ev, problems, func(ctx context.Context, tx *sql.Tx, batch int64, _ *Event, ev *Event, problems []Problem) ([]Problem, error) {
		sec, err := sectionInTx(ctx, tx, sectionID)
		if err != nil {
			return nil, err
		}
		// The name is checked against the section even when other fields are wrong, so that one
		// submission lists every problem.
		ev.SectionID = &sec.ID
		if ev.Name == "" {
			return problems, nil
		}
		ps, err := eventNameProblem(ctx, tx, *ev)
		return append(problems, ps...), err
	})
}

// UpdateEvent replaces the entered fields of event id with the form's values when the stored version is
// still version; otherwise it returns ErrConflict and changes nothing. Its section, origin, direct age,
// linked date, group and review note stay. A contributor's edit makes the event pending.
func (d *DB) UpdateEvent(ctx context.Context, id int64, version int, f Form, asCurator bool) (Event, error) {
	ev, problems := parseEventForm(f, asCurator)
	return eventType().save(ctx, d, id, version, ev, problems, func(ctx context.Context, tx *sql.Tx, batch int64, before *Event, ev *Event, problems []Problem) ([]Problem, error) {
		if len(problems) > 0 {
			return problems, nil
		}
		x := *before
		x.Name, x.Kind, x.BaseHeightM, x.TopHeightM, x.Notes, x.ReviewState = ev.Name, ev.Kind, ev.BaseHeightM, ev.TopHeightM, ev.Notes, ev.ReviewState
		*ev = x
		return eventNameProblem(ctx, tx, x)
	})
}

// ReviewEvent accepts or rejects event id (at version) with a reason, as a curator.
func (d *DB) ReviewEvent(ctx context.Context, id int64, version int, accept bool, note string) (Event, error) {
	return eventType().reviewRecord(ctx, d, id, version, accept, note)
}

// DeleteEvent removes event id (at version), keeping its last state in the revision.
func (d *DB) DeleteEvent(ctx context.Context, id int64, version int) error {
	return eventType().deleteRecord(ctx, d, id, version)
}
