package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"strings"
)

// ReviewState is where a contributed record (a date, event, tie point or hiatus) stands in review. The
// tables hold it as text with a CHECK on these three values (migrations 001, 006, 007).
type ReviewState string

const (
	ReviewPending  ReviewState = "pending"  // waits for a curator; computations leave it out by default
	ReviewAccepted ReviewState = "accepted" // what computations use by default
	ReviewRejected ReviewState = "rejected" // kept, with the curator's reason in the review note
)

// Valid reports whether s is one of the review states.
func (s ReviewState) Valid() bool {
	switch s {
	case ReviewPending, ReviewAccepted, ReviewRejected:
		return true
	}
	return false
}

// ParseReviewState reads a review state as written in a file, form or address; the error names the
// field and the states it accepts.
func ParseReviewState(s string) (ReviewState, error) {
	if st := ReviewState(s); st.Valid() {
		return st, nil
	}
	return "", &ValidationError{[]Problem{{Column: "review_state",
		Message: fmt.Sprintf("unknown value %q; want one of %s, %s, %s", s, ReviewPending, ReviewAccepted, ReviewRejected)}}}
}

// reviewStateCell reads the review_state cell of a row (def when empty), recording a problem for an
// unknown state.
func reviewStateCell(rw row, def ReviewState) ReviewState {
	return ReviewState(rw.enum("review_state", codes(ReviewStates()), string(def)))
}

// reviewing is how a kind that curators review keeps its review: where a record holds its state and note,
// and how a review names it.
type reviewing[T any] struct {
	of    func(*T) (*ReviewState, *string) // the record's review state and review note
	what  func(T) string                   // the record in a review's summary, after "accept date": "HV-12-04"
	title func(T) string                   // a record left for review one by one: "date HV-12-04"
}

func (rt recordType[T]) reviewTable() (string, bool) { return rt.table, rt.review != nil }

// reviewRecord accepts or rejects record id (at version) as a curator, in a change batch of its own; a
// rejection needs a reason, which is kept as the review note (an acceptance's note is optional). It returns
// ErrConflict when the record changed since version.
func (rt recordType[T]) reviewRecord(ctx context.Context, d *DB, id int64, version int, accept bool, note string) (T, error) {
	var out T
	if rt.review == nil {
		return out, fmt.Errorf("%s records are not reviewed", rt.noun())
	}
	note = strings.TrimSpace(note)
	if !accept && note == "" {
		return out, &ValidationError{[]Problem{{Column: "note", Message: "say why the " + rt.noun() + " is rejected"}}}
	}
	if err := freeText("note", note, true); err != nil {
		return out, err
	}
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		before, err := rt.load(ctx, tx, id)
		if err != nil {
			return err
		}
		x := before
		state, text := rt.review.of(&x)
		*state, *text = ReviewRejected, note
		kind := "reject " + rt.noun()
		if accept {
			*state, kind = ReviewAccepted, "accept "+rt.noun()
		}
		batch, err := d.newBatch(ctx, tx, kind, "review")
		if err != nil {
			return err
		}
		if out, err = rt.update(ctx, d, tx, batch, id, version, x); err != nil {
			return err
		}
		return setBatchSummary(ctx, tx, batch, fmt.Sprintf("%s %s: %s", kind, rt.review.what(before), orNone(note)))
	})
	return out, err
}

func (rt recordType[T]) reviewByID(ctx context.Context, d *DB, id int64, version int, accept bool, note string) error {
	_, err := rt.reviewRecord(ctx, d, id, version, accept, note)
	return err
}

func orNone(s string) string {
	if s == "" {
		return "no note"
	}
	return s
}

// Review accepts or rejects a record of recordType (one of the reviewed kinds: date, event, tie_point,
// hiatus) at version, as a curator; see reviewRecord.
func (d *DB) Review(ctx context.Context, recordType string, id int64, version int, accept bool, note string) error {
	if !Reviewed(recordType) {
		return fmt.Errorf("%s records are not reviewed", strings.ReplaceAll(recordType, "_", " "))
	}
	return kinds()[recordType].reviewByID(ctx, d, id, version, accept, note)
}

// Reviewed reports whether records of recordType are reviewed by a curator.
func Reviewed(recordType string) bool {
	k, ok := kinds()[recordType]
	if !ok {
		return false
	}
	_, reviewed := k.reviewTable()
	return reviewed
}

// acceptPending accepts record id, in batch, when it still waits for review as it was added (same); a
// pending record changed since is not accepted, and the second result names it.
func (rt recordType[T]) acceptPending(ctx context.Context, d *DB, tx *sql.Tx, batch int64, id int64, same bool) (bool, string, error) {
	if rt.review == nil {
		return false, "", nil
	}
	x, err := rt.load(ctx, tx, id)
	if errors.Is(err, ErrNotFound) {
		return false, "", nil
	} else if err != nil {
		return false, "", err
	}
	state, _ := rt.review.of(&x)
	if *state != ReviewPending {
		return false, "", nil
	}
	if !same {
		return false, rt.review.title(x), nil
	}
	_, version, _ := rt.meta(x)
	*state = ReviewAccepted
	_, err = rt.update(ctx, d, tx, batch, id, version, x)
	return err == nil, "", err
}
