package web

import (
	"archive/zip"
	"bytes"
	"context"
	"net/http"
	"net/url"
	"strings"
	"testing"

	"coeval/store"
)

// A curator accepts the pending dates and makes a release; the compilation is then edited (a date imported,
// an event deleted, a contributor's pending date added). Every download of the release's view is byte for byte what the live site
// gave at release time — the dates, a province's unit summaries, its timeline, a section's age model and
// the comparison — while the live site has moved on; its pages say which release they show and keep
// their links inside it.
func TestPagesAsOfAReleaseAreThoseOfItsMoment(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	curator := client(t)
	signIn(t, curator, srv, "demo-curator")
	// A release holds accepted records only: with pending ones in the compilation, the live lists would show
	// them and the release would not (TestReleaseFreezesTheAcceptedRecords covers that they are left out).
	pending, _, _ := db.Dates(ctx, store.DateFilter{ReviewState: "pending"})
	for _, d := range pending {
		if _, err := db.ReviewDate(ctx, d.ID, d.Version, true, ""); err != nil {
			t.Fatal(err)
		}
	}
	downloads := []string{
		"/dates?format=csv",
		"/dates?format=json&per=500",
		"/provinces/1/summary?format=csv",
		"/provinces/1/timeline?format=json&reps=200",
		"/sections/1/agemodel?format=csv&draws=200",
		"/compare?format=csv&" + cheap,
		"/events?format=csv",
	}
	before := map[string]string{}
	for _, p := range downloads {
		status, body, _ := do(t, curator, http.MethodGet, srv.URL+p, nil)
		if status != http.StatusOK {
			t.Fatalf("%s: status %d", p, status)
		}
		before[p] = body
	}
	status, body, h := do(t, curator, http.MethodPost, srv.URL+"/releases", url.Values{"version": {"2027.1"}, "title": {"Invented compilation"}})
	if status != http.StatusSeeOther || h.Get("Location") != "/releases/2027.1" {
		t.Fatalf("making a release: status %d, location %q: %.300s", status, h.Get("Location"), body)
	}

	// The compilation moves on.
	if _, err := db.ImportReader(ctx, "dates", "", "later.csv", strings.NewReader(
		"province,unit,sample_code,method,interpretation,age_ma,sigma_ma,sigma_level\n"+
			"Hvarn Plateau Basalts (invented),Later Unit,LATER-1,upb_idtims,eruption,155.1,0.05,2\n")); err != nil {
		t.Fatal(err)
	}
	contributor := client(t)
	signIn(t, contributor, srv, "demo-contributor")
	d1, _ := db.Date(ctx, 1)
	form := url.Values{}
	for k, v := range store.FormOfDate(d1) {
		form.Set(k, v)
	}
	form.Set("sample_code", "DRAFT-1")
	if status, body, _ := do(t, contributor, http.MethodPost, srv.URL+"/dates/new", form); status != http.StatusSeeOther {
		t.Fatalf("a contributor's date: status %d: %.300s", status, body)
	}
	secs, _ := db.Sections(ctx)
	evs, _ := db.Events(ctx, secs[0].ID)
	if err := db.DeleteEvent(ctx, evs[0].ID, evs[0].Version); err != nil {
		t.Fatal(err)
	}

	changed := 0
	for _, p := range downloads {
		_, now, _ := do(t, curator, http.MethodGet, srv.URL+p, nil)
		if now != before[p] {
			changed++
		}
		status, asOf, _ := do(t, curator, http.MethodGet, srv.URL+"/releases/2027.1/view"+p, nil)
		if status != http.StatusOK {
			t.Errorf("%s as of the release: status %d: %.300s", p, status, asOf)
			continue
		}
		if asOf != before[p] {
			t.Errorf("%s as of the release differs from what it was at release time (%d bytes, then %d)", p, len(asOf), len(before[p]))
		}
	}
	if changed < 3 {
		t.Errorf("only %d of the live downloads changed after the edits: the test would not see a release that follows the live data", changed)
	}

	// A page of the release says so, links within it, and release= on any page leads there.
	_, page, _ := do(t, curator, http.MethodGet, srv.URL+"/releases/2027.1/view/provinces/1", nil)
	if !strings.Contains(page, "As of release 2027.1") || !strings.Contains(page, `href="/releases/2027.1/view/units/`) ||
		!strings.Contains(page, `href="/static/style.css"`) {
		t.Error("a page of the release must say which release it shows and keep its links in the release")
	}
	noFollow := &http.Client{Jar: curator.Jar, CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}
	res, err := noFollow.Get(srv.URL + "/provinces/1/timeline?release=2027.1&reps=200")
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	if loc := res.Header.Get("Location"); loc != "/releases/2027.1/view/provinces/1/timeline?reps=200" {
		t.Errorf("release= on a page: status %d, location %q", res.StatusCode, loc)
	}
	// Its page gives the citation, and a bundle holding the same dates file.
	_, rp, _ := do(t, curator, http.MethodGet, srv.URL+"/releases/2027.1", nil)
	if !strings.Contains(rp, "Invented compilation, version 2027.1") {
		t.Error("the release page must give the citation")
	}
	_, home, _ := do(t, curator, http.MethodGet, srv.URL+"/", nil)
	if !strings.Contains(home, "Invented compilation, version 2027.1") {
		t.Error("the home page must show the latest release's citation")
	}
	status, zipBody, _ := do(t, curator, http.MethodGet, srv.URL+"/releases/2027.1/bundle.zip", nil)
	zr, err := zip.NewReader(bytes.NewReader([]byte(zipBody)), int64(len(zipBody)))
	if status != http.StatusOK || err != nil {
		t.Fatalf("bundle: status %d, %v", status, err)
	}
	found := false
	for _, f := range zr.File {
		found = found || f.Name == "dates.csv"
	}
	if !found {
		t.Error("the bundle has no dates.csv")
	}
	// A second release lists exactly the changes made in between.
	if status, _, _ := do(t, curator, http.MethodPost, srv.URL+"/releases", url.Values{"version": {"2027.2"}, "title": {"Invented compilation"}}); status != http.StatusSeeOther {
		t.Fatalf("second release: status %d", status)
	}
	_, cl, _ := do(t, curator, http.MethodGet, srv.URL+"/releases/2027.2?format=csv", nil)
	for _, want := range []string{"LATER-1 (upb_idtims),added", "Later Unit,added", "event," + itoa(int(evs[0].ID)) + "," + evs[0].Name + ",removed"} {
		if !strings.Contains(cl, want) {
			t.Errorf("the changelog lacks %q:\n%s", want, cl)
		}
	}
	if lines := strings.Count(strings.TrimSpace(cl), "\n"); lines != 3 || strings.Contains(cl, "DRAFT-1") {
		t.Errorf("the changelog must list exactly the three changes (the pending date is left out):\n%s", cl)
	}
	if _, rp2, _ := do(t, curator, http.MethodGet, srv.URL+"/releases/2027.2", nil); !strings.Contains(rp2, "DRAFT-1") {
		t.Error("the second release's page must name the pending date it left out")
	}
	// Bad input: a version that is a path, a taken version; an unknown release.
	status, body, _ = do(t, curator, http.MethodPost, srv.URL+"/releases", url.Values{"version": {"../x"}, "title": {"t"}})
	if status != http.StatusBadRequest || !strings.Contains(body, "a version label") {
		t.Errorf("a bad version: status %d", status)
	}
	status, body, _ = do(t, curator, http.MethodPost, srv.URL+"/releases", url.Values{"version": {"2027.1"}, "title": {"t"}})
	if status != http.StatusBadRequest || !strings.Contains(body, "exists already") {
		t.Errorf("a taken version: status %d", status)
	}
	if status, _, _ := do(t, curator, http.MethodGet, srv.URL+"/releases/nope/view/dates", nil); status != http.StatusNotFound {
		t.Errorf("an unknown release: status %d, want 404", status)
	}
}
