package main

import (
	"bufio"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"math/rand/v2"
	"net/http"
	"net/http/cookiejar"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"regexp"
	"slices"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"coeval/store"
)

// What coeval writes from a computation, and what it keeps in memory only:
//   - a saved comparison is one row of comparisons (name, the page's query string, the data stamp), written
//     by one INSERT; its numbers are recomputed from the query when it is opened, never stored;
//   - a save of pulses computes the density first, then writes every pulse with its units, a revision each
//     and the change batch in one transaction (store.SavePulses);
//   - anomaly decisions (an event and the decision, or the rejection) are one transaction each, like
//     every edit, import and undo; sessions are rows written by scs on sign-in;
//   - in memory only: the comparison cache (web.compareCache, keyed by the choices and the data stamp)
//     and the sign-in rate limiter; store/derived.go holds no data (it names computed CSV columns).
// A SIGKILL in the middle of any of these may lose the request, never leave part of its result: the
// trials below check it from outside, on the built command.

// server is the built command serving a database file, as a child process.
type server struct {
	url  string
	cmd  *exec.Cmd
	done chan error
}

// startServer starts `coeval -db dbPath -addr 127.0.0.1:0` and waits for the address it prints (after
// migrating and, on an empty file, seeding).
func startServer(t *testing.T, bin, dbPath string) *server {
	t.Helper()
	cmd := exec.Command(bin, "-db", dbPath, "-addr", "127.0.0.1:0")
	out, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	s := &server{cmd: cmd, done: make(chan error, 1)}
	urlc := make(chan string, 1)
	go func() {
		sc := bufio.NewScanner(out)
		re := regexp.MustCompile(`serving (http://\S+)`)
		for sc.Scan() {
			if m := re.FindStringSubmatch(sc.Text()); m != nil {
				urlc <- m[1]
			}
		}
		s.done <- cmd.Wait()
	}()
	t.Cleanup(func() { s.kill() })
	select {
	case s.url = <-urlc:
	case err := <-s.done:
		s.done <- err
		t.Fatalf("coeval -db %s stopped before serving: %v", dbPath, err)
	case <-time.After(60 * time.Second):
		t.Fatalf("coeval -db %s did not serve within 60 s", dbPath)
	}
	return s
}

// kill sends SIGKILL and waits for the process (a no-op once it has ended).
func (s *server) kill() {
	s.cmd.Process.Signal(syscall.SIGKILL)
	s.done <- <-s.done
}

// stop asks the server to stop as Ctrl-C does and waits for it.
func (s *server) stop(t *testing.T) {
	t.Helper()
	s.cmd.Process.Signal(syscall.SIGINT)
	select {
	case err := <-s.done:
		s.done <- err
		if err != nil {
			t.Fatalf("coeval did not stop cleanly: %v", err)
		}
	case <-time.After(15 * time.Second):
		t.Fatal("coeval did not stop within 15 s of SIGINT")
	}
}

// newClient is a client that keeps cookies and does not follow redirects. Like the web tests' clients, it
// sends neither Sec-Fetch-Site nor Origin, so the cross-origin protection lets its POSTs through.
func newClient() *http.Client {
	jar, _ := cookiejar.New(nil)
	return &http.Client{Jar: jar, Timeout: 60 * time.Second,
		CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}
}

// signIn signs c in as a demo account.
func signIn(t *testing.T, c *http.Client, base, name string) {
	t.Helper()
	res, err := c.PostForm(base+"/login", url.Values{"name": {name}, "password": {store.DemoPassword}, "next": {"/"}})
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("sign in as %s: status %d", name, res.StatusCode)
	}
}

// fetch GETs a page and returns its status, body and redirect target.
func fetch(t *testing.T, c *http.Client, u string) (int, string, string) {
	t.Helper()
	res, err := c.Get(u)
	if err != nil {
		t.Fatalf("GET %s: %v", u, err)
	}
	defer res.Body.Close()
	b, err := io.ReadAll(res.Body)
	if err != nil {
		t.Fatalf("GET %s: %v", u, err)
	}
	return res.StatusCode, string(b), res.Header.Get("Location")
}

