package web

import (
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"testing"
	"time"

	"coeval/static"
)

// BenchmarkTimeline renders the demo province's timeline page (density, 1000-replicate bootstrap band,
// pulses, figure) and its downloads, through the whole handler, cold: nothing is cached between
// requests. Besides ns/op it reports cpu-ms/op, the CPU time of the whole process (every worker) per
// request. Figures: BENCHMARKS.md, "Province timeline".
func BenchmarkTimeline(b *testing.B) {
	db := mustDemoDB(b)
	h := NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS)
	for _, c := range []struct{ name, path string }{
		{"unit", "/provinces/1/timeline"},            // 17 unit means, exact kernel sums
		{"date", "/provinces/1/timeline?count=date"}, // 56 dates, ISJ, binned (FFT) path
		{"date-scott", "/provinces/1/timeline?count=date&bw=scott"},
		{"date-scott-bw_each", "/provinces/1/timeline?count=date&bw=scott&bw_each=1"}, // Scott's rule in every replicate
		{"svg", "/provinces/1/timeline?format=svg"},
		{"png", "/provinces/1/timeline?format=png"},
		{"pdf", "/provinces/1/timeline?format=pdf"},
		{"json", "/provinces/1/timeline?format=json"},
		{"timescale", "/timescale"},
	} {
		b.Run(c.name, func(b *testing.B) {
			cpu0, n := processCPU(), 0
			for b.Loop() {
				rec := httptest.NewRecorder()
				h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, c.path, nil))
				if rec.Code != http.StatusOK {
					b.Fatalf("%s: status %d", c.path, rec.Code)
				}
				n++
			}
			reportCPU(b, cpu0, n)
		})
	}
}

// reportCPU reports the process's CPU time per op since cpu0, over n ops, where it can be read.
func reportCPU(b *testing.B, cpu0 time.Duration, n int) {
	if cpu := processCPU(); cpu0 > 0 && n > 0 {
		b.ReportMetric(float64(cpu-cpu0)/float64(time.Millisecond)/float64(n), "cpu-ms/op")
	}
}
