package store

import (
	"context"
	"maps"
	"testing"
)

// The grouped count agrees with counting the listed dates one by one (each date's unit's province, age
// and review state, read through Dates and Units), for windows around every province's dates, in both
// review states, and one window holding nothing.
func TestDateCountsByProvinceCountsEachDate(t *testing.T) {
	ctx := context.Background()
	db := demoDB(t)
	dates, _, err := db.Dates(ctx, DateFilter{})
	if err != nil {
		t.Fatal(err)
	}
	provOf := map[int64]int64{}
	units, err := db.Units(ctx, 0)
	if err != nil {
		t.Fatal(err)
	}
	for _, u := range units {
		provOf[u.ID] = u.ProvinceID
	}
	type window struct{ lo, hi float64 }
	windows := []window{{-1, -0.5}}
	for _, d := range dates {
		windows = append(windows, window{d.AgeMa - 1, d.AgeMa + 0.5})
		if len(windows) > 12 {
			break
		}
	}
	windows = append(windows, window{0, 5000})
	for _, w := range windows {
		for _, state := range []ReviewState{ReviewAccepted, ReviewPending} {
			want := map[int64]int{}
			for _, d := range dates {
				if d.UnitID == nil || d.ReviewState != state || d.AgeMa < w.lo || d.AgeMa > w.hi {
					continue
				}
				want[provOf[*d.UnitID]]++
			}
			got, err := db.DateCountsByProvince(ctx, w.lo, w.hi, state)
			if err != nil {
				t.Fatal(err)
			}
			if !maps.Equal(got, want) {
				t.Errorf("%g–%g Ma, %s: got %v, counted %v", w.lo, w.hi, state, got, want)
			}
		}
	}
}
