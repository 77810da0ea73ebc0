package web

import (
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"path/filepath"
	"testing"

	"coeval/static"
	"coeval/store"
	"coeval/testdata/demo/large"
)

// newLargeSections imports an invented compilation of `coeval demo large` with the given sizes (as the
// demo is seeded) and returns its store and a handler.
func newLargeSections(tb testing.TB, sz large.Sizes) (*store.DB, http.Handler) {
	tb.Helper()
	dir := tb.TempDir()
	if _, err := large.Write(filepath.Join(dir, "large"), sz); err != nil {
		tb.Fatal(err)
	}
	db := seededDB(tb, filepath.Join(dir, "large.db"), filepath.Join(dir, "large"), "Large invented compilation for the benchmarks.")
	return db, NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS, WithSessionCleanup(0))
}

// BenchmarkScaleSections renders the aligned view of 30 sections of 300 samples (150 ties, 150 events:
// the sections of issue 13's large compilation) and the page of one section of 10,000 samples: warm (the
// analyses cached by a first request outside the timing) and cold (a new server, so an empty cache, for
// every request). cpu-ms/op is the CPU time of the whole process per request.
// go test ./web -run '^$' -bench BenchmarkScaleSections -benchtime 10x
func BenchmarkScaleSections(b *testing.B) {
	for _, c := range []struct {
		name, path string
		sz         large.Sizes
	}{
		{"aligned-30x300", "/sections/aligned", large.Sizes{Provinces: 1, Units: 1, Dates: 200, Sections: 30, SamplesPerSection: 300, Ties: 150, Events: 150, Seed: 2013}},
		{"section-10000", "/sections/1", large.Sizes{Provinces: 1, Units: 1, Dates: 20, Sections: 1, SamplesPerSection: 10_000, Ties: 8, Events: 5, Seed: 2013}},
	} {
		db, _ := newLargeSections(b, c.sz)
		newHandler := func() http.Handler {
			return NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS, WithSessionCleanup(0))
		}
		fetch := func(b *testing.B, h http.Handler) int {
			rec := httptest.NewRecorder()
			h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, c.path, nil))
			if rec.Code != http.StatusOK {
				b.Fatalf("%s: status %d", c.path, rec.Code)
			}
			return rec.Body.Len()
		}
		// Warm: the analyses computed once before the timing, then served from the cache.
		b.Run(c.name+"-warm", func(b *testing.B) {
			h := newHandler()
			fetch(b, h)
			var size int
			cpu0, n := processCPU(), 0
			for b.Loop() {
				size = fetch(b, h)
				n++
			}
			b.ReportMetric(float64(size)/1e3, "html-KB")
			reportCPU(b, cpu0, n)
		})
		// Cold: a new server (an empty cache) for every request, so every analysis is computed.
		b.Run(c.name+"-cold", func(b *testing.B) {
			cpu0, n := processCPU(), 0
			for b.Loop() {
				b.StopTimer()
				h := newHandler()
				b.StartTimer()
				fetch(b, h)
				n++
			}
			reportCPU(b, cpu0, n)
		})
	}
}
