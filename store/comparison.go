package store

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"strings"
)

// Comparison is a saved comparison page: its name, its query string (every choice of the page), and
// the state of the compilation it was computed on (DataStamp at the time of saving).
type Comparison struct {
	ID        int64  `json:"id"`
	Name      string `json:"name"`
	Query     string `json:"query"`
	DataStamp int64  `json:"data_stamp"`
	// Release is the version of the release the comparison is pinned to ("" for the current data).
	Release string `json:"release,omitempty"`
	// Pulses are the pulses the comparison had when it was saved (none for one saved before they were
	// kept), so that its page can match them with today's by their ages.
	Pulses    []SavedPulse `json:"pulses,omitempty"`
	UserID    *int64       `json:"user_id"`
	User      string       `json:"user"`
	CreatedAt string       `json:"created_at"`
}

// SavedPulse is a pulse of a saved comparison as it was when saved: its code and its age range (Ma).
type SavedPulse struct {
	Code    string  `json:"code"`
	ModeMa  float64 `json:"mode_ma"`
	OldMa   float64 `json:"old_ma"`
	YoungMa float64 `json:"young_ma"`
}

// DataStamp returns the state of the compilation: the number of the latest change batch (0 for an
// empty compilation). Every import, edit, review, revert and undo is a change batch, so a larger stamp
// means the records may have changed; an equal stamp means they have not.
func (d *DB) DataStamp(ctx context.Context) (int64, error) {
	var n int64
	if err := d.reader().QueryRowContext(ctx, `SELECT COALESCE(MAX(id), 0) FROM change_batches`).Scan(&n); err != nil {
		return 0, fmt.Errorf("data stamp: %w", err)
	}
	return n, nil
}

// SaveComparison stores a comparison under the acting user (WithActor) and returns its id. The name
// must be 1–200 characters and the query at most 4000; a *ValidationError says which is wrong.
func (d *DB) SaveComparison(ctx context.Context, c Comparison) (int64, error) {
	var probs []Problem
	c.Name = strings.TrimSpace(c.Name)
	if c.Name == "" || len([]rune(c.Name)) > 200 {
		probs = append(probs, Problem{Column: "name", Message: "give the comparison a name of 1 to 200 characters"})
	} else if msg := textProblem(c.Name, false); msg != "" {
		probs = append(probs, Problem{Column: "name", Message: msg})
	}
	if len(c.Query) > 4000 {
		probs = append(probs, Problem{Column: "query", Message: "the settings are longer than 4000 characters"})
	}
	if c.DataStamp < 0 {
		probs = append(probs, Problem{Column: "data_stamp", Message: "want a stamp ≥ 0"})
	}
	if c.Release != "" {
		if _, err := d.ReleaseByVersion(ctx, c.Release); errors.Is(err, ErrNotFound) {
			probs = append(probs, Problem{Column: "release", Message: fmt.Sprintf("there is no release %q", c.Release)})
		} else if err != nil {
			return 0, err
		}
	}
	if len(probs) > 0 {
		return 0, &ValidationError{probs}
	}
	var user any
	if id := actor(ctx); id != nil {
		user = *id
	}
	pulses := ""
	if len(c.Pulses) > 0 {
		b, err := json.Marshal(c.Pulses)
		if err != nil {
			return 0, fmt.Errorf("save comparison: %w", err)
		}
		pulses = string(b)
	}
	r, err := d.db.ExecContext(ctx, `INSERT INTO comparisons (name, query, data_stamp, release_version, user_id, created_at, pulses) VALUES (?, ?, ?, ?, ?, ?, ?)`,
		c.Name, c.Query, c.DataStamp, c.Release, user, d.stamp(), pulses)
	if err != nil {
		return 0, fmt.Errorf("save comparison: %w", err)
	}
	return r.LastInsertId()
}

const comparisonSelect = `SELECT c.id, c.name, c.query, c.data_stamp, c.release_version, c.user_id, COALESCE(u.name, ''), c.created_at, c.pulses
	FROM comparisons c LEFT JOIN users u ON u.id = c.user_id`

type rowScanner interface{ Scan(dest ...any) error }

func scanComparison(r rowScanner) (Comparison, error) {
	var c Comparison
	var pulses string
	if err := r.Scan(&c.ID, &c.Name, &c.Query, &c.DataStamp, &c.Release, &c.UserID, &c.User, &c.CreatedAt, &pulses); err != nil {
		return c, err
	}
	if pulses != "" {
		if err := json.Unmarshal([]byte(pulses), &c.Pulses); err != nil {
			return c, fmt.Errorf("comparison %d: its pulses: %w", c.ID, err)
		}
	}
	return c, nil
}

// Comparisons lists the saved comparisons, newest first.
func (d *DB) Comparisons(ctx context.Context) ([]Comparison, error) {
	rows, err := d.reader().QueryContext(ctx, comparisonSelect+` ORDER BY c.created_at DESC, c.id DESC`)
	if err != nil {
		return nil, fmt.Errorf("comparisons: %w", err)
	}
	defer rows.Close()
	var out []Comparison
	for rows.Next() {
		c, err := scanComparison(rows)
		if err != nil {
			return nil, fmt.Errorf("comparisons: %w", err)
		}
		out = append(out, c)
	}
	return out, rows.Err()
}

// Comparison returns one saved comparison, or ErrNotFound.
func (d *DB) Comparison(ctx context.Context, id int64) (Comparison, error) {
	c, err := scanComparison(d.reader().QueryRowContext(ctx, comparisonSelect+` WHERE c.id = ?`, id))
	return c, notFound(err, "comparison", id)
}
