package web

import (
	"encoding/csv"
	"encoding/json"
	"math"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"

	"coeval/stats"
)

// The decimals of a probability follow its Monte Carlo SE: the SE to two significant digits, the
// probability to the same decimals. Hand values: SE 0.0016841 has its first significant digit in the
// third decimal (0.001 ≤ SE < 0.01), so two digits need four decimals: 0.9985 ± 0.0017.
func TestProbDecimals(t *testing.T) {
	for _, c := range []struct {
		se   float64
		want int
	}{
		{0.0016841112949612914, 4}, // 0.0017
		{0.005378811764693016, 4},  // 0.0054
		{0.001, 4},                 // 0.0010
		{0.0099, 4},                // 0.0099
		{0.012, 3},                 // 0.012
		{0.1, 2},                   // 0.10
		{0.00004, 6},               // 0.000040
		{0, -1},                    // P exactly 0 or 1: written as it is, with its bound
		{math.NaN(), -1},
	} {
		if got := probDecimals(c.se); got != c.want {
			t.Errorf("probDecimals(%g) = %d, want %d", c.se, got, c.want)
		}
	}
	// A whole row of cells: the value, its SE to two significant digits, no bound.
	if got := probCells(stats.Probability{P: 0.99847, SE: 0.0016841}, 10000, false); !slices.Equal(got, []string{"0.9985", "0.0017", ""}) {
		t.Errorf("probCells = %v", got)
	}
	// P = 1 from N = 10000 draws: the number kept, the bound 1 − 3/N beside it (the page's "> 0.9997").
	if got := probCells(stats.Probability{P: 1, SE: 0}, 10000, false); !slices.Equal(got, []string{"1", "0", ">0.9997"}) {
		t.Errorf("probCells(1) = %v", got)
	}
	if got := probCells(stats.Probability{P: 0, SE: 0}, 2000, false); !slices.Equal(got, []string{"0", "0", "<0.0015"}) {
		t.Errorf("probCells(0) = %v", got)
	}
	// Ages: 0.001 Ma, more when the 95 % interval is narrower than 0.01 Ma (width 0.0042: 0.0042 needs 4).
	for _, c := range []struct {
		lo, hi float64
		want   int
	}{{155.1, 155.3, 3}, {155.1, 155.1042, 4}, {1, 1, 3}, {1, 1.0000001, 6}} {
		if got := ageDecimals(c.lo, c.hi); got != c.want {
			t.Errorf("ageDecimals(%g, %g) = %d, want %d", c.lo, c.hi, got, c.want)
		}
	}
}

