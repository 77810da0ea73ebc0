package web

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/xml"
	"io"
	"net/http"
	"strings"
	"testing"

	"github.com/chromedp/chromedp"
	"github.com/xuri/excelize/v2"
)

// A newcomer's path through the demo in a real browser: home → province → its eruptive history with
// another bandwidth rule and calibration → a unit's summary with its caution → a section with its
// anomalies and age model → the comparison table, whose CSV, XLSX and figure downloads are fetched and
// opened. Screenshots of each step are saved.
func TestBrowserNewcomerJourney(t *testing.T) {
	ctx := newBrowser(t)
	srv, db := mustServer(t)
	dir := screenshotDir(t)
	bg := context.Background()

	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/"),
		chromedp.Click(chromedp.CSS("#provinces tbody a"))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/provinces/")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#summaries")),
		chromedp.Click(chromedp.CSS(`a[href*="/timeline"]`))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/provinces/1/timeline")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#timeline svg")),
		chromedp.SetValue(chromedp.CSS(`select[name="bw"]`), "scott"),
		chromedp.SetValue(chromedp.CSS(`select[name="cal"]`), "renne11-fcs28294"),
		chromedp.Click(chromedp.CSS(`form.filters button`))); err != nil {
		t.Fatal(err)
	}
	if p := waitPath(t, ctx, "/provinces/1/timeline?"); !strings.Contains(p, "bw=scott") || !strings.Contains(p, "cal=renne11-fcs28294") {
		t.Errorf("the timeline's address %q does not keep the chosen rule and calibration", p)
	}
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#timeline svg"))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "#timeline"); !strings.Contains(got, "Scott") || !strings.Contains(got, "Renne et al. 2011") {
		t.Errorf("the figure does not name the chosen rule and calibration")
	}
	shoot(t, ctx, dir, "1-timeline-scott-renne11")

	units, _ := db.Units(bg, 1)
	var brennholt int64
	for _, u := range units {
		if u.Name == "Brennholt Flow Group" {
			brennholt = u.ID
		}
	}
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+idURL("/units", brennholt)), chromedp.WaitVisible(chromedp.CSS(".groups"))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "main"); !strings.Contains(got, "outside the 95 % range of χ²_f/f") {
		t.Error("the unit with scattered dates shows no MSWD caution")
	}
	shoot(t, ctx, dir, "2-unit-caution")

	sec, err := db.SectionByName(bg, "Vedholmen-1 Core")
	if err != nil {
		t.Fatal(err)
	}
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+idURL("/sections", sec.ID)), chromedp.WaitVisible(chromedp.CSS("#section-figure svg"))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "main"); !strings.Contains(got, "A1") || !strings.Contains(got, "seed") {
		t.Error("the section page shows no anomaly or no age-model seed")
	}
	shoot(t, ctx, dir, "3-section")

	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS(`header nav a[href="/compare"]`))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/compare")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#comparison"))); err != nil {
		t.Fatal(err)
	}
	shoot(t, ctx, dir, "4-compare")
	links, err := chromedp.Run(ctx, chromedp.Evaluate[[]string](`Array.from(document.querySelectorAll('.downloads a')).map(a => a.href)`))
	if err != nil {
		t.Fatal(err)
	}
	fetch := func(kind string) []byte {
		for _, l := range links {
			if strings.Contains(l, "format="+kind) {
				res, err := http.Get(l)
				if err != nil {
					t.Fatal(err)
				}
				defer res.Body.Close()
				b, _ := io.ReadAll(res.Body)
				if res.StatusCode != http.StatusOK || !strings.Contains(res.Header.Get("Content-Disposition"), "attachment") {
					t.Errorf("%s download: status %d, disposition %q", kind, res.StatusCode, res.Header.Get("Content-Disposition"))
				}
				return b
			}
		}
		t.Fatalf("the comparison page offers no %s download (links %v)", kind, links)
		return nil
	}
	recs, err := csv.NewReader(bytes.NewReader(fetch("csv"))).ReadAll()
	if err != nil || len(recs) < 3 {
		t.Errorf("comparison CSV: %d records, %v", len(recs), err)
	}
	x, err := excelize.OpenReader(bytes.NewReader(fetch("xlsx")))
	if err != nil {
		t.Fatalf("comparison XLSX does not open: %v", err)
	}
	if sheets := strings.Join(x.GetSheetList(), ","); !strings.Contains(sheets, "Settings") {
		t.Errorf("comparison XLSX sheets %q lack Settings", sheets)
	}
	x.Close()
	if err := xml.Unmarshal(fetch("svg"), new(struct{ XMLName xml.Name })); err != nil {
		t.Errorf("comparison figure is not well-formed SVG: %v", err)
	}
}
