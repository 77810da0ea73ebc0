package web

import (
	"context"
	"encoding/json"
	"html"
	"net/http"
	"strconv"
	"strings"
	"testing"
)

// Every event's answer holds the full comparison's numbers for the same (default) choices: for each demo
// event, each pulse's P(within), P(after onset) and lag are the comparison's row for that event and
// pulse, and the pulses are ranked by P(within). The page leads with the sentence and links the full
// comparison.
func TestEventAnswersAreTheComparisonsNumbers(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	// Every province's comparison, by province record number: an answer's pulse is checked against the
	// comparison of its own province (the demo is a compilation of several).
	rows := map[string]map[string]string{} // "province event_code pulse"
	provs, _ := db.Provinces(ctx)
	for _, pv := range provs {
		status, _, body := get(t, srv, "/compare?format=json&province="+strconv.FormatInt(pv.ID, 10))
		if status != http.StatusOK {
			t.Fatalf("comparison of %s: status %d", pv.Name, status)
		}
		var cmp struct {
			Rows []map[string]string `json:"rows"`
		}
		if err := json.Unmarshal([]byte(body), &cmp); err != nil {
			t.Fatal(err)
		}
		for _, r := range cmp.Rows {
			if r["pulse"] != "" {
				rows[strconv.FormatInt(pv.ID, 10)+" "+r["event_code"]+" "+r["pulse"]] = r
			}
		}
	}
	provincesAnswered := map[float64]bool{}
	secs, _ := db.Sections(ctx)
	answered, twoCandidates := 0, 0
	for _, sec := range secs {
		evs, _ := db.Events(ctx, sec.ID)
		for _, ev := range evs {
			if ev.ReviewState != "accepted" {
				continue
			}
			status, _, body := get(t, srv, idURL("/events", ev.ID)+"?format=json")
			if status != http.StatusOK {
				t.Fatalf("event %d: status %d", ev.ID, status)
			}
			var doc struct {
				Answer struct {
					Sentence string `json:"sentence"`
					Age      *struct {
						Median float64 `json:"median_ma"`
					} `json:"age"`
					Pulses []map[string]any `json:"pulses"`
				} `json:"answer"`
			}
			if err := json.Unmarshal([]byte(body), &doc); err != nil {
				t.Fatal(err)
			}
			if doc.Answer.Age == nil {
				continue // an event its section's model does not reach
			}
			code := "E" + strconv.FormatInt(ev.ID, 10)
			prev := 2.0
			for _, p := range doc.Answer.Pulses {
				pid, _ := p["province_id"].(float64)
				provincesAnswered[pid] = true
				row := rows[strconv.FormatFloat(pid, 'f', -1, 64)+" "+code+" "+p["pulse"].(string)]
				if row == nil {
					t.Errorf("%s: pulse %v is not in the comparison", ev.Name, p["pulse"])
					continue
				}
				for key, col := range map[string]string{"p_within": "p_within", "p_after_onset": "p_after_onset", "lag_median_ma": "lag_median_ma"} {
					want, _ := strconv.ParseFloat(row[col], 64)
					if got, _ := p[key].(float64); got != want {
						t.Errorf("%s × %v: %s %v, the comparison's %v", ev.Name, p["pulse"], key, got, want)
					}
				}
				w := p["p_within"].(float64)
				if w > prev {
					t.Errorf("%s: pulses not ranked by P(within)", ev.Name)
				}
				prev = w
			}
			if len(doc.Answer.Pulses) > 0 {
				answered++
			}
			// Two provinces that could both explain it: the two most likely pulses belong to different
			// provinces and each holds the event with P(within) ≥ 0.5 (the demo's Brisvane-3 Core anomaly, by design).
			if ps := doc.Answer.Pulses; len(ps) >= 2 && ps[0]["province_id"] != ps[1]["province_id"] &&
				ps[1]["p_within"].(float64) >= 0.5 {
				twoCandidates++
			}
			if doc.Answer.Sentence == "" {
				t.Errorf("%s: no sentence", ev.Name)
			}
		}
	}
	if answered < 3 {
		t.Errorf("only %d demo events have an answer", answered)
	}
	if twoCandidates == 0 {
		t.Error("no demo event has two provinces that could both explain it")
	}
	if len(provincesAnswered) < 2 {
		t.Errorf("the answers name pulses of %d provinces, want several (the demo is a compilation)", len(provincesAnswered))
	}
	// The list of events: each accepted event's age and most likely pulse, as on its page.
	_, _, list := get(t, srv, "/events")
	list = html.UnescapeString(list)
	var ev8 struct {
		Answer struct {
			Age struct {
				Median float64 `json:"median_ma"`
			} `json:"age"`
			Pulses []map[string]any `json:"pulses"`
		} `json:"answer"`
	}
	_, _, b8 := get(t, srv, "/events/8?format=json")
	if err := json.Unmarshal([]byte(b8), &ev8); err != nil || len(ev8.Answer.Pulses) == 0 {
		t.Fatalf("event 8: %v", err)
	}
	// Pulses are named by their age: P155.34 is "the pulse at ~155.34 Ma".
	if want := "pulse at ~" + strings.TrimPrefix(ev8.Answer.Pulses[0]["pulse"].(string), "P") + " Ma"; !strings.Contains(list, want) || !strings.Contains(list, "Most likely pulse") {
		t.Errorf("the list of events does not give the most likely pulse %q", want)
	}
	// The page: the sentence first, the ranked table, the link to the full comparison.
	status, _, page := get(t, srv, "/events/8")
	page = html.UnescapeString(page)
	if status != http.StatusOK || !strings.Contains(page, "Most likely during the pulse at ~") || !strings.Contains(page, `id="answer"`) || !strings.Contains(page, `href="/compare?province=1"`) {
		t.Errorf("the event page does not lead with its answer: %s", between(page, "<main", "</table>"))
	}
}
