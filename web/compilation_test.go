package web

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"log/slog"
	"math"
	"net/http"
	"net/http/httptest"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"

	"coeval/static"
	"coeval/store"
)

type compilationDoc struct {
	Settings  map[string]string   `json:"settings"`
	Cautions  []string            `json:"cautions"`
	Provinces []map[string]any    `json:"provinces"`
	Rows      []map[string]string `json:"rows"`
}

func getCompilation(t *testing.T, srv *httptest.Server, query string) compilationDoc {
	t.Helper()
	status, _, body := get(t, srv, "/compilation?format=json"+query)
	if status != http.StatusOK {
		t.Fatalf("compilation: status %d: %.300s", status, body)
	}
	var doc compilationDoc
	if err := json.Unmarshal([]byte(body), &doc); err != nil {
		t.Fatal(err)
	}
	return doc
}

type eventPageAnswer struct {
	Answer struct {
		Age *struct {
			Median float64 `json:"median_ma"`
			Lo     float64 `json:"lo95_ma"`
			Hi     float64 `json:"hi95_ma"`
		} `json:"age"`
		Pulses []map[string]any `json:"pulses"`
	} `json:"answer"`
}

// checkCompilationIsTheEventPages checks every row of the compilation's JSON against the event's own
// page: the event's age, and for each province its pulses there, the nearest of them (found here again
// from the page's pulse ages) with the same P(within), SE, lag and pulse ages; every province the
// event's page compares appears. It returns how many provinces each event was compared with.
func checkCompilationIsTheEventPages(t *testing.T, srv *httptest.Server, db *store.DB, doc compilationDoc) map[int64]int {
	t.Helper()
	ctx := context.Background()
	byEvent := map[int64][]map[string]string{}
	for _, r := range doc.Rows {
		id, _ := strconv.ParseInt(r["event_id"], 10, 64)
		byEvent[id] = append(byEvent[id], r)
	}
	evs, err := db.Events(ctx, 0)
	if err != nil {
		t.Fatal(err)
	}
	compared := map[int64]int{}
	f := func(s string) float64 {
		if s == "" {
			return math.NaN()
		}
		v, err := strconv.ParseFloat(s, 64)
		if err != nil {
			t.Fatalf("not a number: %q", s)
		}
		return v
	}
	same := func(a, b float64) bool { return a == b || (math.IsNaN(a) && math.IsNaN(b)) }
	for _, ev := range evs {
		if ev.ReviewState != store.ReviewAccepted || ev.SectionID == nil {
			continue
		}
		status, _, body := get(t, srv, idURL("/events", ev.ID)+"?format=json")
		if status != http.StatusOK {
			t.Fatalf("event %d: status %d", ev.ID, status)
		}
		var page eventPageAnswer
		if err := json.Unmarshal([]byte(body), &page); err != nil {
			t.Fatal(err)
		}
		rows := byEvent[ev.ID]
		if page.Answer.Age == nil {
			if len(rows) > 0 {
				t.Errorf("%s: rows in the compilation but no age on its page", ev.Name)
			}
			continue
		}
		if len(rows) == 0 {
			t.Errorf("%s (%s): not in the compilation's table", ev.Name, ev.Section)
			continue
		}
		age := page.Answer.Age
		for _, r := range rows {
			if f(r["event_age_median_ma"]) != age.Median || f(r["event_age_lo95_ma"]) != age.Lo || f(r["event_age_hi95_ma"]) != age.Hi {
				t.Errorf("%s: age %s (%s–%s), its page %v (%v–%v)", ev.Name, r["event_age_median_ma"], r["event_age_lo95_ma"], r["event_age_hi95_ma"], age.Median, age.Lo, age.Hi)
			}
		}
		// The page's pulses by province; the nearest of each found again from the page's own numbers.
		byProv := map[string][]map[string]any{}
		for _, p := range page.Answer.Pulses {
			id := strconv.FormatFloat(p["province_id"].(float64), 'f', 0, 64)
			byProv[id] = append(byProv[id], p)
		}
		compared[ev.ID] = len(byProv)
		if len(byProv) == 0 && (len(rows) != 1 || rows[0]["province"] != "" || rows[0]["note"] == "") {
			t.Errorf("%s: compared with no province, want one row saying so; got %v", ev.Name, rows)
		}
		for prov, ps := range byProv {
			i := slices.IndexFunc(rows, func(r map[string]string) bool { return r["province_id"] == prov })
			if i < 0 {
				t.Errorf("%s: province %s is on its page but not in the compilation", ev.Name, prov)
				continue
			}
			r := rows[i]
			dist := func(p map[string]any) float64 {
				start, ok1 := p["pulse_start_ma"].(float64)
				end, ok2 := p["pulse_end_ma"].(float64)
				if !ok1 || !ok2 {
					return math.Inf(1)
				}
				return math.Max(0, math.Max(end-age.Median, age.Median-start))
			}
			best := ps[0]
			for _, p := range ps[1:] {
				if d, bd := dist(p), dist(best); d < bd || (d == bd && p["p_within"].(float64) > best["p_within"].(float64)) {
					best = p
				}
			}
			if r["pulse"] != best["pulse"] {
				t.Errorf("%s × province %s: nearest pulse %s, its page's numbers make it %v", ev.Name, prov, r["pulse"], best["pulse"])
				continue
			}
			for col, key := range map[string]string{"p_within": "p_within", "p_within_se": "p_within_se", "lag_median_ma": "lag_median_ma",
				"lag_lo95_ma": "lag_lo95_ma", "lag_hi95_ma": "lag_hi95_ma", "sens_within_min": "sensitivity_within_min", "sens_within_max": "sensitivity_within_max",
				"pulse_mode_ma": "pulse_mode_ma", "pulse_start_ma": "pulse_start_ma", "pulse_end_ma": "pulse_end_ma"} {
				want, ok := best[key].(float64)
				if !ok {
					want = math.NaN()
				}
				if got := f(r[col]); !same(got, want) {
					t.Errorf("%s × %s %s: %s %v, its page %v", ev.Name, prov, r["pulse"], col, got, want)
				}
			}
			if r["holds"] != best["holds"] {
				t.Errorf("%s × %s: holds %q, its page %q", ev.Name, prov, r["holds"], best["holds"])
			}
		}
		if n := len(rows); len(byProv) > 0 && n != len(byProv) {
			t.Errorf("%s: %d rows, its page compares %d provinces", ev.Name, n, len(byProv))
		}
	}
	return compared
}

