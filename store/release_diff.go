package store

import (
	"context"
	"database/sql"
	"fmt"
	"slices"
)

// ReleaseChange is one record added, changed or removed between two releases.
type ReleaseChange struct {
	Kind   string        `json:"kind"`
	ID     int64         `json:"id"`
	Name   string        `json:"name"`
	Change string        `json:"change"` // added, changed, removed
	Fields []FieldChange `json:"fields,omitempty"`
}

// FieldChange is one field of a changed record, before and after.
type FieldChange struct {
	Field  string `json:"field"`
	Before string `json:"before"`
	After  string `json:"after"`
}

// Changelog lists what changed from one release to another, per kind of record, in id order.
type Changelog struct {
	From, To string
	Changes  []ReleaseChange
}

// Count returns how many records of a kind were added, changed and removed.
func (c Changelog) Count(kind string) (added, changed, removed int) {
	for _, ch := range c.Changes {
		if ch.Kind != kind {
			continue
		}
		switch ch.Change {
		case "added":
			added++
		case "changed":
			changed++
		default:
			removed++
		}
	}
	return
}

// Kinds lists the kinds of record a changelog covers, in order.
func ReleaseKinds() []string {
	var ks []string
	for _, k := range releaseKinds {
		ks = append(ks, k.Kind)
	}
	return ks
}

// bookkeeping columns: they move with every edit and say nothing a reader of a changelog needs.
var diffIgnored = []string{"version", "updated_at", "created_at"}

// DiffReleases compares two release snapshots record by record (every kind a release freezes), field by
// field. It walks both in id order at once, so memory does not grow with the compilation.
func DiffReleases(ctx context.Context, fromPath, toPath string) (Changelog, error) {
	var cl Changelog
	from, err := OpenSnapshot(ctx, fromPath)
	if err != nil {
		return cl, err
	}
	defer from.Close()
	to, err := OpenSnapshot(ctx, toPath)
	if err != nil {
		return cl, err
	}
	defer to.Close()
	for _, k := range releaseKinds {
		changes, err := diffTable(ctx, from.db, to.db, k.Kind, k.Table, k.Name)
		if err != nil {
			return cl, fmt.Errorf("compare %s: %w", k.Table, err)
		}
		cl.Changes = append(cl.Changes, changes...)
	}
	return cl, nil
}

type tableCursor struct {
	rows *sql.Rows
	cols []string
	id   int64
	name string
	vals []sql.NullString
	done bool
}

func openCursor(ctx context.Context, db *sql.DB, table, name string) (*tableCursor, error) {
	rows, err := db.QueryContext(ctx, `SELECT id, `+name+` AS coeval_name, * FROM `+table+` ORDER BY id`)
	if err != nil {
		return nil, err
	}
	cols, err := rows.Columns()
	if err != nil {
		rows.Close()
		return nil, err
	}
	c := &tableCursor{rows: rows, cols: cols[2:]}
	return c, c.next()
}

func (c *tableCursor) next() error {
	if !c.rows.Next() {
		c.done = true
		return c.rows.Err()
	}
	c.vals = make([]sql.NullString, len(c.cols))
	dest := []any{&c.id, new(sql.NullString)}
	for i := range c.vals {
		dest = append(dest, &c.vals[i])
	}
	if err := c.rows.Scan(dest...); err != nil {
		return err
	}
	c.name = dest[1].(*sql.NullString).String
	return nil
}

func (c *tableCursor) value(col string) (sql.NullString, bool) {
	i := slices.Index(c.cols, col)
	if i < 0 {
		return sql.NullString{}, false
	}
	return c.vals[i], true
}

func diffTable(ctx context.Context, from, to *sql.DB, kind, table, name string) ([]ReleaseChange, error) {
	a, err := openCursor(ctx, from, table, name)
	if err != nil {
		return nil, err
	}
	defer a.rows.Close()
	b, err := openCursor(ctx, to, table, name)
	if err != nil {
		return nil, err
	}
	defer b.rows.Close()
	var out []ReleaseChange
	for !a.done || !b.done {
		switch {
		case b.done || !a.done && a.id < b.id:
			out = append(out, ReleaseChange{Kind: kind, ID: a.id, Name: a.name, Change: "removed"})
			err = a.next()
		case a.done || b.id < a.id:
			out = append(out, ReleaseChange{Kind: kind, ID: b.id, Name: b.name, Change: "added"})
			err = b.next()
		default:
			var fields []FieldChange
			for i, col := range b.cols {
				if slices.Contains(diffIgnored, col) {
					continue
				}
				old, ok := a.value(col)
				if !ok || old != b.vals[i] {
					fields = append(fields, FieldChange{Field: col, Before: nullText(old), After: nullText(b.vals[i])})
				}
			}
			if len(fields) > 0 {
				out = append(out, ReleaseChange{Kind: kind, ID: b.id, Name: b.name, Change: "changed", Fields: fields})
			}
			if err = a.next(); err == nil {
				err = b.next()
			}
		}
		if err != nil {
			return nil, err
		}
	}
	return out, nil
}

func nullText(v sql.NullString) string {
	if !v.Valid {
		return "(empty)"
	}
	if v.String == "" {
		return "(empty)"
	}
	return v.String
}
