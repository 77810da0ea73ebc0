package web

import (
	"fmt"
	"strings"
	"testing"

	"github.com/chromedp/chromedp"
)

// phonePages are the page kinds a scientist opens on a phone.
var phonePages = []string{"/", "/provinces", "/provinces/1", "/provinces/1/timeline?reps=200", "/units/1", "/dates",
	"/dates/1", "/sections", "/sections/1?draws=200", "/sections/aligned?draws=200", "/ties", "/events",
	"/compare?" + cheap, "/coincidence?" + cheap, "/compilation", "/map", "/calibrations", "/changes", "/timescale", "/help", "/help/files/dates", "/help/addresses",
	"/help/downloads/comparison", "/help/downloads/timeline-pulses", "/help/downloads/unit-summaries", "/help/downloads/section-age-model",
	"/help/downloads/section-anomalies", "/help/downloads/section-ratios", "/help/downloads/sections-aligned",
	"/help/downloads/coincidence", "/help/downloads/map-places",
	"/releases", "/login"}

// At 390 px (a phone held upright) no page scrolls sideways: the menu wraps, tables and figures scroll
// inside their own boxes. The elements that stick out are named when a page does.
func TestBrowserNoPageScrollsSidewaysOnAPhone(t *testing.T) {
	ctx := newBrowser(t)
	srv, _ := mustServer(t)
	dir := screenshotDir(t)
	if err := chromedp.Do(ctx, chromedp.EmulateViewport(390, 844)); err != nil {
		t.Fatal(err)
	}
	const probe = `(() => {
	  const w = document.documentElement.clientWidth;
	  const out = [];
	  for (const el of document.querySelectorAll('body *')) {
	    const r = el.getBoundingClientRect();
	    if (r.right > w + 1 && !el.closest('.table-wrap, figure, .figure-box, pre')) {
	      out.push(el.tagName.toLowerCase() + (el.className && typeof el.className === 'string' ? '.' + el.className.split(' ').join('.') : '') + ' ' + Math.round(r.right));
	    }
	  }
	  return [document.documentElement.scrollWidth, w, out.slice(0, 8).join(', ')].join('|');
	})()`
	for _, p := range phonePages {
		if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+p)); err != nil {
			t.Fatalf("%s: %v", p, err)
		}
		got, err := chromedp.Run(ctx, chromedp.Evaluate[string](probe))
		if err != nil {
			t.Fatal(err)
		}
		parts := strings.SplitN(got, "|", 3)
		if parts[0] != parts[1] {
			t.Errorf("%s scrolls sideways at 390 px: page %s px wide in a %s px window; sticking out: %s", p, parts[0], parts[1], parts[2])
		}
		if p == "/" || strings.HasPrefix(p, "/provinces/1/timeline") || strings.HasPrefix(p, "/compare") || p == "/dates" {
			shoot(t, ctx, dir, fmt.Sprintf("390px-%s", strings.Trim(strings.NewReplacer("/", "-", "?", "-", "&", "-", "=", "").Replace(p[:min(len(p), 30)]), "-")))
		}
	}
}
