package web

import (
	"encoding/json"
	"html"
	"math"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"coeval/stats"
	"coeval/web/analysis"
)

// Two events with normal ages, A (155.40 ± 0.10 Ma, 1σ) and B (155.15 ± 0.08 Ma): P(A came before B) =
// P(A older) = Φ(Δ/√(σa² + σb²)) = Φ(1.952) ≈ 0.975 with Δ = 0.25 [closed form of the difference of two independent
// normals; Φ from gonum's distuv.UnitNormal]. The sentence the page writes for the pair, and the
// workbook's row, carry that probability within 4 Monte Carlo SE.
func TestWhichCameFirstClosedForm(t *testing.T) {
	qa, qb := stats.NormalAge("A", 155.40, 0.10), stats.NormalAge("B", 155.15, 0.08)
	const n = 40000
	jd, err := stats.DrawJoint([]stats.Quantity{qa, qb}, stats.DrawOptions{N: n, Seed: 11})
	if err != nil {
		t.Fatal(err)
	}
	o, err := jd.Order([]int{0, 1})
	if err != nil {
		t.Fatal(err)
	}
	res := &compareResult{Comparison: &analysis.Comparison{Order: o, OrderCodes: []string{"E1", "E2"},
		In: analysis.CompareInputs{Events: []analysis.CompareEvent{
			{Code: "E1", Name: "Ashfall", Section: "Skarfell Creek", Point: "height", Q: qa},
			{Code: "E2", Name: "CIE onset", Section: "Mornesk Cliffs", Point: "height", Q: qb}}}}}
	res.Choice.N = n
	want := distuv.UnitNormal.CDF(0.25 / math.Hypot(0.10, 0.08))
	items := precItems(res)
	pairs := precPairs(res, items)
	if len(pairs) != 1 {
		t.Fatalf("%d pairs, want 1", len(pairs))
	}
	p := pairs[0]
	if items[p.Earlier].Code != "E1" || math.Abs(p.P.P-want) > 4*p.P.SE || !(p.P.SE > 0) {
		t.Errorf("earlier %s with P %g ± %g, want E1 with Φ = %.5f", items[p.Earlier].Code, p.P.P, p.P.SE, want)
	}
	// The sentence: the later item came after the earlier one, with the matrix's own number.
	s := precSentence(items, p, n)
	if wantS := "The CIE onset in Mornesk Cliffs came after the Ashfall in Skarfell Creek: P = " + probText(stats.Probability{P: o.P[0][1], SE: o.SE[0][1]}, n); s != wantS {
		t.Errorf("sentence %q, want %q", s, wantS)
	}
	v := precedenceView(res)
	if len(v.Sentences) != 1 || v.Sentences[0] != s {
		t.Errorf("page sentences %q, want [%q] (P = %.3f ≥ 0.95)", v.Sentences, s, want)
	}
	if got := v.Grid.Rows[0][2].Class; got != "shade-"+strconv.Itoa(precShade(o.P[0][1])) || got != "shade-10" {
		t.Errorf("the grid shades P %.3f as %q, want shade-10", o.P[0][1], got)
	}
	rec := precedenceRecords(res, true)[0]
	if got, _ := strconv.ParseFloat(rec[4], 64); got != o.P[0][1] || rec[1] != "E1" || rec[3] != "E2" || rec[8] != "yes" {
		t.Errorf("workbook row %v, want E1 before E2 with P %g, decisive", rec, o.P[0][1])
	}
}

// On the demo's default comparison: every sentence of "which came first" on the page carries the
// number of the JSON's grid for its pair (the same computation), and the JSON's pairs are the grid's.
func TestWhichCameFirstSentencesAreTheGridsNumbers(t *testing.T) {
	srv, _ := mustServer(t)
	const q = "/compare?sens=0&n=4000&reps=200&draws=500"
	_, _, js := get(t, srv, q+"&format=json")
	var doc struct {
		First struct {
			Items []string            `json:"items"`
			Pairs []map[string]string `json:"pairs"`
			P     [][]*float64        `json:"p_row_before_column"`
			SE    [][]*float64        `json:"p_row_before_column_se"`
		} `json:"which_came_first"`
	}
	if err := json.Unmarshal([]byte(js), &doc); err != nil || len(doc.First.Pairs) == 0 {
		t.Fatalf("JSON: %v, %d pairs", err, len(doc.First.Pairs))
	}
	_, _, page := get(t, srv, q)
	page = html.UnescapeString(page)
	idx := map[string]int{}
	for i, c := range doc.First.Items {
		idx[c] = i
	}
	said := 0
	for _, pr := range doc.First.Pairs {
		i, k := idx[pr["earlier_code"]], idx[pr["later_code"]]
		p, se := *doc.First.P[i][k], *doc.First.SE[i][k]
		if got, _ := strconv.ParseFloat(pr["p_earlier_first"], 64); got != p {
			t.Errorf("%s before %s: pair %g, grid %g", pr["earlier_code"], pr["later_code"], got, p)
		}
		if p < precDecisive {
			continue
		}
		sentence := pr["later"] + " came after " + lowerFirst(pr["earlier"]) + ": " + pWords(stats.Probability{P: p, SE: se}, 4000)
		if !strings.Contains(page, sentence) {
			t.Errorf("the page does not say %q", sentence)
		}
		said++
	}
	if said == 0 {
		t.Error("no decisive pair on the demo")
	}
}

func lowerFirst(s string) string { return strings.ToLower(s[:1]) + s[1:] }
