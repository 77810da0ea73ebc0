package web

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"mime/multipart"
	"net/http"
	"net/http/httptest"
	"strings"
	"sync"
	"testing"
	"time"

	"coeval/store"
)

// uploadSection sends a file of kind for a section to the import page and returns the status and page.
func uploadSection(t testing.TB, c *http.Client, srv *httptest.Server, kind, section, name string, body []byte) (int, string) {
	t.Helper()
	var buf bytes.Buffer
	mw := multipart.NewWriter(&buf)
	mw.WriteField("kind", kind)
	mw.WriteField("section", section)
	fw, _ := mw.CreateFormFile("file", name)
	fw.Write(body)
	mw.Close()
	req, _ := http.NewRequest(http.MethodPost, srv.URL+"/import", &buf)
	req.Header.Set("Content-Type", mw.FormDataContentType())
	res, err := c.Do(req)
	if err != nil {
		t.Error(err)
		return 0, ""
	}
	defer res.Body.Close()
	b, _ := io.ReadAll(res.Body)
	return res.StatusCode, string(b)
}

// A long preview (a measurements file of 15,000 rows) holds no lock of the database: while it runs, the
// write lock can be taken at any moment (checked from another connection with a short busy timeout, as
// often as it can), and signed-in readers get every page. Before the fix the preview was a dry run inside
// the database's write transaction for its whole length.
func TestLongPreviewLeavesTheDatabaseFree(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	contrib := client(t)
	signIn(t, contrib, srv, "demo-contributor")
	readers := make([]*http.Client, 4)
	for i := range readers {
		readers[i] = client(t)
		signIn(t, readers[i], srv, []string{"demo-reader", "demo-curator", "demo-admin", "demo-contributor"}[i])
	}
	var file bytes.Buffer
	file.WriteString("sample,height_m,hg_ppb,hg_sigma_ppb,hg_dl_ppb,hg_method,toc_wt_pct,toc_sigma_wt_pct\n")
	const rows = 15000
	for i := range rows {
		fmt.Fprintf(&file, "LP-%06d,%d.5,30.8,1.5,2.0,cold-vapour AFS after acid digestion,1.229,0.020\n", i, 1000+i)
	}
	before, _ := db.Counts(ctx)

	done := make(chan struct{})
	var status int
	var page string
	go func() {
		defer close(done)
		status, page = uploadSection(t, contrib, srv, "measurements", "Mornesk Cliffs", "long.csv", file.Bytes())
	}()

	var mu sync.Mutex
	var failures []string
	fail := func(s string) {
		mu.Lock()
		if len(failures) < 10 {
			failures = append(failures, s)
		}
		mu.Unlock()
	}
	var wg sync.WaitGroup
	reads := 0
	for i, c := range readers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			paths := []string{"/dates", "/", "/sections/1", "/account"}
			for n := 0; ; n++ {
				select {
				case <-done:
					return
				default:
				}
				p := paths[(i+n)%len(paths)]
				req, _ := http.NewRequest(http.MethodGet, srv.URL+p, nil)
				res, err := c.Do(req)
				if err != nil {
					fail(p + ": " + err.Error())
					continue
				}
				b, _ := io.ReadAll(res.Body)
				res.Body.Close()
				mu.Lock()
				reads++
				mu.Unlock()
				if res.StatusCode != http.StatusOK || !strings.Contains(string(b), "Sign out") {
					fail(fmt.Sprintf("signed-in GET %s during the preview: %d", p, res.StatusCode))
				}
			}
		}()
	}

	// The write lock, tried from a connection of its own that waits at most 200 ms for it.
	conn, err := db.SQL().Conn(ctx)
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close()
	if _, err := conn.ExecContext(ctx, `PRAGMA busy_timeout = 200`); err != nil {
		t.Fatal(err)
	}
	tries, refused := 0, 0
	for waiting := true; waiting; {
		select {
		case <-done:
			waiting = false
			continue
		default:
		}
		tries++
		if _, err := conn.ExecContext(ctx, `BEGIN IMMEDIATE`); err != nil {
			refused++
			if !store.IsBusy(err) {
				t.Fatalf("taking the write lock: %v", err)
			}
			continue
		}
		conn.ExecContext(ctx, `ROLLBACK`)
		time.Sleep(20 * time.Millisecond)
	}
	conn.ExecContext(ctx, `PRAGMA busy_timeout = 5000`)
	wg.Wait()
	if status != http.StatusOK || !strings.Contains(page, fmt.Sprintf("Import all %d rows", rows)) {
		t.Fatalf("preview: status %d; want 200 offering to import all %d rows:\n%.500s", status, rows, page)
	}
	if refused > 0 {
		t.Errorf("the write lock was held during the preview: %d of %d tries waited more than 200 ms", refused, tries)
	}
	for _, f := range failures {
		t.Error(f)
	}
	if after, _ := db.Counts(ctx); after != before {
		t.Error("a preview changed the compilation")
	}
	t.Logf("%d tries of the write lock, %d signed-in reads during the preview", tries, reads)
}

