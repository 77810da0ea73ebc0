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

// AddSectionEvent adds an entered event (a horizon, or an interval when the top is given) to section
// sectionID, as the actor of ctx: CreateEvent with the fields of the section page's form. A contributor's
// event is pending until a curator accepts it; a curator's is accepted. Problems with the form come back
// as a *ValidationError whose problems name the fields; nothing is written then.
func (d *DB) AddSectionEvent(ctx context.Context, sectionID int64, f EventForm, asCurator bool) (Event, error) {
	return d.CreateEvent(ctx, sectionID, Form{"name": f.Name, "kind": f.Kind, "base_height_m": f.BaseHeightM,
		"top_height_m": f.TopHeightM, "notes": f.Notes, "review_state": string(ReviewAccepted)}, asCurator)
}

// insertEvent writes a new event of a section and records its creation in batch; it sets ev.ID and
// ev.Version.
func (d *DB) insertEvent(ctx context.Context, tx *sql.Tx, batch int64, ev *Event) error {
	now := d.stamp()
	id, err := nextID(ctx, tx, "events", "event")
	if err != nil {
		return err
	}
	_, err = tx.ExecContext(ctx, `INSERT INTO events (id, section_id, name, kind, base_height_m, top_height_m,
		origin, review_state, notes, created_at, updated_at) VALUES (?,?,?,?,?,?,?,?,?,?,?)`,
		id, ev.SectionID, ev.Name, ev.Kind, ev.BaseHeightM, ev.TopHeightM, ev.Origin, ev.ReviewState, strings.TrimSpace(ev.Notes), now, now)
	if err != nil {
		return fmt.Errorf("insert event %q: %w", ev.Name, err)
	}
	ev.ID = id
	ev.Version = 1
	return addRevision(ctx, tx, batch, "event", ev.ID, nil, *ev)
}
