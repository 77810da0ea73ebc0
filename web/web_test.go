package web

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"golang.org/x/crypto/bcrypt"

	"coeval/migrations"
	"coeval/static"
	"coeval/store"
)

// mustDemoDB opens a real SQLite file under t.TempDir(), migrated and seeded with the demo scenario
// through the ordinary importers.
func mustDemoDB(t testing.TB) *store.DB {
	t.Helper()
	return seededDB(t, filepath.Join(t.TempDir(), "web.db"), filepath.Join("..", "testdata", "demo"), "Invented scenario for tests.")
}

// seededDB opens a real SQLite file at path, migrated and seeded as the demo is from the import files in
// dir, labelled so on every page; it is closed when the test ends.
func seededDB(t testing.TB, path, dir, label string) *store.DB {
	t.Helper()
	ctx := context.Background()
	db, err := store.Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	if _, err := db.Migrate(ctx, migrations.FS); err != nil {
		t.Fatal(err)
	}
	db.SetPasswordCost(bcrypt.MinCost)
	if _, _, err := db.SeedDemo(ctx, os.DirFS(dir), label); err != nil {
		t.Fatal(err)
	}
	return db
}

// mustServer serves the demo database over real HTTP on loopback.
func mustServer(t testing.TB) (*httptest.Server, *store.DB) {
	t.Helper()
	db := mustDemoDB(t)
	srv := httptest.NewServer(NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS, WithSessionCleanup(0)))
	t.Cleanup(srv.Close)
	return srv, db
}

func get(t testing.TB, srv *httptest.Server, path string) (int, http.Header, string) {
	t.Helper()
	res, err := http.Get(srv.URL + path)
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	b, err := io.ReadAll(res.Body)
	if err != nil {
		t.Fatal(err)
	}
	return res.StatusCode, res.Header, string(b)
}

func TestPagesRenderWithWhatTheyShow(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	c, err := db.Counts(ctx)
	if err != nil {
		t.Fatal(err)
	}
	d, err := db.Date(ctx, 1)
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		path string
		want []string
	}{
		{"/", []string{"Invented demo data", ">" + strconv.Itoa(c.Dates) + "<", "Hvarn Plateau Basalts (invented)", "Vedholmen-1 Core", "import measurements"}},
		{"/provinces", []string{"Hvarn Plateau Basalts (invented)"}},
		{"/provinces/1", []string{"Brennholt Flow Group", "km³ ± 1σ", "lowest in the pile first"}},
		{"/dates?per=1000", []string{d.SampleCode, "± 2σ", "analytical", "Ma, as published"}},
		{"/dates?sigma=1", []string{"± 1σ"}},
		{"/dates/1", []string{d.SampleCode, d.Citation, "https://doi.org/" + d.DOI, "(2σ)"}},
		{"/sections", []string{"Skarfell Creek", "Mornesk Cliffs"}},
		{"/sections/1", []string{"Tie points", "Events", "Samples (", "ppb", "wt%"}},
		{"/sections/1/measurements", []string{"Samples ("}},
		{"/ties", []string{"uniform"}},
		{"/events", []string{"Hg anomaly", "CIE onset"}},
		{"/calibrations", []string{"28.201", "compilation target", "Kuiper"}},
		{"/coincidence?reps=100&draws=500&n=999", []string{"than chance would place them", "p-value", "Read the p-value with these in mind"}},
		{"/compilation", []string{"on one age axis", "Hvarn Plateau Basalts", `href="/provinces/1/timeline"`, `href="/events/8"`, "Nearest pulse", "P(within)", "not independent", "Stage"}},
	}
	for _, tc := range cases {
		t.Run(tc.path, func(t *testing.T) {
			status, h, body := get(t, srv, tc.path)
			if status != http.StatusOK {
				t.Fatalf("status %d, want 200", status)
			}
			if ct := h.Get("Content-Type"); !strings.HasPrefix(ct, "text/html") {
				t.Errorf("content type %q, want text/html", ct)
			}
			for _, w := range tc.want {
				if !strings.Contains(body, w) {
					t.Errorf("page lacks %q", w)
				}
			}
		})
	}
}

