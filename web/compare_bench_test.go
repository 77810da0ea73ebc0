package web

import (
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"testing"
	"time"
)

// The demo comparison page (2 pulses × 10 events, 10,000 joint draws, sensitivity over 7 alternatives;
// with rows=both also the 17 units × 10 events).
// Cold: a new cache every time (density, bootstrap, age models, joint draws, sensitivity, page);
// warm: the result from the cache, the page rendered (sorting, table, figure SVG).
func BenchmarkComparePage(b *testing.B) {
	db := mustDemoDB(b)
	s := &Server{store: db, log: slog.New(slog.NewTextHandler(io.Discard, nil))}
	serve := func(c *comparer, path string) {
		w := httptest.NewRecorder()
		c.handle(c.handleCompare)(w, httptest.NewRequest(http.MethodGet, path, nil))
		if w.Code != http.StatusOK {
			b.Fatalf("status %d", w.Code)
		}
	}
	b.Run("cold", func(b *testing.B) {
		cpu0, n := processCPU(), 0
		for b.Loop() {
			serve(&comparer{Server: s, cache: newCompareCache(4)}, "/compare")
			n++
		}
		b.ReportMetric(float64(processCPU()-cpu0)/float64(time.Millisecond)/float64(n), "cpu-ms/op")
	})
	b.Run("cold-nosens", func(b *testing.B) {
		for b.Loop() {
			serve(&comparer{Server: s, cache: newCompareCache(4)}, "/compare?sens=0")
		}
	})
	b.Run("warm", func(b *testing.B) {
		c := &comparer{Server: s, cache: newCompareCache(4)}
		serve(c, "/compare")
		for b.Loop() {
			serve(c, "/compare")
		}
	})
	// Unit rows too (rows=both: 2 pulses and 17 units × 10 events, the order matrix of 31 items).
	b.Run("cold-both", func(b *testing.B) {
		for b.Loop() {
			serve(&comparer{Server: s, cache: newCompareCache(4)}, "/compare?rows=both")
		}
	})
	b.Run("warm-both", func(b *testing.B) {
		c := &comparer{Server: s, cache: newCompareCache(4)}
		serve(c, "/compare?rows=both")
		for b.Loop() {
			serve(c, "/compare?rows=both")
		}
	})
	b.Run("warm-csv", func(b *testing.B) {
		c := &comparer{Server: s, cache: newCompareCache(4)}
		serve(c, "/compare")
		for b.Loop() {
			serve(c, "/compare?format=csv")
		}
	})
}
