package web

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"encoding/xml"
	"errors"
	"fmt"
	"image/png"
	"io"
	"math"
	"net/http"
	"net/url"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"

	"coeval/stats"
	"coeval/store"
	"coeval/web/analysis"
)

func TestTimescaleCheckValues(t *testing.T) {
	chart, err := icsChart()
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		id     string
		baseMa float64
		pmMa   float64 // 0: the chart gives no ±
		status string
	}{
		{"Induan", 251.902, 0.024, "true"},   // REFERENCES §9: base Induan 251.902 ± 0.024 (ICS chart v2024/12)
		{"Toarcian", 184.2, 0.3, "true"},     // REFERENCES §9: base Toarcian 184.2 ± 0.3
		{"Hettangian", 201.4, 0.2, "true"},   // REFERENCES §9: base Hettangian 201.4 ± 0.2
		{"Danian", 66.0, 0, "true"},          // REFERENCES §9: base Danian 66.0
		{"Kimmeridgian", 154.8, 0.8, "true"}, // ICS chart v2024/12 (the demo's boundary)
	}
	for _, tc := range cases {
		u, ok := chartUnit(chart, tc.id)
		if !ok {
			t.Fatalf("%s not in the embedded chart", tc.id)
		}
		if u.BaseMa != tc.baseMa || u.Rank != "Age" || u.Status != tc.status {
			t.Errorf("%s: base %v rank %s status %q, want %v Age %q", tc.id, u.BaseMa, u.Rank, u.Status, tc.baseMa, tc.status)
		}
		switch {
		case tc.pmMa == 0 && u.BasePmMa != nil:
			t.Errorf("%s: ± %v, want none", tc.id, *u.BasePmMa)
		case tc.pmMa != 0 && (u.BasePmMa == nil || *u.BasePmMa != tc.pmMa):
			t.Errorf("%s: ± %v, want %v", tc.id, u.BasePmMa, tc.pmMa)
		}
	}
	// data/README.md of the chart: the 2024/12 data give 205.7 for the base Rhaetian (the 2023/09 chart printed ~208.5).
	if u, _ := chartUnit(chart, "Rhaetian"); u.BaseMa != 205.7 {
		t.Errorf("base Rhaetian %v, want 205.7 (v2024/12)", u.BaseMa)
	}
	if got := len(chart); got != 177 {
		t.Errorf("%d units, want the chart's 177", got)
	}
}

func TestTimescalePage(t *testing.T) {
	srv, _ := mustServer(t)
	status, _, body := get(t, srv, "/timescale")
	if status != http.StatusOK {
		t.Fatalf("status %d", status)
	}
	for _, want := range []string{"v2024/12", "CC BY 4.0", "International Commission on Stratigraphy", "Induan", "251.902 ± 0.024", "GSSP ratified", "Upper Jurassic"} {
		if !strings.Contains(body, want) {
			t.Errorf("/timescale lacks %q", want)
		}
	}
	// The chart's colour of each unit is shown as a swatch, not only as its code (the chart: Oxfordian #BFE7F1).
	if !strings.Contains(body, `fill="#BFE7F1"`) {
		t.Error("/timescale shows no colour swatch for the Oxfordian")
	}
	_, _, ages := get(t, srv, "/timescale?rank=Age")
	if strings.Contains(ages, `title="">Epoch</td>`) || !strings.Contains(ages, "Kimmeridgian") {
		t.Error("rank=Age should list the ages (stages) only")
	}
	if status, _, body := get(t, srv, "/timescale?rank=Stage"); status != http.StatusBadRequest || !strings.Contains(body, "rank") {
		t.Errorf("rank=Stage: status %d, want 400 naming rank", status)
	}
	_, h, c := get(t, srv, "/timescale?format=csv")
	rows, err := csv.NewReader(strings.NewReader(c)).ReadAll()
	if err != nil || !strings.HasPrefix(h.Get("Content-Type"), "text/csv") || len(rows) != 178 {
		t.Errorf("CSV: %d rows (%v), type %s; want the header and 177 units", len(rows), err, h.Get("Content-Type"))
	}
	_, _, j := get(t, srv, "/timescale?format=json")
	var doc struct {
		Version     string       `json:"version"`
		Attribution string       `json:"attribution"`
		Units       []chronoUnit `json:"units"`
	}
	if err := json.Unmarshal([]byte(j), &doc); err != nil || !strings.Contains(doc.Version, "v2024/12") || !strings.Contains(doc.Attribution, "CC BY 4.0") || len(doc.Units) != 177 {
		t.Errorf("JSON: %v, version %q, %d units", err, doc.Version, len(doc.Units))
	}
}

