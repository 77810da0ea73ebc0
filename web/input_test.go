package web

import (
	"net/http"
	"strings"
	"testing"
)

// A date whose σ cannot be weighted (stored directly in SQL, as older databases may hold: imports and
// forms now refuse it) leaves every page that computes with it answering 200, with a caution naming the
// date, instead of a 500 ("age NaN must be finite"). The accepted date HV-12-01 gets σ = 1e-320 (1/σ² =
// +Inf); HV-12-02 becomes pending with σ = 1e-200 and is met only with include=pending.
func TestUnusableSigmaIsACautionNotAFailure(t *testing.T) {
	srv, db := mustServer(t)
	if _, err := db.SQL().Exec(`UPDATE dates SET sigma_ma = 1e-320 WHERE sample_code = 'HV-12-01'`); err != nil {
		t.Fatal(err)
	}
	if _, err := db.SQL().Exec(`UPDATE dates SET sigma_ma = 1e-200, review_state = 'pending' WHERE sample_code = 'HV-12-02'`); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		path string
		want []string
	}{
		{"/provinces/1", []string{"HV-12-01 excluded", "no usable uncertainty"}},
		{"/units/1", []string{"HV-12-01 excluded", "no usable uncertainty"}},
		{"/provinces/1/summary?format=csv", []string{"HV-12-01 excluded", "no usable uncertainty"}},
		{"/provinces/1/timeline", []string{"Date HV-12-01 of Ulvaskar Flow Group left out", "no usable uncertainty"}},
		{"/compare?province=1&" + cheap, []string{"Date HV-12-01 of Ulvaskar Flow Group left out", "no usable uncertainty"}},
		{"/provinces/1?include=pending", []string{"HV-12-02 excluded", "1σ 1e-200 Ma"}},
		{"/units/1?include=pending", []string{"HV-12-02 excluded", "1σ 1e-200 Ma"}},
		{"/provinces/1/timeline?include=pending", []string{"Date HV-12-02 of Ulvaskar Flow Group left out"}},
		{"/compare?province=1&include=pending&" + cheap, []string{"Date HV-12-02 of Ulvaskar Flow Group left out"}},
	} {
		status, _, body := get(t, srv, c.path)
		if status != http.StatusOK {
			t.Errorf("%s: status %d, want 200", c.path, status)
			continue
		}
		for _, w := range c.want {
			if !strings.Contains(body, w) {
				t.Errorf("%s: no %q on the page", c.path, w)
			}
		}
	}
}
