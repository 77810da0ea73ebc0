package web

import (
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"coeval/store"
)

// chromiumPath finds the browser for the real-browser tests: CHROMIUM_BIN, else chromium on the PATH.
// Without one the tests skip, except under CI=true, where a missing browser is a failure.
func chromiumPath(t testing.TB) string {
	t.Helper()
	if p := os.Getenv("CHROMIUM_BIN"); p != "" {
		return p
	}
	for _, name := range []string{"chromium", "chromium-browser"} {
		if p, err := exec.LookPath(name); err == nil {
			return p
		}
	}
	if os.Getenv("CI") == "true" {
		t.Fatal("CI=true but no Chromium found (install Debian's chromium, or set CHROMIUM_BIN)")
	}
	t.Skip("no Chromium on this machine: browser tests skipped (apt-get install chromium, or set CHROMIUM_BIN)")
	return ""
}

// screenshotDir is where browser tests save their screenshots: COEVAL_SCREENSHOTS, else ../screenshots.
func screenshotDir(t testing.TB) string {
	t.Helper()
	dir := os.Getenv("COEVAL_SCREENSHOTS")
	if dir == "" {
		dir = filepath.Join("..", "screenshots")
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	return dir
}

// newBrowser starts a headless Chromium with its profile, caches and temporary files under t.TempDir(),
// so nothing is left in /tmp or $HOME.
func newBrowser(t testing.TB) context.Context {
	t.Helper()
	bin := chromiumPath(t)
	// A short directory: Chromium's socket path must stay under the Unix limit (t.TempDir() embeds the
	// test's name).
	tmp, err := os.MkdirTemp("", "chr")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.RemoveAll(tmp) })
	for _, d := range []string{"tmp", "config", "cache", "profile"} {
		os.MkdirAll(filepath.Join(tmp, d), 0o755)
	}
	opts := append(chromedp.DefaultExecAllocatorOptions[:],
		chromedp.ExecPath(bin), chromedp.NoSandbox, chromedp.DisableGPU,
		chromedp.Flag("disable-component-update", true), chromedp.Flag("disable-quic", true),
		chromedp.WindowSize(1400, 1000),
		chromedp.UserDataDir(filepath.Join(tmp, "profile")),
		chromedp.Env("TMPDIR="+filepath.Join(tmp, "tmp"), "XDG_CONFIG_HOME="+filepath.Join(tmp, "config"),
			"XDG_CACHE_HOME="+filepath.Join(tmp, "cache")),
	)
	actx, cancelA := chromedp.NewExecAllocator(context.Background(), opts...)
	ctx, cancelC := chromedp.NewContext(actx)
	ctx, cancelT := context.WithTimeout(ctx, 60*time.Second)
	t.Cleanup(func() { cancelT(); cancelC(); cancelA() })
	if err := chromedp.Do(ctx); err != nil {
		t.Fatalf("start chromium: %v", err)
	}
	return ctx
}

// waitPath waits until the page's path starts with prefix (after a click that navigates).
func waitPath(t testing.TB, ctx context.Context, prefix string) string {
	t.Helper()
	deadline := time.Now().Add(15 * time.Second)
	for {
		loc, err := chromedp.Run(ctx, chromedp.Location())
		if err == nil {
			if i := strings.Index(loc, "//"); i >= 0 {
				path := loc[i+2:]
				if j := strings.Index(path, "/"); j >= 0 && strings.HasPrefix(path[j:], prefix) {
					return path[j:]
				}
			}
		}
		if time.Now().After(deadline) {
			t.Fatalf("page did not reach %s (at %s, %v)", prefix, loc, err)
		}
		time.Sleep(50 * time.Millisecond)
	}
}

// waitFeed waits until the browser is on path itself (with or without a query), not on a page below it:
// after a form posted from /changes/12 redirects to /changes, waitPath("/changes") would already match the
// page being left.
func waitFeed(t testing.TB, ctx context.Context, path string) {
	t.Helper()
	deadline := time.Now().Add(15 * time.Second)
	for {
		got := waitPath(t, ctx, path)
		if got == path || strings.HasPrefix(got, path+"?") {
			return
		}
		if time.Now().After(deadline) {
			t.Fatalf("page did not reach %s (at %s)", path, got)
		}
		time.Sleep(50 * time.Millisecond)
	}
}

