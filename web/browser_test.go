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
	tmp := t.TempDir()
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

func shoot(t testing.TB, ctx context.Context, dir, name string) {
	t.Helper()
	png, err := chromedp.Run(ctx, chromedp.FullScreenshot(100))
	if err != nil {
		t.Fatalf("screenshot %s: %v", name, err)
	}
	if err := os.WriteFile(filepath.Join(dir, name+".png"), png, 0o644); err != nil {
		t.Fatal(err)
	}
}

func text(t testing.TB, ctx context.Context, sel string) string {
	t.Helper()
	s, err := chromedp.Run(ctx, chromedp.Text(chromedp.CSS(sel)))
	if err != nil {
		t.Fatalf("text of %s: %v", sel, err)
	}
	return s
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
	if got := text(t, ctx, "#measurements caption"); !strings.Contains(got, "Samples ("+itoa(secs[0].NSamples)+")") {
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

// A curator's path: a contributor edits a draft date (it stays pending), a curator accepts it, reads the
// history and restores the earlier state — all through the pages, with screenshots.
func TestBrowserContributorAndCurator(t *testing.T) {
	ctx := newBrowser(t)
	srv, db := mustServer(t)
	dir := screenshotDir(t)
	pending, _, err := db.Dates(context.Background(), store.DateFilter{ReviewState: "pending", Limit: 1})
	if err != nil || len(pending) == 0 {
		t.Fatal("no pending date in the demo")
	}
	d := pending[0]
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
	shoot(t, ctx, dir, "10-edit-with-error")
	if got := text(t, ctx, ".field-error"); !strings.Contains(got, "greater than 0") {
		t.Errorf("field error %q", got)
	}
	if err := chromedp.Do(ctx, chromedp.SetValue(chromedp.CSS(`input[name="sigma_ma"]`), store.FormOfDate(d)["sigma_ma"]),
		chromedp.Click(chromedp.CSS(`form.edit button`))); err != nil {
		t.Fatal(err)
	}
	if p := waitPath(t, ctx, fmt.Sprintf("/dates/%d", d.ID)); strings.HasSuffix(p, "/edit") {
		if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS(".groups, .error"))); err != nil {
			t.Fatal(err)
		}
		if msg, _ := chromedp.Run(ctx, chromedp.Text(chromedp.CSS("main"))); strings.Contains(msg, "Nothing was saved") {
			t.Fatalf("the corrected form was refused: %.400s", msg)
		}
	}
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS(".groups"))); err != nil {
		t.Fatal(err)
	}
	if got := text(t, ctx, "main"); !strings.Contains(got, "pending review") {
		t.Error("the contributor's edit is not shown as pending")
	}
	shoot(t, ctx, dir, "11-edited-pending")

	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS(".account form.inline button")),
		chromedp.WaitVisible(chromedp.CSS(`.account a[href="/login"]`))); err != nil {
		t.Fatal(err)
	}
	signInBrowser(t, ctx, srv.URL, "demo-curator")
	if err := chromedp.Do(ctx, chromedp.Navigate(fmt.Sprintf("%s/dates/%d", srv.URL, d.ID)),
		chromedp.Click(chromedp.CSS(`form.action input[value="accept"] ~ button`))); err != nil {
		t.Fatal(err)
	}
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS(".groups"))); err != nil {
		t.Fatal(err)
	}
	if got, _ := db.Date(context.Background(), d.ID); got.ReviewState != "accepted" {
		t.Fatalf("after the curator's accept: %q", got.ReviewState)
	}
	shoot(t, ctx, dir, "12-accepted")
	if err := chromedp.Do(ctx, chromedp.Navigate(fmt.Sprintf("%s/dates/%d/history", srv.URL, d.ID))); err != nil {
		t.Fatal(err)
	}
	hist := text(t, ctx, "main")
	for _, want := range []string{"demo-contributor", "demo-curator", "accept date", "checked against the lab's data table"} {
		if !strings.Contains(hist, want) {
			t.Errorf("history lacks %q", want)
		}
	}
	shoot(t, ctx, dir, "13-history")
	// Restore the state before the contributor's edit (the second newest change).
	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS(`.actions form.action:nth-of-type(2) button`))); err != nil {
		t.Fatal(err)
	}
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("#diff"))); err != nil {
		t.Fatal(err)
	}
	time.Sleep(200 * time.Millisecond)
	got, _ := db.Date(context.Background(), d.ID)
	if got.Notes != d.Notes || got.SigmaMa != d.SigmaMa || got.ReviewState != d.ReviewState {
		t.Errorf("after restoring: notes %q σ %v state %q, want %q %v %q", got.Notes, got.SigmaMa, got.ReviewState, d.Notes, d.SigmaMa, d.ReviewState)
	}
	shoot(t, ctx, dir, "14-restored")
}
