package web

import (
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"
	"time"

	"coeval/static"
)

// A compilation page cut short by its budget shows no number it did not compute: with the lanes and
// ages kept (the figure computes them) and a budget that starts nothing, every event–province pair the
// whole computation (the JSON) holds is named in the table as not computed, without a probability, and
// the page says what was left out and why. After the whole computation the page is the whole one.
func TestCompilationCutShortShowsNoNumberItDidNotCompute(t *testing.T) {
	db := mustDemoDB(t)
	srv := httptest.NewServer(NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS,
		WithSessionCleanup(0), withCompilationBudget(time.Nanosecond), withoutCompilationFinisher()))
	t.Cleanup(srv.Close)
	page := func() string {
		t.Helper()
		status, _, body := get(t, srv, "/compilation")
		if status != http.StatusOK {
			t.Fatalf("compilation: status %d: %.300s", status, body)
		}
		return body
	}
	// Nothing kept, nothing started: every lane says so, no event has an age.
	body := page()
	if !strings.Contains(body, "Not everything is computed yet") || !strings.Contains(body, "density not computed in time") {
		t.Errorf("a page that computed nothing does not say so:\n%.2000s", body)
	}
	if strings.Contains(body, `href="/events/`) {
		t.Error("a page that computed no age shows an event")
	}
	// Lanes and ages kept (the figure), no comparison: every pair is named as not computed.
	if status, _, svg := get(t, srv, "/compilation?format=svg"); status != http.StatusOK {
		t.Fatalf("figure: status %d: %.300s", status, svg)
	}
	body = page()
	if strings.Contains(body, "density not computed in time") {
		t.Error("lanes kept by the figure are said not computed")
	}
	// The whole computation, as the downloads make it (the kept state is shared, so read it on another
	// server to count the pairs without filling this one's).
	other := httptest.NewServer(NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS, WithSessionCleanup(0)))
	t.Cleanup(other.Close)
	whole := getCompilation(t, other, "")
	pairs := 0
	for _, r := range whole.Rows {
		if r["pulse"] != "" {
			pairs++
		}
	}
	if pairs == 0 {
		t.Fatal("the demo's compilation compares no event with a province")
	}
	table := body[strings.Index(body, `id="nearest"`):]
	if got := strings.Count(table, "not computed yet (reload)"); got != pairs {
		t.Errorf("%d pairs said not computed, the whole compilation has %d", got, pairs)
	}
	if strings.Contains(table, "pulse at ~") {
		t.Error("the cut-short table names a pulse, which only a computed comparison gives")
	}
	if !strings.Contains(body, "Not everything is computed yet") || !strings.Contains(body, "the comparisons of") {
		t.Error("the cut-short page does not say which comparisons it left out")
	}
	// After the whole computation on this server the page is whole.
	getCompilation(t, srv, "")
	body = page()
	if strings.Contains(body, "Not everything is computed yet") || strings.Contains(body, "not computed yet") {
		t.Error("after the whole computation the page still says something is not computed")
	}
	if table := body[strings.Index(body, `id="nearest"`):]; strings.Count(table, "pulse at ~") < pairs {
		t.Errorf("the whole page names fewer pulses than its %d pairs", pairs)
	}
}

// A page cut short starts computing what it left out, and says so; the next reader then finds the whole
// compilation, the same as the table's download computes it.
func TestCompilationCutShortIsFinishedForTheNextReader(t *testing.T) {
	db := mustDemoDB(t)
	srv := httptest.NewServer(NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS,
		WithSessionCleanup(0), withCompilationBudget(time.Nanosecond)))
	t.Cleanup(srv.Close)
	_, _, body := get(t, srv, "/compilation")
	if !strings.Contains(body, "The rest is being computed now") {
		t.Fatalf("a page cut short does not say the rest is being computed:\n%.2000s", body)
	}
	// Wait for the finisher (the page keeps saying what is missing until it is done).
	for deadline := time.Now().Add(2 * time.Minute); strings.Contains(body, "Not everything is computed yet"); {
		if time.Now().After(deadline) {
			t.Fatal("the compilation was not finished within two minutes")
		}
		time.Sleep(200 * time.Millisecond)
		_, _, body = get(t, srv, "/compilation")
	}
	// Its table is the download's: every pair with its pulse.
	other := httptest.NewServer(NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS, WithSessionCleanup(0)))
	t.Cleanup(other.Close)
	pairs := 0
	for _, r := range getCompilation(t, other, "").Rows {
		if r["pulse"] != "" {
			pairs++
		}
	}
	if table := body[strings.Index(body, `id="nearest"`):]; strings.Count(table, "pulse at ~") < pairs {
		t.Errorf("the finished page names fewer pulses than the download's %d pairs", pairs)
	}
}
