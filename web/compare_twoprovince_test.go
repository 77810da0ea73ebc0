package web

import (
	"context"
	"fmt"
	"math"
	"net/http"
	"net/http/httptest"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"coeval/store"
)

// The ranked probabilities of an event against two provinces, against a closed form. Each province is
// built from raw inputs as one normal pulse: two units, each one U–Pb date at the same age m with a
// tiny σ (0.0005 Ma), counted with a smoothing width h set by hand. Its density is then the normal
// density N(m, h²) (two equal kernels at one place), whose single pulse ends on either side where the
// density falls to 5 % of its highest value (stats.DefaultMinRelHeight): at m ± h·√(2 ln 20). The
// bootstrap moves the units by N(0, 0.0005²), which moves the edges by far less than the event's σ.
// For an event with a direct normal age N(a, s²), P(within) = Φ((m + c·h − a)/s) − Φ((m − c·h − a)/s),
// c = √(2 ln 20) (the normal CDF from gonum). Each province is compared through the page's own path
// (choices → data → computation) with the same event; the P(within) of each must equal its closed form
// within 4 Monte Carlo SE (binomial, N event draws) plus 0.002 for the density grid's linear edges, and the
// two provinces must rank as the closed forms rank them.
func TestTwoProvincesRankedAgainstTheClosedForm(t *testing.T) {
	db := mustDemoDB(t)
	c := &comparer{Server: &Server{store: db}, cache: newCompareCache(4)}
	ctx := context.Background()
	provs, err := db.Provinces(ctx)
	if err != nil || len(provs) < 2 {
		t.Fatalf("want two provinces in the demo to hang the constructed data on: %v %v", provs, err)
	}
	const n = 100000
	evAge, evSigma := 200.2, 0.1
	cEdge := math.Sqrt(2 * math.Log(20))
	type province struct {
		id      int64
		m, h    float64
		closed  float64
		got, se float64
	}
	ps := []*province{{id: provs[0].ID, m: 200.0, h: 0.1}, {id: provs[1].ID, m: 200.5, h: 0.2}}
	for k, pv := range ps {
		lo, hi := pv.m-cEdge*pv.h, pv.m+cEdge*pv.h
		pv.closed = distuv.UnitNormal.CDF((hi-evAge)/evSigma) - distuv.UnitNormal.CDF((lo-evAge)/evSigma)

		addr := fmt.Sprintf("/compare?province=%d&sens=0&n=%d&level=analytical&bw=user&h=%g", pv.id, n, pv.h)
		r := httptest.NewRequest(http.MethodGet, addr, nil)
		p := newParams(r)
		ch, err := c.compareChoiceFrom(ctx, p)
		if err != nil || p.err() != nil {
			t.Fatal(err, p.err())
		}
		d, err := c.loadCompareData(ctx, &ch)
		if err != nil {
			t.Fatal(err)
		}
		ptr := func(v float64) *float64 { return &v }
		u1, u2 := int64(9901+10*k), int64(9902+10*k)
		d.Units = []store.Unit{{ID: u1, ProvinceID: pv.id, Name: "Constructed Flow A", Kind: "flow"},
			{ID: u2, ProvinceID: pv.id, Name: "Constructed Flow B", Kind: "flow"}}
		d.Dates = []store.Date{
			{ID: 99100, UnitID: &u1, Unit: "Constructed Flow A", SampleCode: "CF-A", Method: "upb_idtims", Interpretation: "eruption",
				AgeMa: pv.m, SigmaMa: 0.0005, SigmaLevel: 1, Tracer: "ET2535", ReviewState: "accepted"},
			{ID: 99101, UnitID: &u2, Unit: "Constructed Flow B", SampleCode: "CF-B", Method: "upb_idtims", Interpretation: "eruption",
				AgeMa: pv.m, SigmaMa: 0.0005, SigmaLevel: 1, Tracer: "ET2535", ReviewState: "accepted"},
		}
		d.Direct = []store.Event{{ID: 99001, Name: "Constructed event", Kind: "other", AgeMa: ptr(evAge), SigmaMa: ptr(evSigma), ReviewState: "accepted"}}
		ch.EventIDs = []int64{99001}
		res, err := computeComparison(ctx, d, ch, 0)
		if err != nil {
			t.Fatal(err)
		}
		if len(res.In.Pulses) != 1 {
			t.Fatalf("province %d: %d pulses, want the one normal pulse", pv.id, len(res.In.Pulses))
		}
		found := false
		for _, row := range compareRows(res) {
			if row.Kind == "pulse" && row.Event.Code == "E99001" {
				pv.got, found = row.Cell.Within.P, true
			}
		}
		if !found {
			t.Fatalf("province %d: no row for the constructed event", pv.id)
		}
		pv.se = math.Sqrt(pv.closed * (1 - pv.closed) / n)
		t.Logf("province %d: pulse %.3f ± %.3f·%.3f Ma, event %.2f ± %.2f: P(within) %.4f, closed form %.4f (SE %.4f)",
			pv.id, pv.m, cEdge, pv.h, evAge, evSigma, pv.got, pv.closed, pv.se)
		if math.Abs(pv.got-pv.closed) > 4*pv.se+0.002 {
			t.Errorf("province %d: P(within) = %.4f, closed form %.4f (4 SE = %.4f)", pv.id, pv.got, pv.closed, 4*pv.se)
		}
	}
	// The ranking: the closed forms differ by far more than the tolerances, so the order must agree.
	if (ps[0].got > ps[1].got) != (ps[0].closed > ps[1].closed) {
		t.Errorf("ranked %v then %v, closed forms %v then %v", ps[0].got, ps[1].got, ps[0].closed, ps[1].closed)
	}
}
