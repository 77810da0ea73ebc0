package web

import (
	"context"
	"strings"
	"testing"

	"coeval/store"
)

// Values stored as 1σ come back at their published level with the digits they were entered with, not
// with float noise or padded zeros: 0.1 + 0.2 is 0.3, 0.025 × 2 is 0.05, 155.46 stays 155.46 (hand values).
func TestAsEntered(t *testing.T) {
	for _, c := range []struct {
		v    float64
		want string
	}{{0.1 + 0.2, "0.3"}, {0.025 * 2, "0.05"}, {155.46, "155.46"}, {0.0003108, "0.0003108"}, {1e-7 * 3, "0.0000003"}} {
		if got := asEntered(c.v); got != c.want {
			t.Errorf("asEntered(%v) = %q, want %q", c.v, got, c.want)
		}
	}
}

// A date entered as 155.46 ± 0.05 (2σ) shows as 155.46 ± 0.05 (2σ) on its page, not 155.460 ± 0.050.
func TestDatePageKeepsTheDigitsAsEntered(t *testing.T) {
	srv, db := mustServer(t)
	ctx := store.WithActor(context.Background(), 0)
	units, _ := db.Units(ctx, 1)
	prov, _ := db.Province(ctx, 1)
	d, err := db.CreateDate(ctx, store.Form{"province": prov.Name, "unit": units[0].Name, "sample_code": "DIGITS-1",
		"method": "upb_idtims", "material": "zircon", "interpretation": "eruption", "age_ma": "155.46", "sigma_ma": "0.05",
		"sigma_level": "2", "review_state": "accepted"}, true)
	if err != nil {
		t.Fatal(err)
	}
	_, _, body := get(t, srv, idURL("/dates", d.ID))
	if !strings.Contains(body, "155.46 ± 0.05 (2σ) Ma, analytical") {
		t.Errorf("the date page does not keep the digits as entered: %s", between(body, "Age as published", "Analytical"))
	}
}