func shoot(t testing.TB, ctx context.Context, dir, name string) {
	t.Helper()
	png, err := chromedp.Run(ctx, chromedp.FullScreenshot(100))
	if err != nil {
		t.Fatalf("screenshot %s: %v", name, err)
	}
	if err := os.WriteFile(shotPath(t, dir, name), png, 0o644); err != nil {
		t.Fatal(err)
	}
}

// shotPath names a screenshot after its test, so the tests never overwrite each other's pictures.
func shotPath(t testing.TB, dir, name string) string {
	return filepath.Join(dir, strings.TrimPrefix(t.Name(), "Test")+"-"+name+".png")
}

func text(t testing.TB, ctx context.Context, sel string) string {
	t.Helper()
	// Right after a form's redirect the address is the new page's while its document is still being
	// replaced: a node found in one moment may be gone the next. Ask again for a short while.
	deadline := time.Now().Add(10 * time.Second)
	for {
		s, err := chromedp.Run(ctx, chromedp.Text(chromedp.CSS(sel)))
		if err == nil {
			return s
		}
		if !strings.Contains(err.Error(), "No node") || time.Now().After(deadline) {
			t.Fatalf("text of %s: %v", sel, err)
		}
		time.Sleep(100 * time.Millisecond)
	}
}

// A newcomer's first path through the demo, in a real headless Chromium over real HTTP: home → province →
// unit → date → sections → section, checking what each page shows and saving a screenshot of each.
func TestBrowserBrowsesTheDemo(t *testing.T) {
	ctx := newBrowser(t)
	srv, db := mustServer(t)
	dir := screenshotDir(t)

	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/")); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "h1"); got != "The compilation" {
		t.Errorf("home h1 %q", got)
	}
	if got := text(t, ctx, ".demo-banner"); !strings.Contains(got, "Invented demo data") {
		t.Errorf("demo banner %q does not say the data are invented", got)
	}
	shoot(t, ctx, dir, "01-home")

	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS("#provinces tbody a"))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/provinces/")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#units"))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "h1"); !strings.Contains(got, "Hvarn Plateau Basalts") {
		t.Errorf("province h1 %q", got)
	}
	if got := text(t, ctx, "#units thead"); !strings.Contains(got, "km³ ± 1σ") {
		t.Errorf("units header %q does not state the volume unit and σ level", got)
	}
	shoot(t, ctx, dir, "02-province")

	unitName := text(t, ctx, "#units tbody tr:first-child td:nth-child(2) a")
	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS("#units tbody tr:first-child td:nth-child(2) a"))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/units/")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#dates"))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "h1"); got != unitName {
		t.Errorf("unit h1 %q, want %q", got, unitName)
	}
	if got := text(t, ctx, "#dates thead"); !strings.Contains(got, "± 2σ") {
		t.Errorf("dates header %q does not state the σ level", got)
	}
	shoot(t, ctx, dir, "03-unit")

	sample := text(t, ctx, "#dates tbody tr:first-child td:first-child a")
	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS("#dates tbody tr:first-child td:first-child a"))); err != nil {
		t.Fatal(err)
	}
	path := waitPath(t, ctx, "/dates/")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS(".groups"))); err != nil {
		t.Fatal(err)
	}
	body := text(t, ctx, "main")
	for _, want := range []string{sample, "Citation", "DOI", "σ level published"} {
		if !strings.Contains(body, want) {
			t.Errorf("date page %s lacks %q", path, want)
		}
	}
	shoot(t, ctx, dir, "04-date")

	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS(`header nav a[href="/sections"]`))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/sections")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#sections"))); err != nil {
		t.Fatal(err)
	}
	shoot(t, ctx, dir, "05-sections")
	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS("#sections tbody tr:first-child a"))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/sections/")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#measurements"))); err != nil {
		t.Fatal(err)
	}
	secs, err := db.Sections(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "h1"); got != secs[0].Name {
		t.Errorf("section h1 %q, want %q", got, secs[0].Name)
	}
	// The samples table is folded (read its caption as the page holds it, open or not).
	if got, _ := chromedp.Run(ctx, chromedp.Evaluate[string](`document.querySelector('#measurements caption').textContent`)); !strings.Contains(got, "Samples ("+itoa(secs[0].NSamples)+")") {
		t.Errorf("measurements caption %q, want %d samples", got, secs[0].NSamples)
	}
	shoot(t, ctx, dir, "06-section")

	// The date list's filter form keeps its choices in the address.
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/dates"),
		chromedp.SetValue(chromedp.CSS(`select[name="method"]`), "arar_plateau"),
		chromedp.Click(chromedp.CSS(`form.filters button`))); err != nil {
		t.Fatal(err)
	}
	if p := waitPath(t, ctx, "/dates?"); !strings.Contains(p, "method=arar_plateau") {
		t.Errorf("filtered address %q lacks the method", p)
	}
	if got := text(t, ctx, "#dates tbody"); strings.Contains(got, "U–Pb") {
		t.Error("the ⁴⁰Ar/³⁹Ar filter still lists U–Pb dates")
	}
	shoot(t, ctx, dir, "07-dates-filtered")
}

