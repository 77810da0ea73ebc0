package web

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"net/http"
	"net/http/httptest"
	"net/url"
	"slices"
	"strings"
	"sync"
	"testing"

	"github.com/xuri/excelize/v2"
	"gonum.org/v1/gonum/stat/distuv"

	"coeval/stats"
	"coeval/store"
	"coeval/web/analysis"
)

// The demo comparison page renders with its table, figure and downloads; its CSV parses with the
// declared columns; the JSON parses; the XLSX opens with excelize's reader and has the settings sheet.
func TestComparePageRendersDemoAndDownloadsOpen(t *testing.T) {
	srv, db := mustServer(t)
	nEv := eventsWithinTies(t, db, 1)
	status, _, body := get(t, srv, "/compare")
	if status != http.StatusOK {
		t.Fatalf("status %d: %.500s", status, body)
	}
	for _, want := range []string{"P(after onset)", "pulse at ~", "CIE onset", "Which came first", "came after the onset of the pulse at ~", "How each row was computed",
		"seed", "10000 joint draws", "as-needed", `id="compare-figure"`, "Sensitivity",
		"(the latest change to the compilation)", `href="/help/downloads/comparison"`} {
		if !strings.Contains(body, want) {
			t.Errorf("page lacks %q", want)
		}
	}
	status, h, csvBody := get(t, srv, "/compare?format=csv")
	if status != http.StatusOK || !strings.HasPrefix(h.Get("Content-Type"), "text/csv") {
		t.Fatalf("csv: status %d, %s", status, h.Get("Content-Type"))
	}
	recs, err := csv.NewReader(strings.NewReader(csvBody)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if got, want := strings.Join(recs[0], ","), strings.Join(compareColumns, ","); got != want {
		t.Errorf("csv header %s, want %s", got, want)
	}
	// The demo's first province (the default, first by name): two pulses × the events within their
	// sections' tie ranges (Mornesk's CIE ends above its highest tie and is left out, with a note).
	if len(recs) != 1+2*nEv {
		t.Errorf("csv has %d rows, want %d", len(recs)-1, 2*nEv)
	}
	if !strings.Contains(body, "outside the tie range") {
		t.Error("the page does not say why an event is left out")
	}
	status, _, js := get(t, srv, "/compare?format=json")
	var doc struct {
		Settings map[string]string   `json:"settings"`
		Rows     []map[string]string `json:"rows"`
	}
	if status != http.StatusOK || json.Unmarshal([]byte(js), &doc) != nil || len(doc.Rows) != 2*nEv || doc.Settings["seed"] != "1" {
		t.Errorf("json: status %d, %d rows, settings %v", status, len(doc.Rows), doc.Settings)
	}
	status, _, x := get(t, srv, "/compare?format=xlsx")
	if status != http.StatusOK {
		t.Fatalf("xlsx status %d", status)
	}
	f, err := excelize.OpenReader(strings.NewReader(x))
	if err != nil {
		t.Fatalf("excelize cannot open the workbook: %v", err)
	}
	defer f.Close()
	if got := f.GetSheetList(); strings.Join(got, ",") != "Comparison,Which came first,Settings" {
		t.Errorf("sheets %v", got)
	}
	rows, err := f.GetRows("Settings")
	if err != nil {
		t.Fatal(err)
	}
	settings := map[string]string{}
	for _, r := range rows {
		if len(r) == 2 {
			settings[r[0]] = r[1]
		}
	}
	for _, k := range []string{"seed", "joint draws N", "level", "bandwidth rule", "age model", "data stamp", "calibration (⁴⁰Ar/³⁹Ar)"} {
		if settings[k] == "" {
			t.Errorf("settings sheet lacks %q", k)
		}
	}
	if table, _ := f.GetRows("Comparison"); len(table) != 1+2*nEv {
		t.Errorf("comparison sheet has %d rows, want %d", len(table), 1+2*nEv)
	}
	for _, fm := range []string{"svg", "png", "pdf"} {
		if status, _, b := get(t, srv, "/compare?format="+fm); status != http.StatusOK || len(b) < 1000 {
			t.Errorf("figure %s: status %d, %d bytes", fm, status, len(b))
		}
	}
}

// Reproducibility: the same address gives the same CSV byte for byte, computed afresh on another
// server (no cache shared) — the seed fixes the bootstrap, the age models and the joint draws.
func TestCompareCSVIsReproducible(t *testing.T) {
	const path = "/compare?format=csv&seed=7&n=2000&reps=200&delta=0.2"
	a, _ := mustServer(t)
	b, _ := mustServer(t)
	_, _, x := get(t, a, path)
	_, _, y := get(t, b, path)
	if x != y || len(x) < 100 {
		t.Errorf("two computations of %s differ (%d and %d bytes)", path, len(x), len(y))
	}
	_, _, z := get(t, a, strings.Replace(path, "seed=7", "seed=8", 1))
	if z == x {
		t.Error("another seed gave the same table")
	}
}

func TestCompareBadParametersAreNamed(t *testing.T) {
	srv, _ := mustServer(t)
	status, _, body := get(t, srv, "/compare?level=sideways&delta=-1&n=5&pulses=X9&group=nonsense&events=abc")
	if status != http.StatusBadRequest {
		t.Fatalf("status %d, want 400", status)
	}
	for _, name := range []string{"level:", "delta:", "n:", "pulses:", "group:", "events:"} {
		if !strings.Contains(body, name) {
			t.Errorf("the 400 page does not name %s", name)
		}
	}
	for _, path := range []string{"/compare?province=999", "/compare?events=99999", "/compare?pulses=P7", "/compare?order=Z3"} {
		if status, _, body := get(t, srv, path); status != http.StatusBadRequest {
			t.Errorf("%s: status %d, want 400: %.300s", path, status, body)
		}
	}
}

// A contributor saves a comparison; it lists and reopens with "unchanged"; after an import the same
// saved comparison says the data have changed since. Readers may not save.
func TestSavedComparisonRoundTripAndDataChanged(t *testing.T) {
	srv, db := mustServer(t)
	reader := client(t)
	signIn(t, reader, srv, "demo-reader")
	if status, _, _ := do(t, reader, http.MethodPost, srv.URL+"/compare/saved", url.Values{"name": {"x"}, "query": {"delta=0.2"}}); status != http.StatusForbidden {
		t.Errorf("a reader saved a comparison: status %d", status)
	}
	c := client(t)
	signIn(t, c, srv, "demo-contributor")
	status, _, h := do(t, c, http.MethodPost, srv.URL+"/compare/saved", url.Values{"name": {"Wider δ"}, "query": {"delta=0.2&sens=0&format=csv"}})
	if status != http.StatusSeeOther || !strings.HasPrefix(h.Get("Location"), "/compare/saved/") {
		t.Fatalf("save: status %d, location %q", status, h.Get("Location"))
	}
	saved := h.Get("Location")
	status, _, h = do(t, c, http.MethodGet, srv.URL+saved, nil)
	loc := h.Get("Location")
	if status != http.StatusSeeOther || !strings.Contains(loc, "delta=0.2") || strings.Contains(loc, "format=") || !strings.Contains(loc, "saved=") {
		t.Fatalf("reopen: status %d, location %q", status, loc)
	}
	_, body, _ := do(t, c, http.MethodGet, srv.URL+loc, nil)
	if !strings.Contains(body, "data unchanged since") || strings.Contains(body, `id="data-changed"`) {
		t.Error("a fresh saved comparison does not say its data are unchanged")
	}
	_, list, _ := do(t, c, http.MethodGet, srv.URL+"/compare/saved", nil)
	if !strings.Contains(list, "Wider δ") || !strings.Contains(list, "unchanged since") {
		t.Error("the saved list lacks the comparison")
	}
	// An import makes a new change batch: the data stamp moves on.
	if _, err := db.ImportReader(context.Background(), "events", "Mornesk Cliffs", "new.csv",
		strings.NewReader("name,kind,base_height_m,top_height_m,notes\nTest horizon,other,30.0,,added by a test\n")); err != nil {
		t.Fatal(err)
	}
	_, body, _ = do(t, c, http.MethodGet, srv.URL+loc, nil)
	if !strings.Contains(body, `id="data-changed"`) || !strings.Contains(body, "has changed since") {
		t.Error("after an import the saved comparison does not say the data have changed")
	}
	_, list, _ = do(t, c, http.MethodGet, srv.URL+"/compare/saved", nil)
	if !strings.Contains(list, "changed since") {
		t.Error("the saved list does not say the data have changed")
	}
}

// The page's own path (choices → data → computeComparison) against closed forms of REFERENCES §5:
// two events with direct normal ages go through eventInputs and the order matrix.
func TestCompareClosedFormsThroughThePagePath(t *testing.T) {
	db := mustDemoDB(t)
	c := &comparer{Server: &Server{store: db}, cache: newCompareCache(4)}
	ctx := context.Background()
	r := httptest.NewRequest(http.MethodGet, "/compare?sens=0&n=100000&events=1&order=E901,E902", nil)
	p := newParams(r)
	ch, err := c.compareChoiceFrom(ctx, p)
	if err != nil || p.err() != nil {
		t.Fatal(err, p.err())
	}
	d, err := c.loadCompareData(ctx, &ch)
	if err != nil {
		t.Fatal(err)
	}
	ev := func(id int64, age, sigma float64) store.Event {
		return store.Event{ID: id, Name: "E" + string(rune('0'+id%10)), Kind: "other", AgeMa: &age, SigmaMa: &sigma}
	}
	check := func(name string, got stats.Probability, want float64) {
		t.Helper()
		tol := 3 * math.Sqrt(want*(1-want)/float64(ch.N))
		if math.Abs(got.P-want) > tol {
			t.Errorf("%s: P = %.5f, want %.5f ± %.5f", name, got.P, want, tol)
		}
	}
	// REFERENCES §5 [C]: 201.51 ± 0.05 vs 201.45 ± 0.08 (1σ) → P(first older) = 0.737611374450.
	d.Direct = []store.Event{ev(901, 201.51, 0.05), ev(902, 201.45, 0.08)}
	ch.EventIDs = []int64{901, 902}
	res, err := computeComparison(context.Background(), d, ch, 0)
	if err != nil {
		t.Fatal(err)
	}
	check("§5 precedence", stats.Probability{P: res.Order.P[0][1]}, 0.737611374450)
	// REFERENCES §5 [C]: 201.51 ± 0.03 vs 201.56 ± 0.03 (2σ): P(first younger) = 0.9908.
	d.Direct = []store.Event{ev(901, 201.51, 0.015), ev(902, 201.56, 0.015)}
	if res, err = computeComparison(context.Background(), d, ch, 0); err != nil {
		t.Fatal(err)
	}
	check("§5 precedence 2σ", stats.Probability{P: res.Order.P[1][0]}, 0.9908)
}

// The page hands the engine the shared keys: the demo's pulse edges (U–Pb units, tracer ET2535) and its
// section events (ties on U–Pb ashes of the same tracer) carry λ238 and the tracer. An event between two
// ash beds carries them whole, so at the default level they cancel and its row equals the analytical one;
// an event next to a biozone tie carries them only in part (its share), so the rest counts and its row
// differs; level=full differs everywhere.
func TestCompareLevelAndKeysThroughThePagePath(t *testing.T) {
	db := mustDemoDB(t)
	c := &comparer{Server: &Server{store: db}, cache: newCompareCache(4)}
	table := func(q string) (*compareResult, map[string]string) {
		t.Helper()
		res := comparePath(t, c, "/compare?sens=0&n=4000&reps=200&"+q)
		// The probability and lag columns per pulse and event (the volume fraction also involves the
		// ⁴⁰Ar/³⁹Ar units, whose calibration key the events do not share).
		rows := map[string]string{}
		for _, rec := range compareRecords(res, true) {
			rows[rec[1]+" "+rec[2]] = strings.Join(rec[15:29], ",")
		}
		return res, rows
	}
	res, asNeeded := table("level=as-needed")
	for _, k := range []string{stats.KeyLambda238, stats.TracerKey("ET2535")} {
		if !strings.Contains(strings.Join(res.Keys, "|"), k) {
			t.Errorf("keys %v lack %s", res.Keys, k)
		}
	}
	_, analytical := table("level=analytical")
	_, full := table("level=full")
	whole, partial := 0, 0
	for _, e := range res.In.Events {
		if e.SectionID == 0 {
			continue
		}
		carriesWhole := len(e.Q.Systematics) > 0 && e.Q.Shares[stats.KeyLambda238] == nil && e.Q.Shares[stats.TracerKey("ET2535")] == nil
		for key, row := range asNeeded {
			if !strings.HasSuffix(key, " "+e.Code) {
				continue
			}
			switch {
			case carriesWhole:
				whole++
				if row != analytical[key] {
					t.Errorf("%s (%s, between two ashes): as-needed %s differs from analytical %s: the shared keys do not cancel", key, e.Name, row, analytical[key])
				}
				if row == full[key] {
					t.Errorf("%s: level=full gives the same row: the level does not reach the engine", key)
				}
			case len(e.Q.Systematics) > 0:
				// Carried in part, the keys are drawn on both sides (jointly): as at level=full.
				if row != analytical[key] {
					partial++
				}
				if row != full[key] {
					t.Errorf("%s (%s, keys in part): as-needed %s differs from full %s", key, e.Name, row, full[key])
				}
			}
		}
	}
	if whole == 0 || partial == 0 {
		t.Errorf("%d rows of events between two ashes, %d rows of events carrying the keys in part that differ from analytical: want both", whole, partial)
	}
}

// The comparison's age models use the tie points include= lets in, as the section page does: a pending tie
// is left out by default (and a caution names it), used with include=pending.
func TestCompareLeavesPendingTiesOut(t *testing.T) {
	db := mustDemoDB(t)
	ctx := context.Background()
	secs, err := db.Sections(ctx)
	if err != nil || len(secs) == 0 {
		t.Fatal(err)
	}
	sec := secs[0]
	tp, err := db.CreateTie(ctx, sec.ID, store.Form{"label": "contributed ash", "height_m": "30", "kind": "radiometric",
		"distribution": "normal", "age_ma": "155.5", "sigma_ma": "0.05", "sigma_level": "2"}, false)
	if err != nil {
		t.Fatal(err)
	}
	c := &comparer{Server: &Server{store: db}, cache: newCompareCache(4)}
	run := func(q string) (*compareData, *compareResult) {
		t.Helper()
		return comparePathData(t, c, "/compare?sens=0&n=1000&reps=200&draws=200&sections="+itoa(int(sec.ID))+q)
	}
	has := func(ts []store.TiePoint) bool {
		for _, x := range ts {
			if x.ID == tp.ID {
				return true
			}
		}
		return false
	}
	d, res := run("")
	if has(d.Ties[sec.ID]) || !has(d.TiesOut[sec.ID]) {
		t.Error("include=accepted: the comparison's age model uses the pending tie")
	}
	if !strings.Contains(strings.Join(res.Cautions, " "), sec.Name+": Left out of the age–height model: 1 tie point waiting for a curator's review (contributed ash)") {
		t.Errorf("no caution names the pending tie left out: %q", res.Cautions)
	}
	d, res = run("&include=pending")
	if !has(d.Ties[sec.ID]) || len(d.TiesOut[sec.ID]) != 0 {
		t.Error("include=pending: the comparison's age model leaves the pending tie out")
	}
	if !strings.Contains(strings.Join(res.Cautions, " "), "no curator has reviewed yet") {
		t.Errorf("include=pending: no caution says the model rests on an unreviewed tie: %q", res.Cautions)
	}
}

// A unit row through the page's own path (choices → data → computeComparison) against closed forms built
// from the raw dates only. REFERENCES §5 "Through an age model" [C]: a U–Pb unit mean 201.50 (X 0.040, 2σ)
// and an event at the height of an ash tie dated 201.45 (X 0.060, Z 0.23, 2σ), same tracer:
// P(event younger than the unit) = Φ(0.05/hypot(0.02, 0.03)) = 0.917241; taking each Z as independent
// gives 0.623312. The tie enters the age model with its X and carries λ238 and the tracer, which the unit
// carries too: they cancel, at level=as-needed (held fixed) and at level=full (drawn once, for both).
// The unit is two dates of 201.50 ± 0.0282843 (1σ), whose weighted mean has σ 0.02; the section has the
// ash at 10 m and a biozone far below at 0 m (uniform 203.0–203.5 Ma, no component). Both age models.
func TestCompareUnitRowClosedFormThroughThePagePath(t *testing.T) {
	db := mustDemoDB(t)
	c := &comparer{Server: &Server{store: db}, cache: newCompareCache(4)}
	ctx := context.Background()
	const unitID, secID, evID, ashID, n, delta = 901, 901, 9901, 9100, 100_000, 0.1
	f := func(v float64) *float64 { return &v }
	for _, model := range []string{"linear", "mc"} {
		for _, level := range []string{"as-needed", "full"} {
			t.Run(model+"/"+level, func(t *testing.T) {
				r := httptest.NewRequest(http.MethodGet, fmt.Sprintf("/compare?sens=0&reps=100&model=%s&draws=5000&rows=units&units=%d&events=%d&n=%d&delta=%g&level=%s",
					model, unitID, evID, n, delta, level), nil)
				p := newParams(r)
				ch, err := c.compareChoiceFrom(ctx, p)
				if err != nil || p.err() != nil {
					t.Fatal(err, p.err())
				}
				ch.EventIDs = nil // the test event is added below, after the data are loaded
				d, err := c.loadCompareData(ctx, &ch)
				if err != nil {
					t.Fatal(err)
				}
				ch.EventIDs = []int64{evID}
				uid, sid, did := int64(unitID), int64(secID), int64(ashID)
				d.Units = append(d.Units, store.Unit{ID: uid, ProvinceID: ch.ProvinceID, Name: "Test Flow", Kind: "flow"})
				for i := range 2 {
					d.Dates = append(d.Dates, store.Date{ID: int64(9000 + i), UnitID: &uid, Unit: "Test Flow", SampleCode: fmt.Sprint("TEST-", i),
						Method: "upb_idtims", Interpretation: "eruption", AgeMa: 201.50, SigmaMa: 0.02 * math.Sqrt2, SigmaLevel: 2, Tracer: "ET2535", ReviewState: "accepted"})
				}
				ash := store.Date{ID: did, Method: "upb_idtims", AgeMa: 201.45, SigmaMa: 0.03, SigmaZMa: f(0.115), SigmaLevel: 2, Tracer: "ET2535", ReviewState: "accepted"}
				sec := store.Section{ID: sid, Name: "Test Section", TocThresholdWtPct: 0.2}
				d.Sections = append(d.Sections, sec)
				d.Ties[sid] = []store.TiePoint{
					{ID: 9200, SectionID: sid, Label: "biozone", HeightM: 0, Kind: "biostratigraphic", Distribution: "uniform", AgeMinMa: f(203.0), AgeMaxMa: f(203.5), ReviewState: "accepted"},
					{ID: 9201, SectionID: sid, Label: "ash", HeightM: 10, Kind: "radiometric", Distribution: "normal", AgeMa: f(201.45), SigmaMa: f(0.03), DateID: &did, ReviewState: "accepted"},
				}
				d.LinkDates[did] = ash
				d.TieIns[sid] = []tieInput{{AgeMa: 203.25, SigmaMa: 0.5 / math.Sqrt(12)}, tieFromDate(ash, "full", ch.Dens.Sum.Cal)}
				d.Events[sid] = []store.Event{{ID: evID, SectionID: &sid, Name: "Test event", Kind: "cie_onset", BaseHeightM: f(10), Origin: "entered", ReviewState: "accepted"}}
				res, err := computeComparison(context.Background(), d, ch, 0)
				if err != nil {
					t.Fatal(err)
				}
				rows := compareRows(res)
				k := slices.IndexFunc(rows, func(r compareRow) bool { return r.isUnit() && r.Event.Code == fmt.Sprint("E", evID) })
				if k < 0 {
					t.Fatalf("no unit row U%d × E%d", unitID, evID)
				}
				cell := rows[k].Cell
				const want, wrong = 0.917241, 0.623312 // REFERENCES §5 [C]
				mu, sd := 0.05, math.Hypot(0.02, 0.03)
				m := float64(n)
				if model == "mc" {
					m = 5000 // the age model's rows, resampled
				}
				se := math.Sqrt(want * (1 - want) * (1/float64(n) + 1/m))
				t.Logf("P(event after unit) %.5f ± %.5f, closed form %.6f (Z as independent: %.6f); lag %.4f [%.4f, %.4f]",
					cell.AfterOnset.P, cell.AfterOnset.SE, want, wrong, cell.LagMa.Median, cell.LagMa.Lo95, cell.LagMa.Hi95)
				if math.Abs(cell.AfterOnset.P-want) > 3*se+2e-4 {
					t.Errorf("P(event younger than the unit) = %.5f, closed form %.6f ± %.5f (3 SE); double counting gives %.6f", cell.AfterOnset.P, want, 3*se, wrong)
				}
				wantNear := distuv.UnitNormal.CDF((delta-mu)/sd) - distuv.UnitNormal.CDF((-delta-mu)/sd)
				if tol := 3*math.Sqrt(wantNear*(1-wantNear)*(1/float64(n)+1/m)) + 2e-4; math.Abs(cell.Near.P-wantNear) > tol {
					t.Errorf("P(|lag| < δ) = %.5f, closed form %.5f ± %.5f", cell.Near.P, wantNear, tol)
				}
				// The lag's 95 % points: 0.05 ∓ 1.96·sd; SE of a sample quantile sqrt(p(1 − p)/N)/φ(z)·sd.
				for _, q := range []struct{ p, got float64 }{{0.5, cell.LagMa.Median}, {0.025, cell.LagMa.Lo95}, {0.975, cell.LagMa.Hi95}} {
					z := distuv.UnitNormal.Quantile(q.p)
					qse := math.Sqrt(q.p*(1-q.p)*(1/float64(n)+1/m)) / distuv.UnitNormal.Prob(z) * sd
					if w := mu + z*sd; math.Abs(q.got-w) > 3*qse+2e-4 {
						t.Errorf("lag %g quantile %.5f, closed form %.5f ± %.5f", q.p, q.got, w, 3*qse)
					}
				}
				if !math.IsNaN(cell.Within.P) {
					t.Errorf("a unit row has P(within) = %g; it does not apply", cell.Within.P)
				}
			})
		}
	}
}

// Unit rows in every download and on the page: rows=both adds a row per unit and event with the same
// columns (row_kind, the unit and its mean); rows=units leaves the pulses out; the order matrix takes U
// codes; units= picks units and a bad one is named.
func TestCompareUnitRowsInDownloadsAndPage(t *testing.T) {
	srv, db := mustServer(t)
	nEv := eventsWithinTies(t, db, 1)
	const q = "/compare?rows=both&units=7,1&n=2000&reps=200&draws=500"
	status, _, body := get(t, srv, q+"&format=csv")
	if status != http.StatusOK {
		t.Fatalf("csv: status %d: %.300s", status, body)
	}
	recs, err := csv.NewReader(strings.NewReader(body)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	hdr := recs[0]
	col := func(name string) int { return slices.Index(hdr, name) }
	for _, c := range []string{"row_kind", "unit_code", "unit", "unit_mean_ma", "p_after_onset", "p_within", "ovl", "sens_after_min"} {
		if col(c) < 0 {
			t.Fatalf("csv header lacks %s: %v", c, hdr)
		}
	}
	kinds := map[string]int{}
	for _, r := range recs[1:] {
		kinds[r[col("row_kind")]]++
		if r[col("row_kind")] == "unit" {
			if r[col("p_within")] != "" || r[col("unit_code")] == "" || r[col("p_after_onset")] == "" || r[col("lag_median_ma")] == "" || r[col("pulse")] != "" {
				t.Errorf("unit row %v", r)
			}
		}
	}
	if kinds["pulse"] != 2*nEv || kinds["unit"] != 2*nEv {
		t.Errorf("rows by kind %v, want %d pulse and %d unit rows (2 pulses, 2 units × %d events)", kinds, 2*nEv, 2*nEv, nEv)
	}
	if got := recs[1+2*nEv][col("unit")]; got != "Haldruna Flow" {
		t.Errorf("first unit row is %q, want the first unit chosen (units=7,1: Haldruna Flow)", got)
	}
	_, _, js := get(t, srv, q+"&format=json")
	var doc struct {
		Settings map[string]string   `json:"settings"`
		Rows     []map[string]string `json:"rows"`
		Order    struct {
			Items []string `json:"items"`
		} `json:"which_came_first"`
	}
	if err := json.Unmarshal([]byte(js), &doc); err != nil || len(doc.Rows) != 4*nEv || doc.Rows[4*nEv-1]["row_kind"] != "unit" || doc.Settings["unit U7"] == "" {
		t.Errorf("json: %v, %d rows, settings %v", err, len(doc.Rows), doc.Settings["unit U7"])
	}
	if !slices.Contains(doc.Order.Items, "U7") || !slices.ContainsFunc(doc.Order.Items, func(c string) bool { return strings.HasPrefix(c, "P1") }) {
		t.Errorf("order items %v lack the units or the pulses", doc.Order.Items)
	}
	_, _, x := get(t, srv, q+"&format=xlsx")
	f, err := excelize.OpenReader(strings.NewReader(x))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sheet, _ := f.GetRows("Comparison")
	if len(sheet) != 1+4*nEv || sheet[0][1] != "row_kind" || sheet[4*nEv][1] != "unit" {
		t.Errorf("xlsx: %d rows, header %v", len(sheet), sheet[0])
	}
	_, _, page := get(t, srv, q)
	for _, want := range []string{"Pulses and units × events", "Haldruna Flow (U7)", "onset / unit, ±\u00a0MC\u00a0SE", "Unit rows (code U", "P(event after the unit)",
		"does not apply: the unit&#39;s weighted mean is a point-like age", "Eruptive units (weighted means)", `id="how-U7-E5"`} {
		if !strings.Contains(page, want) {
			t.Errorf("page lacks %q", want)
		}
	}
	_, _, only := get(t, srv, "/compare?rows=units&units=7&n=2000&reps=200&draws=500&sens=0&format=csv&order=U7,E5")
	recs, _ = csv.NewReader(strings.NewReader(only)).ReadAll()
	if len(recs) != 1+nEv || slices.ContainsFunc(recs[1:], func(r []string) bool { return r[1] != "unit" }) {
		t.Errorf("rows=units: %d rows, want %d unit rows", len(recs)-1, nEv)
	}
	_, _, js = get(t, srv, "/compare?rows=units&units=7&n=2000&reps=200&draws=500&sens=0&format=json&order=U7,E5")
	if err := json.Unmarshal([]byte(js), &doc); err != nil || strings.Join(doc.Order.Items, ",") != "U7,E5" {
		t.Errorf("order=U7,E5: items %v (%v)", doc.Order.Items, err)
	}
	for path, want := range map[string]string{"/compare?rows=sideways": "rows:", "/compare?units=999&sens=0&n=1000": "units: there is no unit 999",
		"/compare?units=x": "units:", "/compare?order=U999&sens=0&n=1000": "order:"} {
		if status, _, body := get(t, srv, path); status != http.StatusBadRequest || !strings.Contains(body, want) {
			t.Errorf("%s: status %d, want 400 naming %q", path, status, want)
		}
	}
}

// The volume fraction is in the sensitivity analysis: each event's P(more than half the volume before
// it) is followed across the sets, and a flip is flagged. Constructed: unit A, ⁴⁰Ar/³⁹Ar (1000 km³), whose
// mean the calibration moves; unit B, U–Pb (900 km³), far younger than every event. More than half the
// volume is before an event exactly when A is older than it, so an event halfway between A's mean on the
// chosen calibration and on the calibration that moves it most is a majority conclusion under one and
// the opposite under the other (the means are about 1 Ma apart, A's full external σ about 0.15 Ma). An
// event far older than both is a conclusion ("most after") that survives every set.
func TestCompareVolumeFractionSensitivityFlags(t *testing.T) {
	db := mustDemoDB(t)
	c := &comparer{Server: &Server{store: db}, cache: newCompareCache(4)}
	ctx := context.Background()
	r := httptest.NewRequest(http.MethodGet, "/compare?rows=both&n=4000&reps=200&events=901,902", nil)
	p := newParams(r)
	ch, err := c.compareChoiceFrom(ctx, p)
	if err != nil || p.err() != nil {
		t.Fatal(err, p.err())
	}
	ch.EventIDs = nil // checked against the store; the events are set below
	d, err := c.loadCompareData(ctx, &ch)
	if err != nil {
		t.Fatal(err)
	}
	ptr := func(v float64) *float64 { return &v }
	a, b := int64(901), int64(902)
	d.Units = []store.Unit{{ID: a, ProvinceID: ch.ProvinceID, Name: "Argon Flow", Kind: "flow", VolumeKm3: ptr(1000)},
		{ID: b, ProvinceID: ch.ProvinceID, Name: "Zircon Sill", Kind: "sill", VolumeKm3: ptr(900)}}
	d.Dates = nil
	for i := range 2 {
		d.Dates = append(d.Dates,
			store.Date{ID: int64(9100 + i), UnitID: &a, Unit: "Argon Flow", SampleCode: fmt.Sprint("AR-", i), Method: "arar_plateau",
				Interpretation: "eruption", AgeMa: 154.0, SigmaMa: 0.03, SigmaLevel: 1, Monitor: "FCs", MonitorAgeMa: ptr(28.02), LambdaPerA: ptr(5.543e-10), ReviewState: "accepted"},
			store.Date{ID: int64(9200 + i), UnitID: &b, Unit: "Zircon Sill", SampleCode: fmt.Sprint("ZR-", i), Method: "upb_idtims",
				Interpretation: "eruption", AgeMa: 150.0, SigmaMa: 0.02, SigmaLevel: 1, Tracer: "ET2535", ReviewState: "accepted"})
	}
	a0 := recalculate(d.Dates[0], ch.Dens.Sum.Cal.Stats).AgeMa
	a1, alt := a0, ""
	for _, cal := range d.Cals {
		if x := recalculate(d.Dates[0], statsCalibration(cal)).AgeMa; math.Abs(x-a0) > math.Abs(a1-a0) {
			a1, alt = x, cal.Name
		}
	}
	ev := func(id int64, age float64) store.Event {
		sigma := 0.01
		return store.Event{ID: id, Name: fmt.Sprint("Event ", id), Kind: "other", AgeMa: &age, SigmaMa: &sigma, ReviewState: "accepted"}
	}
	d.Direct = []store.Event{ev(901, (a0+a1)/2), ev(902, 160)}
	ch.EventIDs = []int64{901, 902}
	res, err := computeComparison(context.Background(), d, ch, 0)
	if err != nil {
		t.Fatal(err)
	}
	if res.Sens == nil || res.SensVolume == nil || res.Volume == nil {
		t.Fatalf("no volume sensitivity (sens %v, volume %v)", res.Sens != nil, res.Volume != nil)
	}
	row := func(event string) *stats.SensitivityRow {
		for i := range res.Sens.Rows {
			if res.Sens.Rows[i].Name == sensVolumeName(event) {
				return &res.Sens.Rows[i]
			}
		}
		t.Fatalf("no sensitivity row for the volume fraction before %s among %d rows", event, len(res.Sens.Rows))
		return nil
	}
	flip := row("E901")
	t.Logf("A on %s %.3f Ma, on %s %.3f Ma; P(most before E901) per set %v; medians %v", ch.Dens.Sum.Cal.Cal.Code, a0, alt, a1, flip.P, res.SensVolume)
	if flip.Conclusion == 0 || flip.Survives || !strings.Contains(flip.Caution, "calibration "+alt) {
		t.Errorf("halfway event: conclusion %d, survives %v, caution %q; want a flip under calibration %s", flip.Conclusion, flip.Survives, flip.Caution, alt)
	}
	if hold := row("E902"); hold.Conclusion != -1 || !hold.Survives || hold.Caution != "" {
		t.Errorf("far older event: %+v, want P(most before) < 0.05 under every set", hold)
	}
	// Shown: the table's sensitivity cell (range of the median and ⚠), the shaded volume cell, the CSV.
	for _, cr := range compareRows(res) {
		text, caution, fails := sensText(cr, len(res.Sens.Sets))
		switch cr.Event.Code {
		case "E901":
			if !fails || !strings.Contains(text, "vol.\u00a00\u2060–\u206053\u00a0%") || !strings.Contains(caution, "most of the volume before the event: ") {
				t.Errorf("%s × E901: sensitivity %q (%q), fails %v", cr.Pulse, text, caution, fails)
			}
		case "E902":
			if !strings.Contains(text, "vol.\u00a00\u00a0%") || strings.Contains(caution, "volume") {
				t.Errorf("%s × E902: sensitivity %q (%q)", cr.Pulse, text, caution)
			}
		}
	}
	var b2 strings.Builder
	if err := writeCompareCSV(&b2, res); err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(strings.NewReader(b2.String())).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	col := func(name string) int { return slices.Index(recs[0], name) }
	for _, rec := range recs[1:] {
		if rec[col("event_code")] == "E901" && (!strings.Contains(rec[col("sens_caution")], "most of the volume before the event") ||
			rec[col("sens_volume_fraction_min")] != "0.000" || rec[col("sens_volume_fraction_max")] == "0.000") {
			t.Errorf("csv row %v", rec)
		}
	}
}

// An event with an extent is compared at a named point: its base (onset, the default), its peak or its top.
// Below is older (superposition, common practice): a detected anomaly's age at its base is older than at
// its peak, and that older than at its top; each download says which point its rows compare, and an
// entered event, which records no peak, says that it is compared at its base.
func TestCompareEventPoint(t *testing.T) {
	db := mustDemoDB(t)
	c := &comparer{Server: &Server{store: db}, cache: newCompareCache(4)}
	run := func(point string) *compareResult {
		t.Helper()
		return comparePath(t, c, "/compare?sens=0&n=2000&reps=100&draws=500&anomalies=1&point="+point)
	}
	ages := map[string]map[string]float64{}
	for _, point := range []string{"base", "peak", "top"} {
		res := run(point)
		for _, e := range res.In.Events {
			if ages[e.Code] == nil {
				ages[e.Code] = map[string]float64{}
			}
			ages[e.Code][point] = e.Summary.Median
			switch {
			case strings.HasPrefix(e.Code, "A") && e.Point != "height" && !strings.HasPrefix(e.Point, point):
				t.Errorf("point=%s: anomaly %s is compared at %q", point, e.Code, e.Point)
			case point == "peak" && strings.HasPrefix(e.Code, "E") && e.Point != "height" && !strings.Contains(e.Point, "no peak height is recorded"):
				t.Errorf("point=peak: entered event %s (%s) says %q, not that it records no peak", e.Code, e.Name, e.Point)
			}
		}
		for _, rec := range compareRecords(res, false) {
			if got := rec[len(rec)-1]; got == "" || got == "—" {
				t.Errorf("point=%s: a download row without its event point: %v", point, rec[:4])
			}
		}
	}
	n := 0
	for code, a := range ages {
		if !strings.HasPrefix(code, "A") || a["base"] == a["top"] {
			continue
		}
		n++
		if !(a["base"] >= a["peak"] && a["peak"] >= a["top"] && a["base"] > a["top"]) {
			t.Errorf("anomaly %s: median ages base %.4f, peak %.4f, top %.4f Ma: want older below", code, a["base"], a["peak"], a["top"])
		}
	}
	if n == 0 {
		t.Fatal("no detected anomaly with an extent in the demo")
	}
}

// comparePath runs a comparison address through the page's own path: choices, data, computation.
func comparePath(t *testing.T, c *comparer, address string) *compareResult {
	t.Helper()
	_, res := comparePathData(t, c, address)
	return res
}

// comparePathData is comparePath that also returns the data the comparison was computed from.
func comparePathData(t *testing.T, c *comparer, address string) (*compareData, *compareResult) {
	t.Helper()
	d, ch := compareLoad(t, c, address)
	res, err := computeComparison(context.Background(), d, ch, 0)
	if err != nil {
		t.Fatal(err)
	}
	return d, res
}

// Too many events are refused before anything is computed: the count comes from the data as read (here 61
// direct ages), so the answer names the limit without a density, a bootstrap or an age model behind it.
func TestCompareEventLimitCheckedFirst(t *testing.T) {
	db := mustDemoDB(t)
	c := &comparer{Server: &Server{store: db}, cache: newCompareCache(4)}
	d, ch := compareLoad(t, c, "/compare?sens=0")
	for i := range maxCompareEvents + 1 - analysis.EventsAtLeast(d, ch.options()) {
		age, sigma := 155.0+0.01*float64(i), 0.05
		d.Direct = append(d.Direct, store.Event{ID: int64(90000 + i), Name: fmt.Sprint("direct ", i), Kind: "other", AgeMa: &age, SigmaMa: &sigma})
	}
	computed := false
	_, err := computeComparison(askedCtx{Context: context.Background(), asked: &computed}, d, ch, 0)
	var br badRequest
	if !errors.As(err, &br) || !strings.Contains(strings.Join(br.problems, " "), fmt.Sprintf("at least %d events chosen, at most %d", maxCompareEvents+1, maxCompareEvents)) {
		t.Fatalf("61 events: %v, want a 400 naming the limit", err)
	}
	if computed {
		t.Error("the comparison started computing before it refused too many events")
	}
}

// askedCtx records that a computation asked whether its request ended: it had started computing.
type askedCtx struct {
	context.Context
	asked *bool
}

func (c askedCtx) Err() error { *c.asked = true; return c.Context.Err() }

// A comparison is cached by what it read: an edit to a section it does not read leaves it in the cache
// (served without computing again), an edit to one it reads computes anew; and identical requests in
// flight together are computed once.
func TestCompareCacheByDataReadAndComputedOnce(t *testing.T) {
	db := mustDemoDB(t)
	ctx := context.Background()
	secs, err := db.Sections(ctx)
	if err != nil || len(secs) < 2 {
		t.Fatal(err, len(secs))
	}
	c := &comparer{Server: &Server{store: db}, cache: newCompareCache(8)}
	get := func(q string) bool {
		t.Helper()
		_, cached, err := c.comparison(httptest.NewRequest(http.MethodGet, q, nil))
		if err != nil {
			t.Fatal(err)
		}
		return cached
	}
	only := fmt.Sprintf("/compare?sens=0&n=1000&reps=100&draws=200&sections=%d", secs[0].ID)
	if get(only) {
		t.Fatal("the first request was served from the cache")
	}
	// An edit to another section: the data this comparison reads are unchanged.
	other := secs[1]
	form := store.FormOfSection(other)
	form["notes"] = "edited elsewhere"
	if _, err := db.UpdateSection(ctx, other.ID, other.Version, form); err != nil {
		t.Fatal(err)
	}
	if !get(only) {
		t.Error("an edit to a section the comparison does not read threw its cached result away")
	}
	// An edit to the section it reads: computed anew.
	mine := secs[0]
	form = store.FormOfSection(mine)
	form["notes"] = "edited here"
	if _, err := db.UpdateSection(ctx, mine.ID, mine.Version, form); err != nil {
		t.Fatal(err)
	}
	if get(only) {
		t.Error("an edit to the section the comparison reads was served from the cache")
	}
	// Identical requests together: one computes, the others wait for it.
	c = &comparer{Server: &Server{store: db}, cache: newCompareCache(8)}
	var wg sync.WaitGroup
	var mu sync.Mutex
	computed := 0
	for range 4 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			_, cached, err := c.comparison(httptest.NewRequest(http.MethodGet, only+"&seed=7", nil))
			if err != nil {
				t.Error(err)
			}
			mu.Lock()
			if !cached {
				computed++
			}
			mu.Unlock()
		}()
	}
	wg.Wait()
	if computed != 1 {
		t.Errorf("4 identical requests together were computed %d times, want once", computed)
	}
}

