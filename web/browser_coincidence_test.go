package web

import (
	"strings"
	"testing"

	"github.com/chromedp/chromedp"
)

// In a real headless Chromium: from the comparison a link leads to the coincidence test; the page opens
// with its answer in one sentence, then the numbers with the cautions beside them; choosing the other
// null in the form puts null= in the address and says so. Screenshots of both.
func TestBrowserCoincidence(t *testing.T) {
	ctx := newBrowser(t)
	srv, _ := mustServer(t)
	dir := screenshotDir(t)

	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/compare?sens=0&n=1000&reps=100"),
		chromedp.Click(chromedp.CSS(`nav.crumbs a[href="/coincidence"]`))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/coincidence")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS(".cautions"))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "p.answer"); !strings.Contains(got, "than chance would place them") || !strings.Contains(got, "p = ") {
		t.Errorf("answer %q", got)
	}
	if got := text(t, ctx, ".groups"); !strings.Contains(got, "p-value") || !strings.Contains(got, "Window") || !strings.Contains(got, "Replicates") {
		t.Errorf("result %q lacks p, window or replicates", got)
	}
	if got := text(t, ctx, ".cautions"); !strings.Contains(got, "not independent") || !strings.Contains(got, "window decides") {
		t.Errorf("cautions %q", got)
	}
	shoot(t, ctx, dir, "01-events-at-random")

	if err := chromedp.Do(ctx, chromedp.SetValue(chromedp.CSS(`form.filters select[name="null"]`), "pulses"),
		chromedp.SetValue(chromedp.CSS(`form.filters input[name="n"]`), "999"),
		chromedp.Click(chromedp.CSS(`form.filters button[type="submit"]`))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/coincidence?")
	if loc, err := chromedp.Run(ctx, chromedp.Location()); err != nil || !strings.Contains(loc, "null=pulses") {
		t.Errorf("address %q lacks null=pulses (%v)", loc, err)
	}
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS(".cautions"))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "p.answer"); !strings.Contains(got, "onsets shifted at random") {
		t.Errorf("answer %q does not name the shifted onsets", got)
	}
	shoot(t, ctx, dir, "02-onsets-shifted")
}