func TestDateListFiltersSortsAndPages(t *testing.T) {
	srv, db := mustServer(t)
	all, total, err := db.Dates(context.Background(), store.DateFilter{})
	if err != nil {
		t.Fatal(err)
	}
	readJSON := func(path string) listJSON {
		t.Helper()
		status, _, body := get(t, srv, path)
		if status != http.StatusOK {
			t.Fatalf("%s: status %d: %s", path, status, body)
		}
		var l listJSON
		var items []store.Date
		l.Items = &items
		if err := json.Unmarshal([]byte(body), &l); err != nil {
			t.Fatal(err)
		}
		l.Items = items
		return l
	}
	// Method filter: every date returned has that method, and they are all of them.
	var nArAr int
	for _, d := range all {
		if d.Method == "arar_plateau" {
			nArAr++
		}
	}
	l := readJSON("/dates?format=json&method=arar_plateau&per=1000")
	items := l.Items.([]store.Date)
	if l.Total != nArAr || len(items) != nArAr {
		t.Errorf("method filter: total %d, items %d, want %d", l.Total, len(items), nArAr)
	}
	for _, d := range items {
		if d.Method != "arar_plateau" {
			t.Errorf("method filter returned a %s date", d.Method)
		}
	}
	// Age window, inclusive, ages in Ma.
	l = readJSON("/dates?format=json&age_min=155&age_max=155.5&per=1000")
	for _, d := range l.Items.([]store.Date) {
		if d.AgeMa < 155 || d.AgeMa > 155.5 {
			t.Errorf("age window returned %v Ma", d.AgeMa)
		}
	}
	// Sort ascending by age.
	l = readJSON("/dates?format=json&sort=age&per=1000")
	ds := l.Items.([]store.Date)
	for i := 1; i < len(ds); i++ {
		if ds[i].AgeMa < ds[i-1].AgeMa {
			t.Fatalf("sort=age not ascending at %d: %v then %v", i, ds[i-1].AgeMa, ds[i].AgeMa)
		}
	}
	// Paging: two pages of 10 do not overlap and report the total.
	p1, p2 := readJSON("/dates?format=json&per=10&page=1"), readJSON("/dates?format=json&per=10&page=2")
	if p1.Total != total || p2.Offset != 10 {
		t.Errorf("paging: total %d offset %d, want %d and 10", p1.Total, p2.Offset, total)
	}
	if p1.Items.([]store.Date)[0].ID == p2.Items.([]store.Date)[0].ID {
		t.Error("page 2 starts with the first date of page 1")
	}
	// Text search finds a laboratory.
	lab := all[0].Laboratory
	l = readJSON("/dates?format=json&per=1000&q=" + strings.ReplaceAll(strings.Fields(lab)[0], " ", "+"))
	if l.Total == 0 {
		t.Errorf("text search for %q found nothing", lab)
	}
	// The HTML page links the next page with the filters kept.
	_, _, body := get(t, srv, "/dates?method=upb_idtims&per=5")
	next := regexp.MustCompile(`href="(/dates\?[^"]*after=[^"]*)"`).FindStringSubmatch(body)
	if next == nil || !strings.Contains(next[1], "method=upb_idtims") || !strings.Contains(next[1], "per=5") {
		t.Errorf("the next-page link does not keep the filters: %v", next)
	}
}

func TestDownloadsParse(t *testing.T) {
	srv, db := mustServer(t)
	c, _ := db.Counts(context.Background())
	units1, _ := db.Units(context.Background(), 1) // the units of province 1 (the demo holds several provinces)
	cases := []struct {
		path   string
		header []string
		rows   int
	}{
		{"/dates?format=csv", []string{"sample_code", "age_ma", "sigma_ma", "sigma_level"}, c.Dates},
		{"/provinces?format=csv", []string{"province", "description"}, c.Provinces},
		{"/sections?format=csv", []string{"section", "toc_threshold_wt_pct"}, c.Sections},
		{"/sections/1/measurements?format=csv", []string{"sample", "height_m", "hg_ppb"}, -1},
		{"/ties?format=csv", []string{"section", "label", "height_m", "age_ma", "sigma_ma", "sigma_level"}, c.TiePoints},
		{"/events?format=csv", []string{"section", "name", "kind", "base_height_m"}, c.Events},
		{"/provinces/1?format=csv", []string{"unit", "volume_km3"}, len(units1)},
		{"/dates/1?format=csv", []string{"sample_code", "age_ma"}, 1},
		{"/coincidence?format=csv&reps=100&draws=500&n=999", []string{"statistic_ma", "p", "replicates", "null", "window_old_ma"}, 1},
		{"/compilation?format=csv", []string{"event_id", "event_age_median_ma", "province", "pulse", "p_within", "lag_median_ma", "window_old_ma"}, -1},
	}
	for _, tc := range cases {
		t.Run(tc.path, func(t *testing.T) {
			res, err := http.Get(srv.URL + tc.path)
			if err != nil {
				t.Fatal(err)
			}
			defer res.Body.Close()
			if res.StatusCode != 200 || !strings.HasPrefix(res.Header.Get("Content-Type"), "text/csv") {
				t.Fatalf("status %d type %q", res.StatusCode, res.Header.Get("Content-Type"))
			}
			if !strings.Contains(res.Header.Get("Content-Disposition"), "attachment") {
				t.Error("CSV is not sent as an attachment")
			}
			recs, err := csv.NewReader(res.Body).ReadAll()
			if err != nil {
				t.Fatal(err)
			}
			for _, h := range tc.header {
				found := false
				for _, c := range recs[0] {
					found = found || c == h
				}
				if !found {
					t.Errorf("header %v lacks %q", recs[0], h)
				}
			}
			if tc.rows >= 0 && len(recs)-1 != tc.rows {
				t.Errorf("%d rows, want %d", len(recs)-1, tc.rows)
			}
		})
	}
	for _, p := range []string{"/?format=json", "/provinces/1?format=json", "/units/1?format=json", "/dates/1?format=json",
		"/sections/1?format=json", "/sections/1/ties?format=json", "/sections/1/events?format=json", "/calibrations?format=json"} {
		status, h, body := get(t, srv, p)
		var v map[string]any
		if status != 200 || !strings.HasPrefix(h.Get("Content-Type"), "application/json") || json.Unmarshal([]byte(body), &v) != nil {
			t.Errorf("%s: status %d, type %q, not a JSON object", p, status, h.Get("Content-Type"))
		}
	}
}

