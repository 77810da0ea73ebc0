package web

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"html"
	"io"
	"log/slog"
	"math/rand/v2"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"coeval/migrations"
	"coeval/static"
	"coeval/stats"
	"coeval/store"
)

// summaryTestServer serves a fresh database seeded with the invented demo scenario of testdata/demo.
func summaryTestServer(t testing.TB) (http.Handler, *store.DB) {
	t.Helper()
	ctx := context.Background()
	db, err := store.Open(ctx, filepath.Join(t.TempDir(), "web.db"))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	if _, err := db.Migrate(ctx, migrations.FS); err != nil {
		t.Fatal(err)
	}
	db.SetClock(func() time.Time { return time.Date(2026, 1, 2, 3, 4, 5, 0, time.UTC) })
	if _, _, err := db.SeedDemo(ctx, os.DirFS("../testdata/demo"), "invented"); err != nil {
		t.Fatal(err)
	}
	return NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS), db
}

// fetch GETs url from h and returns the status and body.
func fetch(t testing.TB, h http.Handler, url string) (int, string) {
	t.Helper()
	rec := httptest.NewRecorder()
	h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, url, nil))
	return rec.Code, rec.Body.String()
}

func mustFetch(t testing.TB, h http.Handler, url string) string {
	t.Helper()
	code, body := fetch(t, h, url)
	if code != http.StatusOK {
		t.Fatalf("GET %s: status %d, want 200", url, code)
	}
	return body
}

var (
	tableRe = regexp.MustCompile(`(?s)<table id="([^"]*)".*?</table>`)
	rowRe   = regexp.MustCompile(`(?s)<tr>(.*?)</tr>`)
	cellRe  = regexp.MustCompile(`(?s)<td[^>]*>(.*?)</td>`)
	classRe = regexp.MustCompile(`(?s)<td class="([^"]*)"`)
	tagRe   = regexp.MustCompile(`<[^>]+>`)
	ddRe    = regexp.MustCompile(`(?s)<dt>(.*?)</dt><dd[^>]*>(.*?)</dd>`)
	groupRe = regexp.MustCompile(`(?s)<section class="group"><h2>(.*?)</h2>(.*?)</section>`)
)

func plainText(s string) string {
	return strings.TrimSpace(html.UnescapeString(tagRe.ReplaceAllString(s, "")))
}

// htmlRow is one body row of a rendered table: the text of each cell and whether any cell is a caution.
type htmlRow struct {
	cells   []string
	caution bool
}

// htmlTable returns the body rows of the table with the given id in page.
func htmlTable(t testing.TB, page, id string) []htmlRow {
	t.Helper()
	for _, m := range tableRe.FindAllStringSubmatch(page, -1) {
		if m[1] != id {
			continue
		}
		var out []htmlRow
		for _, r := range rowRe.FindAllStringSubmatch(m[0], -1) {
			cells := cellRe.FindAllStringSubmatch(r[1], -1)
			if len(cells) == 0 {
				continue // header row
			}
			var row htmlRow
			for _, c := range cells {
				row.cells = append(row.cells, plainText(c[1]))
			}
			for _, c := range classRe.FindAllStringSubmatch(r[1], -1) {
				row.caution = row.caution || strings.Contains(c[1], "caution")
			}
			out = append(out, row)
		}
		return out
	}
	t.Fatalf("no table %q in the page", id)
	return nil
}

// rowsOf returns the rows whose first cell is unit.
func rowsOf(rows []htmlRow, unit string) []htmlRow {
	var out []htmlRow
	for _, r := range rows {
		if r.cells[0] == unit {
			out = append(out, r)
		}
	}
	return out
}

// Columns of the province page's summary table (summaryTable).
const (
	colSystem  = 1
	colN       = 2
	colMean    = 3
	colSigma   = 4
	colLevel   = 5
	colMSWD    = 6
	colFlagged = 11
	colRemarks = 9
)

