package web

import (
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"
)

// In a real headless Chromium: the nav leads to /compare; the table shows both demo pulses against the
// demo's events with SEs; sorting by P(after onset) puts sort= in the address; a number's link opens how
// it was computed; a contributor saves the comparison and finds it in the list. Screenshots of each.
func TestBrowserCompare(t *testing.T) {
	ctx := newBrowser(t)
	srv, _ := mustServer(t)
	dir := screenshotDir(t)

	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/"),
		chromedp.Click(chromedp.CSS(`header nav a[href="/compare"]`))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/compare")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#comparison"))); err != nil {
		t.Fatal(err)
	}
	body := text(t, ctx, "#comparison tbody")
	for _, want := range []string{"pulse at ~", "CIE onset", "Hg anomaly", " ± "} {
		if !strings.Contains(body, want) {
			t.Errorf("comparison table lacks %q", want)
		}
	}
	if got := text(t, ctx, "#compare-status"); !strings.Contains(got, "seed") || !strings.Contains(got, "10000 joint draws") || !strings.Contains(got, "the uncertainties each pair needs") {
		t.Errorf("status %q lacks seed, N or level", got)
	}
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#compare-figure svg"))); err != nil {
		t.Fatal(err)
	}
	figureInFirstScreen(t, ctx, "#compare-figure svg")
	shoot(t, ctx, dir, "20-compare")

	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS(`#comparison thead a[href*="sort=after"]`))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/compare?")
	if loc, err := chromedp.Run(ctx, chromedp.Location()); err != nil || !strings.Contains(loc, "sort=after") {
		t.Errorf("address %q lacks sort=after (%v)", loc, err)
	}
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#comparison")),
		chromedp.Click(chromedp.CSS(`#comparison tbody tr:first-child td:nth-child(4) a`))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "#how"); !strings.Contains(got, "joint Monte Carlo draws: N = 10000") {
		t.Error("the how-computed section does not name the draws")
	}
	shoot(t, ctx, dir, "21-compare-sorted")

	signInBrowser(t, ctx, srv.URL, "demo-contributor")
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/compare?delta=0.2&level=full"),
		chromedp.WaitVisible(chromedp.CSS("form.save-comparison")),
		chromedp.SetValue(chromedp.CSS(`form.save-comparison input[name="name"]`), "Demo, full level"),
		chromedp.Click(chromedp.CSS(`form.save-comparison button`))); err != nil {
		t.Fatal(err)
	}
	for deadline := time.Now().Add(15 * time.Second); ; time.Sleep(50 * time.Millisecond) {
		if loc, err := chromedp.Run(ctx, chromedp.Location()); err == nil && strings.Contains(loc, "saved=") {
			break
		}
		if time.Now().After(deadline) {
			t.Fatal("saving did not lead to the saved comparison")
		}
	}
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#comparison"))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "#compare-status"); !strings.Contains(got, "Demo, full level") || !strings.Contains(got, "full") {
		t.Errorf("saved comparison status %q", got)
	}
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/compare/saved"), chromedp.WaitVisible(chromedp.CSS("#saved"))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "#saved"); !strings.Contains(got, "Demo, full level") || !strings.Contains(got, "unchanged since") {
		t.Errorf("saved list %q", got)
	}
	shoot(t, ctx, dir, "22-compare-saved")
}

// Unit rows in a real headless Chromium: rows=both puts each unit's weighted mean against each event
// under the pulses, with "—" for P(within), the units drawn in the figure, a unit's row opening how it
// was computed, and the volume fraction in the sensitivity column. Screenshots of the page and of the
// how-computed account.
func TestBrowserCompareUnitRows(t *testing.T) {
	ctx := newBrowser(t)
	srv, _ := mustServer(t)
	dir := screenshotDir(t)
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/compare?rows=both"), chromedp.WaitVisible(chromedp.CSS("#comparison"))); err != nil {
		t.Fatal(err)
	}
	body := text(t, ctx, "#comparison tbody")
	for _, want := range []string{"pulse at ~", "Haldruna Flow (U7)", "Ulvaskar Flow Group (U1)", "vol."} {
		if !strings.Contains(body, want) {
			t.Errorf("comparison table lacks %q", want)
		}
	}
	if got := text(t, ctx, "#compare-figure"); !strings.Contains(got, "Eruptive units (weighted means)") {
		t.Error("the figure has no units")
	}
	shoot(t, ctx, dir, "23-compare-units")
	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS(`#comparison tbody a[href="#how-U7-E5"]`))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "#how-U7-E5"); !strings.Contains(got, "P(event after the unit)") || !strings.Contains(got, "does not apply") {
		t.Errorf("how U7 × E5: %q", got)
	}
	shoot(t, ctx, dir, "24-compare-units-how")
}
