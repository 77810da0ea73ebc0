package web

import (
	"strings"
	"testing"

	"github.com/chromedp/chromedp"
)

// In a real headless Chromium: the menu leads to the map; the demo's units and sections are drawn over the
// coastlines, with the units' palaeolatitudes and the poles they come from; after a unit is entered with its latitude's sign flipped, the map widens to show it circled
// and the page lists it to check. Screenshots of both.
func TestBrowserMap(t *testing.T) {
	ctx := newBrowser(t)
	srv, db := mustServer(t)
	dir := screenshotDir(t)
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/"), chromedp.Click(chromedp.CSS(`header nav a[href="/map"]`))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/map")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#map svg"))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "#map figcaption"); !strings.Contains(got, "Natural Earth") {
		t.Errorf("caption %q does not name the coastlines' source", got)
	}
	shoot(t, ctx, dir, "01-demo")
	// The units' palaeolatitudes come with the poles they are computed from; a province without one is named.
	if got := text(t, ctx, "table#poles"); !strings.Contains(got, "Invented pole for the demo") || !strings.Contains(got, "A95") {
		t.Errorf("poles table %q", got)
	}
	if got := text(t, ctx, "main"); !strings.Contains(got, "No palaeomagnetic pole recorded for") || !strings.Contains(got, "not a plate reconstruction") {
		t.Error("the map page does not name the province without a pole, or lacks the caution")
	}

	addMisplacedUnit(t, db)
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/map"), chromedp.WaitVisible(chromedp.CSS(".cautions"))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, ".cautions"); !strings.Contains(got, "Misplaced Flow") || !strings.Contains(got, "sign flipped") {
		t.Errorf("cautions %q", got)
	}
	shoot(t, ctx, dir, "02-misplaced-unit")
}
