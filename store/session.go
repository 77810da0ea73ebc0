package store

import (
	"context"
	"database/sql"
	"database/sql/driver"
	"errors"
	"strconv"
	"time"
)

// Sessions of signed-in readers live in the sessions table in the format of scs's sqlite3store: the
// token, the encoded data, and the expiry as a Julian day. The policy of when to write (and of keeping
// a session in memory when the database cannot be written) is the web package's; these are its rows.

// julianFormat is how sqlite3store passes an expiry to julianday().
const julianFormat = "2006-01-02T15:04:05.999"

func julian(t time.Time) string { return t.UTC().Format(julianFormat) }

// Session returns the data of the session token if it has not expired (found false otherwise).
func (d *DB) Session(ctx context.Context, token string) (data []byte, found bool, err error) {
	err = d.reader().QueryRowContext(ctx, `SELECT data FROM sessions WHERE token = ? AND julianday('now') < expiry`, token).Scan(&data)
	if errors.Is(err, sql.ErrNoRows) {
		return nil, false, nil
	}
	return data, err == nil, err
}

// SessionBehind returns the stored data of the session token, expired or not, and how far its stored
// expiry lies before expiry (found false when there is no row).
func (d *DB) SessionBehind(ctx context.Context, token string, expiry time.Time) (data []byte, behind time.Duration, found bool, err error) {
	var days float64
	err = d.reader().QueryRowContext(ctx, `SELECT data, julianday(?) - expiry FROM sessions WHERE token = ?`, julian(expiry), token).Scan(&data, &days)
	if errors.Is(err, sql.ErrNoRows) {
		return nil, 0, false, nil
	}
	return data, time.Duration(days * 24 * float64(time.Hour)), err == nil, err
}

// SaveSession writes the session token with its data and expiry, replacing any row of the token.
func (d *DB) SaveSession(ctx context.Context, token string, data []byte, expiry time.Time) error {
	_, err := d.db.ExecContext(ctx, `REPLACE INTO sessions (token, data, expiry) VALUES (?, ?, julianday(?))`, token, data, julian(expiry))
	return err
}

// TouchSession moves a stored session's expiry on if the write lock is free at once; it never waits
// (the connection's busy timeout is 0 for the update, then restored).
func (d *DB) TouchSession(ctx context.Context, token string, expiry time.Time) error {
	conn, err := d.db.Conn(ctx)
	if err != nil {
		return err
	}
	defer conn.Close()
	var timeout int
	if err := conn.QueryRowContext(ctx, `PRAGMA busy_timeout`).Scan(&timeout); err != nil {
		return err
	}
	if _, err := conn.ExecContext(ctx, `PRAGMA busy_timeout = 0`); err != nil {
		return err
	}
	_, err = conn.ExecContext(ctx, `UPDATE sessions SET expiry = julianday(?) WHERE token = ?`, julian(expiry), token)
	if _, rerr := conn.ExecContext(context.WithoutCancel(ctx), `PRAGMA busy_timeout = `+strconv.Itoa(timeout)); rerr != nil {
		// The connection would wait for no lock from now on: drop it from the pool.
		conn.Raw(func(any) error { return driver.ErrBadConn })
	}
	return err
}

// DeleteSession removes the session token.
func (d *DB) DeleteSession(ctx context.Context, token string) error {
	_, err := d.db.ExecContext(ctx, `DELETE FROM sessions WHERE token = ?`, token)
	return err
}

// DeleteExpiredSessions removes every expired session.
func (d *DB) DeleteExpiredSessions(ctx context.Context) error {
	_, err := d.db.ExecContext(ctx, `DELETE FROM sessions WHERE expiry < julianday('now')`)
	return err
}