// The column dictionary of each download lists exactly the columns its file has, in the file's order.
func TestDownloadDictionary(t *testing.T) {
	srv, _ := mustServer(t)
	code := regexp.MustCompile(`<td class="code"[^>]*>\s*([^<]*?)\s*</td>`)
	for _, c := range []struct{ kind, file string }{
		{"comparison", "/compare?format=csv&rows=both&sens=0&n=2000&reps=200&draws=500"},
		{"timeline-pulses", "/provinces/1/timeline?format=csv&table=pulses&reps=200"},
		{"compilation", "/compilation?format=csv"},
		{"unit-summaries", "/provinces/1/summary?format=csv"},
		{"section-age-model", "/sections/1/agemodel?format=csv&draws=200"},
		{"section-anomalies", "/sections/1/anomalies?format=csv&draws=200"},
		{"section-ratios", "/sections/1/ratios?format=csv&draws=200"},
		{"sections-aligned", "/sections/aligned?format=csv&draws=200"},
		{"map-places", "/map?format=csv"},
	} {
		status, _, page := get(t, srv, "/help/downloads/"+c.kind)
		if status != 200 {
			t.Fatalf("%s: status %d", c.kind, status)
		}
		var listed []string
		for _, m := range code.FindAllStringSubmatch(tableOf(page, "columns"), -1) {
			listed = append(listed, m[1])
		}
		_, _, body := get(t, srv, c.file)
		recs, err := csv.NewReader(strings.NewReader(body)).ReadAll()
		if err != nil || len(recs) < 2 {
			t.Fatalf("%s: %v (%d rows)", c.file, err, len(recs))
		}
		if !slices.Equal(listed, recs[0]) {
			t.Errorf("%s: the page lists\n%v\nthe file has\n%v", c.kind, listed, recs[0])
		}
		if _, _, help := get(t, srv, "/help"); !strings.Contains(help, `href="/help/downloads/`+c.kind+`"`) {
			t.Errorf("the help page does not link the %s dictionary", c.kind)
		}
	}
	// The workbook's sheet "Which came first": the dictionary's second table lists its header, and the
	// JSON's pairs carry the same columns.
	_, _, page := get(t, srv, "/help/downloads/comparison")
	var listed []string
	for _, m := range code.FindAllStringSubmatch(tableOf(page, "columns-precedence"), -1) {
		listed = append(listed, m[1])
	}
	_, _, x := get(t, srv, "/compare?format=xlsx&sens=0&n=2000&reps=200&draws=500")
	f, err := excelize.OpenReader(strings.NewReader(x))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sheet, err := f.GetRows(precedenceSheet)
	if err != nil || len(sheet) < 2 || !slices.Equal(sheet[0], listed) {
		t.Errorf("sheet %q: %v; its header %v, the dictionary lists %v", precedenceSheet, err, sheet[:min(1, len(sheet))], listed)
	}
	// The coincidence test's dictionary lists its three files' columns, one after the other.
	_, _, page = get(t, srv, "/help/downloads/coincidence")
	listed = nil
	for _, m := range code.FindAllStringSubmatch(page, -1) {
		listed = append(listed, m[1])
	}
	var files []string
	for _, table := range []string{"result", "events", "onsets"} {
		_, _, body := get(t, srv, "/coincidence?format=csv&replicates=99&reps=100&draws=100&table="+table)
		recs, err := csv.NewReader(strings.NewReader(body)).ReadAll()
		if err != nil || len(recs) < 2 {
			t.Fatalf("coincidence %s: %v (%d rows)", table, err, len(recs))
		}
		files = append(files, recs[0]...)
	}
	if !slices.Equal(listed, files) {
		t.Errorf("coincidence: the page lists\n%v\nthe files have\n%v", listed, files)
	}
	// Without unit rows the comparison's file is the dictionary less the unit columns.
	_, _, body := get(t, srv, "/compare?format=csv&sens=0&n=2000&reps=200&draws=500")
	recs, _ := csv.NewReader(strings.NewReader(body)).ReadAll()
	if !slices.Equal(recs[0], columnNames(compareColumnDefs)) {
		t.Errorf("default comparison header %v", recs[0])
	}
	if status, _, _ := get(t, srv, "/help/downloads/nothing"); status != 404 {
		t.Errorf("unknown download kind: status %d, want 404", status)
	}
}

