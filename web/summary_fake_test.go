package web

import (
	"context"
	"encoding/csv"
	"errors"
	"fmt"
	"math"
	"net/http"
	"net/http/httptest"
	"strconv"
	"strings"
	"testing"

	"github.com/go-chi/chi/v5"

	"coeval/store"
)

// fakeSummaryStore is a summaryStore of one province ("Testland", id 1) with one unit (id 1) holding
// the dates given, and one calibration. Nothing else is needed to serve the summary downloads.
type fakeSummaryStore struct{ dates []store.Date }

func (f fakeSummaryStore) ProvinceDates(_ context.Context, id int64) (store.ProvinceDates, error) {
	if id != 1 {
		return store.ProvinceDates{}, fmt.Errorf("province %d: %w", id, store.ErrNotFound)
	}
	return store.ProvinceDates{Province: store.Province{ID: 1, Name: "Testland"},
		Units: []store.Unit{{ID: 1, ProvinceID: 1, Province: "Testland", Name: "Flow A"}}, Dates: f.dates}, nil
}

func (f fakeSummaryStore) UnitDates(_ context.Context, id int64) (store.UnitDates, error) {
	if id != 1 {
		return store.UnitDates{}, fmt.Errorf("unit %d: %w", id, store.ErrNotFound)
	}
	return store.UnitDates{Unit: store.Unit{ID: 1, ProvinceID: 1, Province: "Testland", Name: "Flow A"}, Dates: f.dates}, nil
}

func (fakeSummaryStore) Calibrations(context.Context) ([]store.Calibration, error) {
	return []store.Calibration{{Code: "k08", Name: "Kuiper et al. 2008", LambdaPerA: 5.463e-10, MonitorAgeMa: 28.201, IsTarget: true}}, nil
}

// The summary downloads translate the address into choices and the summary into rows; where the data
// come from is not their business, so a fake store of Check A's dates (REFERENCES §1 [C], 2σ inputs
// halved to 1σ) and one pending date (Check B's eighth) serves. The real-database path is covered by
// TestSummaryTimelineGolden and the analysis package's tests.
func TestSummaryDownloadWithAFakeStore(t *testing.T) {
	one := int64(1)
	var ds []store.Date
	for i, d := range []struct{ age, sigma2 float64 }{{201.512, 0.046}, {201.558, 0.040}, {201.530, 0.060}, {201.601, 0.050},
		{201.489, 0.070}, {201.566, 0.036}, {201.545, 0.044}, {201.700, 0.040}} {
		state := store.ReviewAccepted
		if i == 7 {
			state = store.ReviewPending
		}
		ds = append(ds, store.Date{ID: int64(i + 1), UnitID: &one, SampleCode: fmt.Sprintf("S%d", i+1), Method: "upb_idtims",
			AgeMa: d.age, SigmaMa: d.sigma2 / 2, ReviewState: state})
	}
	d := summaryDownload{fakeSummaryStore{dates: ds}}
	var served error
	router := chi.NewRouter()
	router.Get("/provinces/{id}/summary", func(w http.ResponseWriter, r *http.Request) { served = d.province(w, r) })
	router.Get("/units/{id}/summary", func(w http.ResponseWriter, r *http.Request) { served = d.unit(w, r) })
	get := func(path string) map[string]string {
		t.Helper()
		rec := httptest.NewRecorder()
		router.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, path, nil))
		if served != nil {
			return map[string]string{"error": served.Error()}
		}
		rows, err := csv.NewReader(strings.NewReader(rec.Body.String())).ReadAll()
		if err != nil || len(rows) != 2 {
			t.Fatalf("%s: %d rows, %v: %s", path, len(rows), err, rec.Body.String())
		}
		out := map[string]string{}
		for i, c := range rows[0] {
			out[c] = rows[1][i]
		}
		return out
	}
	num := func(row map[string]string, col string, want, tol float64) {
		t.Helper()
		v, err := strconv.ParseFloat(row[col], 64)
		if err != nil || math.Abs(v-want) > tol {
			t.Errorf("%s = %q, want %g ± %g", col, row[col], want, tol)
		}
	}
	for _, path := range []string{"/provinces/1/summary?level=analytical&policy=never", "/units/1/summary?level=analytical&policy=never&format=csv"} {
		row := get(path)
		num(row, "n", 7, 0) // the pending date stays out by default
		num(row, "mean_ma", 201.549755197, 1e-6)
		num(row, "sigma_ma", 0.017493902, 1e-6) // 2σ, the default σ level
		num(row, "mswd", 1.895711, 1e-5)
		num(row, "p", 0.077475, 1e-6)
		if row["calibration"] != "k08" || row["include"] != "accepted" || row["policy"] != "never" {
			t.Errorf("%s: the row does not carry its choices: %v", path, row)
		}
	}
	row := get("/provinces/1/summary?level=analytical&policy=never&include=pending&sigma=1")
	num(row, "n", 8, 0)
	num(row, "mean_ma", 201.573879, 1e-6) // Check B
	num(row, "mswd", 8.392417, 1e-5)

	get("/provinces/1/summary?include=maybe&format=xml")
	var br badRequest
	if !errors.As(served, &br) || len(br.problems) != 2 || !strings.HasPrefix(br.problems[0], "format:") || !strings.HasPrefix(br.problems[1], "include:") {
		t.Errorf("bad choices: %#v, want a 400 naming format and include", served)
	}
	get("/units/2/summary")
	if !errors.Is(served, store.ErrNotFound) {
		t.Errorf("unknown unit: %v, want store.ErrNotFound (a 404)", served)
	}
}