// holdWriteLock takes the database's write lock from a second connection pool on the same file (as
// another process would) until the returned function is called.
func holdWriteLock(t *testing.T, db *store.DB) func() {
	t.Helper()
	ctx := context.Background()
	var file string
	if err := db.SQL().QueryRowContext(ctx, `SELECT file FROM pragma_database_list WHERE name = 'main'`).Scan(&file); err != nil {
		t.Fatal(err)
	}
	other, err := store.Open(ctx, file)
	if err != nil {
		t.Fatal(err)
	}
	conn, err := other.SQL().Conn(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := conn.ExecContext(ctx, `BEGIN IMMEDIATE`); err != nil {
		t.Fatal(err)
	}
	var once sync.Once
	return func() {
		once.Do(func() {
			conn.ExecContext(ctx, `ROLLBACK`)
			conn.Close()
			other.Close()
		})
	}
}

// While another connection holds the write lock longer than the busy timeout: a signed-in user whose
// session is due to have its expiry moved on still reads every page (the touch is skipped), and a
// change answers 503 with Retry-After and says to try again — never 500 "database is locked".
func TestBusyDatabaseAnswers503AndReadsGoOn(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	c := client(t)
	signIn(t, c, srv, "demo-curator")
	d, err := db.Date(ctx, 3)
	if err != nil {
		t.Fatal(err)
	}
	// The stored expiry an hour behind: the next request moves it on (a write).
	if _, err := db.SQL().ExecContext(ctx, `UPDATE sessions SET expiry = expiry - 1.0/24`); err != nil {
		t.Fatal(err)
	}
	// The server's one connection waits 300 ms for a lock (the production timeout is 5 s).
	db.SQL().SetMaxOpenConns(1)
	if _, err := db.SQL().ExecContext(ctx, `PRAGMA busy_timeout = 300`); err != nil {
		t.Fatal(err)
	}
	release := holdWriteLock(t, db)
	defer release()
	for _, p := range []string{"/", "/dates", "/account"} {
		status, body, _ := do(t, c, http.MethodGet, srv.URL+p, nil)
		if status != http.StatusOK || !strings.Contains(body, "demo-curator") {
			t.Errorf("signed-in GET %s while the database is busy: status %d: %.300s", p, status, body)
		}
	}
	status, body, h := do(t, c, http.MethodPost, fmt.Sprintf("%s/dates/%d/edit", srv.URL, d.ID), editForm(d, "edited while busy"))
	if status != http.StatusServiceUnavailable || h.Get("Retry-After") == "" || !strings.Contains(body, "Try again in a few seconds") ||
		strings.Contains(body, "locked") || strings.Contains(body, "SQLITE") {
		t.Errorf("an edit while the database is busy: status %d, Retry-After %q: %.300s", status, h.Get("Retry-After"), body)
	}
	release()
	if got, _ := db.Date(ctx, d.ID); got.Version != d.Version {
		t.Error("the refused edit changed the date")
	}
	if status, _, _ := do(t, c, http.MethodPost, fmt.Sprintf("%s/dates/%d/edit", srv.URL, d.ID), editForm(d, "edited when free")); status != http.StatusSeeOther {
		t.Errorf("the same edit once the lock is released: status %d, want 303", status)
	}
}