// densityPath returns the d attribute of the density curve in a page or SVG.
func densityPath(t testing.TB, body string) string {
	t.Helper()
	m := regexp.MustCompile(`<path d="([^"]+)" id="density"`).FindStringSubmatch(body)
	if m == nil {
		t.Fatal("no density curve (id=density) in the figure")
	}
	return m[1]
}

func TestTimelineEachBandwidthRule(t *testing.T) {
	srv, _ := mustServer(t)
	cases := []struct {
		query string
		want  []string
	}{
		// 17 unit means: ζ(t) has no root, so ISJ falls back (stats.SelectBandwidth) and the page says so.
		{"", []string{"Smoothing width: no automatic width exists", "Silverman robust", "Age (Ma)", "Density (per Ma)", "± 2σ", "v2024/12"}},
		{"?bw=isj&count=date", []string{"ISJ", "Age (Ma)"}},
		{"?bw=scott", []string{"Scott", "h = "}},
		{"?bw=silverman", []string{"Silverman"}},
		{"?bw=silverman-robust", []string{"Silverman robust"}},
		{"?bw=user&h=0.1", []string{"h = 0.100 Ma", "user"}},
		{"?bw=scott&adaptive=1", []string{"adaptive KDE (Abramson"}},
		{"?pdp=1", []string{stats.PDPCaution[:60], `id="pdp"`, "PDP"}},
		{"?sigma=1", []string{"± 1σ"}},
		{"?reps=200&seed=7", []string{"from 200 replicates (seed 7)", "200 replicates, seed 7"}},
	}
	paths := map[string]string{}
	for _, tc := range cases {
		t.Run(tc.query, func(t *testing.T) {
			status, _, body := get(t, srv, "/provinces/1/timeline"+tc.query)
			if status != http.StatusOK {
				t.Fatalf("status %d", status)
			}
			for _, w := range tc.want {
				if !strings.Contains(body, w) {
					t.Errorf("page lacks %q", w)
				}
			}
			paths[tc.query] = densityPath(t, body)
		})
	}
	// Changing the rule changes the figure (the ISJ fallback and the robust rule coincide, by design).
	for _, pair := range [][2]string{{"", "?bw=scott"}, {"?bw=scott", "?bw=silverman"}, {"?bw=silverman", "?bw=user&h=0.1"}, {"", "?bw=user&h=0.1"}} {
		if paths[pair[0]] == paths[pair[1]] {
			t.Errorf("density of %q and %q are the same curve", pair[0], pair[1])
		}
	}
	_, _, isj := get(t, srv, "/provinces/1/timeline?format=csv&table=density")
	_, _, robust := get(t, srv, "/provinces/1/timeline?format=csv&table=density&bw=silverman-robust")
	if isj != robust {
		t.Error("the ISJ fallback should give the Silverman robust density")
	}
}