// The ages in the comparison's CSV are those the other pages give: each pulse's onset, end and mode
// those of the timeline's JSON (same density choices), each event's age that of its section's JSON,
// to the digits the CSV writes. The three pages are asked with the same choices: replicates and draws,
// the density of analytical unit means and the ties at their analytical level (the comparison draws the
// systematic components itself, once per joint draw). Events read at one height are checked: for an
// event with an extent the section gives the age of the whole event, the comparison that of the point
// compared (event_point).
func TestCompareDownloadAges(t *testing.T) {
	srv, _ := mustServer(t)
	_, _, body := get(t, srv, "/compare?format=csv&sens=0&reps=200&draws=500")
	recs, err := csv.NewReader(strings.NewReader(body)).ReadAll()
	if err != nil || len(recs) < 2 {
		t.Fatalf("%v (%d rows)", err, len(recs))
	}
	hdr := recs[0]
	num := func(r []string, col string) float64 {
		t.Helper()
		i := slices.Index(hdr, col)
		x, err := strconv.ParseFloat(r[i], 64)
		if err != nil {
			t.Fatalf("column %s: %q: %v", col, r[i], err)
		}
		return x
	}
	var tl struct {
		Pulses []struct {
			Pulse  string             `json:"pulse"`
			ModeMa float64            `json:"mode_ma"`
			Start  stats.AgeQuantiles `json:"start_quantiles"`
			End    stats.AgeQuantiles `json:"end_quantiles"`
		} `json:"pulses"`
	}
	_, _, tj := get(t, srv, "/provinces/1/timeline?format=json&reps=200&level=analytical")
	if err := json.Unmarshal([]byte(tj), &tl); err != nil {
		t.Fatal(err)
	}
	var secs struct {
		Items []struct {
			ID   int64  `json:"id"`
			Name string `json:"name"`
		} `json:"items"`
	}
	_, _, sj := get(t, srv, "/sections?format=json")
	if err := json.Unmarshal([]byte(sj), &secs); err != nil {
		t.Fatal(err)
	}
	type ageJSON struct {
		Name   string  `json:"name"`
		Median float64 `json:"age_median_ma"`
		Lo95   float64 `json:"age_lo95_ma"`
		Hi95   float64 `json:"age_hi95_ma"`
	}
	sectionAges := map[string][]ageJSON{}
	for _, s := range secs.Items {
		var doc struct {
			Model struct {
				Events []ageJSON `json:"event_ages"`
			} `json:"age_model"`
		}
		_, _, b := get(t, srv, "/sections/"+strconv.FormatInt(s.ID, 10)+"?format=json&draws=500&tie_level=analytical")
		if err := json.Unmarshal([]byte(b), &doc); err != nil {
			t.Fatal(err)
		}
		sectionAges[s.Name] = doc.Model.Events
	}
	// half a unit of the last decimal written, and a little for the decimal → binary → decimal trip
	near := func(got, want float64) bool { return math.Abs(got-want) <= 0.0005+1e-9 }
	pulses, events := 0, 0
	for _, r := range recs[1:] {
		row := func(col string) string { return r[slices.Index(hdr, col)] }
		for _, p := range tl.Pulses {
			if p.Pulse != row("pulse") {
				continue
			}
			pulses++
			for col, want := range map[string]float64{"pulse_mode_ma": p.ModeMa,
				"pulse_onset_median_ma": p.Start.MedianMa, "pulse_onset_lo95_ma": p.Start.LowerMa, "pulse_onset_hi95_ma": p.Start.UpperMa,
				"pulse_end_median_ma": p.End.MedianMa, "pulse_end_lo95_ma": p.End.LowerMa, "pulse_end_hi95_ma": p.End.UpperMa} {
				if got := num(r, col); !near(got, want) {
					t.Errorf("%s × %s: %s = %v, the timeline says %v", row("pulse"), row("event"), col, got, want)
				}
			}
		}
		for _, e := range sectionAges[row("section")] {
			if e.Name != row("event") || row("event_point") != "height" {
				continue
			}
			events++
			for col, want := range map[string]float64{"event_age_median_ma": e.Median, "event_age_lo95_ma": e.Lo95, "event_age_hi95_ma": e.Hi95} {
				if got := num(r, col); !near(got, want) {
					t.Errorf("%s × %s (%s): %s = %v, the section says %v", row("pulse"), row("event"), row("section"), col, got, want)
				}
			}
		}
	}
	if pulses < 2 || events < 2 {
		t.Errorf("only %d rows matched a timeline pulse and %d a section's event", pulses, events)
	}
}

// tableOf is the HTML of the table with the id, "" when there is none.
func tableOf(page, id string) string {
	i := strings.Index(page, `<table id="`+id+`"`)
	if i < 0 {
		return ""
	}
	j := strings.Index(page[i:], "</table>")
	if j < 0 {
		return page[i:]
	}
	return page[i : i+j]
}
