package web

import (
	"archive/zip"
	"bytes"
	"context"
	"io"
	"net/http"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"
)

// A curator cuts a release in the browser, downloads its bundle, and opens a province's timeline as of
// that release: the page says which release it shows and its links stay in the release.
func TestBrowserReleaseJourney(t *testing.T) {
	ctx := newBrowser(t)
	srv, _ := mustServer(t)
	dir := screenshotDir(t)
	signInBrowser(t, ctx, srv.URL, "demo-curator")
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/releases"),
		chromedp.Click(chromedp.CSS(`main a[href="/releases/new"]`)),
		chromedp.WaitVisible(chromedp.CSS(`input[name="version"]`)),
		chromedp.SetValue(chromedp.CSS(`input[name="version"]`), "2027.1"),
		chromedp.SetValue(chromedp.CSS(`input[name="title"]`), "Invented compilation"),
		chromedp.Click(chromedp.CSS(`form.edit button`))); err != nil {
		t.Fatal(err)
	}
	waitFeed(t, ctx, "/releases/2027.1")
	waitText(t, ctx, "main", "Cite as: Invented compilation, version 2027.1")
	shoot(t, ctx, dir, "1-release")
	href, err := chromedp.Run(ctx, chromedp.Evaluate[string](`document.querySelector('a[href$="bundle.zip"]').getAttribute('href')`))
	if err != nil {
		t.Fatal(err)
	}
	res, err := http.Get(srv.URL + href)
	if err != nil {
		t.Fatal(err)
	}
	body, _ := io.ReadAll(res.Body)
	res.Body.Close()
	zr, err := zip.NewReader(bytes.NewReader(body), int64(len(body)))
	if res.StatusCode != http.StatusOK || err != nil || len(zr.File) < 5 {
		t.Fatalf("the bundle link %s: status %d, %v", href, res.StatusCode, err)
	}
	click(t, ctx, `main a[href="/releases/2027.1/view/"]`)
	waitPath(t, ctx, "/releases/2027.1/view/")
	click(t, ctx, `header nav a[href="/releases/2027.1/view/provinces"]`)
	waitFeed(t, ctx, "/releases/2027.1/view/provinces")
	click(t, ctx, `main table a[href^="/releases/2027.1/view/provinces/"]`)
	waitPath(t, ctx, "/releases/2027.1/view/provinces/")
	click(t, ctx, `main a[href*="/timeline"]`)
	path := waitPath(t, ctx, "/releases/2027.1/view/provinces/")
	if !strings.Contains(path, "/timeline") {
		path = waitPath(t, ctx, "/releases/2027.1/view/provinces/1/timeline")
	}
	waitText(t, ctx, ".release-banner", "As of release 2027.1")
	if n, err := chromedp.Run(ctx, chromedp.Evaluate[int](`document.querySelectorAll('main svg').length`)); err != nil || n == 0 {
		t.Errorf("the timeline as of the release has no figure (%v)", err)
	}
	shoot(t, ctx, dir, "2-timeline-as-of-release")
}

// click follows the first link sel finds, asking again while a page that is being replaced has none yet
// (a node found in one moment may be gone the next, so the link is clicked by script, not by node id).
func click(t testing.TB, ctx context.Context, sel string) {
	t.Helper()
	for deadline := time.Now().Add(15 * time.Second); ; time.Sleep(100 * time.Millisecond) {
		ok, err := chromedp.Run(ctx, chromedp.Evaluate[bool](`(() => { const a = document.querySelector(`+strconv.Quote(sel)+`); if (!a) return false; a.click(); return true; })()`))
		if err == nil && ok {
			return
		}
		if time.Now().After(deadline) {
			t.Fatalf("no %s to click (%v)", sel, err)
		}
	}
}
