package web

import (
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
)

// TestSummaryTimelineGolden guards the unit summaries and the timeline's density and pulses byte for byte
// (go test ./web -run SummaryTimelineGolden -update rewrites testdata/pages/): the province page with its
// unit summary table, a unit page, the timeline page with the default choices and with a set bandwidth
// and another σ level, their CSV and JSON downloads, and the 400 pages of choices that cannot be used.
// Everything in them is seeded (bootstrap seed, demo data). The one part normalised is what genuinely
// varies between runs: the time the demo records were added (shown on the province and unit pages), as
// "2006-01-02 15:04 UTC" or RFC 3339, becomes a fixed stamp; every other byte is compared as served.
func TestSummaryTimelineGolden(t *testing.T) {
	srv, _ := mustServer(t)
	cases := []struct {
		name, path string
		status     int
	}{
		{"province.html", "/provinces/1", 200},
		{"province-tracer-1s.html", "/provinces/1?level=tracer&sigma=1&policy=never&rule=chauvenet&include=all", 200},
		{"unit.html", "/units/1", 200},
		{"province-summary.csv", "/provinces/1/summary?format=csv", 200},
		{"province-summary.json", "/provinces/1/summary?format=json", 200},
		{"province-summary-wendt-carl.csv", "/provinces/1/summary?format=csv&mswd_range=wendt-carl&level=analytical&include=pending", 200},
		{"unit-summary.json", "/units/1/summary?format=json", 200},
		{"timeline.html", "/provinces/1/timeline", 200},
		{"timeline-user-h.html", "/provinces/1/timeline?bw=user&h=0.08&level=analytical&sigma=1&pdp=1&reps=200", 200},
		{"timeline-dates-adaptive.html", "/provinces/1/timeline?count=date&bw=silverman&adaptive=1&weight=volume&from=158&reps=200", 200},
		{"timeline-pulses.csv", "/provinces/1/timeline?format=csv", 200},
		{"timeline-density.csv", "/provinces/1/timeline?format=csv&table=density&bw=scott&bw_each=1&reps=200", 200},
		{"timeline-values.csv", "/provinces/1/timeline?format=csv&table=values&count=date", 200},
		{"timeline.json", "/provinces/1/timeline?format=json&bw=user&h=0.08&level=tracer&reps=200", 200},
		{"timeline-window-without-values.html", "/provinces/1/timeline?from=100&to=100.5&reps=100", 200},
		{"timeline-bad-choices.html", "/provinces/1/timeline?bw=user&from=160&to=160&bw_each=1&reps=5", 400},
		{"timeline-bad-choices.json", "/provinces/1/timeline?format=json&bw=isj&bw_each=1&h=abc", 400},
	}
	stamp := regexp.MustCompile(`\d{4}-\d\d-\d\d(?: \d\d:\d\d UTC|T\d\d:\d\d:\d\dZ)`)
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			status, _, body := get(t, srv, c.path)
			if status != c.status {
				t.Fatalf("%s: status %d, want %d: %.300s", c.path, status, c.status, body)
			}
			body = stamp.ReplaceAllString(body, "2000-01-01 00:00 UTC")
			checkGoldenFile(t, filepath.Join("testdata", "pages", c.name), body, "SummaryTimelineGolden")
		})
	}
}

// checkGoldenFile compares got with the golden file (rewriting it under -update) and, when they differ,
// prints the first differing lines with their numbers.
func checkGoldenFile(t *testing.T, golden, got, testName string) {
	t.Helper()
	if *update {
		if err := os.MkdirAll(filepath.Dir(golden), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(golden, []byte(got), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(golden)
	if err != nil {
		t.Fatalf("%v (run go test ./web -run %s -update)", err, testName)
	}
	if got != string(want) {
		t.Errorf("output differs from %s (if intended: go test ./web -run %s -update, and review the diff):\n%s",
			golden, testName, goldenLineDiff(string(want), got, 12))
	}
}

// goldenLineDiff lists up to max lines that differ between want and got, as "-" (golden) and "+" (now)
// with line numbers; lines are cut at 300 characters so a one-line SVG or JSON stays readable.
func goldenLineDiff(want, got string, max int) string {
	w, g := strings.Split(want, "\n"), strings.Split(got, "\n")
	cut := func(s string) string {
		if len(s) > 300 {
			return s[:300] + "…"
		}
		return s
	}
	var b strings.Builder
	shown := 0
	for i := 0; i < len(w) || i < len(g); i++ {
		var a, c string
		if i < len(w) {
			a = w[i]
		}
		if i < len(g) {
			c = g[i]
		}
		if a == c {
			continue
		}
		if shown == max {
			b.WriteString("… more differences\n")
			break
		}
		if at := firstDiff(a, c); at > 120 { // show the lines from a little before their first difference
			a, c = "…"+a[at-60:], "…"+c[at-60:]
		}
		fmt.Fprintf(&b, "line %d:\n- %s\n+ %s\n", i+1, cut(a), cut(c))
		shown++
	}
	if len(w) != len(g) {
		fmt.Fprintf(&b, "(%d lines in the golden file, %d now)\n", len(w), len(g))
	}
	return b.String()
}

func firstDiff(a, b string) int {
	n := min(len(a), len(b))
	for i := 0; i < n; i++ {
		if a[i] != b[i] {
			return i
		}
	}
	return n
}

// The golden helper must say where the files differ.
func TestGoldenLineDiffShowsTheLines(t *testing.T) {
	d := goldenLineDiff("a\nb\nc", "a\nB\nc\nd", 5)
	for _, want := range []string{"line 2:", "- b", "+ B", "line 4:", "+ d", "(3 lines in the golden file, 4 now)"} {
		if !strings.Contains(d, want) {
			t.Errorf("diff %q lacks %q", d, want)
		}
	}
}
