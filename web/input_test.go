package web

import (
	"encoding/csv"
	"net/http"
	"strings"
	"testing"

	"coeval/store"
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

// Numbers in the address are read in decimal notation only, like numbers in files and forms: each value
// below is within its parameter's range once read as Go syntax (0x1p7 = 128, 1_000 = 1000, 0x1p-3 =
// 0.125, 3_5 = 35), so only the notation can refuse it; Inf and NaN are refused too.
func TestAddressNumbersDecimalOnly(t *testing.T) {
	srv, _ := mustServer(t)
	for _, c := range []struct{ path, param string }{
		{"/dates?age_min=0x1p7", "age_min"},
		{"/dates?age_max=1_000", "age_max"},
		{"/dates?age_max=Inf", "age_max"},
		{"/dates?age_min=NaN", "age_min"},
		{"/provinces/1/timeline?bw=user&h=0x1p-3", "h"},
		{"/compare?delta=0x1p-4&" + cheap, "delta"},
		{"/sections/1?z_min=3_5", "z_min"},
		{"/sections/1?toc_min=1_0", "toc_min"},
	} {
		status, _, body := get(t, srv, c.path)
		if status != http.StatusBadRequest || !strings.Contains(body, c.param+": want") {
			t.Errorf("%s: status %d, want 400 naming %s", c.path, status, c.param)
		}
	}
	// Decimal notation with an exponent is read.
	if status, _, _ := get(t, srv, "/dates?age_min=1.5e2&age_max=+160.0"); status != http.StatusOK {
		t.Errorf("decimal notation refused: %d", status)
	}
}

// No CSV download hands a spreadsheet a formula: names and notes that begin with =, +, -, @ (planted in
// SQL) come out with a quote before them, numbers such as -1.5 as they are (store.CSVSafe).
func TestCSVDownloadsHoldNoFormulas(t *testing.T) {
	srv, db := mustServer(t)
	for _, q := range []string{
		`UPDATE units SET name = '=1+2', notes = '@SUM(A1)' WHERE id = 1`,
		`UPDATE dates SET sample_code = '+cmd|x', notes = '-2+3' WHERE id = 2`,
		`UPDATE provinces SET description = '=HYPERLINK("http://example.invalid")' WHERE id = 1`,
		`UPDATE events SET name = '@event' WHERE id = 1`,
		`UPDATE tie_points SET label = '-tie' WHERE id = 1`,
	} {
		if _, err := db.SQL().Exec(q); err != nil {
			t.Fatal(err)
		}
	}
	planted := 0
	for _, path := range []string{"/dates?format=csv", "/provinces?format=csv", "/provinces/1?format=csv",
		"/provinces/1/summary?format=csv", "/provinces/1/timeline?format=csv&table=values", "/ties?format=csv",
		"/events?format=csv", "/sections/1?format=csv", "/compare?format=csv&rows=both&" + cheap} {
		status, _, body := get(t, srv, path)
		if status != http.StatusOK {
			t.Errorf("%s: status %d", path, status)
			continue
		}
		recs, err := csv.NewReader(strings.NewReader(body)).ReadAll()
		if err != nil {
			t.Errorf("%s: %v", path, err)
			continue
		}
		for i, rec := range recs {
			for _, c := range rec {
				if c == "" {
					continue
				}
				if _, num := store.ParseDecimal(c); !num && strings.ContainsRune("=+-@\t\r", rune(c[0])) {
					t.Errorf("%s line %d: cell %q begins like a formula", path, i+1, c)
				}
				if strings.HasPrefix(c, "'=1+2") || strings.HasPrefix(c, "'+cmd") || strings.HasPrefix(c, "'@") || strings.HasPrefix(c, "'-2+3") || strings.HasPrefix(c, "'-tie") || strings.HasPrefix(c, "'=HYPERLINK") {
					planted++
				}
			}
		}
	}
	if planted < 9 {
		t.Errorf("only %d planted cells found quoted in the downloads; the check saw too little", planted)
	}
}
