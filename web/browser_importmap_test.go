package web

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/chromedp/chromedp"
	"github.com/xuri/excelize/v2"
)

// paperWorkbook writes a workbook shaped like a paper's supplement (invented values): a summary sheet
// first, then the table on its own sheet, with ²⁰⁶Pb/²³⁸U and ²⁰⁷Pb/²³⁵U dates per row (Ma, 2σ absolute)
// and a note under it.
func paperWorkbook(t testing.TB, path string, rows [][]any) {
	t.Helper()
	f := excelize.NewFile()
	defer f.Close()
	f.SetSheetName("Sheet1", "Summary")
	f.SetSheetRow("Summary", "A1", &[]any{"Summary of the invented dates of this supplement"})
	if _, err := f.NewSheet("Table S2"); err != nil {
		t.Fatal(err)
	}
	all := append([][]any{{"Sample ID", "Intrusion", "206Pb/238U date (Ma)", "± 2s abs", "207Pb/235U date (Ma)", "± 2s abs"}}, rows...)
	all = append(all, []any{"Uncertainties 2s, analytical only (invented)."})
	for i, r := range all {
		cell, _ := excelize.CoordinatesToCellName(1, i+1)
		if err := f.SetSheetRow("Table S2", cell, &r); err != nil {
			t.Fatal(err)
		}
	}
	var buf bytes.Buffer
	if err := f.Write(&buf); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

// A curator imports dates from a paper's workbook: upload → choose the sheet → map the columns (the
// suggestions filled in, the rest chosen) → preview with the file's cells → commit → the change says how
// the numbers got in → a second workbook of the same layout is read with the saved mapping.
func TestBrowserImportThroughAMapping(t *testing.T) {
	ctx := newBrowser(t)
	srv, db := mustServer(t)
	dir := screenshotDir(t)
	before, _ := db.Counts(context.Background())
	first := filepath.Join(t.TempDir(), "supplement-1.xlsx")
	paperWorkbook(t, first, [][]any{
		{"MS-1", "Haldruna Flow", "155.512", "0.046", "155.60", "0.21"},
		{"MS-2", "Haldruna Flow", "155.388", "0.052", "155.31", "0.25"},
	})
	signInBrowser(t, ctx, srv.URL, "demo-curator")
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/import"),
		chromedp.SetValue(chromedp.CSS(`select[name="kind"]`), "dates"),
		chromedp.SetValue(chromedp.CSS(`select[name="columns"]`), "map"),
		chromedp.SetUploadFiles(chromedp.CSS(`input[name="file"]`), []string{first}),
		chromedp.Click(chromedp.CSS(`form.edit button`))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/import/")
	waitText(t, ctx, "main", "The file's columns")
	// The first sheet is a summary: choose the table's sheet, and the page shows its columns.
	if err := chromedp.Do(ctx, chromedp.SetValue(chromedp.CSS(`select[name="sheet"]`), "Table S2"),
		chromedp.Click(chromedp.CSS(`form.edit button`))); err != nil {
		t.Fatal(err)
	}
	waitText(t, ctx, "main", "The columns below are those of the sheet")
	body := text(t, ctx, "main")
	for _, want := range []string{"206Pb/238U date (Ma)", "155.512 · 155.388", "choose the one to keep"} {
		if !strings.Contains(body, want) {
			t.Errorf("the mapping page of the second sheet does not show %q", want)
		}
	}
	shoot(t, ctx, dir, "map")
	// The suggestions took the sample, the first age and its σ with its level; the rest is chosen here.
	if err := chromedp.Do(ctx,
		chromedp.SetValue(chromedp.CSS(`select[name="col_unit"]`), "Intrusion"),
		chromedp.SetValue(chromedp.CSS(`input[name="const_province"]`), "Hvarn Plateau Basalts (invented)"),
		chromedp.SetValue(chromedp.CSS(`select[name="const_method"]`), "upb_idtims"),
		chromedp.SetValue(chromedp.CSS(`select[name="const_interpretation"]`), "eruption"),
		chromedp.SetValue(chromedp.CSS(`input[name="name"]`), "Invented TIMS lab"),
		chromedp.Click(chromedp.CSS(`form.edit button`)),
		chromedp.WaitVisible(chromedp.CSS(`#preview`))); err != nil {
		t.Fatal(err)
	}
	body = text(t, ctx, "main")
	for _, want := range []string{"No problem found", "155.512", "0.046", "skipped: a note", "Invented TIMS lab", "“206Pb/238U date (Ma)”"} {
		if !strings.Contains(body, want) {
			t.Errorf("the preview does not show %q: %.600q", want, body)
		}
	}
	if strings.Contains(body, "155.60") {
		t.Error("the preview shows the ²⁰⁷Pb/²³⁵U date, which the mapping leaves out")
	}
	shoot(t, ctx, dir, "preview")
	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS(`form[action*="/commit"] button`))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/changes/")
	waitText(t, ctx, "main", "How the file")
	shoot(t, ctx, dir, "change")
	if after, _ := db.Counts(context.Background()); after.Dates != before.Dates+2 {
		t.Fatalf("after the commit %d dates, want %d", after.Dates, before.Dates+2)
	}

	// A second workbook of the same layout: the saved mapping is filled in; check and commit.
	second := filepath.Join(t.TempDir(), "supplement-2.xlsx")
	paperWorkbook(t, second, [][]any{{"MS-3", "Haldruna Flow", "155.274", "0.060", "155.20", "0.30"}})
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL+"/import"),
		chromedp.SetValue(chromedp.CSS(`select[name="kind"]`), "dates"),
		chromedp.SetValue(chromedp.CSS(`select[name="columns"]`), "map"),
		chromedp.SetUploadFiles(chromedp.CSS(`input[name="file"]`), []string{second}),
		chromedp.Click(chromedp.CSS(`form.edit button`))); err != nil {
		t.Fatal(err)
	}
	waitText(t, ctx, "main", "The saved mapping “Invented TIMS lab” was made for a file with these same columns")
	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS(`form.edit button`)), chromedp.WaitVisible(chromedp.CSS(`#preview`))); err != nil {
		t.Fatal(err)
	}
	if body := text(t, ctx, "main"); !strings.Contains(body, "No problem found") || !strings.Contains(body, "155.274") {
		t.Errorf("the second file's preview: %.600q", body)
	}
	if err := chromedp.Do(ctx, chromedp.Click(chromedp.CSS(`form[action*="/commit"] button`))); err != nil {
		t.Fatal(err)
	}
	waitPath(t, ctx, "/changes/")
	waitText(t, ctx, "main", "Invented TIMS lab")
	if after, _ := db.Counts(context.Background()); after.Dates != before.Dates+3 {
		t.Fatalf("after the second commit %d dates, want %d", after.Dates, before.Dates+3)
	}
}
