package web

import (
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"testing"

	"coeval/static"
)

// BenchmarkPages renders the main pages of the demo through the whole handler chain (no network).
func BenchmarkPages(b *testing.B) {
	db := mustDemoDB(b)
	h := NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS)
	for _, path := range []string{"/", "/provinces/1", "/units/1", "/dates", "/dates?format=csv", "/dates/1", "/sections/1"} {
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
