package web

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"net/url"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"golang.org/x/crypto/bcrypt"

	"coeval/migrations"
	"coeval/static"
	"coeval/store"
)

// editForm is the form of an unchanged date at its version, with new notes.
func editForm(d store.Date, notes string) url.Values {
	f := url.Values{}
	for k, v := range store.FormOfDate(d) {
		f.Set(k, v)
	}
	f.Set("review_state", string(d.ReviewState))
	f.Set("version", strconv.Itoa(d.Version))
	f.Set("notes", notes)
	return f
}

// A read-only database: pages keep working with a banner saying so; signing in works (the session is
// kept in memory), and a session signed in before the database became read-only stays valid; signed-in
// reads answer 200; a write gets a clear 503 that says nothing was saved and never the internal error
// text; signing out works.
func TestReadOnlyDatabaseRefusesWritesAndKeepsReading(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "ro.db")
	rw, err := store.Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	rw.Migrate(ctx, migrations.FS)
	rw.SetPasswordCost(bcrypt.MinCost)
	if _, _, err := rw.SeedDemo(ctx, os.DirFS(filepath.Join("..", "testdata", "demo")), "invented"); err != nil {
		t.Fatal(err)
	}
	logger := slog.New(slog.NewTextHandler(io.Discard, nil))
	before := client(t) // signed in while the database could be written
	rwSrv := httptest.NewServer(NewHandler(rw, logger, static.FS, WithSessionCleanup(0)))
	signIn(t, before, rwSrv, "demo-reader")
	rwSrv.Close()
	rw.Close()

	ro, err := store.OpenReadOnly(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	defer ro.Close()
	srv := httptest.NewServer(NewHandler(ro, logger, static.FS, WithSessionCleanup(0)))
	defer srv.Close()
	c := client(t)
	for _, p := range []string{"/", "/dates", "/provinces/1", "/sections/1?draws=200"} {
		status, body, _ := do(t, c, http.MethodGet, srv.URL+p, nil)
		if status != http.StatusOK {
			t.Errorf("read-only %s: status %d, want 200", p, status)
		}
		if !strings.Contains(body, "open for reading only") {
			t.Errorf("read-only %s: no banner saying the compilation is open for reading only", p)
		}
	}
	// Signing in needs no write to the database.
	signIn(t, c, srv, "demo-curator")
	for _, tc := range []struct {
		c    *http.Client
		name string
	}{{c, "demo-curator"}, {before, "demo-reader"}} {
		for _, p := range []string{"/", "/dates", "/account"} {
			status, body, _ := do(t, tc.c, http.MethodGet, srv.URL+p, nil)
			if status != http.StatusOK || !strings.Contains(body, tc.name) {
				t.Errorf("%s reading %s on a read-only database: status %d, signed in: %v", tc.name, p, status, strings.Contains(body, tc.name))
			}
		}
	}
	// A write is refused with the clear message.
	d, err := ro.Date(ctx, 3)
	if err != nil {
		t.Fatal(err)
	}
	status, body, _ := do(t, c, http.MethodPost, fmt.Sprintf("%s/dates/%d/edit", srv.URL, d.ID), editForm(d, "changed"))
	if status != http.StatusServiceUnavailable || !strings.Contains(body, "nothing was saved") || strings.Contains(body, "SQLITE") || strings.Contains(body, "readonly") {
		t.Errorf("write on a read-only database: status %d: %.300s", status, body)
	}
	// Signing out works, for the session in memory and for the one in the database.
	for _, cl := range []*http.Client{c, before} {
		if status, _, _ := do(t, cl, http.MethodPost, srv.URL+"/logout", url.Values{}); status != http.StatusSeeOther {
			t.Errorf("sign out on a read-only database: status %d", status)
		}
		if _, body, _ := do(t, cl, http.MethodGet, srv.URL+"/account", nil); strings.Contains(body, "Sign out") {
			t.Error("still signed in after signing out on a read-only database")
		}
	}
}

// A full disk (simulated with SQLite's page limit): an edit fails with the clear 503, the date is
// unchanged, and reads go on.
func TestFullDiskRefusesWritesAndKeepsReading(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	c := client(t)
	signIn(t, c, srv, "demo-curator")
	d, _ := db.Date(ctx, 3)
	// One connection, whose page limit is the database's present size: any growth is SQLITE_FULL.
	db.SQL().SetMaxOpenConns(1)
	var pages int
	db.SQL().QueryRowContext(ctx, `PRAGMA page_count`).Scan(&pages)
	if _, err := db.SQL().ExecContext(ctx, fmt.Sprintf(`PRAGMA max_page_count = %d`, pages)); err != nil {
		t.Fatal(err)
	}
	big := strings.Repeat("a long note that needs pages ", 4000)
	status, body, _ := do(t, c, http.MethodPost, fmt.Sprintf("%s/dates/%d/edit", srv.URL, d.ID), editForm(d, big))
	if status != http.StatusServiceUnavailable || !strings.Contains(body, "nothing was saved") {
		t.Errorf("edit on a full disk: status %d: %.300s", status, body)
	}
	if got, _ := db.Date(ctx, d.ID); got.Notes != d.Notes || got.Version != d.Version {
		t.Error("a refused write changed the date")
	}
	if status, _, _ := do(t, c, http.MethodGet, srv.URL+"/dates", nil); status != http.StatusOK {
		t.Errorf("reading on a full disk: %d", status)
	}
}
