package web

import (
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"testing"

	"coeval/static"
)

// BenchmarkTimeline renders the demo province's timeline page (density, 1000-replicate bootstrap band,
// pulses, figure) and its downloads, through the whole handler. Figures: BENCHMARKS in web/TIMELINE.md.
func BenchmarkTimeline(b *testing.B) {
	db := mustDemoDB(b)
	h := NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS)
	for _, path := range []string{"/provinces/1/timeline", "/provinces/1/timeline?count=date", "/provinces/1/timeline?format=svg",
		"/provinces/1/timeline?format=png", "/provinces/1/timeline?format=pdf", "/provinces/1/timeline?format=json", "/timescale"} {
		b.Run(path, func(b *testing.B) {
			for b.Loop() {
				rec := httptest.NewRecorder()
				h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, path, nil))
				if rec.Code != http.StatusOK {
					b.Fatalf("%s: status %d", path, rec.Code)
				}
			}
		})
	}
}
