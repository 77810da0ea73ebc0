package web

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"math"
	"net/http"
	"strings"
	"testing"
)

// coincidenceCheap keeps the test's pages quick: fewer bootstrap replicates, age-model draws and test
// replicates than the defaults.
const coincidenceCheap = "reps=100&draws=500&n=999"

type coincidenceDownload struct {
	Answer string `json:"answer"`
	Result struct {
		StatisticMa   *float64 `json:"statistic_ma"`
		P             *float64 `json:"p"`
		AtMost        *int     `json:"at_most"`
		Replicates    int      `json:"replicates"`
		Seed          uint64   `json:"seed"`
		Null          string   `json:"null"`
		WindowOldMa   float64  `json:"window_old_ma"`
		WindowYoungMa float64  `json:"window_young_ma"`
		Events        int      `json:"events"`
		Onsets        int      `json:"onsets"`
		OnsetDraws    string   `json:"onset_draws"`
	} `json:"result"`
	Cautions []string `json:"cautions"`
	Events   []struct {
		Code       string   `json:"code"`
		AgeMa      float64  `json:"age_ma"`
		Pulse      string   `json:"nearest_pulse"`
		OnsetMa    *float64 `json:"onset_ma"`
		DistanceMa *float64 `json:"distance_ma"`
	} `json:"events"`
	Outside []struct {
		Code  string  `json:"code"`
		AgeMa float64 `json:"age_ma"`
	} `json:"events_outside_window"`
	Onsets []struct {
		Province string  `json:"province"`
		Pulse    string  `json:"pulse"`
		OnsetMa  float64 `json:"onset_ma"`
	} `json:"onsets"`
}

func getCoincidence(t *testing.T, path string) coincidenceDownload {
	t.Helper()
	srv, _ := mustServer(t)
	status, _, body := get(t, srv, path)
	if status != http.StatusOK {
		t.Fatalf("%s: status %d: %.400s", path, status, body)
	}
	var d coincidenceDownload
	if err := json.Unmarshal([]byte(body), &d); err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	return d
}

