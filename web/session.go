package web

import (
	"bytes"
	"context"
	"log/slog"
	"reflect"
	"sync"
	"time"

	"github.com/alexedwards/scs/v2"

	"coeval/store"
)

// sessionStore keeps scs sessions in the sessions table (the format of scs's sqlite3store: data, and
// the expiry as a Julian day), so that reading never depends on writing:
//
//   - scs re-commits every session on every request to move its idle expiry on. A commit whose data are
//     unchanged (a "touch") is written only when the stored expiry is more than touchEvery older than the
//     new one, and it never waits for the write lock: when the database is busy, read-only or full, the
//     touch is skipped and the request goes on.
//   - a session whose data changed (signing in or out) is written with the database's busy timeout; when
//     the database cannot be written (read-only storage, full disk) it is kept in memory instead, so
//     signing in still works, until the server stops. A busy database is reported (503, try again).
//   - on a database opened read-only every session change is kept in memory; sessions already in the
//     table stay valid.
type sessionStore struct {
	db         sessionRows
	readOnly   bool
	touchEvery time.Duration
	log        *slog.Logger

	mu  sync.Mutex
	mem map[string]memSession
}

// sessionRows are the session rows of the database (store.DB's Session… methods).
type sessionRows interface {
	Session(ctx context.Context, token string) ([]byte, bool, error)
	SessionBehind(ctx context.Context, token string, expiry time.Time) ([]byte, time.Duration, bool, error)
	SaveSession(ctx context.Context, token string, data []byte, expiry time.Time) error
	TouchSession(ctx context.Context, token string, expiry time.Time) error
	DeleteSession(ctx context.Context, token string) error
	DeleteExpiredSessions(ctx context.Context) error
}

// memSession is a session kept in memory; data nil marks one signed out while its row could not be
// deleted.
type memSession struct {
	data   []byte
	expiry time.Time
}

func newSessionStore(db sessionRows, readOnly bool, log *slog.Logger, cleanup time.Duration) *sessionStore {
	s := &sessionStore{db: db, readOnly: readOnly, touchEvery: 15 * time.Minute, log: log, mem: map[string]memSession{}}
	if cleanup > 0 {
		go func() {
			for range time.Tick(cleanup) {
				s.deleteExpired()
			}
		}()
	}
	return s
}

func (s *sessionStore) Find(token string) ([]byte, bool, error) {
	return s.FindCtx(context.Background(), token)
}

func (s *sessionStore) Commit(token string, b []byte, expiry time.Time) error {
	return s.CommitCtx(context.Background(), token, b, expiry)
}

func (s *sessionStore) Delete(token string) error { return s.DeleteCtx(context.Background(), token) }

func (s *sessionStore) FindCtx(ctx context.Context, token string) ([]byte, bool, error) {
	s.mu.Lock()
	m, ok := s.mem[token]
	s.mu.Unlock()
	if ok {
		if m.data == nil || time.Now().After(m.expiry) {
			return nil, false, nil
		}
		return m.data, true, nil
	}
	return s.db.Session(ctx, token)
}

func (s *sessionStore) CommitCtx(ctx context.Context, token string, b []byte, expiry time.Time) error {
	s.mu.Lock()
	m, inMem := s.mem[token]
	if s.readOnly || (inMem && m.data != nil) {
		s.mem[token] = memSession{data: b, expiry: expiry}
		s.mu.Unlock()
		return nil
	}
	s.mu.Unlock()
	stored, behind, found, err := s.db.SessionBehind(ctx, token, expiry)
	if err != nil {
		return err
	}
	if found && sameSession(stored, b) {
		if behind < s.touchEvery {
			return nil
		}
		if err := s.db.TouchSession(ctx, token, expiry); err != nil {
			s.log.Info("session expiry not moved on (the database cannot take it now)", "err", err)
		}
		return nil
	}
	err = s.db.SaveSession(ctx, token, b, expiry)
	if store.IsUnwritable(err) {
		s.log.Warn("session kept in memory: the database cannot be written", "err", err)
		s.mu.Lock()
		s.mem[token] = memSession{data: b, expiry: expiry}
		s.mu.Unlock()
		return nil
	}
	return err
}

// sameSession reports whether two encoded sessions hold the same deadline and values. The gob encoding
// of a map follows its random iteration order, so equal sessions of several values may differ in bytes.
func sameSession(a, b []byte) bool {
	if bytes.Equal(a, b) {
		return true
	}
	var codec scs.GobCodec
	da, va, errA := codec.Decode(a)
	db, vb, errB := codec.Decode(b)
	return errA == nil && errB == nil && da.Equal(db) && reflect.DeepEqual(va, vb)
}

func (s *sessionStore) DeleteCtx(ctx context.Context, token string) error {
	s.mu.Lock()
	m, inMem := s.mem[token]
	s.mu.Unlock()
	tombstone := func() {
		s.mu.Lock()
		s.mem[token] = memSession{expiry: time.Now().Add(8 * 24 * time.Hour)} // beyond any session's lifetime
		s.mu.Unlock()
	}
	if s.readOnly || (inMem && m.data != nil) {
		tombstone()
		return nil
	}
	err := s.db.DeleteSession(ctx, token)
	if store.IsUnwritable(err) {
		tombstone()
		return nil
	}
	return err
}

// deleteExpired removes expired sessions from the table (when it can be written) and from memory.
func (s *sessionStore) deleteExpired() {
	now := time.Now()
	s.mu.Lock()
	for k, m := range s.mem {
		if now.After(m.expiry) {
			delete(s.mem, k)
		}
	}
	s.mu.Unlock()
	if s.readOnly {
		return
	}
	if err := s.db.DeleteExpiredSessions(context.Background()); err != nil {
		s.log.Info("expired sessions not deleted", "err", err)
	}
}