// groups returns the unit page's field groups: title → label → values (a label may repeat, e.g. Caution).
func groups(page string) map[string]map[string][]string {
	out := map[string]map[string][]string{}
	for _, g := range groupRe.FindAllStringSubmatch(page, -1) {
		kv := map[string][]string{}
		for _, m := range ddRe.FindAllStringSubmatch(g[2], -1) {
			kv[plainText(m[1])] = append(kv[plainText(m[1])], plainText(m[2]))
		}
		out[plainText(g[1])] = kv
	}
	return out
}

func unitID(t testing.TB, db *store.DB, name string) int64 {
	t.Helper()
	us, err := db.Units(context.Background(), 0)
	if err != nil {
		t.Fatal(err)
	}
	for _, u := range us {
		if u.Name == name {
			return u.ID
		}
	}
	t.Fatalf("no unit %q in the demo", name)
	return 0
}

func provinceURL(t testing.TB, db *store.DB) string {
	t.Helper()
	ps, err := db.Provinces(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range ps {
		if p.Name == demoFirstProvince {
			return idURL("/provinces", p.ID)
		}
	}
	t.Fatalf("no %q among the demo provinces %v", demoFirstProvince, ps)
	return ""
}

// demoFirstProvince is the demo's first province (testdata/demo/README.md), the one the tests of a single
// province's pages read; the demo holds others besides.
const demoFirstProvince = "Hvarn Plateau Basalts (invented)"

func TestProvincePageSummaryCautions(t *testing.T) {
	h, db := summaryTestServer(t)
	rows := htmlTable(t, mustFetch(t, h, provinceURL(t, db)), "summaries")

	// testdata/demo/README.md: 17 units; Tindravik Flow Group mixes U–Pb and Ar/Ar, so it has two rows.
	if got, want := len(rows), 18; got != want {
		t.Fatalf("summary rows = %d, want %d", got, want)
	}

	t.Run("Brennholt Flow Group: MSWD outside the Wendt & Carl range", func(t *testing.T) {
		// testdata/demo/README.md: "the only unit whose dates disagree (MSWD ≈ 17)".
		rs := rowsOf(rows, "Brennholt Flow Group")
		if len(rs) != 1 {
			t.Fatalf("%d rows, want 1", len(rs))
		}
		r := rs[0]
		mswd, err := strconv.ParseFloat(strings.TrimPrefix(r.cells[colMSWD], "⚠ "), 64)
		if err != nil || mswd < 15 || mswd > 19 {
			t.Errorf("MSWD cell %q, want ⚠ and about 17", r.cells[colMSWD])
		}
		if !strings.HasPrefix(r.cells[colMSWD], "⚠") || !strings.Contains(r.cells[colRemarks], "outside the 95 % range of χ²_f/f, 0.17–2.57 for f = 5") {
			// REFERENCES §1 [C] scipy chi2.ppf: f = 5, 0.166242–2.566500 (the default, exact range).
			t.Errorf("MSWD caution missing: MSWD %q, remarks %q", r.cells[colMSWD], r.cells[colRemarks])
		}
		wc := rowsOf(htmlTable(t, mustFetch(t, h, provinceURL(t, db)+"?mswd_range=wendt-carl"), "summaries"), "Brennholt Flow Group")
		if len(wc) != 1 || !strings.Contains(wc[0].cells[colRemarks], "outside the Wendt & Carl range 1 ± 2√(2/f), 0.00–2.26 for f = 5") {
			// Wendt & Carl (1991), Chem. Geol. 86:275: upper limit 1 + 2·sqrt(2/5) = 2.26 for 6 dates.
			t.Errorf("under the Wendt & Carl choice: rows %v", wc)
		}
		if r.cells[colFlagged] == "none flagged" || !strings.Contains(r.cells[colFlagged], "HV-12-0") {
			// testdata/demo/README.md: two of its dates have an older, inheritance-like tail.
			t.Errorf("flagged %q, want the older dates flagged by the default rule", r.cells[colFlagged])
		}
		if strings.Count(r.cells[colFlagged], ",") != 1 {
			t.Errorf("flagged %q, want two dates", r.cells[colFlagged])
		}
	})
	t.Run("only Brennholt is outside the range", func(t *testing.T) {
		// testdata/demo/README.md: "It is the only unit whose dates disagree".
		for _, r := range rows {
			if strings.HasPrefix(r.cells[colMSWD], "⚠") != (r.cells[0] == "Brennholt Flow Group") {
				t.Errorf("%s %s: MSWD cell %q", r.cells[0], r.cells[colSystem], r.cells[colMSWD])
			}
		}
	})
	t.Run("Tindravik Flow Group: one mean per decay system, and a caution", func(t *testing.T) {
		// testdata/demo/README.md: "the only unit that mixes U–Pb and Ar/Ar".
		rs := rowsOf(rows, "Tindravik Flow Group")
		if len(rs) != 2 {
			t.Fatalf("%d rows, want 2 (U–Pb and ⁴⁰Ar/³⁹Ar)", len(rs))
		}
		for i, want := range []string{"U–Pb", "⁴⁰Ar/³⁹Ar"} {
			if rs[i].cells[colSystem] != want {
				t.Errorf("row %d system %q, want %q", i, rs[i].cells[colSystem], want)
			}
			if !strings.Contains(rs[i].cells[colRemarks], "mixes decay systems (U–Pb, ⁴⁰Ar/³⁹Ar): one weighted mean per system, none across systems") || !rs[i].caution {
				t.Errorf("%s row: no mixed-systems caution in %q", want, rs[i].cells[colRemarks])
			}
		}
	})
	t.Run("Haldruna Flow: single date", func(t *testing.T) {
		// testdata/demo/README.md: "Haldruna Flow has a single date".
		rs := rowsOf(rows, "Haldruna Flow")
		if len(rs) != 1 || rs[0].cells[colN] != "1" {
			t.Fatalf("rows %v, want one row with n = 1", rs)
		}
		if !strings.Contains(rs[0].cells[colRemarks], "single date: no MSWD") || !strings.Contains(rs[0].cells[colMSWD], "single date") {
			t.Errorf("no single-date caution: MSWD %q, remarks %q", rs[0].cells[colMSWD], rs[0].cells[colRemarks])
		}
	})
	t.Run("dates without monitor details are named, not averaged", func(t *testing.T) {
		// testdata/demo/README.md: 2 Ar/Ar dates have no monitor details; both are pending
		// (HV-95-01, HV-95-02), so include=all brings them to the not-recalculable caution.
		rows := htmlTable(t, mustFetch(t, h, provinceURL(t, db)+"?include=all"), "summaries")
		for unit, code := range map[string]string{"Lommerset Flows": "HV-95-01", "Krakstenvik Flows": "HV-95-02"} {
			rs := rowsOf(rows, unit)
			if len(rs) != 1 || !strings.Contains(rs[0].cells[colRemarks], "not recalculable ("+code+")") {
				t.Errorf("%s: rows %v, want the not-recalculable caution naming %s", unit, rs, code)
			}
		}
	})
	t.Run("every ± names its level", func(t *testing.T) {
		page := mustFetch(t, h, provinceURL(t, db)+"?level=tracer&sigma=1")
		if !strings.Contains(page, "± 1σ") {
			t.Error("the ± column does not say 1σ")
		}
		for _, r := range htmlTable(t, page, "summaries") {
			want := "Y (X ⊕ tracer)"
			if r.cells[colSystem] == "⁴⁰Ar/³⁹Ar" {
				want = "analytical (⁴⁰Ar/³⁹Ar has no tracer term)"
			}
			if r.cells[colLevel] != want {
				t.Errorf("%s %s: level %q, want %q", r.cells[0], r.cells[colSystem], r.cells[colLevel], want)
			}
		}
	})
}

func TestUnitPageSummaryCautions(t *testing.T) {
	h, db := summaryTestServer(t)
	for _, tc := range []struct {
		unit, group, caution string
		source               string
	}{
		{"Brennholt Flow Group", "Summary · U–Pb", "outside the 95 % range of χ²_f/f", "README: MSWD ≈ 17"},
		{"Tindravik Flow Group", "Summary · U–Pb", "unit mixes decay systems", "README: mixes U–Pb and Ar/Ar"},
		{"Tindravik Flow Group", "Summary · ⁴⁰Ar/³⁹Ar", "unit mixes decay systems", "README: mixes U–Pb and Ar/Ar"},
		{"Haldruna Flow", "Summary · U–Pb", "single date", "README: a single date"},
	} {
		t.Run(tc.unit+"/"+tc.group, func(t *testing.T) { // testdata/demo/README.md, designed features
			gs := groups(mustFetch(t, h, idURL("/units", unitID(t, db, tc.unit))))
			g, ok := gs[tc.group]
			if !ok {
				t.Fatalf("no group %q (%s)", tc.group, tc.source)
			}
			if !strings.Contains(strings.Join(g["Caution"], "\n"), tc.caution) {
				t.Errorf("cautions %q, want one containing %q (%s)", g["Caution"], tc.caution, tc.source)
			}
			if m := g["Weighted mean"]; len(m) != 1 || !strings.Contains(m[0], "(2σ, ") || !strings.Contains(m[0], "full external") {
				t.Errorf("weighted mean %q does not say its level and σ", m)
			}
		})
	}
	t.Run("Brennholt shows the mean with and without the flagged dates", func(t *testing.T) {
		g := groups(mustFetch(t, h, idURL("/units", unitID(t, db, "Brennholt Flow Group"))))["Summary · U–Pb"]
		if k := g["Mean without flagged"]; len(k) != 1 || !strings.Contains(k[0], "(n = 4)") {
			t.Errorf("mean without flagged %q, want the 4 dates left", k)
		}
	})
}

func TestUnitSummarySystematicTermsAfterAveraging(t *testing.T) {
	h, db := summaryTestServer(t)
	// A single U–Pb date's summary must give back the date's own published X and Z: the tracer term is the
	// one its X and Y imply, and the λ238 term 0.107 % (2σ) is added after averaging (testdata/demo/README.md:
	// Z = Y ⊕ λ238 0.107 %; Haldruna Flow HV-12-13 publishes 155.381 ± 0.062 / 0.078 / 0.183, 2σ).
	base := idURL("/units", unitID(t, db, "Haldruna Flow")) + "/summary?format=json"
	for _, tc := range []struct {
		level string
		want  float64
	}{{"analytical", 0.062}, {"tracer", 0.078}, {"full", 0.183}} {
		var doc summaryJSON
		if err := json.Unmarshal([]byte(mustFetch(t, h, base+"&level="+tc.level)), &doc); err != nil {
			t.Fatal(err)
		}
		r := doc.Items[0]
		if got := *r.SigmaMa; got < tc.want-0.0011 || got > tc.want+0.0011 {
			t.Errorf("level %s: ± %.4f (2σ), want %.3f to the published rounding", tc.level, got, tc.want)
		}
		if *r.MeanMa != 155.381 {
			t.Errorf("level %s: mean %v, want the date itself, 155.381", tc.level, *r.MeanMa)
		}
	}
}

func TestArArDateShowsPublishedAndRecalculated(t *testing.T) {
	h, db := summaryTestServer(t)
	ds, _, err := db.Dates(context.Background(), store.DateFilter{Text: "HV-03-03"})
	if err != nil || len(ds) != 1 {
		t.Fatalf("demo date HV-03-03: %v, %v", ds, err)
	}
	d := ds[0]
	// testdata/demo/dates.csv: HV-03-03, ⁴⁰Ar/³⁹Ar plateau, 154.375 Ma published against FCs 28.02 Ma, λ 5.543e-10.
	from := stats.Calibration{LambdaPerA: 5.543e-10, MonitorAgeMa: 28.02}
	cals, err := db.Calibrations(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	recalcRe := regexp.MustCompile(`^([0-9.]+) ± ([0-9.]+) \(2σ\) Ma, analytical$`)
	for _, c := range cals {
		t.Run(c.Code, func(t *testing.T) {
			want := stats.RecalculateAgeMa(d.AgeMa, from, statsCalibration(c)) // REFERENCES §3 relation, checked in stats
			url := idURL("/dates", d.ID) + "?cal=" + c.Code
			page := mustFetch(t, h, url)
			gs := groups(page)
			g := gs["Recalculated to "+c.Name]
			// Published beside it: 154.375 ± 0.234 (1σ) in dates.csv, shown at 2σ.
			if got, want := strings.Join(gs["Age"]["Age as published"], ""), "154.38 ± 0.47 (2σ) Ma, analytical"; got != want {
				t.Errorf("age as published %q, want %q", got, want)
			}
			m := recalcRe.FindStringSubmatch(strings.Join(g["Recalculated age"], ""))
			if m == nil {
				t.Fatalf("recalculated age %q, want \"age ± σ (2σ) Ma, analytical\"", g["Recalculated age"])
			}
			decimals := len(m[1]) - strings.Index(m[1], ".") - 1
			if got, want := m[1], strconv.FormatFloat(want, 'f', decimals, 64); got != want {
				t.Errorf("recalculated age %s, want %s (stats.RecalculateAgeMa to the displayed decimals)", got, want)
			}
			if cal := strings.Join(g["Calibration"], ""); !strings.HasPrefix(cal, c.Name) {
				t.Errorf("calibration %q, want it named: %q", cal, c.Name)
			}
			// The date list shows both, side by side, with the calibration named in the header.
			list := mustFetch(t, h, "/dates?q=HV-03-03&cal="+c.Code)
			rows := htmlTable(t, list, "dates")
			if len(rows) != 1 {
				t.Fatalf("date list rows %d, want 1", len(rows))
			}
			if got := rows[0].cells[4]; got != "154.38 †" {
				t.Errorf("published age cell %q, want 154.38 †", got)
			}
			if got, want := rows[0].cells[6], strconv.FormatFloat(stats.RecalculateAgeMa(d.AgeMa, from, statsCalibration(c)), 'f', 2, 64); got != want {
				t.Errorf("recalculated cell %q, want %q", got, want)
			}
			if !strings.Contains(list, "Ma, on "+html.EscapeString(c.Name)) {
				t.Errorf("the list does not name the calibration %q", c.Name)
			}
		})
	}
	t.Run("not recalculable", func(t *testing.T) {
		// testdata/demo/README.md: 2 dates have no monitor details and so are "not recalculable".
		rows := htmlTable(t, mustFetch(t, h, "/dates?q=HV-95"), "dates")
		if len(rows) != 2 {
			t.Fatalf("%d rows, want 2", len(rows))
		}
		for _, r := range rows {
			if r.cells[6] != "not recalculable" {
				t.Errorf("%s: recalculated cell %q, want not recalculable", r.cells[0], r.cells[6])
			}
		}
	})
}

func TestDatesCSVCarriesRecalculatedAgesAndReimports(t *testing.T) {
	h, _ := summaryTestServer(t)
	body := mustFetch(t, h, "/dates?format=csv&cal=renne11-fcs28294")
	recs, err := csv.NewReader(strings.NewReader(body)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	header := recs[0]
	nImport := len(header) - len(store.DerivedDateColumns)
	if got, want := strings.Join(header[nImport:], ","), strings.Join(store.DerivedDateColumns, ","); got != want {
		t.Fatalf("derived columns %q, want %q at the end", got, want)
	}
	var exp bytes.Buffer
	if err := store.WriteDatesCSV(&exp, nil); err != nil {
		t.Fatal(err)
	}
	if got, want := strings.Join(header[:nImport], ","), strings.TrimSpace(exp.String()); got != want {
		t.Fatalf("import columns changed:\n got %s\nwant %s", got, want)
	}
	col := map[string]int{}
	for i, c := range header {
		col[c] = i
	}
	// The demo's dates.csv as imported: its ⁴⁰Ar/³⁹Ar rows, and those without monitor details (README:
	// 2 of the first province's, none of the later ones').
	demoRows := demoDatesCSV(t)
	var wantArar, wantNoMonitor int
	for _, r := range demoRows[1:] {
		if strings.HasPrefix(r[slices.Index(demoRows[0], "method")], "arar") {
			wantArar++
			if r[slices.Index(demoRows[0], "monitor_age_ma")] == "" {
				wantNoMonitor++
			}
		}
	}
	var arar, recalculated, notRecalc int
	for _, r := range recs[1:] {
		if !strings.HasPrefix(r[col["method"]], "arar") {
			if r[col["age_recalc_ma"]] != "" || r[col["recalc_calibration"]] != "" {
				t.Errorf("%s: derived cells on a non-⁴⁰Ar/³⁹Ar date", r[col["sample_code"]])
			}
			continue
		}
		arar++
		if r[col["recalc_calibration"]] != "renne11-fcs28294" {
			t.Errorf("%s: recalc_calibration %q", r[col["sample_code"]], r[col["recalc_calibration"]])
		}
		if r[col["age_recalc_ma"]] == "" {
			notRecalc++
			continue
		}
		recalculated++
		age, _ := strconv.ParseFloat(r[col["age_ma"]], 64)
		mon, _ := strconv.ParseFloat(r[col["monitor_age_ma"]], 64)
		lam, _ := strconv.ParseFloat(r[col["lambda_per_a"]], 64)
		got, _ := strconv.ParseFloat(r[col["age_recalc_ma"]], 64)
		renne11 := stats.Calibration{LambdaPerA: 5.5305e-10, MonitorAgeMa: 28.294} // REFERENCES §3 table
		if want := stats.RecalculateAgeMa(age, stats.Calibration{LambdaPerA: lam, MonitorAgeMa: mon}, renne11); got < want-5e-7 || got > want+5e-7 {
			t.Errorf("%s: age_recalc_ma %v, want %v to 1e-6 Ma", r[col["sample_code"]], got, want)
		}
	}
	if arar != wantArar || recalculated != wantArar-wantNoMonitor || notRecalc != wantNoMonitor || wantNoMonitor == 0 {
		t.Errorf("⁴⁰Ar/³⁹Ar rows %d (recalculated %d, not %d), want %d (%d, %d)", arar, recalculated, notRecalc,
			wantArar, wantArar-wantNoMonitor, wantNoMonitor)
	}

	// The download re-imports: a fresh compilation takes it (sections first, for the ash-bed dates).
	ctx := context.Background()
	db2, err := store.Open(ctx, filepath.Join(t.TempDir(), "again.db"))
	if err != nil {
		t.Fatal(err)
	}
	defer db2.Close()
	if _, err := db2.Migrate(ctx, migrations.FS); err != nil {
		t.Fatal(err)
	}
	if _, err := db2.Import(ctx, "sections", "", os.DirFS("../testdata/demo"), "sections.csv"); err != nil {
		t.Fatal(err)
	}
	res, err := db2.ImportDates(ctx, "dates.csv", strings.NewReader(body))
	if err != nil {
		t.Fatalf("re-import of the download: %v", err)
	}
	if res.Added["dates"] != len(demoRows)-1 {
		t.Errorf("re-imported %d dates, want the demo's %d", res.Added["dates"], len(demoRows)-1)
	}
}

// demoDatesCSV reads the demo's dates.csv (header first).
func demoDatesCSV(t *testing.T) [][]string {
	t.Helper()
	f, err := os.Open(filepath.Join("..", "testdata", "demo", "dates.csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil || len(recs) < 2 {
		t.Fatalf("demo dates.csv: %d rows, %v", len(recs), err)
	}
	return recs
}

func TestSummaryDownloadsCarryTheChoices(t *testing.T) {
	h, db := summaryTestServer(t)
	q := "cal=sj77-fcs2802&level=analytical&sigma=1&policy=never&rule=chauvenet&mswd_range=wendt-carl&include=pending"
	want := map[string]string{"calibration": "sj77-fcs2802", "level": "analytical", "sigma_level": "1",
		"policy": "never", "rule": "chauvenet", "mswd_range": "wendt-carl", "include": "pending"}
	for _, path := range []string{provinceURL(t, db) + "/summary", idURL("/units", unitID(t, db, "Tindravik Flow Group")) + "/summary"} {
		t.Run(path+" csv", func(t *testing.T) {
			recs, err := csv.NewReader(strings.NewReader(mustFetch(t, h, path+"?format=csv&"+q))).ReadAll()
			if err != nil {
				t.Fatal(err)
			}
			if len(recs) < 3 {
				t.Fatalf("%d records, want a header and rows", len(recs))
			}
			for i, name := range []string{"calibration", "level", "sigma_level", "policy", "rule", "mswd_range", "include"} {
				if recs[0][i] != name {
					t.Fatalf("column %d is %q, want %q", i, recs[0][i], name)
				}
				for _, r := range recs[1:] {
					if r[i] != want[name] {
						t.Errorf("row %v: %s = %q, want %q", r[:9], name, r[i], want[name])
					}
				}
			}
		})
		t.Run(path+" json", func(t *testing.T) {
			var doc summaryJSON
			if err := json.Unmarshal([]byte(mustFetch(t, h, path+"?format=json&"+q)), &doc); err != nil {
				t.Fatal(err)
			}
			got := map[string]string{"calibration": doc.Calibration, "level": doc.Level, "sigma_level": strconv.Itoa(doc.SigmaLevel),
				"policy": doc.Policy, "rule": doc.Rule, "mswd_range": doc.MSWDRange, "include": doc.Include}
			for k, v := range want {
				if got[k] != v {
					t.Errorf("%s = %q, want %q", k, got[k], v)
				}
			}
			if len(doc.Items) == 0 || doc.Count != len(doc.Items) {
				t.Errorf("count %d, items %d", doc.Count, len(doc.Items))
			}
		})
	}
}

func TestBadSummaryParametersAre400(t *testing.T) {
	h, db := summaryTestServer(t)
	prov := provinceURL(t, db)
	unit := idURL("/units", unitID(t, db, "Brennholt Flow Group"))
	for _, tc := range []struct{ url, param string }{
		{prov + "?level=foo", "level"},
		{prov + "?cal=nope", "cal"},
		{prov + "?sigma=3", "sigma"},
		{prov + "?policy=mswd>1", "policy"},
		{prov + "?rule=drop", "rule"},
		{prov + "?include=some", "include"},
		{prov + "?mswd_range=normal", "mswd_range"},
		{unit + "?level=foo", "level"},
		{unit + "?cal=nope", "cal"},
		{prov + "/summary?level=foo", "level"},
		{unit + "/summary?cal=nope&format=csv", "cal"},
		{"/dates?cal=nope", "cal"},
		{"/dates/1?cal=nope", "cal"},
	} {
		t.Run(tc.url, func(t *testing.T) {
			code, body := fetch(t, h, tc.url)
			if code != http.StatusBadRequest {
				t.Fatalf("status %d, want 400", code)
			}
			if !strings.Contains(plainText(body), tc.param+": unknown value") {
				t.Errorf("the message does not name %s", tc.param)
			}
		})
	}
}

// BenchmarkProvincePage renders the demo province page (17 units, 60 unit dates) with its unit summaries.
func BenchmarkProvincePage(b *testing.B) {
	h, db := summaryTestServer(b)
	url := provinceURL(b, db)
	for b.Loop() {
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, url, nil))
		if rec.Code != http.StatusOK {
			b.Fatal(rec.Code)
		}
	}
}

// BenchmarkUnitSummaries computes the summaries of 10,000 dates in 1,000 units (REFERENCES §10: the
// upper end of a multi-province compilation), half U–Pb and half ⁴⁰Ar/³⁹Ar on an older calibration.
func BenchmarkUnitSummaries(b *testing.B) {
	rng := rand.New(rand.NewPCG(3, 0))
	units := make([]store.Unit, 1000)
	var ds []store.Date
	mon, lam := 28.02, 5.543e-10
	for i := range units {
		id := int64(i + 1)
		units[i] = store.Unit{ID: id, Name: fmt.Sprintf("U%d", i)}
		age := 150 + 10*rng.Float64()
		for j := 0; j < 10; j++ {
			d := store.Date{ID: int64(len(ds) + 1), UnitID: &id, SampleCode: fmt.Sprintf("S%d-%d", i, j), ReviewState: "accepted",
				Method: "upb_idtims", AgeMa: age + 0.05*rng.NormFloat64(), SigmaMa: 0.05}
			if j%2 == 1 {
				d.Method, d.MonitorAgeMa, d.LambdaPerA, d.SigmaMa = "arar_plateau", &mon, &lam, 0.3
				d.AgeMa = age*0.99 + 0.3*rng.NormFloat64()
			}
			ds = append(ds, d)
		}
	}
	// The seeded target of migrations/002_calibrations.sql (REFERENCES §3: Min et al. 2000 λ, FCs 28.201 Ma).
	sig, msig := 0.0535e-10, 0.023
	cals := []store.Calibration{{Code: "min00-fcs28201", Name: "Min et al. 2000 λ, FCs 28.201 Ma", LambdaPerA: 5.463e-10,
		LambdaSigmaPerA: &sig, Monitor: "FCs", MonitorAgeMa: 28.201, MonitorSigmaMa: &msig, IsTarget: true}}
	ch := summaryChoice{Cal: calChoice{Cal: cals[0], Stats: statsCalibration(cals[0]), Target: cals[0], All: cals},
		Level: stats.FullExternal, Sigma: 2, Policy: stats.PolicyWhenPBelow005, PolicyCode: "p-lt-0.05", Rule: stats.RuleMSWD, Include: "accepted"}
	for b.Loop() {
		if _, err := summarizeUnits(units, ds, ch); err != nil {
			b.Fatal(err)
		}
	}
}

func TestTargetCalibrationIsEachViewsDefault(t *testing.T) {
	h, db := summaryTestServer(t)
	if err := db.SetTargetCalibration(context.Background(), "renne11-fcs28294", "test"); err != nil {
		t.Fatal(err)
	}
	// migrations/002_calibrations.sql: renne11-fcs28294 is "Renne et al. 2011, FCs 28.294 Ma".
	if list := mustFetch(t, h, "/dates?q=HV-03-03"); !strings.Contains(list, "Ma, on Renne et al. 2011, FCs 28.294 Ma") {
		t.Error("the date list does not recalculate to the new target by default")
	}
	for _, r := range htmlTable(t, mustFetch(t, h, "/calibrations"), "calibrations") {
		if isTarget := r.cells[7] == "compilation target"; isTarget != (r.cells[0] == "Renne et al. 2011, FCs 28.294 Ma") {
			t.Errorf("calibrations page: %q target cell %q", r.cells[0], r.cells[7])
		}
	}
	var doc summaryJSON
	if err := json.Unmarshal([]byte(mustFetch(t, h, provinceURL(t, db)+"/summary?format=json")), &doc); err != nil {
		t.Fatal(err)
	}
	if doc.Calibration != "renne11-fcs28294" {
		t.Errorf("summary calibration %q, want the new target", doc.Calibration)
	}
}