// signInBrowser signs the browser in through the form.
func signInBrowser(t testing.TB, ctx context.Context, base, name string) {
	t.Helper()
	if err := chromedp.Do(ctx, chromedp.Navigate(base+"/login"),
		chromedp.SetValue(chromedp.CSS(`input[name="name"]`), name),
		chromedp.SetValue(chromedp.CSS(`input[name="password"]`), store.DemoPassword),
		chromedp.Click(chromedp.CSS(`form.login button`))); err != nil {
		t.Fatal(err)
	}
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS(".account form.inline"))); err != nil {
		t.Fatalf("not signed in as %s: %v", name, err)
	}
}

// A curator's path: a contributor edits a draft date they added (it stays pending), a curator accepts it,
// reads the history and restores the earlier state — all through the pages, with screenshots.
func TestBrowserContributorAndCurator(t *testing.T) {
	ctx := newBrowser(t)
	srv, db := mustServer(t)
	dir := screenshotDir(t)
	// The draft is the contributor's own: contributors edit only the drafts they added.
	actor := store.WithActor(context.Background(), userID(t, db, "demo-contributor"))
	d1, err := db.Date(actor, 1)
	if err != nil {
		t.Fatal(err)
	}
	f := store.FormOfDate(d1)
	f["sample_code"] = "DRAFT-BROWSER-1"
	d, err := db.CreateDate(actor, f, false)
	if err != nil {
		t.Fatal(err)
	}
	signInBrowser(t, ctx, srv.URL, "demo-contributor")
	if err := chromedp.Do(ctx, chromedp.Navigate(fmt.Sprintf("%s/dates/%d/edit", srv.URL, d.ID)),
		chromedp.SetValue(chromedp.CSS(`textarea[name="notes"]`), "checked against the lab's data table"),
		chromedp.SetValue(chromedp.CSS(`input[name="sigma_ma"]`), "-1"),
		chromedp.Click(chromedp.CSS(`form.edit button`))); err != nil {
		t.Fatal(err)
	}
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS(".field-error"))); err != nil {
		t.Fatal(err)
	}
	shoot(t, ctx, dir, "20-edit-with-error")
	if got := text(t, ctx, ".field-error"); !strings.Contains(got, "greater than 0") {
		t.Errorf("field error %q", got)
	}
	if err := chromedp.Do(ctx, chromedp.SetValue(chromedp.CSS(`input[name="sigma_ma"]`), store.FormOfDate(d)["sigma_ma"]),
		chromedp.Click(chromedp.CSS(`form.edit button`))); err != nil {
		t.Fatal(err)
	}
	// The save answers with a redirect to the date's page; the refused form would stay on …/edit.
	for deadline := time.Now().Add(10 * time.Second); ; time.Sleep(50 * time.Millisecond) {
		loc, _ := chromedp.Run(ctx, chromedp.Location())
		if strings.HasSuffix(loc, fmt.Sprintf("/dates/%d", d.ID)) {
			break
		}
		if time.Now().After(deadline) {
			msg, _ := chromedp.Run(ctx, chromedp.Text(chromedp.CSS("main")))
			t.Fatalf("the corrected form was not saved (at %s): %.400s", loc, msg)
		}
	}
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS(".groups"))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "main"); !strings.Contains(got, "pending review") {
		t.Error("the contributor's edit is not shown as pending")
	}
	shoot(t, ctx, dir, "21-edited-pending")

	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS(".account form.inline button")),
		chromedp.WaitVisible(chromedp.CSS(`.account a[href="/login"]`))); err != nil {
		t.Fatal(err)
	}
	signInBrowser(t, ctx, srv.URL, "demo-curator")
	if err := chromedp.Do(ctx, chromedp.Navigate(fmt.Sprintf("%s/dates/%d", srv.URL, d.ID)),
		chromedp.Click(chromedp.CSS(`form.action input[value="accept"] ~ button`))); err != nil {
		t.Fatal(err)
	}
	// The accept is a form POST answered by a redirect to the same page: wait for the stored state.
	for deadline := time.Now().Add(10 * time.Second); ; time.Sleep(50 * time.Millisecond) {
		got, _ := db.Date(context.Background(), d.ID)
		if got.ReviewState == "accepted" {
			break
		}
		if time.Now().After(deadline) {
			t.Fatalf("after the curator's accept: %q", got.ReviewState)
		}
	}
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS(".groups"))); err != nil {
		t.Fatal(err)
	}
	shoot(t, ctx, dir, "22-accepted")
	navigateAfterPost(t, ctx, fmt.Sprintf("%s/dates/%d/history", srv.URL, d.ID))
	hist := text(t, ctx, "main")
	for _, want := range []string{"demo-contributor", "demo-curator", "accept date", "checked against the lab's data table"} {
		if !strings.Contains(hist, want) {
			t.Errorf("history lacks %q", want)
		}
	}
	shoot(t, ctx, dir, "23-history")
	// Restore the state before the contributor's edit (the second newest change).
	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS(`.actions form.action:nth-of-type(2) button`))); err != nil {
		t.Fatal(err)
	}
	for deadline := time.Now().Add(10 * time.Second); ; time.Sleep(50 * time.Millisecond) {
		got, _ := db.Date(context.Background(), d.ID)
		if got.Notes == d.Notes && got.SigmaMa == d.SigmaMa && got.ReviewState == d.ReviewState {
			break
		}
		if time.Now().After(deadline) {
			t.Fatalf("after restoring: notes %q σ %v state %q, want %q %v %q", got.Notes, got.SigmaMa, got.ReviewState, d.Notes, d.SigmaMa, d.ReviewState)
		}
	}
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#diff"))); err != nil {
		t.Fatal(err)
	}
	shoot(t, ctx, dir, "24-restored")
}