// compareLoad reads a comparison address's choices and data, as the page does, without computing.
func compareLoad(t *testing.T, c *comparer, address string) (*compareData, compareChoice) {
	t.Helper()
	ctx := context.Background()
	p := newParams(httptest.NewRequest(http.MethodGet, address, nil))
	ch, err := c.compareChoiceFrom(ctx, p)
	if err != nil || p.err() != nil {
		t.Fatal(err, p.err())
	}
	d, err := c.loadCompareData(ctx, &ch)
	if err != nil {
		t.Fatal(err)
	}
	return d, ch
}

// eventsWithinTies counts the accepted events whose base and top lie within their section's tie points
// (lowest to highest), from the stored records: the events a comparison with default choices dates.
func eventsWithinTies(t *testing.T, db *store.DB, province int64) int {
	t.Helper()
	ctx := context.Background()
	secs, err := db.Sections(ctx)
	if err != nil {
		t.Fatal(err)
	}
	ds, _, err := db.Dates(ctx, store.DateFilter{ProvinceID: province})
	if err != nil {
		t.Fatal(err)
	}
	young, old := math.Inf(1), math.Inf(-1)
	for _, d := range ds {
		young, old = math.Min(young, d.AgeMa), math.Max(old, d.AgeMa)
	}
	// With no section chosen, the sections compared are those with a tie point within 5 Ma of the
	// province's dates.
	near := func(ties []store.TiePoint) bool {
		for _, tp := range ties {
			if tp.AgeMa != nil && *tp.AgeMa >= young-5 && *tp.AgeMa <= old+5 {
				return true
			}
		}
		return false
	}
	n := 0
	for _, sec := range secs {
		ties, err := db.TiePoints(ctx, sec.ID)
		if err != nil || len(ties) < 2 || !near(ties) {
			continue
		}
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, tp := range ties {
			if tp.ReviewState == store.ReviewAccepted {
				lo, hi = math.Min(lo, tp.HeightM), math.Max(hi, tp.HeightM)
			}
		}
		evs, _ := db.Events(ctx, sec.ID)
		for _, ev := range evs {
			if ev.ReviewState != store.ReviewAccepted || ev.BaseHeightM == nil {
				continue
			}
			top := *ev.BaseHeightM
			if ev.TopHeightM != nil {
				top = *ev.TopHeightM
			}
			if *ev.BaseHeightM >= lo && top <= hi {
				n++
			}
		}
	}
	if n == 0 {
		t.Fatal("no demo event lies within its section's tie points")
	}
	return n
}
