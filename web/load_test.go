package web

import (
	"context"
	"fmt"
	"net/http"
	"net/url"
	"os"
	"slices"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"coeval/store"
)

// Concurrency on loopback: 50 readers and 5 writers for a bounded time (5 s by default; set
// COEVAL_LOAD_SECONDS=30 for the long run). No 5xx, no "database is locked" reaching a user, and no lost
// update: every edit that was answered as saved is counted in the final version of its date.
func TestReadersAndWritersTogether(t *testing.T) {
	if testing.Short() {
		t.Skip("load test skipped with -short")
	}
	seconds := 5
	if v, err := strconv.Atoi(os.Getenv("COEVAL_LOAD_SECONDS")); err == nil && v > 0 && v <= 600 {
		seconds = v
	}
	srv, db := mustServer(t)
	ctx := context.Background()
	deadline := time.Now().Add(time.Duration(seconds) * time.Second)
	paths := []string{"/", "/dates", "/dates?method=upb_idtims&sort=age", "/provinces/1", "/units/3", "/dates/5",
		"/sections", "/ties", "/events", "/changes", "/dates?format=csv", "/dates?format=json&per=10"}

	var mu sync.Mutex
	var latencies []time.Duration
	var failures []string
	saved := map[int64]int{} // date id → edits answered as saved
	fail := func(s string) {
		mu.Lock()
		if len(failures) < 20 {
			failures = append(failures, s)
		}
		mu.Unlock()
	}
	var wg sync.WaitGroup
	for i := range 50 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			c := &http.Client{Timeout: 30 * time.Second}
			for n := 0; time.Now().Before(deadline); n++ {
				p := paths[(i+n)%len(paths)]
				start := time.Now()
				res, err := c.Get(srv.URL + p)
				if err != nil {
					fail(p + ": " + err.Error())
					continue
				}
				var b strings.Builder
				buf := make([]byte, 32<<10)
				for {
					k, err := res.Body.Read(buf)
					b.Write(buf[:k])
					if err != nil {
						break
					}
				}
				res.Body.Close()
				mu.Lock()
				latencies = append(latencies, time.Since(start))
				mu.Unlock()
				if res.StatusCode >= 500 || strings.Contains(b.String(), "database is locked") {
					fail(fmt.Sprintf("GET %s: %d", p, res.StatusCode))
				}
			}
		}()
	}
	for w := range 5 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			c := client(t)
			signIn(t, c, srv, "demo-curator")
			id := int64(w + 1) // each writer edits one date, and all of them also edit date 6
			for n := 0; time.Now().Before(deadline); n++ {
				target := id
				if n%2 == 1 {
					target = 6
				}
				d, err := db.Date(ctx, target)
				if err != nil {
					fail(err.Error())
					return
				}
				form := url.Values{}
				for k, v := range store.FormOfDate(d) {
					form.Set(k, v)
				}
				form.Set("review_state", string(d.ReviewState))
				form.Set("version", strconv.Itoa(d.Version))
				form.Set("notes", fmt.Sprintf("writer %d edit %d", w, n))
				status, body, _ := do(t, c, http.MethodPost, fmt.Sprintf("%s/dates/%d/edit", srv.URL, target), form)
				switch {
				case status == http.StatusSeeOther:
					mu.Lock()
					saved[target]++
					mu.Unlock()
				case status == http.StatusConflict: // someone else saved first: allowed, nothing lost
				default:
					fail(fmt.Sprintf("POST edit %d: %d %.100s", target, status, body))
				}
			}
		}()
	}
	wg.Wait()
	for _, f := range failures {
		t.Error(f)
	}
	for id, n := range saved {
		d, err := db.Date(ctx, id)
		if err != nil {
			t.Fatal(err)
		}
		if d.Version != 1+n {
			t.Errorf("date %d: version %d after %d saved edits, want %d (an update was lost or doubled)", id, d.Version, n, 1+n)
		}
	}
	slices.Sort(latencies)
	if len(latencies) == 0 {
		t.Fatal("no request completed")
	}
	q := func(p float64) time.Duration { return latencies[int(p*float64(len(latencies)-1))] }
	edits := 0
	for _, n := range saved {
		edits += n
	}
	t.Logf("%d s: %d reads (p50 %v, p99 %v, max %v), %d saved edits", seconds, len(latencies), q(0.5), q(0.99), latencies[len(latencies)-1], edits)
}
