package web

import (
	"context"
	"net/http/httptest"
	"slices"
	"testing"

	"coeval/store"
)

// The provinces compared with an event are those with accepted dates within answerReachMa of the event's
// 95 % interval: the interval widened on both sides, so an interval wider than twice the reach still finds
// the provinces dated inside it, and the order in which its ends are given does not matter. Expected sets
// come from the demo's raw dates (every accepted date's age against the widened interval), not from the
// answer code.
func TestProvincesNearAnEventWidenItsInterval(t *testing.T) {
	db := mustDemoDB(t)
	ctx := context.Background()
	dates, _, err := db.Dates(ctx, store.DateFilter{ReviewState: store.ReviewAccepted})
	if err != nil {
		t.Fatal(err)
	}
	want := func(lo, hi float64) []int64 {
		var ids []int64
		for _, d := range dates {
			if d.ProvinceID == nil || d.AgeMa < lo-answerReachMa || d.AgeMa > hi+answerReachMa {
				continue
			}
			if p := *d.ProvinceID; !slices.Contains(ids, p) {
				ids = append(ids, p)
			}
		}
		slices.Sort(ids)
		return ids
	}
	s := &Server{store: db}
	for _, c := range []struct{ lo, hi float64 }{
		{150, 170},       // 20 Ma wide: both provinces dated inside it (the demo's ~155 and ~167.6 Ma)
		{170, 150},       // the same interval with its ends the other way round
		{160.5, 161.5},   // narrow, between the ~155 and ~167.6 Ma provinces
		{196.40, 196.41}, // narrow, among the ~196.4 Ma provinces
	} {
		as := s.answers(httptest.NewRequest("GET", "/events", nil))
		provs, _, err := as.nearProvinces(answerAge{Median: (c.lo + c.hi) / 2, Lo95: c.lo, Hi95: c.hi})
		if err != nil {
			t.Fatal(err)
		}
		var got []int64
		for _, p := range provs {
			got = append(got, p.ID)
		}
		slices.Sort(got)
		lo, hi := min(c.lo, c.hi), max(c.lo, c.hi)
		if w := want(lo, hi); !slices.Equal(got, w) {
			t.Errorf("interval %g–%g Ma: provinces %v, want %v (accepted dates within %g Ma)", c.lo, c.hi, got, w, answerReachMa)
		}
	}
}