// With bw_each=1 the rule is applied afresh to every replicate: the band changes (it carries the
// bandwidth's own uncertainty) while the reference density does not, the page says so, and a seed still
// gives one band.
func TestTimelineBandwidthInEachReplicate(t *testing.T) {
	srv, _ := mustServer(t)
	type point struct {
		KDE   float64 `json:"kde_per_ma"`
		Lower float64 `json:"band_lower_per_ma"`
		Upper float64 `json:"band_upper_per_ma"`
	}
	density := func(path string) ([]point, string) {
		t.Helper()
		status, _, body := get(t, srv, path)
		if status != http.StatusOK {
			t.Fatalf("%s: status %d", path, status)
		}
		var v struct {
			Density   []point        `json:"density"`
			Bandwidth map[string]any `json:"bandwidth"`
		}
		if err := json.Unmarshal([]byte(body), &v); err != nil {
			t.Fatal(err)
		}
		if each := v.Bandwidth["reestimated_in_each_replicate"] == true; each != strings.Contains(path, "bw_each=1") {
			t.Errorf("%s: bandwidth %v", path, v.Bandwidth)
		}
		return v.Density, body
	}
	for _, q := range []string{"count=date&bw=scott", "bw=silverman-robust", "count=date&bw=silverman&weight=volume&adaptive=1"} {
		t.Run(q, func(t *testing.T) {
			held, _ := density("/provinces/1/timeline?format=json&" + q)
			each, body := density("/provinces/1/timeline?format=json&bw_each=1&" + q)
			if len(held) != len(each) {
				t.Fatalf("%d and %d grid points: the grid follows the reference h and must not change", len(held), len(each))
			}
			bandMoved := false
			for j := range held {
				if held[j].KDE != each[j].KDE {
					t.Fatalf("at %d the reference density changed: %v → %v", j, held[j].KDE, each[j].KDE)
				}
				bandMoved = bandMoved || held[j].Lower != each[j].Lower || held[j].Upper != each[j].Upper
			}
			if !bandMoved {
				t.Error("re-estimating the bandwidth left the band as it was")
			}
			if _, again := density("/provinces/1/timeline?format=json&bw_each=1&" + q); again != body {
				t.Error("the same seed gave another band")
			}
			if _, other := density("/provinces/1/timeline?format=json&bw_each=1&seed=2&" + q); other == body {
				t.Error("another seed gave the same band")
			}
		})
	}
	_, _, page := get(t, srv, "/provinces/1/timeline?bw=scott&bw_each=1")
	if !strings.Contains(page, "width re-estimated in every replicate (Scott&#39;s rule of thumb)") {
		t.Error("the figure's subtitle does not say the bandwidth was re-estimated in every replicate")
	}
	if !regexp.MustCompile(`<option value="1" selected[^>]*>re-estimated in each`).MatchString(page) {
		t.Error("the form does not show bw_each=1 as chosen")
	}
}

// mustSmallProvince adds a province of ten units with one U–Pb date each, at the K10 ages of REFERENCES §4,
// and returns its id.
func mustSmallProvince(t testing.TB, db *store.DB) int64 {
	t.Helper()
	ctx := context.Background()
	if _, err := db.ImportProvinces(ctx, "p.csv", strings.NewReader("province,description\nK10 test province,ten ages of REFERENCES §4 K10\n")); err != nil {
		t.Fatal(err)
	}
	k10 := []float64{201.20, 201.35, 201.41, 201.48, 201.52, 201.55, 201.61, 201.90, 202.05, 202.30} // REFERENCES §4 K10
	var units, dates strings.Builder
	units.WriteString("province,unit,kind,pile_position,volume_km3,volume_sigma_km3,latitude,longitude,notes\n")
	dates.WriteString("province,unit,section,height_m,sample_code,method,material,interpretation,age_ma,sigma_ma,sigma_y_ma,sigma_z_ma,sigma_level,tracer,monitor,monitor_age_ma,lambda_per_a,laboratory,citation,doi,latitude,longitude,review_state,notes\n")
	for i, a := range k10 {
		fmt.Fprintf(&units, "K10 test province,K%d,flow,%d,100,10,,,\n", i+1, i+1)
		fmt.Fprintf(&dates, "K10 test province,K%d,,,K10-%02d,upb_idtims,zircon,eruption,%.2f,0.05,,,1,,,,,Lab,Test citation,,,,accepted,\n", i+1, i+1, a)
	}
	if _, err := db.ImportUnits(ctx, "u.csv", strings.NewReader(units.String())); err != nil {
		t.Fatal(err)
	}
	if _, err := db.ImportDates(ctx, "d.csv", strings.NewReader(dates.String())); err != nil {
		t.Fatal(err)
	}
	ps, err := db.Provinces(ctx)
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range ps {
		if p.Name == "K10 test province" {
			return p.ID
		}
	}
	t.Fatal("small province not found")
	return 0
}

