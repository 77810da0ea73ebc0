package web

import (
	"context"
	"fmt"
	"os"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"coeval/store"
)

// A contributor's tie point and hiatus wait for review: the section page says the age model leaves them
// out, by name; the curator accepts the tie on its page and the caution goes. Screenshots of each step.
func TestBrowserPendingTieAndHiatus(t *testing.T) {
	ctx := newBrowser(t)
	srv, db := mustServer(t)
	dir := screenshotDir(t)
	bg := context.Background()
	secs, err := db.Sections(bg)
	if err != nil {
		t.Fatal(err)
	}
	var sec store.Section
	for _, s := range secs {
		if s.Name == "Vedholmen-1 Core" {
			sec = s
		}
	}
	tie, err := db.CreateTie(bg, sec.ID, store.Form{"label": "Ash V-2b (contributed)", "height_m": "45.00", "kind": "radiometric",
		"distribution": "normal", "age_ma": "155.52", "sigma_ma": "0.05", "sigma_level": "2"}, false)
	if err != nil || tie.ReviewState != "pending" {
		t.Fatalf("contributor's tie %+v (%v), want pending", tie, err)
	}
	if _, err := db.CreateHiatus(bg, sec.ID, store.Form{"height_m": "50.00", "min_duration_ma": "0.02", "notes": "erosion surface (invented)"}, false); err != nil {
		t.Fatal(err)
	}
	signInBrowser(t, ctx, srv.URL, "demo-curator")
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+idURL("/sections", sec.ID)), chromedp.WaitVisible(chromedp.CSS("#section-figure svg"))); err != nil {
		t.Fatal(err)
	}
	cautions := text(t, ctx, ".cautions")
	for _, want := range []string{"1 tie point waiting for a curator's review (Ash V-2b (contributed))", "hiatus"} {
		if !strings.Contains(cautions, want) {
			t.Errorf("the section's cautions lack %q:\n%s", want, cautions)
		}
	}
	shoot(t, ctx, dir, "1-section-with-pending")
	for sel, name := range map[string]string{".cautions": "1a-cautions", "#section-figure": "1b-figure", "#agemodel": "1c-agemodel"} {
		png, err := chromedp.Run(ctx, chromedp.Screenshot(chromedp.CSS(sel)))
		if err != nil {
			t.Fatalf("screenshot of %s: %v", sel, err)
		}
		if err := os.WriteFile(shotPath(t, dir, name), png, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	if err := chromedp.Do(ctx, chromedp.Navigate(fmt.Sprintf("%s/ties/%d", srv.URL, tie.ID)), chromedp.WaitVisible(chromedp.CSS("main h1"))); err != nil {
		t.Fatal(err)
	}
	if page := text(t, ctx, "main"); !strings.Contains(page, "waits for a curator's review") {
		t.Errorf("the tie's page does not say it waits for review:\n%.600s", page)
	}
	shoot(t, ctx, dir, "2-tie-pending")
	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS(`form.action input[value="accept"] ~ button`))); err != nil {
		t.Fatal(err)
	}
	for deadline := time.Now().Add(10 * time.Second); ; time.Sleep(50 * time.Millisecond) {
		got, _ := db.TiePoint(bg, tie.ID)
		if got.ReviewState == "accepted" {
			break
		}
		if time.Now().After(deadline) {
			t.Fatalf("after the curator's accept the tie is %q", got.ReviewState)
		}
	}
	// The accept is a form post answered by a redirect to the tie's page: let that page finish loading
	// before leaving it, or the browser aborts one of the two navigations.
	for deadline := time.Now().Add(10 * time.Second); ; time.Sleep(100 * time.Millisecond) {
		page, _ := chromedp.Run(ctx, chromedp.Text(chromedp.CSS("main"), chromedp.AtLeast(0)))
		if page != "" && !strings.Contains(page, "waits for a curator's review") {
			break
		}
		if time.Now().After(deadline) {
			t.Fatalf("the tie's page still says it waits for review:\n%.400s", page)
		}
	}
	navigateAfterPost(t, ctx, srv.URL+idURL("/sections", sec.ID))
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#section-figure svg"))); err != nil {
		t.Fatal(err)
	}
	if c := text(t, ctx, ".cautions"); strings.Contains(c, "Ash V-2b") {
		t.Errorf("after the accept the cautions still name the tie:\n%s", c)
	}
	shoot(t, ctx, dir, "3-section-tie-accepted")
}
