package store

import (
	"errors"
	"fmt"
	"strings"

	"modernc.org/sqlite"
)

// ErrNotFound is returned when a record asked for by id or name does not exist.
var ErrNotFound = errors.New("not found")

// ErrConflict is returned when an edit was made against a version of a record that is no longer current.
var ErrConflict = errors.New("edit conflict: the record changed since it was read")

// Problem is one thing wrong with user input: where it is (file, line, column or form field) and what was
// expected. Line is 1-based (the header is line 1); zero means the problem concerns the whole file.
type Problem struct {
	File    string `json:"file,omitempty"`
	Line    int    `json:"line,omitempty"`
	Column  string `json:"column,omitempty"`
	Message string `json:"message"`
}

func (p Problem) String() string {
	var b strings.Builder
	if p.File != "" {
		b.WriteString(p.File)
	}
	if p.Line > 0 {
		if b.Len() > 0 {
			b.WriteString(": ")
		}
		fmt.Fprintf(&b, "line %d", p.Line)
	}
	if p.Column != "" {
		if b.Len() > 0 {
			b.WriteString(", ")
		}
		fmt.Fprintf(&b, "column %s", p.Column)
	}
	if b.Len() > 0 {
		b.WriteString(": ")
	}
	b.WriteString(p.Message)
	return b.String()
}

// ValidationError carries every problem found in one piece of input. When it is returned, nothing was written.
type ValidationError struct {
	Problems []Problem
}

func (e *ValidationError) Error() string {
	lines := make([]string, 0, len(e.Problems)+1)
	lines = append(lines, fmt.Sprintf("%d problem(s); nothing was imported", len(e.Problems)))
	for _, p := range e.Problems {
		lines = append(lines, "  "+p.String())
	}
	return strings.Join(lines, "\n")
}

// AsValidation reports whether err is (or wraps) a *ValidationError and returns it.
func AsValidation(err error) (*ValidationError, bool) {
	var ve *ValidationError
	ok := errors.As(err, &ve)
	return ve, ok
}

// isForeignKeyViolation recognises a foreign-key refusal by its SQLite extended code: 787
// (SQLITE_CONSTRAINT_FOREIGNKEY) for deferred checks and 1811 (SQLITE_CONSTRAINT_TRIGGER) for RESTRICT.
func isForeignKeyViolation(err error) bool {
	var se *sqlite.Error
	if !errors.As(err, &se) {
		return false
	}
	return se.Code() == 787 || se.Code() == 1811
}

// IsUnwritable reports whether err is SQLite refusing a write because the database is read-only
// (SQLITE_READONLY, 8), the disk or the database's page limit is full (SQLITE_FULL, 13), or a file it
// needs to write cannot be opened (SQLITE_CANTOPEN, 14: read-only storage), whatever the extended code.
// Reads still work then; callers say so instead of reporting an internal error.
func IsUnwritable(err error) bool {
	primary := sqliteCode(err) & 0xff
	return primary == 8 || primary == 13 || primary == 14
}

// IsBusy reports whether err is SQLite giving up on a lock another connection held for longer than the
// busy timeout (SQLITE_BUSY, 5, or SQLITE_LOCKED, 6): the request may succeed when tried again.
func IsBusy(err error) bool {
	primary := sqliteCode(err) & 0xff
	return primary == 5 || primary == 6
}

func isCantOpen(err error) bool { return sqliteCode(err)&0xff == 14 }

// sqliteCode is err's SQLite result code, or 0 when err is not from SQLite.
func sqliteCode(err error) int {
	var se *sqlite.Error
	if !errors.As(err, &se) {
		return 0
	}
	return se.Code()
}
