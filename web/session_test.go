package web

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"log/slog"
	"strings"
	"testing"
	"time"

	"github.com/alexedwards/scs/v2"

	"coeval/store"
)

// On a full disk (SQLite's page limit at the database's size, on one connection) a new session cannot be
// written: the session store keeps it in memory, so signing in still works, finds it again, and forgets
// it on signing out; its table is left as it was.
func TestSessionKeptInMemoryWhenTheDiskIsFull(t *testing.T) {
	db := mustDemoDB(t)
	ctx := context.Background()
	db.SQL().SetMaxOpenConns(1)
	var pages int
	db.SQL().QueryRowContext(ctx, `PRAGMA page_count`).Scan(&pages)
	if _, err := db.SQL().ExecContext(ctx, fmt.Sprintf(`PRAGMA max_page_count = %d`, pages)); err != nil {
		t.Fatal(err)
	}
	// Fill the last free pages, until the database refuses as full.
	big := []byte(strings.Repeat("x", 4000))
	for i := 0; ; i++ {
		_, err := db.SQL().ExecContext(ctx, `INSERT INTO sessions (token, data, expiry) VALUES (?, ?, julianday('now') + 1)`, fmt.Sprintf("filler-%d", i), big)
		if store.IsUnwritable(err) {
			break
		}
		if err != nil || i > 10000 {
			t.Fatalf("filling the database: %v after %d rows", err, i)
		}
	}
	var before int
	db.SQL().QueryRowContext(ctx, `SELECT count(*) FROM sessions`).Scan(&before)
	s := newSessionStore(db, false, slog.New(slog.NewTextHandler(io.Discard, nil)), 0)
	data := []byte(strings.Repeat("session data ", 400))
	if err := s.CommitCtx(ctx, "new-token", data, time.Now().Add(time.Hour)); err != nil {
		t.Fatalf("a new session on a full disk: %v", err)
	}
	got, found, err := s.FindCtx(ctx, "new-token")
	if err != nil || !found || !bytes.Equal(got, data) {
		t.Fatalf("the session kept in memory is not found again: found %v, err %v", found, err)
	}
	if err := s.DeleteCtx(ctx, "new-token"); err != nil {
		t.Fatal(err)
	}
	if _, found, _ := s.FindCtx(ctx, "new-token"); found {
		t.Error("the session is still found after signing out")
	}
	var after int
	db.SQL().QueryRowContext(ctx, `SELECT count(*) FROM sessions`).Scan(&after)
	if after != before {
		t.Errorf("the sessions table went from %d to %d rows", before, after)
	}
}

// A session of several values whose encoding differs only in the order of its map (gob follows the map's
// random iteration order) is the same session: committing it again is a touch, and writes nothing while
// its expiry is recent.
func TestSessionTouchIgnoresTheOrderOfValues(t *testing.T) {
	deadline := time.Now().Add(time.Hour).UTC()
	values := map[string]any{}
	for i := range 20 {
		values[fmt.Sprintf("key-%d", i)] = int64(i)
	}
	var codec scs.GobCodec
	first, err := codec.Encode(deadline, values)
	if err != nil {
		t.Fatal(err)
	}
	differs := false
	for range 50 {
		again, _ := codec.Encode(deadline, values)
		if !sameSession(first, again) {
			t.Fatal("the same session's values encoded again are not recognised as the same")
		}
		differs = differs || !bytes.Equal(first, again)
	}
	if !differs {
		t.Log("the encodings happened to be identical in every try")
	}
	values["key-0"] = int64(99)
	if changed, _ := codec.Encode(deadline, values); sameSession(first, changed) {
		t.Error("a changed value is taken for the same session")
	}
}