// Every demo event's row in the compilation view holds its own page's numbers (the brief of the view:
// they must be the same, not computed again).
func TestCompilationNumbersAreTheEventPages(t *testing.T) {
	srv, db := mustServer(t)
	doc := getCompilation(t, srv, "")
	if len(doc.Rows) == 0 {
		t.Fatal("no rows")
	}
	checkCompilationIsTheEventPages(t, srv, db, doc)
	// One lane per province of the store.
	provs, _ := db.Provinces(context.Background())
	if len(doc.Provinces) != len(provs) {
		t.Errorf("%d lanes, the store holds %d provinces", len(doc.Provinces), len(provs))
	}
	if doc.Settings["window"] != "automatic" || len(doc.Cautions) != 2 {
		t.Errorf("settings %v, cautions %v", doc.Settings, doc.Cautions)
	}
}

// mustNearProvince adds a province of ten units with one U–Pb date each, at the K10 ages of REFERENCES §4
// moved 46 Ma younger (155.20–156.30 Ma), so that it lies among the demo's events, and returns its id.
func mustNearProvince(t testing.TB, db *store.DB) int64 {
	t.Helper()
	ctx := context.Background()
	const name = "Second test province"
	if _, err := db.ImportProvinces(ctx, "p.csv", strings.NewReader("province,description\n"+name+",ten ages near the demo's events\n")); err != nil {
		t.Fatal(err)
	}
	k10 := []float64{201.20, 201.35, 201.41, 201.48, 201.52, 201.55, 201.61, 201.90, 202.05, 202.30} // REFERENCES §4 K10
	var units, dates strings.Builder
	units.WriteString("province,unit,kind,pile_position,volume_km3,volume_sigma_km3,latitude,longitude,notes\n")
	dates.WriteString("province,unit,section,height_m,sample_code,method,material,interpretation,age_ma,sigma_ma,sigma_y_ma,sigma_z_ma,sigma_level,tracer,monitor,monitor_age_ma,lambda_per_a,laboratory,citation,doi,latitude,longitude,review_state,notes\n")
	for i, a := range k10 {
		fmt.Fprintf(&units, "%s,S%d,flow,%d,100,10,,,\n", name, i+1, i+1)
		fmt.Fprintf(&dates, "%s,S%d,,,S2-%02d,upb_idtims,zircon,eruption,%.2f,0.05,,,1,,,,,Lab,Test citation,,,,accepted,\n", name, i+1, i+1, a-46)
	}
	if _, err := db.ImportUnits(ctx, "u.csv", strings.NewReader(units.String())); err != nil {
		t.Fatal(err)
	}
	if _, err := db.ImportDates(ctx, "d.csv", strings.NewReader(dates.String())); err != nil {
		t.Fatal(err)
	}
	ps, _ := db.Provinces(ctx)
	for _, p := range ps {
		if p.Name == name {
			return p.ID
		}
	}
	t.Fatal("province not found")
	return 0
}

