package web

import (
	"context"
	"database/sql"
	"fmt"
	"html"
	"net/http"
	"net/http/httptest"
	"runtime"
	"runtime/metrics"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"
)

// scaleDates is the size of the invented compilation of the scale benchmarks (issue 13's targets).
const scaleDates = 100_000

// BenchmarkScaleLists measures the feed of changes, a change's pages and the dates list's pages, first
// and deep, on an invented compilation of 100,000 dates, through the whole handler chain.
// go test ./web -run '^$' -bench BenchmarkScaleLists -benchtime 20x
func BenchmarkScaleLists(b *testing.B) {
	s := newScaleDB(b, scaleDates)
	h := s.handler()
	fetch := func(b *testing.B, path string) string {
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, path, nil))
		if rec.Code != http.StatusOK {
			b.Fatalf("%s: status %d", path, rec.Code)
		}
		return rec.Body.String()
	}
	// A deep page by its cursor: the next link of page n-1 (reached once by rows skipped).
	deep := func(b *testing.B, n int, query string) string {
		body := fetch(b, fmt.Sprintf("/dates?page=%d&%s", n-1, query))
		m := nextLink.FindStringSubmatch(body)
		if m == nil {
			b.Fatalf("%s: page %d has no next link", query, n-1)
		}
		return html.UnescapeString(m[1])
	}
	paths := []string{"/changes", "/changes?page=5",
		fmt.Sprintf("/changes/%d", s.importBatch),
		fmt.Sprintf("/changes/%d?after=%d", s.importBatch, scaleDates-1500),
		fmt.Sprintf("/changes/%d", s.uploadBatch),
		"/dates", "/dates?page=2000"}
	for _, sort := range []string{"-age", "sample", "-unit", "method", "material", "sigma", "lab", "added"} {
		paths = append(paths, deep(b, 2000, "sort="+sort))
	}
	paths = append(paths, deep(b, 40, "province=7&sort=-age"), deep(b, 600, "method=arar_plateau&sort=sample"),
		"/dates?method=arar_plateau&sort=-age&page=300") // an old link: rows skipped through a filter
	for _, path := range paths {
		b.Run(path, func(b *testing.B) {
			for b.Loop() {
				fetch(b, path)
			}
		})
	}
	// The store's side of accept and of the pending counts: the pending records of the large import (none)
	// and of the upload (1,000), and accepting the import, which has nothing pending (refused, so the run
	// can repeat; it reads what accepting would).
	ctx := context.Background()
	for name, batch := range map[string]int64{"pending-of-import": s.importBatch, "pending-of-upload": s.uploadBatch} {
		b.Run(name, func(b *testing.B) {
			for b.Loop() {
				if _, err := s.db.PendingInBatch(ctx, batch); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
	b.Run("accept-import-nothing-pending", func(b *testing.B) {
		for b.Loop() {
			if _, _, err := s.db.AcceptBatch(ctx, s.importBatch); err == nil {
				b.Fatal("accepted a change with nothing pending")
			}
		}
	})
}

// discard is a ResponseWriter that keeps nothing of the body but its length, so that the memory measured
// is the server's, not a recorder's copy of the answer.
type discard struct {
	h http.Header
	n int64
}

func (d *discard) Header() http.Header         { return d.h }
func (d *discard) WriteHeader(int)             {}
func (d *discard) Write(p []byte) (int, error) { d.n += int64(len(p)); return len(p), nil }

// BenchmarkScaleDatesCSV measures the download of all 100,000 dates as CSV: time, and the most heap the
// server holds during the answer above what it held before (peak-heap-MB, sampled every millisecond).
// go test ./web -run '^$' -bench BenchmarkScaleDatesCSV -benchtime 5x
func BenchmarkScaleDatesCSV(b *testing.B) {
	s := newScaleDB(b, scaleDates)
	h := s.handler()
	var peak float64
	sample := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
	heap := func() float64 { metrics.Read(sample); return float64(sample[0].Value.Uint64()) }
	var size int64
	for b.Loop() {
		runtime.GC()
		base := heap()
		done := make(chan struct{})
		var wg sync.WaitGroup
		var top float64
		wg.Add(1)
		go func() {
			defer wg.Done()
			t := time.NewTicker(time.Millisecond)
			defer t.Stop()
			for {
				if v := heap() - base; v > top {
					top = v
				}
				select {
				case <-done:
					return
				case <-t.C:
				}
			}
		}()
		w := &discard{h: http.Header{}}
		h.ServeHTTP(w, httptest.NewRequest(http.MethodGet, "/dates?format=csv", nil))
		close(done)
		wg.Wait()
		peak, size = max(peak, top), w.n
	}
	if size < 10_000_000 {
		b.Fatalf("the download is %d bytes: not every date", size)
	}
	b.ReportMetric(peak/1e6, "peak-heap-MB")
	b.ReportMetric(float64(size)/1e6, "body-MB")
}

// moveUnits moves units 1–n of the scale compilation into province 1, so that one province holds n×225
// dates (45 units: 10,125 dates, the size of issue 13's timeline target).
func (s scaleDB) moveUnits(tb testing.TB, n int) {
	tb.Helper()
	raw, err := sql.Open("sqlite", "file:"+s.path+"?_pragma=busy_timeout(5000)")
	if err != nil {
		tb.Fatal(err)
	}
	defer raw.Close()
	if _, err := raw.Exec(`UPDATE units SET province_id = 1 WHERE id <= ?`, n); err != nil {
		tb.Fatal(err)
	}
}

// BenchmarkScaleTimeline renders the timeline page of a province of 10,125 dates in 45 units, within the
// compilation of 100,000, counting one value per unit (the default) and every date, cold (a new seed each
// time, so the timeline cache holds nothing to reuse) and warm (the same address again); it reports the size of
// the page (html-KB) and the CPU time of the whole process per request (cpu-ms/op: every worker, so
// above ns/op where the bootstrap runs in parallel, and a fairer figure than ns/op on a shared machine).
// go test ./web -run '^$' -bench BenchmarkScaleTimeline -benchtime 10x
func BenchmarkScaleTimeline(b *testing.B) {
	s := newScaleDB(b, scaleDates)
	s.moveUnits(b, 45)
	h := s.handler()
	for _, c := range []struct {
		name, path string
		cold       bool // a new bootstrap seed each time: nothing kept is reused
	}{
		{"unit-cold", "/provinces/1/timeline", true},
		{"date-cold", "/provinces/1/timeline?count=date", true},
		{"unit", "/provinces/1/timeline", false},
		{"date", "/provinces/1/timeline?count=date", false},
		{"svg", "/provinces/1/timeline?format=svg", false},
	} {
		b.Run(c.name, func(b *testing.B) {
			var size int
			cpu0, n := processCPU(), 0
			for b.Loop() {
				rec := httptest.NewRecorder()
				path := c.path
				if c.cold {
					path += map[bool]string{true: "&", false: "?"}[strings.Contains(path, "?")] + "seed=" + strconv.Itoa(1000+n)
				}
				h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, path, nil))
				if rec.Code != http.StatusOK {
					b.Fatalf("%s: status %d", c.path, rec.Code)
				}
				size = rec.Body.Len()
				n++
			}
			b.ReportMetric(float64(size)/1e3, "html-KB")
			reportCPU(b, cpu0, n)
		})
	}
}