func TestUserErrorsAreClearAndNeverInternal(t *testing.T) {
	srv, _ := mustServer(t)
	cases := []struct {
		path   string
		status int
		want   string
	}{
		{"/dates?age_min=abc", 400, "age_min: want an age in Ma"},
		{"/dates?method=tims", 400, "method: unknown value"},
		{"/dates?sigma=3", 400, "sigma: unknown value"},
		{"/dates?age_min=156&age_max=155", 400, "older than age_max"},
		{"/dates?per=0", 400, "per: want a whole number from 1 to 1000"},
		{"/dates?format=xml", 400, "format: unknown value"},
		{"/dates/999999", 404, "not in the compilation"},
		{"/dates/abc", 404, "Not found"},
		{"/no/such/page", 404, "Not found"},
		{"/dates?age_min=abc&format=json", 400, "age_min"},
	}
	for _, tc := range cases {
		status, _, body := get(t, srv, tc.path)
		if status != tc.status || !strings.Contains(body, tc.want) {
			t.Errorf("%s: status %d, want %d with %q in %.300s", tc.path, status, tc.status, tc.want, body)
		}
		if strings.Contains(body, "sql") || strings.Contains(body, "goroutine") {
			t.Errorf("%s: internal text leaked", tc.path)
		}
	}
}

func TestSecurityHeadersAndCrossOriginProtection(t *testing.T) {
	srv, _ := mustServer(t)
	_, h, _ := get(t, srv, "/")
	if !strings.Contains(h.Get("Content-Security-Policy"), "frame-ancestors 'none'") || h.Get("X-Content-Type-Options") != "nosniff" {
		t.Errorf("security headers missing: %v", h)
	}
	// Go's cross-origin protection reads Sec-Fetch-Site (STACK.md): a cross-site POST is refused.
	req, _ := http.NewRequest(http.MethodPost, srv.URL+"/dates", strings.NewReader("x=1"))
	req.Header.Set("Sec-Fetch-Site", "cross-site")
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	if res.StatusCode != http.StatusForbidden {
		t.Errorf("cross-site POST: status %d, want 403", res.StatusCode)
	}
}

func TestFormatHelpers(t *testing.T) {
	// Common practice: σ to two significant figures, the value to the same decimal place.
	cases := []struct {
		age, sigma1s float64
		level        int
		want         string
	}{
		{155.449, 0.0305, 2, "155.449 ± 0.061 (2σ)"},
		{155.449, 0.0312, 1, "155.449 ± 0.031 (1σ)"},
		{154.7, 0.23, 2, "154.70 ± 0.46 (2σ)"},
		{66.0, 1.2, 1, "66.0 ± 1.2 (1σ)"},
	}
	for _, tc := range cases {
		if got := plusMinus(tc.age, tc.sigma1s, tc.level); got != tc.want {
			t.Errorf("plusMinus(%v, %v, %d) got %q, want %q", tc.age, tc.sigma1s, tc.level, got, tc.want)
		}
	}
}