func TestTimelineK10Fallback(t *testing.T) {
	srv, db := mustServer(t)
	id := mustSmallProvince(t, db)
	path := fmt.Sprintf("/provinces/%d/timeline", id)
	status, _, body := get(t, srv, path)
	if status != http.StatusOK {
		t.Fatalf("status %d", status)
	}
	for _, want := range []string{"Smoothing width: no automatic width exists for these", "h = 0.170 Ma"} {
		if !strings.Contains(body, want) {
			t.Errorf("K10 page lacks %q", want)
		}
	}
	_, _, j := get(t, srv, path+"?format=json")
	var doc struct {
		Bandwidth struct {
			HMa       float64 `json:"h_ma"`
			Rule      string  `json:"rule"`
			Requested string  `json:"requested"`
			Fallback  bool    `json:"fallback"`
		} `json:"bandwidth"`
		Values []densityValue `json:"values"`
	}
	if err := json.Unmarshal([]byte(j), &doc); err != nil {
		t.Fatal(err)
	}
	b := doc.Bandwidth
	// REFERENCES §4 K10: no ISJ root, so the fallback; the 0.9 rule with the type-7 IQR gives h = 0.1695109284.
	if !b.Fallback || b.Requested != "isj" || b.Rule != "silverman-robust" || math.Abs(b.HMa/0.1695109284-1) > 1e-9 {
		t.Errorf("bandwidth %+v, want the ISJ fallback to silverman-robust with h = 0.1695109284", b)
	}
	if len(doc.Values) != 10 {
		t.Errorf("%d values counted, want one per unit (10)", len(doc.Values))
	}
}

func TestTimelineFewValues(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	if _, err := db.ImportProvinces(ctx, "p.csv", strings.NewReader("province,description\nEmpty,no units\nOne,one unit\n")); err != nil {
		t.Fatal(err)
	}
	if _, err := db.ImportUnits(ctx, "u.csv", strings.NewReader("province,unit,kind\nOne,Lone Flow,flow\n")); err != nil {
		t.Fatal(err)
	}
	if _, err := db.ImportDates(ctx, "d.csv", strings.NewReader("province,unit,sample_code,method,material,interpretation,age_ma,sigma_ma,sigma_level,laboratory,citation,review_state\n"+
		"One,Lone Flow,L-1,upb_idtims,zircon,eruption,201.5,0.05,1,Lab,Test,accepted\n")); err != nil {
		t.Fatal(err)
	}
	ps, err := db.Provinces(ctx)
	if err != nil {
		t.Fatal(err)
	}
	ids := map[string]int64{}
	for _, p := range ps {
		ids[p.Name] = p.ID
	}
	cases := []struct {
		name string
		want []string
	}{
		{"Empty", []string{"No unit of this province has a date to draw.", "No density: it needs at least two values to count, and there are 0."}},
		{"One", []string{"No density: it needs at least two values to count, and there are 1.", "Lone Flow", `href="/dates/`}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			for _, f := range []string{"", "?format=svg", "?format=png", "?format=pdf", "?format=json", "?format=csv"} {
				if status, _, _ := get(t, srv, fmt.Sprintf("/provinces/%d/timeline%s", ids[tc.name], f)); status != http.StatusOK {
					t.Errorf("%s: status %d", f, status)
				}
			}
			_, _, body := get(t, srv, fmt.Sprintf("/provinces/%d/timeline", ids[tc.name]))
			for _, w := range tc.want {
				if !strings.Contains(body, w) {
					t.Errorf("page lacks %q", w)
				}
			}
		})
	}
}

