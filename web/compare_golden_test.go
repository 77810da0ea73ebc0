package web

import (
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"
)

// TestCompareGolden keeps the comparison's downloads under testdata/ (go test ./web -run CompareGolden
// -update rewrites them): the default address, and one with anomalies, a correlated group and the TOC
// thresholds in the sensitivity. Everything in them is seeded, so a change of a single byte is a change
// of the output: a new choice must leave the default alone. The workbook is compared sheet by sheet as
// text (its container holds a time stamp).
func TestCompareGolden(t *testing.T) {
	srv, _ := mustServer(t)
	for _, c := range []struct{ name, query string }{
		{"compare-default", ""},
		{"compare-anomalies", "anomalies=1&group=cie_onset&n=2000&reps=200&draws=500"},
	} {
		for _, format := range []string{"csv", "json", "svg", "xlsx"} {
			t.Run(c.name+"."+format, func(t *testing.T) {
				path := "/compare?format=" + format
				if c.query != "" {
					path += "&" + c.query
				}
				status, _, body := get(t, srv, path)
				if status != http.StatusOK {
					t.Fatalf("%s: status %d: %.300s", path, status, body)
				}
				ext := format
				if format == "xlsx" {
					body, ext = xlsxText(t, body), "xlsx.txt"
				}
				golden := filepath.Join("testdata", c.name+"."+ext)
				if *update {
					if err := os.WriteFile(golden, []byte(body), 0o644); err != nil {
						t.Fatal(err)
					}
				}
				want, err := os.ReadFile(golden)
				if err != nil {
					t.Fatalf("%v (run go test ./web -run CompareGolden -update)", err)
				}
				if body != string(want) {
					t.Errorf("%s differs from %s; if the change is intended, run go test ./web -run CompareGolden -update and review the diff", path, golden)
				}
			})
		}
	}
}

// xlsxText writes every sheet of a workbook as tab-separated text under its name.
func xlsxText(t *testing.T, b string) string {
	t.Helper()
	f, err := excelize.OpenReader(strings.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var out strings.Builder
	for _, s := range f.GetSheetList() {
		rows, err := f.GetRows(s)
		if err != nil {
			t.Fatal(err)
		}
		out.WriteString("## " + s + "\n")
		for _, r := range rows {
			out.WriteString(strings.Join(r, "\t") + "\n")
		}
	}
	return out.String()
}
