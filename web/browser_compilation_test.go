package web

import (
	"io"
	"log/slog"
	"net/http/httptest"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"coeval/static"
)

// In a real headless Chromium: the menu leads to the compilation view; its figure draws a lane per
// province and a row per event; a province's name opens its timeline and an event opens its answer.
// Screenshots at desktop and phone width.
func TestBrowserCompilation(t *testing.T) {
	ctx := newBrowser(t)
	srv, _ := mustServer(t)
	dir := screenshotDir(t)
	if status, _, _ := get(t, srv, "/compilation?format=json"); status != 200 { // the comparisons computed before the browser's clock runs
		t.Fatalf("status %d", status)
	}
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/"), chromedp.Click(chromedp.CSS(`header nav a[href="/compilation"]`))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/compilation")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#timeline svg"))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "#nearest"); !strings.Contains(got, "Hvarn Plateau Basalts") || !strings.Contains(got, "P(within)") {
		t.Errorf("table %q", got)
	}
	shoot(t, ctx, dir, "01-desktop")

	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS(`#timeline svg a[href="/provinces/1/timeline"] text`))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/provinces/1/timeline")
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/compilation"), chromedp.WaitVisible(chromedp.CSS("#timeline svg"))); err != nil {
		t.Fatal(err)
	}
	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS(`#timeline svg a[href^="/events/"] text`))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/events/")
	if got := text(t, ctx, "main"); !strings.Contains(got, "P(within)") {
		t.Errorf("the event's page shows no answer: %.200q", got)
	}

	if err := chromedp.Do(ctx, chromedp.EmulateViewport(390, 844), chromedp.Navigate(srv.URL+"/compilation?from=156&to=154.5"),
		chromedp.WaitVisible(chromedp.CSS("#timeline svg"))); err != nil {
		t.Fatal(err)
	}
	shoot(t, ctx, dir, "02-phone-window")
}

// A compilation page cut short by its budget (lanes and ages kept, no comparison computed), in a real
// Chromium: the table names every pair as not computed, the note says what was left out, and at 390 px
// nothing sticks out. Screenshots at desktop and phone width.
func TestBrowserCompilationCutShort(t *testing.T) {
	ctx := newBrowser(t)
	db := mustDemoDB(t)
	srv := httptest.NewServer(NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS,
		WithSessionCleanup(0), withCompilationBudget(time.Nanosecond), withoutCompilationFinisher()))
	t.Cleanup(srv.Close)
	dir := screenshotDir(t)
	if status, _, _ := get(t, srv, "/compilation?format=svg"); status != 200 { // lanes and ages kept
		t.Fatalf("status %d", status)
	}
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/compilation"), chromedp.WaitVisible(chromedp.CSS("#timeline svg"))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "#nearest"); !strings.Contains(got, "not computed yet") || strings.Contains(got, "pulse at ~") {
		t.Errorf("the cut-short table: %q", got)
	}
	if got := text(t, ctx, "main"); !strings.Contains(got, "Not everything is computed yet") {
		t.Error("the cut-short page does not say so")
	}
	shoot(t, ctx, dir, "01-desktop")
	if err := chromedp.Do(ctx, chromedp.EmulateViewport(390, 844), chromedp.Navigate(srv.URL+"/compilation"), chromedp.WaitVisible(chromedp.CSS("#timeline svg"))); err != nil {
		t.Fatal(err)
	}
	got, err := chromedp.Run(ctx, chromedp.Evaluate[string](`[document.documentElement.scrollWidth, document.documentElement.clientWidth].join('|')`))
	if err != nil {
		t.Fatal(err)
	}
	if w := strings.Split(got, "|"); w[0] != w[1] {
		t.Errorf("the cut-short page scrolls sideways at 390 px: %s", got)
	}
	shoot(t, ctx, dir, "02-phone")
}