func TestTimelineBadParameters(t *testing.T) {
	srv, _ := mustServer(t)
	cases := []struct{ query, names string }{
		{"bw=botev", "bw"},
		{"bw=user", "h"},
		{"bw=user&h=-0.1", "h"},
		{"bw=user&h=abc", "h"},
		{"reps=5", "reps"},
		{"reps=many", "reps"},
		{"seed=-1", "seed"},
		{"from=old", "from"},
		{"to=5000", "to"},
		{"from=155&to=155", "from, to"},
		{"count=all", "count"},
		{"weight=mass", "weight"},
		{"pdp=yes", "pdp"},
		{"adaptive=2", "adaptive"},
		{"bw_each=2", "bw_each"},
		{"bw_each=1", "bw_each"}, // with the default ISJ
		{"bw_each=1&bw=user&h=0.1", "bw_each"},
		{"format=gif", "format"},
		{"table=ages", "table"},
		{"sigma=3", "sigma"},
	}
	for _, tc := range cases {
		t.Run(tc.query, func(t *testing.T) {
			status, _, body := get(t, srv, "/provinces/1/timeline?"+tc.query)
			if status != http.StatusBadRequest {
				t.Fatalf("status %d, want 400", status)
			}
			if !strings.Contains(body, "<li>"+tc.names+":") {
				t.Errorf("the page does not name %q as the problem", tc.names)
			}
		})
	}
	if status, _, _ := get(t, srv, "/provinces/999/timeline"); status != http.StatusNotFound {
		t.Errorf("unknown province: status %d, want 404", status)
	}
}