// The onsets are the timeline's pulses' older edges (start_ma) for the same density choices, with the
// unit means at the analytical level as in the comparison; the statistic is the mean of the events'
// distances, each recomputed here from the event's age and the listed onsets; p = (1 + k)/(1 + N).
func TestCoincidenceNumbersFromTheirOwnInputs(t *testing.T) {
	d := getCoincidence(t, "/coincidence?format=json&"+coincidenceCheap)
	srv, db := mustServer(t)
	// Every province's timeline (the demo is a compilation): its pulses' onsets by province and pulse.
	starts := map[string]float64{}
	provs, err := db.Provinces(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	for _, pv := range provs {
		_, _, tl := get(t, srv, idURL("/provinces", pv.ID)+"/timeline?format=json&reps=100&level=analytical")
		var timeline struct {
			Pulses []struct {
				Pulse   string  `json:"pulse"`
				StartMa float64 `json:"start_ma"`
			} `json:"pulses"`
		}
		if err := json.Unmarshal([]byte(tl), &timeline); err != nil {
			t.Fatal(err)
		}
		for _, p := range timeline.Pulses {
			starts[pv.Name+" "+p.Pulse] = p.StartMa
		}
	}
	if len(d.Onsets) == 0 || len(d.Onsets) != len(starts) {
		t.Fatalf("%d onsets, the timelines have %d pulses", len(d.Onsets), len(starts))
	}
	for i, o := range d.Onsets {
		if st, ok := starts[o.Province+" "+o.Pulse]; !ok || o.OnsetMa != st {
			t.Errorf("onset %d: %s %s at %v, its timeline's pulse starts at %v (found %v)", i, o.Province, o.Pulse, o.OnsetMa, st, ok)
		}
	}
	if d.Result.StatisticMa == nil || d.Result.P == nil || d.Result.AtMost == nil {
		t.Fatalf("no result: %+v (%s)", d.Result, d.Answer)
	}
	if d.Result.Events != len(d.Events) || d.Result.Events < 5 || d.Result.Replicates != 999 || d.Result.Null != "events" {
		t.Errorf("result %+v with %d events listed, want ≥ 5 events, 999 replicates, null events", d.Result, len(d.Events))
	}
	sum := 0.0
	for _, e := range d.Events {
		best, pulse := math.Inf(1), ""
		for _, o := range d.Onsets {
			if x := math.Abs(e.AgeMa - o.OnsetMa); x < best {
				best, pulse = x, o.Pulse
			}
		}
		if e.DistanceMa == nil || math.Abs(*e.DistanceMa-best) > 1e-12 || e.Pulse != pulse {
			t.Errorf("%s: nearest %s at %v, want %s at %v", e.Code, e.Pulse, e.DistanceMa, pulse, best)
		}
		if e.AgeMa > d.Result.WindowOldMa || e.AgeMa < d.Result.WindowYoungMa {
			t.Errorf("%s at %v Ma lies outside the window %v–%v", e.Code, e.AgeMa, d.Result.WindowOldMa, d.Result.WindowYoungMa)
		}
		sum += best
	}
	if got, want := *d.Result.StatisticMa, sum/float64(len(d.Events)); math.Abs(got-want) > 1e-12 {
		t.Errorf("statistic %v, want the mean distance %v", got, want)
	}
	if got, want := *d.Result.P, float64(1+*d.Result.AtMost)/1000; got != want {
		t.Errorf("p = %v, want (1 + %d)/1000", got, *d.Result.AtMost)
	}
	// The demo's events come several to a section: the page says they are not independent.
	if !strings.Contains(strings.Join(d.Cautions, " "), "not independent") {
		t.Errorf("cautions %v lack the independence caution", d.Cautions)
	}
}

// A chosen window keeps what lies in it and lists the events it leaves out; the seed reproduces the
// result and the null is the one chosen.
func TestCoincidenceChosenWindow(t *testing.T) {
	all := getCoincidence(t, "/coincidence?format=json&"+coincidenceCheap)
	d := getCoincidence(t, "/coincidence?format=json&null=pulses&from=155&to=156.5&"+coincidenceCheap)
	if d.Result.WindowOldMa != 156.5 || d.Result.WindowYoungMa != 155 || d.Result.Null != "pulses" {
		t.Errorf("window %v–%v null %s, want 156.5–155 pulses", d.Result.WindowOldMa, d.Result.WindowYoungMa, d.Result.Null)
	}
	if len(d.Events)+len(d.Outside) != len(all.Events) || len(d.Outside) == 0 {
		t.Errorf("%d in and %d outside, want the %d events split with some outside", len(d.Events), len(d.Outside), len(all.Events))
	}
	for _, e := range d.Outside {
		if e.AgeMa >= 155 && e.AgeMa <= 156.5 {
			t.Errorf("%s at %v Ma is in the window but left out", e.Code, e.AgeMa)
		}
	}
	again := getCoincidence(t, "/coincidence?format=json&null=pulses&from=155&to=156.5&"+coincidenceCheap)
	if *again.Result.P != *d.Result.P || *again.Result.AtMost != *d.Result.AtMost {
		t.Errorf("same seed, p %v then %v", *d.Result.P, *again.Result.P)
	}
}

func TestCoincidencePageAndBadChoices(t *testing.T) {
	srv, _ := mustServer(t)
	status, _, page := get(t, srv, "/coincidence?"+coincidenceCheap)
	if status != http.StatusOK {
		t.Fatalf("status %d", status)
	}
	for _, w := range []string{"than chance would place them", "p-value", "(1 + ", "Read the p-value with these in mind",
		"window decides the answer", "not independent", "events placed at random", "Replicates", "Pulse onsets in the window",
		"The ages rest on", "smoothing width: automatic: from the shape of the data (Botev et al. 2010)"} {
		if !strings.Contains(page, w) {
			t.Errorf("page lacks %q", w)
		}
	}
	// The answer comes first: the sentence before the numbers.
	if strings.Index(page, "than chance would place them") > strings.Index(page, "p-value") {
		t.Error("the sentence does not come before the numbers")
	}
	_, _, cmp := get(t, srv, "/compare?sens=0&n=1000&reps=100")
	if !strings.Contains(cmp, `href="/coincidence"`) {
		t.Error("the comparison page does not link to the coincidence test")
	}
	for q, want := range map[string]string{"null=both": "null:", "from=150": "from:", "n=5": "n:", "ages=all": "ages:", "onsets=some": "onsets:", "table=x&format=csv": "table:"} {
		status, _, body := get(t, srv, "/coincidence?"+q)
		if status != http.StatusBadRequest || !strings.Contains(body, want) {
			t.Errorf("%s: status %d, want 400 naming %q", q, status, want)
		}
	}
	for table, header := range map[string]string{"result": "statistic_ma", "events": "distance_ma", "onsets": "onset_ma"} {
		res, err := http.Get(srv.URL + "/coincidence?format=csv&table=" + table + "&" + coincidenceCheap)
		if err != nil {
			t.Fatal(err)
		}
		recs, err := csv.NewReader(res.Body).ReadAll()
		res.Body.Close()
		if err != nil || len(recs) < 2 || !strings.Contains(strings.Join(recs[0], ","), header) {
			t.Errorf("table=%s: %v %v, want a header with %s and rows", table, recs, err, header)
		}
	}
}

// With the onsets drawn from each province's bootstrap the result says so, keeps the statistic of the
// reference onsets (the same as without), and is reproduced by its seed.
func TestCoincidenceDrawnOnsets(t *testing.T) {
	ref := getCoincidence(t, "/coincidence?format=json&"+coincidenceCheap)
	d := getCoincidence(t, "/coincidence?format=json&onsets=drawn&"+coincidenceCheap)
	if d.Result.OnsetDraws != "drawn" || ref.Result.OnsetDraws != "reference" {
		t.Errorf("onset_draws %q and %q, want drawn and reference", d.Result.OnsetDraws, ref.Result.OnsetDraws)
	}
	if d.Result.StatisticMa == nil || *d.Result.StatisticMa != *ref.Result.StatisticMa {
		t.Errorf("statistic %v with drawn onsets, %v without: want the same (it uses the reference onsets)", d.Result.StatisticMa, ref.Result.StatisticMa)
	}
	if got, want := *d.Result.P, float64(1+*d.Result.AtMost)/1000; got != want {
		t.Errorf("p = %v, want %v", got, want)
	}
	if !strings.Contains(strings.Join(d.Cautions, " "), "onsets are drawn in every replicate") {
		t.Errorf("cautions %v do not say the onsets are drawn", d.Cautions)
	}
	again := getCoincidence(t, "/coincidence?format=json&onsets=drawn&"+coincidenceCheap)
	if *again.Result.P != *d.Result.P {
		t.Errorf("same seed, p %v then %v", *d.Result.P, *again.Result.P)
	}
}
