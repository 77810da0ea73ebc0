package web

import (
	"cmp"
	"context"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"
	"time"

	"coeval/static"
	"coeval/store"
)

// BenchmarkScaleAnswers measures the compilation-level answers on the large invented compilation of
// the comparison benchmark (40 provinces, 400 units, 8,000 dates, 30 sections × 300 samples, 150 ties,
// 150 events): an event's page, the list of events and the compilation view (page, CSV, SVG). Target
// (compilation issue): an event's page and the compilation view < 2 s cold at this size.
// Cold: a new server for every request (nothing kept: no timeline, section model or comparison; made
// outside the timing). Warm: the same server, the address asked once before the timing (the compilation
// page: its JSON, which computes everything, so the page is whole). The page computes for at most
// compilationBudget: cut-short/op is the share of pages that said what was left out. cpu-ms/op is
// the CPU time of the whole process during the requests (every worker, so above ns/op where work runs
// in parallel).
// go test ./web -run '^$' -bench BenchmarkScaleAnswers -benchtime 3x
func BenchmarkScaleAnswers(b *testing.B) {
	db, _ := newLargeSections(b, trialSizes)
	benchAnswers(b, db, firstSectionEvent(b, db))
}

// BenchmarkDemoAnswers is BenchmarkScaleAnswers on the demo (issue 13: every figure also on the demo),
// with the demo's event that two provinces could both explain (event 15).
// go test ./web -run '^$' -bench BenchmarkDemoAnswers -benchtime 10x
func BenchmarkDemoAnswers(b *testing.B) {
	benchAnswers(b, mustDemoDB(b), 15)
}

// firstSectionEvent is the first accepted event of a section.
func firstSectionEvent(tb testing.TB, db *store.DB) int64 {
	evs, err := db.Events(context.Background(), 0)
	if err != nil {
		tb.Fatal(err)
	}
	for _, e := range evs {
		if e.SectionID != nil && e.ReviewState == store.ReviewAccepted {
			return e.ID
		}
	}
	tb.Fatal("no accepted event of a section")
	return 0
}

func benchAnswers(b *testing.B, db *store.DB, event int64) {
	newHandler := func() http.Handler {
		// Without the finisher of a page cut short: each cold server would leave one computing the whole
		// compilation in the background, under the next requests' timing.
		return NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS, WithSessionCleanup(0), withoutCompilationFinisher())
	}
	fetch := func(b *testing.B, h http.Handler, path string) (int, string) {
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, path, nil))
		if rec.Code != http.StatusOK {
			b.Fatalf("%s: status %d: %.300s", path, rec.Code, rec.Body.String())
		}
		return rec.Body.Len(), rec.Body.String()
	}
	ev := idURL("/events", event)
	for _, c := range []struct {
		name, path string
		cold       bool
		warmBy     string // asked once before the timing (the path itself when empty)
	}{
		{"event-cold", ev, true, ""},
		{"event-warm", ev, false, ""},
		{"events-cold", "/events", true, ""},
		{"events-warm", "/events", false, ""},
		{"compilation-cold", "/compilation", true, ""},
		{"compilation-warm", "/compilation", false, "/compilation?format=json"},
		{"compilation-csv-cold", "/compilation?format=csv", true, ""},
		{"compilation-csv-warm", "/compilation?format=csv", false, ""},
		{"compilation-svg-cold", "/compilation?format=svg", true, ""},
		{"compilation-svg-warm", "/compilation?format=svg", false, ""},
	} {
		b.Run(c.name, func(b *testing.B) {
			h := newHandler()
			if !c.cold {
				fetch(b, h, cmp.Or(c.warmBy, c.path)) // outside the timing
			}
			var cpu time.Duration
			var n, size, partial int
			for b.Loop() {
				if c.cold {
					b.StopTimer()
					h = newHandler()
					b.StartTimer()
				}
				cpu0 := processCPU()
				var body string
				size, body = fetch(b, h, c.path)
				cpu += processCPU() - cpu0
				if strings.Contains(body, "Not everything is computed yet") {
					partial++
				}
				n++
			}
			b.ReportMetric(float64(cpu)/float64(time.Millisecond)/float64(n), "cpu-ms/op")
			b.ReportMetric(float64(size)/1e3, "body-KB")
			if strings.HasPrefix(c.path, "/compilation") {
				b.ReportMetric(float64(partial)/float64(n), "cut-short/op") // pages that said what their budget left out
			}
		})
	}
}