func TestTimelineDownloads(t *testing.T) {
	srv, _ := mustServer(t)
	res, err := http.Get(srv.URL + "/provinces/1/timeline?format=svg")
	if err != nil {
		t.Fatal(err)
	}
	svg, _ := io.ReadAll(res.Body)
	res.Body.Close()
	if ct := res.Header.Get("Content-Type"); ct != "image/svg+xml" {
		t.Errorf("SVG content type %q", ct)
	}
	dec := xml.NewDecoder(bytes.NewReader(svg))
	for {
		_, err := dec.Token()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatalf("SVG does not parse as XML: %v", err)
		}
	}

	_, h, pngBody := get(t, srv, "/provinces/1/timeline?format=png")
	img, err := png.Decode(strings.NewReader(pngBody))
	if err != nil || h.Get("Content-Type") != "image/png" {
		t.Fatalf("PNG: %v (type %s)", err, h.Get("Content-Type"))
	}
	if b := img.Bounds(); b.Dx() != 1960 {
		t.Errorf("PNG %d px wide, want 1960 (980 pt at 144 dpi)", b.Dx())
	}
	_, h, pdf := get(t, srv, "/provinces/1/timeline?format=pdf")
	if !strings.HasPrefix(pdf, "%PDF") || h.Get("Content-Type") != "application/pdf" {
		t.Errorf("PDF starts %q (type %s)", pdf[:min(8, len(pdf))], h.Get("Content-Type"))
	}

	_, _, pc := get(t, srv, "/provinces/1/timeline?format=csv&table=pulses")
	rows, err := csv.NewReader(strings.NewReader(pc)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	pc0 := slices.Index(columnNames(timelinePulseColumns), "pulse")
	if len(rows) < 3 || pc0 < 0 || rows[0][pc0] != "pulse" {
		t.Fatalf("pulse CSV %v: want a header and the demo's pulses", rows)
	}
	// Each pulse's code is its mode in Ma, rounded to the decimals the code writes (not its place).
	mc := slices.Index(rows[0], "mode_ma")
	for _, r := range rows[1:] {
		code := strings.TrimPrefix(r[pc0], "P")
		age, err1 := strconv.ParseFloat(code, 64)
		mode, err2 := strconv.ParseFloat(r[mc], 64)
		dec := 0
		if i := strings.IndexByte(code, '.'); i >= 0 {
			dec = len(code) - i - 1
		}
		if err1 != nil || err2 != nil || math.Abs(age-mode) > 0.5*math.Pow10(-dec)+1e-9 {
			t.Errorf("pulse %q: mode %s Ma; want P and the mode rounded", r[pc0], r[mc])
		}
	}
	// Every row carries the choices it was made with: those the JSON of the same address states.
	_, _, pj := get(t, srv, "/provinces/1/timeline?format=json")
	var pdoc struct {
		Seed       uint64 `json:"seed"`
		Replicates int    `json:"replicates"`
		Bandwidth  struct {
			HMa  float64 `json:"h_ma"`
			Rule string  `json:"rule"`
		} `json:"bandwidth"`
	}
	if err := json.Unmarshal([]byte(pj), &pdoc); err != nil {
		t.Fatal(err)
	}
	for _, r := range rows[1:] {
		got := map[string]string{}
		for i, c := range rows[0] {
			got[c] = r[i]
		}
		h, _ := strconv.ParseFloat(got["bandwidth_ma"], 64)
		if got["replicates"] != strconv.Itoa(pdoc.Replicates) || got["seed"] != strconv.FormatUint(pdoc.Seed, 10) || got["sigma_level"] != "2" ||
			got["count"] != "unit" || got["calibration"] == "" || math.Abs(h-pdoc.Bandwidth.HMa) > 1e-9 || got["bandwidth_rule"] != pdoc.Bandwidth.Rule {
			t.Errorf("pulse CSV row %v lacks its settings", got)
		}
	}
	_, _, dc := get(t, srv, "/provinces/1/timeline?format=csv&table=density")
	rows, err = csv.NewReader(strings.NewReader(dc)).ReadAll()
	if err != nil || len(rows) < 257 || rows[0][1] != "kde_per_ma" {
		t.Errorf("density CSV: %d rows, %v", len(rows), err)
	}
	_, _, vc := get(t, srv, "/provinces/1/timeline?format=csv&table=values")
	rows, err = csv.NewReader(strings.NewReader(vc)).ReadAll()
	if err != nil || len(rows) != 18 {
		t.Errorf("values CSV: %d rows (%v), want a header and 17 unit means", len(rows), err)
	}

	_, _, j := get(t, srv, "/provinces/1/timeline?format=json&from=156.5&to=153.5")
	var doc struct {
		WindowMa []float64 `json:"window_ma"`
		Pulses   []struct {
			Pulse     string             `json:"pulse"`
			Frequency float64            `json:"frequency"`
			ModeMa    float64            `json:"mode_ma"`
			Start     stats.AgeQuantiles `json:"start_quantiles"`
		} `json:"pulses"`
		Density []map[string]float64 `json:"density"`
		Seed    uint64               `json:"seed"`
	}
	if err := json.Unmarshal([]byte(j), &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.WindowMa) != 2 || doc.WindowMa[0] != 153.5 || doc.WindowMa[1] != 156.5 {
		t.Errorf("window %v, want [153.5 156.5]", doc.WindowMa)
	}
	if len(doc.Density) == 0 || doc.Density[0]["age_ma"] != 153.5 || doc.Seed != 1 {
		t.Errorf("density from %v, seed %d", doc.Density[0]["age_ma"], doc.Seed)
	}
	// The invented demo has two pulses, about 155.4 and 154.7 Ma (testdata/demo/provinces.csv); with one
	// value per unit they are the two modes, older first.
	if len(doc.Pulses) != 2 || doc.Pulses[0].ModeMa <= doc.Pulses[1].ModeMa {
		t.Fatalf("pulses %+v, want two, oldest first", doc.Pulses)
	}
	for _, p := range doc.Pulses {
		if !(p.Frequency > 0 && p.Frequency <= 1) || !(p.Start.UpperMa >= p.Start.LowerMa) {
			t.Errorf("pulse %+v: frequency or start interval out of order", p)
		}
	}
}

