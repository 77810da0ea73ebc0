package store

import (
	"context"
	"database/sql"
	"encoding/json"
)

type actorKey struct{}

// WithActor marks ctx as acting for a user: the change batches written under it record who made them.
func WithActor(ctx context.Context, userID int64) context.Context {
	return context.WithValue(ctx, actorKey{}, userID)
}

func actor(ctx context.Context) *int64 {
	if id, ok := ctx.Value(actorKey{}).(int64); ok && id != 0 {
		return &id
	}
	return nil
}

// Revision is one recorded change of one record, with the batch it belongs to.
type Revision struct {
	ID         int64           `json:"id"`
	BatchID    int64           `json:"batch_id"`
	Kind       string          `json:"kind"`
	Source     string          `json:"source"`
	At         string          `json:"at"`
	User       string          `json:"user"`
	RecordType string          `json:"record_type"`
	RecordID   int64           `json:"record_id"`
	Before     json.RawMessage `json:"before"`
	After      json.RawMessage `json:"after"`
}

const revisionSelect = `SELECT r.id, r.batch_id, b.kind, b.source, b.at, coalesce(u.name, ''), r.record_type, r.record_id,
	r.before_json, r.after_json FROM revisions r JOIN change_batches b ON b.id = r.batch_id
	LEFT JOIN users u ON u.id = b.user_id`

func scanRevision(s interface{ Scan(...any) error }) (Revision, error) {
	var r Revision
	var before, after sql.NullString
	err := s.Scan(&r.ID, &r.BatchID, &r.Kind, &r.Source, &r.At, &r.User, &r.RecordType, &r.RecordID, &before, &after)
	if before.Valid {
		r.Before = json.RawMessage(before.String)
	}
	if after.Valid {
		r.After = json.RawMessage(after.String)
	}
	return r, err
}

// Revisions returns the history of one record, newest first.
func (d *DB) Revisions(ctx context.Context, recordType string, id int64) ([]Revision, error) {
	return queryAll(ctx, d.reader(), revisionSelect+` WHERE r.record_type = ? AND r.record_id = ? ORDER BY r.id DESC`,
		[]any{recordType, id}, scanRevision)
}

// RevisionByID returns one revision, or ErrNotFound.
func (d *DB) RevisionByID(ctx context.Context, id int64) (Revision, error) {
	r, err := scanRevision(d.reader().QueryRowContext(ctx, revisionSelect+` WHERE r.id = ?`, id))
	return r, notFound(err, "revision", id)
}

// BatchRevisions returns the revisions of one change batch, in the order they were made.
func (d *DB) BatchRevisions(ctx context.Context, batchID int64) ([]Revision, error) {
	return queryAll(ctx, d.reader(), revisionSelect+` WHERE r.batch_id = ? ORDER BY r.id`, []any{batchID}, scanRevision)
}

// BatchRevisionsAfter returns up to limit revisions of one change batch made after revision after (0: from
// the first), in the order they were made: one page of a change, keyset on the revision id (index
// revisions_batch), so that every page costs the same.
func (d *DB) BatchRevisionsAfter(ctx context.Context, batchID, after int64, limit int) ([]Revision, error) {
	return queryAll(ctx, d.reader(), revisionSelect+` WHERE r.batch_id = ? AND r.id > ? ORDER BY r.id LIMIT ?`,
		[]any{batchID, after, max(limit, 1)}, scanRevision)
}

// BatchByID returns one change batch with who made it and how many revisions it holds, or ErrNotFound.
func (d *DB) BatchByID(ctx context.Context, id int64) (BatchRow, error) {
	var b BatchRow
	err := d.reader().QueryRowContext(ctx, `SELECT b.id, b.kind, b.source, b.at, b.summary, coalesce(u.name, '')
		FROM change_batches b LEFT JOIN users u ON u.id = b.user_id WHERE b.id = ?`, id).
		Scan(&b.ID, &b.Kind, &b.Source, &b.At, &b.Summary, &b.User)
	if err != nil {
		return b, notFound(err, "change", id)
	}
	b.Revisions, err = d.revisionCount(ctx, id)
	return b, err
}
