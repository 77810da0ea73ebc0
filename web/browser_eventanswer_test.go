package web

import (
	"context"
	"strings"
	"testing"

	"github.com/chromedp/chromedp"
)

// In a real headless Chromium, as a reader would: from a section page to one of its events, whose page
// opens with its answer in one sentence and the ranked pulses, then on to the full comparison it came
// from. Screenshots of the event's page and of the comparison it leads to.
func TestBrowserFromAnEventToItsAnswerAndTheComparison(t *testing.T) {
	ctx := newBrowser(t)
	srv, db := mustServer(t)
	dir := screenshotDir(t)
	secs, _ := db.Sections(context.Background())
	var secID, evID int64
	for _, s := range secs {
		evs, _ := db.Events(context.Background(), s.ID)
		for _, e := range evs {
			if e.Name == "Hg anomaly" && s.Name == "Mornesk Cliffs" {
				secID, evID = s.ID, e.ID
			}
		}
	}
	if evID == 0 {
		t.Fatal("the demo's Hg anomaly of Mornesk Cliffs is missing")
	}
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+idURL("/sections", secID)+"?draws=500"),
		chromedp.WaitVisible(chromedp.CSS("#section-figure svg"))); err != nil {
		t.Fatal(err)
	}
	// The events table is folded or not depending on its length: click the link by script, as it sits.
	if _, err := chromedp.Run(ctx, chromedp.Evaluate[bool](`(() => { const a = document.querySelector('a[href="`+idURL("/events", evID)+`"]'); a.click(); return true; })()`)); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, idURL("/events", evID))
	waitText(t, ctx, "main", "Most likely during the pulse")
	if got := text(t, ctx, "#answer"); !strings.Contains(got, "P(within)") || !strings.Contains(got, "holds under every alternative") {
		t.Errorf("the ranked pulses %q lack P(within) or the sensitivity verdict", got)
	}
	shoot(t, ctx, dir, "01-event-answer")
	if _, err := chromedp.Run(ctx, chromedp.Evaluate[bool](`(() => { const a = [...document.querySelectorAll('a')].find(a => a.textContent.startsWith('The full comparison with')); a.click(); return true; })()`)); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/compare?province=")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#comparison"))); err != nil {
		t.Fatal(err)
	}
	shoot(t, ctx, dir, "02-full-comparison")
}