func TestTimelineFigureContent(t *testing.T) {
	srv, db := mustServer(t)
	_, _, svg := get(t, srv, "/provinces/1/timeline?format=svg")
	ds, _, err := db.Dates(context.Background(), store.DateFilter{ProvinceID: 1})
	if err != nil {
		t.Fatal(err)
	}
	// Every date of the province is drawn with a hover title linking to its record.
	for _, d := range ds {
		if want := fmt.Sprintf(`<a href="/dates/%d"><title>%s`, d.ID, d.SampleCode); !strings.Contains(svg, want) {
			t.Errorf("no linked hover title for date %d (%s)", d.ID, d.SampleCode)
		}
	}
	for _, want := range []string{"Age (Ma)", "older", "younger", "Density (per Ma)", "± 2σ, analytical", "Oxfordian", "Kimmeridgian",
		"International Chronostratigraphic Chart v2024/12 (CC BY 4.0)", "U–Pb ID-TIMS", "⁴⁰Ar/³⁹Ar plateau", "Pulse at ~", "95 % bootstrap band"} {
		if !strings.Contains(svg, want) {
			t.Errorf("figure lacks %q", want)
		}
	}
	// Volume weighting names the units without a volume (testdata/demo/units.csv: the two dyke units).
	_, _, page := get(t, srv, "/provinces/1/timeline?weight=volume")
	for _, want := range []string{"No volume is known for Brattgangel Dyke, Vardrupel Dyke Swarm: left out", "Volume-weighted density (per Ma)"} {
		if !strings.Contains(page, want) {
			t.Errorf("weight=volume page lacks %q", want)
		}
	}
	_, _, page = get(t, srv, "/provinces/1/timeline")
	if !strings.Contains(page, "weighting by volume would leave them out") {
		t.Error("the default page does not say which units lack a volume")
	}
	if !strings.Contains(page, "Tindravik Flow Group: its ⁴⁰Ar/³⁹Ar mean is set aside; the U–Pb mean is counted") {
		t.Error("the page does not say which mean of a mixed unit is counted")
	}
}

// TestTimelineGolden keeps the demo timeline's SVG under testdata/ (go test ./web -run Golden -update
// rewrites it): the default view (unit means, exact kernel sums) and the per-date view (ISJ bandwidth,
// the binned FFT path). The bootstrap is seeded, so the figure is the same on every run and with any
// number of workers.
func TestTimelineGolden(t *testing.T) {
	srv, _ := mustServer(t)
	for _, c := range []struct{ path, golden string }{
		{"/provinces/1/timeline?format=svg", "timeline-demo.svg"},
		{"/provinces/1/timeline?count=date&format=svg", "timeline-demo-dates.svg"},
	} {
		t.Run(c.golden, func(t *testing.T) {
			_, _, svg := get(t, srv, c.path)
			golden := filepath.Join("testdata", c.golden)
			if *update {
				if err := os.MkdirAll("testdata", 0o755); err != nil {
					t.Fatal(err)
				}
				if err := os.WriteFile(golden, []byte(svg), 0o644); err != nil {
					t.Fatal(err)
				}
			}
			want, err := os.ReadFile(golden)
			if err != nil {
				t.Fatalf("%v (run go test ./web -run Golden -update)", err)
			}
			if svg != string(want) {
				t.Errorf("%s differs from %s; if the change is intended, run go test ./web -run Golden -update and look at the figure", c.path, golden)
			}
		})
	}
}

