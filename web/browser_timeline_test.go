package web

import (
	"context"
	"os"
	"strings"
	"testing"

	"github.com/chromedp/chromedp"
)

// figureInFirstScreen asserts that at 1400 × 900 the figure sel starts within the first screen (its top
// above 900 px with the page scrolled to the top): the answer comes before the choices that made it.
// It leaves the viewport at 1400 × 900 and takes a screenshot of that first screen.
// Then it opens "More choices" and checks that a folded choice (seed) is there, in the same form.
func figureInFirstScreen(t *testing.T, ctx context.Context, sel string) {
	t.Helper()
	js := `(() => { window.scrollTo(0, 0); return document.querySelector(` + "`" + sel + "`" + `).getBoundingClientRect().top; })()`
	if err := chromedp.Do(ctx, chromedp.EmulateViewport(1400, 900)); err != nil {
		t.Fatalf("viewport: %v", err)
	}
	top, err := chromedp.Run(ctx, chromedp.Evaluate[float64](js))
	if err != nil {
		t.Fatalf("measure %s: %v", sel, err)
	}
	t.Logf("%s: top at %.0f px of a 900 px screen", sel, top)
	if top >= 900 {
		t.Errorf("at 1400 × 900 the figure %s starts at %.0f px, below the first screen", sel, top)
	}
	// More than its title: at least 260 px of the figure (its curve) in sight. Before the rarely used
	// choices were folded the figure started at 670–730 px.
	if top >= 640 {
		t.Errorf("at 1400 × 900 the figure %s starts at %.0f px: less than 260 px of it in the first screen", sel, top)
	}
	png, err := chromedp.Run(ctx, chromedp.CaptureScreenshot())
	if err != nil {
		t.Fatalf("screenshot of the first screen: %v", err)
	}
	if err := os.WriteFile(shotPath(t, screenshotDir(t), "first-screen-"+strings.Trim(strings.ReplaceAll(sel, " ", "-"), "#.")), png, 0o644); err != nil {
		t.Fatal(err)
	}
	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS(`form.filters details.more-choices > summary`)),
		chromedp.WaitVisible(chromedp.CSS(`form.filters details.more-choices input[name="seed"]`))); err != nil {
		t.Fatalf("opening More choices: %v", err)
	}
	png, err = chromedp.Run(ctx, chromedp.CaptureScreenshot())
	if err != nil {
		t.Fatalf("screenshot of the choices: %v", err)
	}
	if err := os.WriteFile(shotPath(t, screenshotDir(t), "more-choices"), png, 0o644); err != nil {
		t.Fatal(err)
	}
}

// In a real headless Chromium: province page → its timeline; the figure shows the ISJ fallback; choosing
// the Scott rule in the form puts bw=scott in the address and redraws the density. Screenshots of each
// state, and of the timescale page.
func TestBrowserTimelineChangesBandwidth(t *testing.T) {
	ctx := newBrowser(t)
	srv, _ := mustServer(t)
	dir := screenshotDir(t)

	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/provinces/1"),
		chromedp.Click(chromedp.CSS(`.links a[href*="/timeline"]`))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/provinces/1/timeline")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#timeline svg"))); err != nil {
		t.Fatal(err)
	}
	density := func() string {
		t.Helper()
		v, err := chromedp.Run(ctx, chromedp.AttributeValue(chromedp.CSS("#density"), "d"))
		if err != nil {
			t.Fatalf("density curve: %v", err)
		}
		return v.Value
	}
	before := density()
	if got := text(t, ctx, "main"); !strings.Contains(got, "Smoothing width: no automatic width exists") {
		t.Error("the default timeline does not report the automatic width's fallback")
	}
	if got := text(t, ctx, "#pulses tbody"); strings.Count(got, "Pulse at ~") < 2 {
		t.Errorf("pulse table %q lacks the demo's two pulses named by their age", got)
	}
	figureInFirstScreen(t, ctx, "#timeline svg")
	shoot(t, ctx, dir, "10-timeline-isj")

	if err := chromedp.Do(ctx, chromedp.SetValue(chromedp.CSS(`select[name="bw"]`), "scott"),
		chromedp.Click(chromedp.CSS(`form.filters button`))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/provinces/1/timeline?")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#timeline svg"))); err != nil {
		t.Fatal(err)
	}
	loc, err := chromedp.Run(ctx, chromedp.Location())
	if err != nil || !strings.Contains(loc, "bw=scott") {
		t.Errorf("address %q lacks bw=scott (%v)", loc, err)
	}
	after := density()
	if after == before {
		t.Error("choosing the Scott rule did not change the density curve")
	}
	if got, err := chromedp.Run(ctx, chromedp.TextContent(chromedp.CSS("#timeline svg"))); err != nil || !strings.Contains(got, "Scott") {
		t.Errorf("the figure does not name the Scott rule (%v)", err)
	}
	shoot(t, ctx, dir, "11-timeline-scott")

	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/provinces/1/timeline?count=date&pdp=1&weight=volume"),
		chromedp.WaitVisible(chromedp.CSS("#timeline svg"))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "main"); !strings.Contains(got, "probability density plot (PDP), not a kernel density estimate") {
		t.Error("the PDP is shown without its caution")
	}
	shoot(t, ctx, dir, "12-timeline-dates-pdp-volume")

	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS(`header nav a[href="/timescale"]`))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/timescale")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#timescale"))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "main"); !strings.Contains(got, "v2024/12") || !strings.Contains(got, "CC BY 4.0") {
		t.Error("the timescale page does not give its version and licence")
	}
	shoot(t, ctx, dir, "13-timescale")
}
