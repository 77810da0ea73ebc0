package web

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/chromedp/chromedp"

	"coeval/store"
)

// A curator's path in a real browser: sign in → upload a file with errors (the preview names each row's
// problem and nothing is imported) → fix the file and upload it again → accept the preview, importing all
// rows as one change → the change and a date's history → undo the change, which leaves the compilation
// exactly as before. Screenshots of each step are saved.
func TestBrowserCuratorJourney(t *testing.T) {
	ctx := newBrowser(t)
	srv, db := mustServer(t)
	dir := screenshotDir(t)
	bg := context.Background()
	before, err := db.Counts(bg)
	if err != nil {
		t.Fatal(err)
	}
	const header = "province,unit,sample_code,method,material,interpretation,age_ma,sigma_ma,sigma_level,laboratory\n"
	const where = "Hvarn Plateau Basalts (invented),Haldruna Flow,"
	bad := header +
		where + "CJ-1,upb_idtims,zircon,eruption,155.31,0.05,2,Lab of the invented north\n" +
		where + "CJ-2,upb_idtims,zircon,eruption,\"155,29\",0.06,2,Lab of the invented north\n" +
		where + "CJ-3,upb_idtims,zircon,eruption,155.35,0.05,3,Lab of the invented north\n"
	fixed := strings.NewReplacer(`"155,29"`, "155.29", "0.05,3,", "0.05,2,").Replace(bad)
	files := t.TempDir()
	upload := func(name, body string) {
		t.Helper()
		path := filepath.Join(files, name)
		if err := os.WriteFile(path, []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
		if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/import"),
			chromedp.SetValue(chromedp.CSS(`select[name="kind"]`), "dates"),
			chromedp.SetUploadFiles(chromedp.CSS(`input[name="file"]`), []string{path}),
			chromedp.Click(chromedp.CSS(`form.edit button`)),
			chromedp.WaitVisible(chromedp.CSS(`#preview`))); err != nil {
			t.Fatal(err)
		}
	}

	signInBrowser(t, ctx, srv.URL, "demo-curator")
	upload("cj-dates.csv", bad)
	page := text(t, ctx, "main")
	for _, want := range []string{"2 problem(s) found: nothing can be imported", "age_ma: want a number", "sigma_level"} {
		if !strings.Contains(page, want) {
			t.Errorf("the preview of the bad file lacks %q:\n%.800s", want, page)
		}
	}
	// Each problem sits on the row (line) of the file it belongs to.
	rows := text(t, ctx, "#preview tbody")
	for _, line := range strings.Split(rows, "\n") {
		switch {
		case strings.Contains(line, "CJ-2") && !strings.Contains(line, "age_ma"):
			t.Errorf("row of CJ-2 does not carry its age problem: %q", line)
		case strings.Contains(line, "CJ-1") && !strings.Contains(line, "ok"):
			t.Errorf("the good row CJ-1 is not marked ok: %q", line)
		}
	}
	commits, err := chromedp.Run(ctx, chromedp.Evaluate[int](`document.querySelectorAll('form[action*="/commit"]').length`))
	if err != nil {
		t.Fatal(err)
	}
	if commits != 0 {
		t.Error("the preview of a file with problems offers to import it")
	}
	if now, _ := db.Counts(bg); now != before {
		t.Fatalf("uploading a file with problems changed the compilation: %+v → %+v", before, now)
	}
	shoot(t, ctx, dir, "1-preview-with-errors")

	upload("cj-dates-fixed.csv", fixed)
	if page := text(t, ctx, "main"); !strings.Contains(page, "No problem found: importing will add 3 dates") {
		t.Errorf("the preview of the fixed file reads:\n%.600s", page)
	}
	shoot(t, ctx, dir, "2-preview-fixed")
	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS(`form[action*="/commit"] button`))); err != nil {
		t.Fatal(err)
	}
	change := waitPath(t, ctx, "/changes/")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS(`#records`))); err != nil {
		t.Fatal(err)
	}
	page = text(t, ctx, "main")
	if !strings.Contains(page, "import dates") || !strings.Contains(page, "cj-dates-fixed.csv") || strings.Count(text(t, ctx, "#records tbody"), "added") != 3 {
		t.Errorf("the change page after the import reads:\n%.800s", page)
	}
	if strings.Contains(page, "pending") {
		t.Error("a curator's own import is shown as waiting for review")
	}
	imported, _, err := db.Dates(bg, store.DateFilter{Text: "CJ-"})
	if err != nil || len(imported) != 3 {
		t.Fatalf("after the import %d CJ dates (%v), want 3", len(imported), err)
	}
	shoot(t, ctx, dir, "3-change")

	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS(`#records tbody a`))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/dates/")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("main h1"))); err != nil {
		t.Fatal(err)
	}
	hist := text(t, ctx, "main")
	for _, want := range []string{"demo-curator", "import dates", "cj-dates-fixed.csv"} {
		if !strings.Contains(hist, want) {
			t.Errorf("a date's history lacks %q:\n%.800s", want, hist)
		}
	}
	shoot(t, ctx, dir, "4-date-history")

	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+change),
		chromedp.Click(chromedp.CSS(`form.action.danger button`))); err != nil {
		t.Fatal(err)
	}
	waitFeed(t, ctx, "/changes")
	if err := chromedp.Do(ctx, chromedp.WaitVisible(chromedp.CSS("main table"))); err != nil {
		t.Fatal(err)
	}
	if feed := text(t, ctx, "main table"); !strings.Contains(feed, "undid change "+strings.TrimPrefix(change, "/changes/")) {
		t.Errorf("the feed of changes does not show the undo:\n%.600s", feed)
	}
	shoot(t, ctx, dir, "5-undone")
	if now, _ := db.Counts(bg); now != before {
		t.Errorf("after undoing the import the compilation holds %+v, want %+v", now, before)
	}
	if left, _, _ := db.Dates(bg, store.DateFilter{Text: "CJ-"}); len(left) != 0 {
		t.Errorf("%d CJ dates left after the undo", len(left))
	}
}