// A contributor saves the pulses found on the timeline as records of the province; saving again with
// the same choices replaces them as new versions.
func TestSavePulsesFromTheTimeline(t *testing.T) {
	srv, db := mustServer(t)
	c := client(t)
	signIn(t, c, srv, "demo-contributor")
	status, _, h := do(t, c, http.MethodPost, srv.URL+"/provinces/1/pulses?reps=200&seed=3", url.Values{})
	if status != http.StatusSeeOther || !strings.Contains(h.Get("Location"), "seed=3") {
		t.Fatalf("save: status %d, location %q", status, h.Get("Location"))
	}
	ps, err := db.Pulses(context.Background(), 1)
	if err != nil {
		t.Fatal(err)
	}
	// The demo scenario has two pulses (testdata/demo/README.md): about 155.40 and 154.70 Ma.
	if len(ps) != 2 || ps[0].StartMa == nil || ps[0].EndMa == nil || *ps[0].StartMa < *ps[0].EndMa || len(ps[0].UnitIDs) == 0 {
		t.Fatalf("saved pulses %+v: want two intervals with their units", ps)
	}
	// Named as the timeline names them, by their age.
	_, js, _ := do(t, c, http.MethodGet, srv.URL+"/provinces/1/timeline?reps=200&seed=3&format=json", nil)
	var tl struct {
		Pulses []struct {
			Pulse string `json:"pulse"`
		} `json:"pulses"`
	}
	if err := json.Unmarshal([]byte(js), &tl); err != nil || len(tl.Pulses) != 2 {
		t.Fatalf("timeline JSON: %v, %d pulses", err, len(tl.Pulses))
	}
	for i, p := range ps {
		if p.Name != tl.Pulses[i].Pulse {
			t.Errorf("saved pulse %d named %q, the timeline names it %q", i, p.Name, tl.Pulses[i].Pulse)
		}
	}
	do(t, c, http.MethodPost, srv.URL+"/provinces/1/pulses?reps=200&seed=3", url.Values{})
	again, _ := db.Pulses(context.Background(), 1)
	if len(again) != 2 || again[0].Version != 2 {
		t.Errorf("saving again: %d pulses at version %d, want 2 at version 2", len(again), again[0].Version)
	}
	_, body, _ := do(t, c, http.MethodGet, srv.URL+"/provinces/1/timeline?reps=200&seed=3", nil)
	if !strings.Contains(body, "Pulses saved as records") || !strings.Contains(body, "Found from the density") {
		t.Error("the timeline does not list the saved pulses")
	}
}

// The comparison reads the density's choices with the timeline's parsing, so bw_each=1 reaches its
// density too: it must be part of the comparison's cache key, or a cached band would be served for the
// other choice.
func TestCompareCacheKeyHoldsBandwidthInEachReplicate(t *testing.T) {
	var held, each compareChoice
	each.Dens.BWEach = true
	if held.cacheKey(store.DataVersions{}) == each.cacheKey(store.DataVersions{}) {
		t.Error("bw_each=1 and bw_each=0 share a comparison cache entry")
	}
}

// Pulses saved as records are named by their age, or by the saved record that is the same pulse (one to
// one, by overlap of their age ranges), never by their place: a pulse that moved within its range keeps
// its record; a pulse split in two, or a new one, gets its own age's name; an old record named by
// number keeps its name only for the one pulse that is it.
func TestSavedPulseNamesFollowTheSamePulse(t *testing.T) {
	f := func(x float64) *float64 { return &x }
	id := func(code string, old, young float64) analysis.PulseID {
		return analysis.PulseID{Code: code, Span: stats.PulseSpan{ModeMa: (old + young) / 2, OldMa: old, YoungMa: young}}
	}
	saved := []store.Pulse{{Name: "P1", StartMa: f(156.0), EndMa: f(155.1)}, {Name: "P154.7", StartMa: f(155.0), EndMa: f(153.6)}}
	cases := []struct {
		name string
		ids  []analysis.PulseID
		want []string
	}{
		{"nothing saved", []analysis.PulseID{id("P155.4", 156, 155.1)}, []string{"P155.4"}},
		{"both moved within their ranges", []analysis.PulseID{id("P155.5", 156.05, 155.15), id("P154.6", 154.9, 153.5)}, []string{"P1", "P154.7"}},
		{"the first split in two", []analysis.PulseID{id("P155.8", 156.0, 155.6), id("P155.3", 155.55, 155.1), id("P154.7", 155.0, 153.6)}, []string{"P155.8", "P155.3", "P154.7"}},
		{"a new pulse before them", []analysis.PulseID{id("P158.0", 158.5, 157.5), id("P155.4", 156, 155.1)}, []string{"P158.0", "P1"}},
	}
	for _, c := range cases {
		in := saved
		if c.name == "nothing saved" {
			in = nil
		}
		if got := savedPulseNames(c.ids, in); !slices.Equal(got, c.want) {
			t.Errorf("%s: names %v, want %v", c.name, got, c.want)
		}
	}
}