// A reader of the section pages, in a real headless Chromium: the clean section with its figure and
// anomaly, the low-TOC section with its not-evaluable samples, the masked section, a changed threshold
// through the form, and the aligned page. Screenshots of each are saved for review.
func TestBrowserSectionPages(t *testing.T) {
	ctx := newBrowser(t)
	srv, db := mustServer(t)
	dir := screenshotDir(t)
	ids := map[string]int64{}
	secs, err := db.Sections(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range secs {
		ids[s.Name] = s.ID
	}
	shootElem := func(sel, name string) {
		t.Helper()
		png, err := chromedp.Run(ctx, chromedp.Screenshot(chromedp.CSS(sel)))
		if err != nil {
			t.Fatalf("screenshot of %s: %v", sel, err)
		}
		if err := os.WriteFile(shotPath(t, dir, name), png, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	open := func(path, wait string) {
		t.Helper()
		if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+path), chromedp.WaitVisible(chromedp.CSS(wait))); err != nil {
			t.Fatalf("%s: %v", path, err)
		}
	}

	open(idURL("/sections", ids["Vedholmen-1 Core"]), "#section-figure svg")
	if got := text(t, ctx, "#anomaly-table tbody"); !strings.Contains(got, "Hg and Hg/TOC rise together") {
		t.Errorf("clean section's anomaly table %q does not read as a real anomaly", got)
	}
	// The method is on demand: the age model's statement opens from its "How this was computed".
	if got := text(t, ctx, "#agemodel"); strings.Contains(got, "Seed 1, 2000 draws") {
		t.Error("the age model's method shows before it is asked for")
	}
	if err := chromedp.Do(ctx, chromedp.Click("#agemodel details.how > summary", chromedp.NodeVisible)); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "#agemodel"); !strings.Contains(got, "Seed 1, 2000 draws") {
		t.Errorf("age model block %q does not state seed and draws", got)
	}
	shoot(t, ctx, dir, "11-section-clean")
	shootElem("#section-figure", "11a-figure-clean")
	shootElem("#anomalies", "11b-anomalies-clean")

	open(idURL("/sections", ids["Skarfell Creek"]), "#section-figure svg")
	// The long samples table is folded: its summary says how many rows it holds, and a click opens it.
	if said, err := chromedp.Run(ctx, chromedp.Evaluate[bool](`(() => { const s = document.querySelector('#measurements').closest('details').querySelector('summary'); s.click(); return /\(\d+ rows\)/.test(s.textContent); })()`)); err != nil {
		t.Fatal(err)
	} else if !said {
		t.Error("the folded samples table does not say how many rows it holds")
	}
	if got := text(t, ctx, "#measurements tbody"); !strings.Contains(got, "not evaluable") {
		t.Error("low-TOC section shows no not-evaluable sample")
	}
	shoot(t, ctx, dir, "12-section-low-toc")
	shootElem("#section-figure", "12a-figure-low-toc")
	shootElem("#controls", "12b-controls")
	shootElem(".cautions", "12c-cautions")
	// The samples table around the first carbonate bed (the viewport, not the whole long table).
	if err := chromedp.Do(ctx, chromedp.ScrollIntoView(chromedp.CSS("#measurements td.noteval"))); err != nil {
		t.Fatal(err)
	}
	if png, err := chromedp.Run(ctx, chromedp.CaptureScreenshot()); err != nil {
		t.Fatal(err)
	} else if err := os.WriteFile(shotPath(t, dir, "12d-samples"), png, 0o644); err != nil {
		t.Fatal(err)
	}

	open(idURL("/sections", ids["Mornesk Cliffs"]), "#section-figure svg")
	if got := text(t, ctx, "#anomaly-table tbody"); !strings.Contains(got, "host-regression residual") {
		t.Errorf("masked section's anomaly %q is not read as a host-regression residual", got)
	}
	shoot(t, ctx, dir, "13-section-masked")
	shootElem("#section-figure", "13a-figure-masked")
	shootElem("#host", "13b-host-masked")

	// The form keeps the threshold in the address.
	if err := chromedp.Do(ctx, chromedp.SetValue(chromedp.CSS(`input[name="toc_min"]`), "0.5"),
		chromedp.Click(chromedp.CSS(`form.filters button`))); err != nil {
		t.Fatal(err)
	}
	if p := waitPath(t, ctx, idURL("/sections", ids["Mornesk Cliffs"])+"?"); !strings.Contains(p, "toc_min=0.5") {
		t.Errorf("address %q lacks the threshold", p)
	}

	open("/sections/aligned", "#aligned-figure svg")
	shoot(t, ctx, dir, "14-sections-aligned")

	// A curator rejects the masked section's anomaly with a reason and adds an event from the page.
	signInBrowser(t, ctx, srv.URL, "demo-curator")
	mornesk := idURL("/sections", ids["Mornesk Cliffs"])
	open(mornesk, "#anomaly-1-reject")
	shootElem("#anomalies", "15a-anomaly-forms")
	if err := chromedp.Do(ctx, chromedp.SetValue(chromedp.CSS(`#anomaly-1-reject input[name="reason"]`), "raw Hg follows TOC in a coal-rich bed"),
		chromedp.Click(chromedp.CSS(`#anomaly-1-reject button`)), chromedp.WaitVisible(chromedp.CSS(`#anomaly-decisions`))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "#anomaly-table tbody"); !strings.Contains(got, "rejected by demo-curator: raw Hg follows TOC") {
		t.Errorf("after rejecting, the anomaly table reads %q", got)
	}
	shootElem("#anomalies", "15b-anomaly-rejected")
	if err := chromedp.Do(ctx, chromedp.SetValue(chromedp.CSS(`#event-form input[name="name"]`), "CIE onset"),
		chromedp.SetValue(chromedp.CSS(`#event-form select[name="kind"]`), "cie_onset"),
		chromedp.SetValue(chromedp.CSS(`#event-form input[name="base_height_m"]`), "twenty"),
		chromedp.Click(chromedp.CSS(`#event-form button`)), chromedp.WaitVisible(chromedp.CSS(`#event-form .field-error`))); err != nil {
		t.Fatal(err)
	}
	shootElem("#add-event", "15c-event-form-error")
	// The name is taken (the demo has a CIE onset here) and the height is not a number: both fields say so.
	if got := text(t, ctx, "#event-form"); !strings.Contains(got, "already has an event named") || !strings.Contains(got, "want a number") {
		t.Errorf("the event form's errors read %q", got)
	}
	if err := chromedp.Do(ctx, chromedp.SetValue(chromedp.CSS(`#event-form input[name="name"]`), "Last ammonite"),
		chromedp.SetValue(chromedp.CSS(`#event-form select[name="kind"]`), "extinction"),
		chromedp.SetValue(chromedp.CSS(`#event-form input[name="base_height_m"]`), "20.5"),
		chromedp.Click(chromedp.CSS(`#event-form button`))); err != nil {
		t.Fatal(err)
	}
	// The form on the old page stays visible until the answer loads: wait for the new event itself.
	waitText(t, ctx, "#events tbody", "Last ammonite")
}