// copyDB copies a database file and its write-ahead log (when there is one) as they are on disk.
func copyDB(t *testing.T, from, to string) {
	t.Helper()
	for _, suffix := range []string{"", "-wal"} {
		b, err := os.ReadFile(from + suffix)
		if os.IsNotExist(err) && suffix != "" {
			continue
		}
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(to+suffix, b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

// pulseState is what a save of pulses decides about one pulse (not its id, version or times).
type pulseState struct{ Name, StartMa, EndMa, Notes, Units string }

func stateOf(p store.Pulse) pulseState {
	ma := func(v *float64) string {
		if v == nil {
			return "none"
		}
		return fmt.Sprint(*v)
	}
	units := slices.Sorted(slices.Values(p.UnitIDs)) // stored sorted, revisions in the order found
	return pulseState{p.Name, ma(p.StartMa), ma(p.EndMa), p.Notes, fmt.Sprint(units)}
}

// pulseBatch is one "save pulses" change with the pulses it wrote.
type pulseBatch struct {
	ID      int64
	Source  string
	Summary string
	Pulses  []pulseState
}

// pulseBatches reads every save of pulses from the database: its source (the address the pulses were
// found with), its summary (written last, in the same transaction) and the pulses of its revisions.
func pulseBatches(ctx context.Context, s *store.DB) ([]pulseBatch, error) {
	rows, err := s.SQL().QueryContext(ctx, `SELECT id, source, summary FROM change_batches WHERE kind = 'save pulses' ORDER BY id`)
	if err != nil {
		return nil, err
	}
	var out []pulseBatch
	for rows.Next() {
		var b pulseBatch
		if err := rows.Scan(&b.ID, &b.Source, &b.Summary); err != nil {
			rows.Close()
			return nil, err
		}
		out = append(out, b)
	}
	if err := rows.Close(); err != nil {
		return nil, err
	}
	for i, b := range out {
		revs, err := s.BatchRevisions(ctx, b.ID)
		if err != nil {
			return nil, err
		}
		for _, r := range revs {
			var p store.Pulse
			if r.RecordType != "pulse" || json.Unmarshal(r.After, &p) != nil {
				return nil, fmt.Errorf("save of pulses %d holds revision %d of a %s: %s", b.ID, r.ID, r.RecordType, r.After)
			}
			out[i].Pulses = append(out[i].Pulses, stateOf(p))
		}
	}
	return out, nil
}

// expected is what an uninterrupted server saved: the pulses of each save by its source, and the
// settings of the comparison.
type expected struct {
	pulses map[string][]pulseState
	query  url.Values
}

// saved is what checkSaved found in a database.
type saved struct {
	problems    []string
	comparisons []store.Comparison
	names       map[string]bool // of the saved comparisons
	perSource   map[string]int  // saves of pulses by source
	pulseSaves  int
}

// checkSaved reads every saved comparison and save of pulses of a database and lists what is not whole.
//
// A saved comparison is one row: its name, the query string of its page and the data stamp it was
// computed on; its numbers are recomputed when it is opened (checked against an uninterrupted server by
// the caller). A partial one would be a row with its settings cut or empty, a name that was not sent, or
// no stamp (or one beyond the compilation's).
//
// A save of pulses is whole when its change batch has its summary (written last) and one revision for
// each pulse its settings give, equal to what an uninterrupted server saved; and every pulse stored
// equals its latest revision, units included, at a version equal to its number of revisions. Pulses
// written one by one, or their units after the batch, would fail one of these after a kill in between.
func checkSaved(ctx context.Context, s *store.DB, want expected, namePrefix string) saved {
	got := saved{names: map[string]bool{}, perSource: map[string]int{}}
	fail := func(format string, args ...any) { got.problems = append(got.problems, fmt.Sprintf(format, args...)) }
	stamp, err := s.DataStamp(ctx)
	if err != nil {
		fail("data stamp: %v", err)
	}
	if got.comparisons, err = s.Comparisons(ctx); err != nil {
		fail("saved comparisons: %v", err)
	}
	for _, sc := range got.comparisons {
		got.names[sc.Name] = true
		q, err := url.ParseQuery(sc.Query)
		if err != nil || !reflect.DeepEqual(q, want.query) || !strings.HasPrefix(sc.Name, namePrefix) || sc.DataStamp <= 0 || sc.DataStamp > stamp {
			fail("saved comparison %d is not what was posted: %+v (data stamp now %d)", sc.ID, sc, stamp)
		}
	}
	batches, err := pulseBatches(ctx, s)
	if err != nil {
		fail("saves of pulses: %v", err)
	}
	got.pulseSaves = len(batches)
	for _, b := range batches {
		got.perSource[b.Source]++
		w, ok := want.pulses[b.Source]
		if !ok || !reflect.DeepEqual(b.Pulses, w) || !strings.HasPrefix(b.Summary, fmt.Sprintf("saved %d pulse(s): ", len(w))) {
			fail("save of pulses %d from %s holds %+v (summary %q), want %+v", b.ID, b.Source, b.Pulses, b.Summary, w)
		}
	}
	stored, err := s.Pulses(ctx, 1)
	if err != nil {
		fail("pulses: %v", err)
	}
	for _, p := range stored {
		revs, err := s.Revisions(ctx, "pulse", p.ID)
		if err != nil || len(revs) != p.Version {
			fail("pulse %s is at version %d with %d revisions (%v)", p.Name, p.Version, len(revs), err)
			continue
		}
		var last store.Pulse
		json.Unmarshal(revs[0].After, &last)
		if stateOf(p) != stateOf(last) {
			fail("pulse %s stored as %+v, its latest revision says %+v", p.Name, stateOf(p), stateOf(last))
		}
	}
	return got
}

// compareNumbers is a comparison's JSON without the data stamp, in its settings and on every row: the
// stamp counts every change (saves of pulses too), so it differs between databases whose records the
// comparison reads are the same.
func compareNumbers(t *testing.T, body string) map[string]any {
	t.Helper()
	var v map[string]any
	if err := json.Unmarshal([]byte(body), &v); err != nil {
		t.Fatalf("comparison JSON: %v: %.200s", err, body)
	}
	if s, ok := v["settings"].(map[string]any); ok {
		delete(s, "data stamp")
	}
	if rows, ok := v["rows"].([]any); ok {
		for _, r := range rows {
			if r, ok := r.(map[string]any); ok {
				delete(r, "data_stamp")
			}
		}
	}
	return v
}

// The settings of the trials. The comparison in flight takes two seconds or more here (30,000 joint
// draws, 4,000 age-model draws, sensitivity on); the saved one is lighter so the checks stay quick; the
// pulses are saved once with 10,000 bootstrap replicates and by three writers back to back with light
// settings, so that the database is often in a write when the kill comes.
const (
	heavyCompare = "seed=12&n=30000&draws=4000"
	savedCompare = "seed=11&n=2000&draws=500&reps=300"
	heavyPulses  = "reps=10000&seed=5"
)

var lightPulses = []string{"reps=100&seed=1", "reps=200&seed=2&bw=scott", "reps=300&seed=3"}

// Restart after a kill: the server is killed with SIGKILL at seeded random moments — while it seeds the
// demo on its first start, and while it computes comparisons and saves comparisons and pulses — and
// started again on the same file. The database passes integrity_check; every saved comparison and every
// save of pulses present is whole and equals what an uninterrupted server computes with the same
// settings; every save answered as done is there; and the restarted server serves the same pages as a
// fresh server on a copy of the killed one's files.
func TestKilledServerRestartsWithNothingHalfWritten(t *testing.T) {
	if testing.Short() {
		t.Skip("kill-and-restart trials skipped with -short")
	}
	dir := t.TempDir()
	bin := buildCoeval(t, dir)
	ctx := context.Background()
	const seed = 20261202
	rng := rand.New(rand.NewPCG(seed, 3))

	// The demo, seeded by an uninterrupted first start.
	base := filepath.Join(dir, "base.db")
	srv := startServer(t, bin, base)
	status, home, _ := fetch(t, newClient(), srv.url+"/?format=json")
	srv.stop(t)
	var demo struct{ Counts store.Counts }
	if status != http.StatusOK || json.Unmarshal([]byte(home), &demo) != nil || demo.Counts.Measurements == 0 {
		t.Fatalf("demo home: status %d: %.200s", status, home)
	}

	t.Run("killed while seeding", func(t *testing.T) {
		// Seeding imports 13 files, each all-or-nothing; a kill between two of them once left half the
		// scenario, served ever after without its label and accounts. The next start must finish it.
		for trial := range 6 {
			db := filepath.Join(dir, fmt.Sprintf("seed%d.db", trial))
			cmd := exec.Command(bin, "-db", db, "-addr", "127.0.0.1:0")
			if err := cmd.Start(); err != nil {
				t.Fatal(err)
			}
			wait := time.Duration(rng.Float64() * float64(400*time.Millisecond))
			time.Sleep(wait)
			cmd.Process.Signal(syscall.SIGKILL)
			cmd.Wait()
			srv := startServer(t, bin, db)
			c := newClient()
			_, home, _ := fetch(t, c, srv.url+"/?format=json")
			var got struct{ Counts store.Counts }
			json.Unmarshal([]byte(home), &got)
			_, page, _ := fetch(t, c, srv.url+"/")
			if got.Counts != demo.Counts || !strings.Contains(page, "Invented demo data") {
				t.Errorf("trial %d (killed after %v): restarted with %+v, demo label shown %v; want the whole demo %+v",
					trial, wait, got.Counts, strings.Contains(page, "Invented demo data"), demo.Counts)
			}
			signIn(t, c, srv.url, "demo-admin")
			srv.stop(t)
		}
	})

	// An uninterrupted server computes what each setting gives: the comparison's numbers and the pulses
	// of each save (read back from the revisions of its change batch). It saves one comparison too.
	ref := filepath.Join(dir, "ref.db")
	copyDB(t, base, ref)
	srv = startServer(t, bin, ref)
	c := newClient()
	signIn(t, c, srv.url, "demo-contributor")
	_, body, _ := fetch(t, c, srv.url+"/compare?"+savedCompare+"&format=json")
	wantNumbers := compareNumbers(t, body)
	for _, q := range append(slices.Clone(lightPulses), heavyPulses) {
		res, err := c.Post(srv.url+"/provinces/1/pulses?"+q, "application/x-www-form-urlencoded", nil)
		if err != nil {
			t.Fatal(err)
		}
		res.Body.Close()
		if res.StatusCode != http.StatusSeeOther {
			t.Fatalf("save pulses %s: status %d", q, res.StatusCode)
		}
	}
	res, err := c.PostForm(srv.url+"/compare/saved", url.Values{"name": {"reference comparison"}, "query": {savedCompare}})
	if err != nil || res.StatusCode != http.StatusSeeOther {
		t.Fatalf("save a comparison: %v %v", res, err)
	}
	res.Body.Close()
	srv.stop(t)
	s, err := store.Open(ctx, ref)
	if err != nil {
		t.Fatal(err)
	}
	want := expected{pulses: map[string][]pulseState{}}
	want.query, _ = url.ParseQuery(savedCompare)
	batches, err := pulseBatches(ctx, s)
	if err != nil {
		t.Fatal(err)
	}
	for _, b := range batches {
		want.pulses[b.Source] = b.Pulses
	}
	s.Close()
	if len(want.pulses) != 4 {
		t.Fatalf("the uninterrupted server saved %d sets of pulses, want 4", len(want.pulses))
	}

	t.Run("the checks find a partial save", func(t *testing.T) {
		// The uninterrupted server's database is whole; each change below makes it hold what a save
		// cut short by a kill would leave, were the save not one transaction. The checks must say so.
		for _, tc := range []struct{ what, sql string }{
			{"a save of pulses without its last pulse", `DELETE FROM revisions WHERE id = (SELECT max(id) FROM revisions WHERE record_type = 'pulse')`},
			{"a save of pulses without its summary", `UPDATE change_batches SET summary = '' WHERE id = (SELECT max(id) FROM change_batches WHERE kind = 'save pulses')`},
			{"a pulse without one of its units", `DELETE FROM pulse_units WHERE rowid = (SELECT max(rowid) FROM pulse_units)`},
			{"a pulse changed without its revision", `UPDATE pulses SET end_ma = end_ma + 0.001 WHERE id = (SELECT max(id) FROM pulses)`},
			{"a saved comparison with its settings cut", `UPDATE comparisons SET query = substr(query, 1, 12)`},
			{"a saved comparison without its stamp", `UPDATE comparisons SET data_stamp = 0`},
		} {
			db := filepath.Join(t.TempDir(), "doctored.db")
			copyDB(t, ref, db)
			s, err := store.Open(ctx, db)
			if err != nil {
				t.Fatal(err)
			}
			if got := checkSaved(ctx, s, want, "reference comparison"); len(got.problems) > 0 {
				t.Fatalf("the uninterrupted server's database: %v", got.problems)
			}
			if r, err := s.SQL().ExecContext(ctx, tc.sql); err != nil {
				t.Fatal(err)
			} else if n, _ := r.RowsAffected(); n == 0 {
				t.Fatalf("%s: nothing changed", tc.what)
			}
			if got := checkSaved(ctx, s, want, "reference comparison"); len(got.problems) == 0 {
				t.Errorf("%s: not found by the checks", tc.what)
			}
			s.Close()
		}
	})

	t.Run("killed while computing and saving", func(t *testing.T) {
		const trials = 10
		var pulseSaves, comparisons int
		for trial := range trials {
			db := filepath.Join(dir, fmt.Sprintf("trial%d.db", trial))
			copyDB(t, base, db)
			srv := startServer(t, bin, db)
			c := newClient()
			signIn(t, c, srv.url, "demo-contributor")

			var mu sync.Mutex
			ackComparisons := map[string]bool{} // names of comparisons answered as saved
			ackPulses := map[string]int{}       // source → saves answered as saved
			stop := make(chan struct{})
			var wg sync.WaitGroup
			post := func(u string, form url.Values) bool {
				res, err := c.PostForm(u, form)
				if err != nil {
					return false
				}
				io.Copy(io.Discard, res.Body)
				res.Body.Close()
				return res.StatusCode == http.StatusSeeOther
			}
			wg.Add(6)
			go func() { // the long computation in flight
				defer wg.Done()
				if res, err := c.Get(srv.url + "/compare?" + heavyCompare); err == nil {
					io.Copy(io.Discard, res.Body)
					res.Body.Close()
				}
			}()
			go func() { // a save of pulses behind a long computation
				defer wg.Done()
				if post(srv.url+"/provinces/1/pulses?"+heavyPulses, nil) {
					mu.Lock()
					ackPulses["/provinces/1/timeline?"+heavyPulses]++
					mu.Unlock()
				}
			}()
			for w := range 3 { // saves of pulses back to back
				go func() {
					defer wg.Done()
					for n := w; ; n++ {
						select {
						case <-stop:
							return
						default:
						}
						q := lightPulses[n%len(lightPulses)]
						if !post(srv.url+"/provinces/1/pulses?"+q, nil) {
							return
						}
						mu.Lock()
						ackPulses["/provinces/1/timeline?"+q]++
						mu.Unlock()
					}
				}()
			}
			go func() { // saves of a comparison back to back
				defer wg.Done()
				for n := 0; ; n++ {
					select {
					case <-stop:
						return
					default:
					}
					name := fmt.Sprintf("trial %d comparison %d", trial, n)
					if !post(srv.url+"/compare/saved", url.Values{"name": {name}, "query": {savedCompare}}) {
						return
					}
					mu.Lock()
					ackComparisons[name] = true
					mu.Unlock()
					time.Sleep(20 * time.Millisecond) // leave most writes to the saves of pulses
				}
			}()
			wait := time.Duration((0.1 + 2.4*rng.Float64()) * float64(time.Second))
			time.Sleep(wait)
			if trial%2 == 1 {
				// Every other kill comes as a write begins: at the first change of the write-ahead
				// log after the random moment, so that it often lands inside a save rather than in the
				// computations, which take most of the time.
				wait += waitForWrite(db + "-wal")
			}
			srv.kill()
			close(stop)
			wg.Wait()

			// The killed server's files as they are, for a fresh server to serve.
			fresh := filepath.Join(dir, fmt.Sprintf("trial%d-copy.db", trial))
			copyDB(t, db, fresh)

			s, err := store.Open(ctx, db)
			if err != nil {
				t.Fatalf("trial %d: reopen: %v", trial, err)
			}
			var check string
			if err := s.SQL().QueryRowContext(ctx, `PRAGMA integrity_check`).Scan(&check); err != nil || check != "ok" {
				t.Fatalf("trial %d (killed after %v): integrity_check %q %v", trial, wait, check, err)
			}
			got := checkSaved(ctx, s, want, fmt.Sprintf("trial %d comparison ", trial))
			s.Close()
			for _, p := range got.problems {
				t.Errorf("trial %d (killed after %v): %s", trial, wait, p)
			}
			for name := range ackComparisons {
				if !got.names[name] {
					t.Errorf("trial %d: comparison %q was answered as saved and is gone", trial, name)
				}
			}
			for src, n := range ackPulses {
				if got.perSource[src] < n {
					t.Errorf("trial %d: %d saves of pulses from %s answered as saved, %d present", trial, n, src, got.perSource[src])
				}
			}
			pulseSaves += got.pulseSaves
			comparisons += len(got.comparisons)
			comps := got.comparisons

			// The restarted server and a fresh one on the copy serve the same pages; the saved
			// comparison's numbers are the uninterrupted server's.
			again, other := startServer(t, bin, db), startServer(t, bin, fresh)
			a, b := newClient(), newClient()
			pages := []string{"/", "/compare/saved", "/compare/saved?format=json", "/provinces/1/timeline?" + lightPulses[0],
				"/provinces/1/timeline?" + lightPulses[1] + "&format=json"}
			var savedJSON string
			if len(comps) > 0 {
				_, _, loc := fetch(t, a, fmt.Sprintf("%s/compare/saved/%d", again.url, comps[0].ID))
				savedJSON = loc + "&format=json"
				pages = append(pages, loc, savedJSON)
			}
			ms := regexp.MustCompile(`\d+ ms`) // how long a computation took
			for _, p := range pages {
				s1, b1, _ := fetch(t, a, again.url+p)
				s2, b2, _ := fetch(t, b, other.url+p)
				b1, b2 = ms.ReplaceAllString(b1, "N ms"), ms.ReplaceAllString(b2, "N ms")
				if s1 != http.StatusOK || s1 != s2 || b1 != b2 {
					t.Errorf("trial %d: %s: the restarted server answers %d (%d bytes), a fresh one on a copy %d (%d bytes)%s",
						trial, p, s1, len(b1), s2, len(b2), firstDiff(b1, b2))
				}
				if p == savedJSON {
					if got := compareNumbers(t, b1); !reflect.DeepEqual(got, wantNumbers) {
						g, _ := json.Marshal(got)
						w, _ := json.Marshal(wantNumbers)
						t.Errorf("trial %d: saved comparison %d opens with other numbers than the uninterrupted server's%s",
							trial, comps[0].ID, firstDiff(string(g), string(w)))
					}
				}
			}
			again.stop(t)
			other.stop(t)
			t.Logf("trial %d: killed after %v: %d saves of pulses, %d saved comparisons", trial, wait.Round(time.Millisecond), got.pulseSaves, len(comps))
		}
		t.Logf("%d kills: %d saves of pulses and %d saved comparisons checked", trials, pulseSaves, comparisons)
	})
}

// waitForWrite polls the write-ahead log until it changes (size or time), for at most a second, and
// returns how long it waited.
func waitForWrite(wal string) time.Duration {
	start := time.Now()
	before, _ := os.Stat(wal)
	for time.Since(start) < time.Second {
		now, err := os.Stat(wal)
		if err == nil && (before == nil || now.Size() != before.Size() || !now.ModTime().Equal(before.ModTime())) {
			break
		}
	}
	return time.Since(start)
}

// firstDiff shows where two bodies first differ.
func firstDiff(a, b string) string {
	if a == b {
		return ""
	}
	i := 0
	for i < len(a) && i < len(b) && a[i] == b[i] {
		i++
	}
	return fmt.Sprintf(": first difference at byte %d: %q vs %q", i, a[max(0, i-40):min(len(a), i+60)], b[max(0, i-40):min(len(b), i+60)])
}
