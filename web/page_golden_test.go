package web

import (
	"net/http"
	"path/filepath"
	"regexp"
	"testing"
)

// TestPageGolden guards the main pages of the comparison and the sections byte for byte (go test ./web
// -run PageGolden -update rewrites testdata/pages/), so that moving their computations elsewhere is seen
// to change nothing a reader gets: the comparison page with the demo's default choices and with
// anomalies, a correlated group and the TOC thresholds in the sensitivity, a section page, and the
// aligned sections. Everything in them is seeded; what genuinely varies between runs is normalised: the
// times records were added and a comparison was computed, and how long it took.
func TestPageGolden(t *testing.T) {
	srv, _ := mustServer(t)
	cases := []struct{ name, path string }{
		{"compare.html", "/compare"},
		{"compare-anomalies.html", "/compare?anomalies=1&group=cie_onset&n=2000&reps=200&draws=500"},
		{"section-1.html", "/sections/1"},
		{"sections-aligned.html", "/sections/aligned"},
	}
	stamp := regexp.MustCompile(`\d{4}-\d\d-\d\d(?: \d\d:\d\d UTC|T\d\d:\d\d:\d\dZ)`)
	took := regexp.MustCompile(`\d+(?:\.\d+)?\s?(?:ns|µs|ms|s)\b`)
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			status, _, body := get(t, srv, c.path)
			if status != http.StatusOK {
				t.Fatalf("%s: status %d: %.300s", c.path, status, body)
			}
			body = stamp.ReplaceAllString(body, "2000-01-01 00:00 UTC")
			body = took.ReplaceAllString(body, "1 ms")
			checkGoldenFile(t, filepath.Join("testdata", "pages", c.name), body, "PageGolden")
		})
	}
}
