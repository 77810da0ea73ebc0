package web

import (
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"testing"

	"coeval/static"
)

// BenchmarkCompilation measures the compilation view on the demo, its events' comparisons already
// computed (the cache the comparison page and the events' pages fill), and since the view keeps what it
// computed per state of the compilation (compilationKept), every part comes from what its first request
// kept. BenchmarkDemoAnswers measures it cold (a new server per request).
// Target (compilation issue): < 500 ms cold on the demo. Besides ns/op it reports cpu-ms/op.
// go test ./web -run '^$' -bench BenchmarkCompilation -benchtime 10x
func BenchmarkCompilation(b *testing.B) {
	db := mustDemoDB(b)
	h := NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS)
	serve := func(b *testing.B, path string) {
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, path, nil))
		if rec.Code != http.StatusOK {
			b.Fatalf("%s: status %d", path, rec.Code)
		}
	}
	serve(b, "/compilation?format=json") // the events' comparisons, computed once and kept
	for _, path := range []string{"/compilation", "/compilation?format=svg", "/compilation?format=png", "/compilation?format=csv"} {
		b.Run(path, func(b *testing.B) {
			cpu0, n := processCPU(), 0
			for b.Loop() {
				serve(b, path)
				n++
			}
			reportCPU(b, cpu0, n)
		})
	}
}
