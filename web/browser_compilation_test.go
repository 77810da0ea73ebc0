package web

import (
	"strings"
	"testing"

	"github.com/chromedp/chromedp"
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
