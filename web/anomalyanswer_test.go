package web

import (
	"context"
	"encoding/json"
	"html"
	"math"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// Each detected anomaly's "Could belong to" on the anomalies page is the comparison's own row: for the
// province it names, the row of the comparison page (default choices, detected anomalies compared) for
// that anomaly with the largest P(within) — its pulse and its probability, read from the comparison's
// JSON, not from the code that filled the cell.
func TestAnomalyAnswersAreTheComparisonsNumbers(t *testing.T) {
	srv, db := mustServer(t)
	secs, err := db.Sections(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	rowRE := regexp.MustCompile(`(?s)<tr>(.*?)</tr>`)
	cellRE := regexp.MustCompile(`(?s)<td[^>]*>(.*?)</td>`)
	linkRE := regexp.MustCompile(`href="/compare\?([^"]*)"[^>]*>([^<]*)<`)
	pRE := regexp.MustCompile(`P = ([0-9.]+) ± ([0-9.]+)`)
	boundRE := regexp.MustCompile(`P ([<>]) ([0-9.]+)`)
	comparisons := map[string][]map[string]string{}
	checked := 0
	for _, sec := range secs {
		_, _, page := get(t, srv, idURL("/sections", sec.ID)+"/anomalies")
		i := strings.Index(page, `id="anomaly-table"`)
		if i < 0 {
			continue
		}
		table := page[i:]
		table = table[:strings.Index(table, "</table>")]
		for _, tr := range rowRE.FindAllStringSubmatch(table, -1) {
			cells := cellRE.FindAllStringSubmatch(tr[1], -1)
			if len(cells) < 2 {
				continue
			}
			m := linkRE.FindStringSubmatch(cells[len(cells)-1][1])
			if m == nil {
				continue
			}
			q, text := html.UnescapeString(m[1]), html.UnescapeString(m[2])
			code := "A" + strconv.FormatInt(sec.ID, 10) + "." + strings.TrimSpace(cells[0][1])
			if _, ok := comparisons[q]; !ok {
				_, _, body := get(t, srv, "/compare?format=json&"+q)
				var doc struct {
					Rows []map[string]string `json:"rows"`
				}
				if err := json.Unmarshal([]byte(body), &doc); err != nil {
					t.Fatalf("comparison %s: %v", q, err)
				}
				comparisons[q] = doc.Rows
			}
			var best map[string]string
			bestP := -1.0
			for _, r := range comparisons[q] {
				if p, err := strconv.ParseFloat(r["p_within"], 64); err == nil && r["event_code"] == code && p > bestP {
					best, bestP = r, p
				}
			}
			if best == nil {
				t.Errorf("%s: the comparison %s has no row for it", code, q)
				continue
			}
			if !strings.Contains(text, "~"+strings.TrimPrefix(best["pulse"], "P")+" Ma") {
				t.Errorf("%s: cell %q, want the pulse %s", code, text, best["pulse"])
				continue
			}
			// 0 and 1 are written as the bound 3/N the draws support (common practice: a rule of three).
			if bm := boundRE.FindStringSubmatch(text); bm != nil {
				b, _ := strconv.ParseFloat(bm[2], 64)
				if (bm[1] == ">" && bestP < b) || (bm[1] == "<" && bestP > b) {
					t.Errorf("%s: cell says P %s %s, the comparison %g", code, bm[1], bm[2], bestP)
				}
				checked++
				continue
			}
			pm := pRE.FindStringSubmatch(text)
			if pm == nil {
				t.Errorf("%s: cell %q, want the pulse %s with P(within) %s", code, text, best["pulse"], best["p_within"])
				continue
			}
			got, _ := strconv.ParseFloat(pm[1], 64)
			se, _ := strconv.ParseFloat(pm[2], 64)
			if math.Abs(got-bestP) > se/2+1e-12 {
				t.Errorf("%s: cell says P = %s ± %s, the comparison %g", code, pm[1], pm[2], bestP)
			}
			checked++
		}
	}
	if checked < 3 {
		t.Fatalf("%d anomalies answered: the demo should give at least 3", checked)
	}
}
