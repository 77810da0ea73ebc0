package web

import (
	"encoding/csv"
	"encoding/json"
	"math"
	"strconv"
	"strings"
	"testing"
)

// The SE in the downloads counts the draws the inputs are given by, not only N: with N = 10,000 joint
// draws resampling 100 bootstrap replicates of the pulses, every pulse row's SE is at least
// sqrt(P(1 − P)(1/N + 1/100)) (a pulse's edges exist in at most 100 replicates), about 10 times the
// binomial sqrt(P(1 − P)/N) the downloads used to give; and the CSV gives the JSON's SE to two significant digits.
func TestCompareDownloadSECountsTheInputDraws(t *testing.T) {
	srv, _ := mustServer(t)
	const n, reps = 10000, 100 // the defaults and below: open to visitors
	q := "/compare?sens=0&n=" + strconv.Itoa(n) + "&reps=" + strconv.Itoa(reps) + "&draws=200"
	_, _, body := get(t, srv, q+"&format=csv")
	recs, err := csv.NewReader(strings.NewReader(body)).ReadAll()
	if err != nil || len(recs) < 2 {
		t.Fatalf("%d records, %v", len(recs), err)
	}
	col := map[string]int{}
	for i, h := range recs[0] {
		col[h] = i
	}
	_, _, js := get(t, srv, q+"&format=json")
	var doc struct {
		Rows []map[string]string `json:"rows"`
	}
	if err := json.Unmarshal([]byte(js), &doc); err != nil || len(doc.Rows) != len(recs)-1 {
		t.Fatalf("JSON rows %d, CSV rows %d, %v", len(doc.Rows), len(recs)-1, err)
	}
	// The floor is checked on the JSON, which keeps every digit (the CSV rounds, below).
	num := func(r map[string]string, name string) float64 {
		v, err := strconv.ParseFloat(r[name], 64)
		if err != nil {
			t.Fatalf("%s = %q: %v", name, r[name], err)
		}
		return v
	}
	checked := 0
	for _, r := range doc.Rows {
		for _, name := range []string{"p_after_onset", "p_within"} {
			p, se := num(r, name), num(r, name+"_se")
			if p == 0 || p == 1 {
				continue
			}
			if floor := math.Sqrt(p * (1 - p) * (1./n + 1./reps)); se < floor*(1-1e-12) {
				t.Errorf("%s × %s: %s %g ± %g, want SE ≥ %g (1/N + 1/replicates)", r["pulse"], r["event_code"], name, p, se, floor)
			}
			checked++
		}
	}
	if checked < 10 {
		t.Fatalf("only %d probabilities strictly between 0 and 1 checked", checked)
	}
	// The page's account of each row says how many effective draws its SE rests on.
	if _, _, page := get(t, srv, q); !strings.Contains(page, "effective draws of the N = 10000 joint draws: 1/Neff = 1/N + 1/M") {
		t.Error("the page's account of a row does not say how its SE is made")
	}
	for i, row := range doc.Rows {
		for _, name := range []string{"p_after_onset_se", "p_within_se", "p_near_se", "p_volume_majority_se"} {
			// The CSV's SE is the JSON's to two significant digits.
			v, c := row[name], recs[i+1][col[name]]
			x, err := strconv.ParseFloat(v, 64)
			if v == "" || err != nil {
				if c != v {
					t.Errorf("row %d: JSON %s %q, CSV %q", i, name, v, c)
				}
				continue
			}
			if d := probDecimals(x); d >= 0 && c != strconv.FormatFloat(x, 'f', d, 64) || d < 0 && c != v {
				t.Errorf("row %d: JSON %s %q, CSV %q", i, name, v, c)
			}
		}
	}
}
