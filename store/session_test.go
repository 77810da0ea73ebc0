package store

import (
	"context"
	"testing"
	"time"
)

// The session rows: a live session is found, an expired one is not (but its row is, with how far its
// expiry lies behind), a touch moves the expiry on, and deleting removes one or every expired one.
func TestSessionRows(t *testing.T) {
	ctx := context.Background()
	db := mustOpenDB(t)
	now := time.Now()
	if err := db.SaveSession(ctx, "live", []byte("a"), now.Add(time.Hour)); err != nil {
		t.Fatal(err)
	}
	if err := db.SaveSession(ctx, "old", []byte("b"), now.Add(-time.Hour)); err != nil {
		t.Fatal(err)
	}
	if b, ok, err := db.Session(ctx, "live"); err != nil || !ok || string(b) != "a" {
		t.Errorf("live session: %q %v %v", b, ok, err)
	}
	if _, ok, err := db.Session(ctx, "old"); err != nil || ok {
		t.Errorf("expired session found: %v %v", ok, err)
	}
	b, behind, ok, err := db.SessionBehind(ctx, "old", now.Add(time.Hour))
	if err != nil || !ok || string(b) != "b" || behind < 119*time.Minute || behind > 121*time.Minute {
		t.Errorf("expired row: %q, %v behind, %v %v; want 2 h behind", b, behind, ok, err)
	}
	if err := db.TouchSession(ctx, "old", now.Add(2*time.Hour)); err != nil {
		t.Fatal(err)
	}
	if _, ok, _ := db.Session(ctx, "old"); !ok {
		t.Error("a touched session is not live again")
	}
	if err := db.SaveSession(ctx, "gone", []byte("c"), now.Add(-time.Minute)); err != nil {
		t.Fatal(err)
	}
	if err := db.DeleteExpiredSessions(ctx); err != nil {
		t.Fatal(err)
	}
	if _, _, ok, _ := db.SessionBehind(ctx, "gone", now); ok {
		t.Error("an expired session survived DeleteExpiredSessions")
	}
	if err := db.DeleteSession(ctx, "live"); err != nil {
		t.Fatal(err)
	}
	if _, _, ok, _ := db.SessionBehind(ctx, "live", now); ok {
		t.Error("a deleted session is still stored")
	}
	if _, _, ok, err := db.SessionBehind(ctx, "never", now); ok || err != nil {
		t.Errorf("an unknown token: %v %v", ok, err)
	}
}