// With two provinces among the events (the demo's and one made here from raw ages), the view draws a
// lane for each, linked to its timeline, and the table sets each event against both, with the numbers
// of the event's page.
func TestCompilationOfTwoProvinces(t *testing.T) {
	db := mustDemoDB(t)
	second := mustNearProvince(t, db)
	srv := httptest.NewServer(NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS, WithSessionCleanup(0)))
	t.Cleanup(srv.Close)
	doc := getCompilation(t, srv, "")
	compared := checkCompilationIsTheEventPages(t, srv, db, doc)
	both := 0
	for _, n := range compared {
		if n >= 2 {
			both++
		}
	}
	if both == 0 {
		t.Errorf("no event was compared with both provinces: %v", compared)
	}
	provs, _ := db.Provinces(context.Background())
	_, _, svg := get(t, srv, "/compilation?format=svg")
	for _, p := range provs {
		if !strings.Contains(svg, fmt.Sprintf(`<a href="/provinces/%d/timeline">`, p.ID)) {
			t.Errorf("the figure does not link the timeline of %s", p.Name)
		}
	}
	if !strings.Contains(svg, "Second test province") || second == 0 {
		t.Error("the second province has no lane")
	}
}

// A window keeps the events whose 95 % interval reaches into it (found here from the whole record's
// rows), says it was chosen, and draws only its stretch; a window that cannot be used is refused with
// the settings kept in a form.
func TestCompilationWindow(t *testing.T) {
	srv, _ := mustServer(t)
	all := getCompilation(t, srv, "")
	const from, to = 154.9, 154.3 // either order
	want, allIDs := map[string]bool{}, map[string]bool{}
	for _, r := range all.Rows {
		allIDs[r["event_id"]] = true
		lo, _ := strconv.ParseFloat(r["event_age_lo95_ma"], 64)
		hi, _ := strconv.ParseFloat(r["event_age_hi95_ma"], 64)
		if hi >= to && lo <= from {
			want[r["event_id"]] = true
		}
	}
	win := getCompilation(t, srv, fmt.Sprintf("&from=%g&to=%g", to, from))
	got := map[string]bool{}
	for _, r := range win.Rows {
		got[r["event_id"]] = true
		if r["window"] != "chosen" || r["window_old_ma"] != "154.9" || r["window_young_ma"] != "154.3" {
			t.Errorf("row's window %q %q %q", r["window"], r["window_old_ma"], r["window_young_ma"])
		}
	}
	if len(want) == 0 || len(want) == len(allIDs) || fmt.Sprint(want) != fmt.Sprint(got) {
		t.Errorf("events in the window %v, want %v", got, want)
	}
	// The ticks of the figure's axis lie in the window.
	_, _, svg := get(t, srv, fmt.Sprintf("/compilation?format=svg&from=%g&to=%g", from, to))
	if !strings.Contains(svg, ">154.5<") || strings.Contains(svg, ">155.5<") {
		t.Error("the figure's axis does not show the window")
	}
	for _, c := range []struct{ q, problem, kept string }{
		{"from=abc&to=155", "from:", `value="155"`},
		{"from=155&to=155", "from, to:", `value="155"`},
		{"from=-3", "from:", `value="-3"`},
	} {
		status, _, body := get(t, srv, "/compilation?"+c.q)
		if status != http.StatusBadRequest || !strings.Contains(body, c.problem) || !strings.Contains(body, c.kept) {
			t.Errorf("%s: status %d, want 400 naming %q and keeping %s", c.q, status, c.problem, c.kept)
		}
	}
}

// The workbook holds the table under the dictionary's header with the CSV's rows, and the settings.
func TestCompilationWorkbook(t *testing.T) {
	srv, _ := mustServer(t)
	_, _, body := get(t, srv, "/compilation?format=xlsx")
	f, err := excelize.OpenReader(bytes.NewReader([]byte(body)))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := f.GetRows("Events and pulses")
	if err != nil || len(rows) < 2 {
		t.Fatalf("%v, %d rows", err, len(rows))
	}
	if !slices.Equal(rows[0], columnNames(compilationColumns)) {
		t.Errorf("header %v", rows[0])
	}
	_, _, csvBody := get(t, srv, "/compilation?format=csv")
	if n := strings.Count(strings.TrimSpace(csvBody), "\n"); n != len(rows)-1 {
		t.Errorf("workbook %d rows, CSV %d", len(rows)-1, n)
	}
	set, _ := f.GetRows("Settings")
	found := false
	for _, r := range set {
		found = found || (len(r) == 2 && r[0] == "window" && r[1] == "automatic")
	}
	if !found {
		t.Errorf("settings sheet %v", set)
	}
	for _, format := range []string{"png", "pdf"} {
		status, h, b := get(t, srv, "/compilation?format="+format)
		if status != 200 || len(b) < 1000 || !strings.Contains(h.Get("Content-Disposition"), "compilation."+format) {
			t.Errorf("%s: status %d, %d bytes, %q", format, status, len(b), h.Get("Content-Disposition"))
		}
	}
}