// navigateAfterPost opens url, trying again while the browser is still finishing the redirect of a form
// post it just made (Chromium then aborts the new navigation with net::ERR_ABORTED).
func navigateAfterPost(t testing.TB, ctx context.Context, url string) {
	t.Helper()
	var err error
	for range 20 {
		if err = chromedp.Do(ctx, chromedp.Navigate(url)); err == nil || !strings.Contains(err.Error(), "ERR_ABORTED") {
			break
		}
		time.Sleep(100 * time.Millisecond)
	}
	if err != nil {
		t.Fatalf("open %s: %v", url, err)
	}
}

// waitText waits until the text of sel contains want (after a post whose answer replaces the page).
func waitText(t testing.TB, ctx context.Context, sel, want string) {
	t.Helper()
	var got string
	for deadline := time.Now().Add(15 * time.Second); time.Now().Before(deadline); time.Sleep(100 * time.Millisecond) {
		got, _ = chromedp.Run(ctx, chromedp.Text(chromedp.CSS(sel), chromedp.AtLeast(0)))
		if strings.Contains(got, want) {
			return
		}
	}
	t.Errorf("%s does not come to read %q; it reads %.300q", sel, want, got)
}

// A contributor uploads a file from the browser: the page shows the upload's progress, then the preview
// of every row; a file with errors shows them and offers no import.
func TestBrowserUpload(t *testing.T) {
	ctx := newBrowser(t)
	srv, db := mustServer(t)
	dir := screenshotDir(t)
	before, _ := db.Counts(context.Background())
	file := filepath.Join(t.TempDir(), "new-dates.csv")
	os.WriteFile(file, []byte("province,unit,sample_code,method,interpretation,age_ma,sigma_ma,sigma_level\n"+
		"Hvarn Plateau Basalts (invented),Haldruna Flow,UP-1,upb_idtims,eruption,155.37,0.06,2\n"+
		"Hvarn Plateau Basalts (invented),Haldruna Flow,UP-2,upb_idtims,eruption,abc,0.06,7\n"), 0o644)
	signInBrowser(t, ctx, srv.URL, "demo-contributor")
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/import"),
		chromedp.SetValue(chromedp.CSS(`select[name="kind"]`), "dates"),
		chromedp.SetUploadFiles(chromedp.CSS(`input[name="file"]`), []string{file}),
		chromedp.Click(chromedp.CSS(`form.edit button`)),
		chromedp.WaitVisible(chromedp.CSS(`#preview`))); err != nil {
		t.Fatal(err)
	}
	body := text(t, ctx, "main")
	if !strings.Contains(body, "nothing can be imported") || !strings.Contains(body, "age_ma: want a number") || !strings.Contains(body, "sigma_level") {
		t.Errorf("the preview of a bad file reads %.500q", body)
	}
	shoot(t, ctx, dir, "preview-with-errors")
	if after, _ := db.Counts(context.Background()); after != before {
		t.Error("a previewed bad file changed the compilation")
	}
	// The fixed file is imported; a contributor's dates wait for a curator, and the change says so.
	os.WriteFile(file, []byte("province,unit,sample_code,method,interpretation,age_ma,sigma_ma,sigma_level\n"+
		"Hvarn Plateau Basalts (invented),Haldruna Flow,UP-1,upb_idtims,eruption,155.37,0.06,2\n"+
		"Hvarn Plateau Basalts (invented),Haldruna Flow,UP-2,upb_idtims,eruption,155.41,0.06,2\n"), 0o644)
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/import"),
		chromedp.SetValue(chromedp.CSS(`select[name="kind"]`), "dates"),
		chromedp.SetUploadFiles(chromedp.CSS(`input[name="file"]`), []string{file}),
		chromedp.Click(chromedp.CSS(`form.edit button`)),
		chromedp.WaitVisible(chromedp.CSS(`#preview`))); err != nil {
		t.Fatal(err)
	}
	if body := text(t, ctx, "main"); !strings.Contains(body, "arrive pending a curator's review") {
		t.Errorf("the preview of a contributor's file does not say its dates arrive pending: %.500q", body)
	}
	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS(`form[action*="/commit"] button`))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/changes/")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS(`#records`))); err != nil {
		t.Fatal(err)
	}
	if body := text(t, ctx, "main"); !strings.Contains(body, "2 record(s) this change added wait for a curator's review") {
		t.Errorf("the change page of a contributor's import reads %.500q", body)
	}
	shoot(t, ctx, dir, "imported-pending")
}
