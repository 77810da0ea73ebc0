package web

import (
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"testing"

	"coeval/static"
)

// BenchmarkEventAnswer measures an event's page with its answer on the demo, its province's comparison
// already computed (the cache the comparison page fills), and the list of events with every answer.
// Target (compilation issue): an event's page < 300 ms cold on the demo with its comparisons cached; /events/15
// is the demo's event that two provinces could both explain (two comparisons read).
// go test ./web -run '^$' -bench BenchmarkEventAnswer -benchtime 20x
func BenchmarkEventAnswer(b *testing.B) {
	db := mustDemoDB(b)
	h := NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS)
	serve := func(b *testing.B, path string) {
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, path, nil))
		if rec.Code != http.StatusOK {
			b.Fatalf("%s: status %d", path, rec.Code)
		}
	}
	serve(b, "/compare?province=1") // the comparison, computed once and kept
	// Event 15 (the Hg anomaly of Brisvane-3 Core) is answered by two provinces (3 and 4), whose
	// comparisons are computed once here too.
	serve(b, "/compare?province=3")
	serve(b, "/compare?province=4")
	for _, path := range []string{"/events/8", "/events/15", "/events"} {
		b.Run(path, func(b *testing.B) {
			for b.Loop() {
				serve(b, path)
			}
		})
	}
}
