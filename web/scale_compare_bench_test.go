package web

import (
	"fmt"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"

	"coeval/static"
	"coeval/testdata/demo/large"
)

// BenchmarkScaleCompare measures the comparison on the compilation of issue 13's trial (40 provinces,
// 400 units, 8,000 dates mixing U–Pb and ⁴⁰Ar/³⁹Ar, 30 sections × 300 samples, 150 ties, 150 events):
// a request over the 60-event limit (every section: 150 events), answered 400 before anything is
// computed; a cold one with the sensitivity set (a new seed each time, so nothing kept is reused); and a
// warm one (the same address again). cpu-ms/op is the CPU time of the whole process per request.
// go test ./web -run '^$' -bench BenchmarkScaleCompare -benchtime 5x
// trialSizes are the sizes of issue 13's trial compilation, shared by the benchmarks at that size.
var trialSizes = large.Sizes{Provinces: 40, Units: 400, Dates: 8000, Sections: 30, SamplesPerSection: 300, Ties: 150, Events: 150, Seed: 2013}

func BenchmarkScaleCompare(b *testing.B) {
	sz := trialSizes
	db, _ := newLargeSections(b, sz)
	h := NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS, WithSessionCleanup(0))
	var all []string
	for i := 1; i <= sz.Sections; i++ {
		all = append(all, fmt.Sprint(i))
	}
	fetch := func(b *testing.B, path string, want int) {
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, path, nil))
		if rec.Code != want {
			b.Fatalf("%s: status %d, want %d: %.300s", path, rec.Code, want, rec.Body.String())
		}
	}
	cases := []struct {
		name, path string
		status     int
		cold       bool
	}{
		{"over-limit", "/compare?province=1&sens=1&sections=" + strings.Join(all, ","), http.StatusBadRequest, false},
		{"cold-with-sensitivity", "/compare?province=1&sens=1&sections=1,2", http.StatusOK, true},
		{"warm-with-sensitivity", "/compare?province=1&sens=1&sections=1,2", http.StatusOK, false},
	}
	for _, c := range cases {
		b.Run(c.name, func(b *testing.B) {
			if !c.cold {
				fetch(b, c.path, c.status) // the first, outside the timing
			}
			cpu0, n := processCPU(), 0
			for b.Loop() {
				path := c.path
				if c.cold {
					path += fmt.Sprintf("&seed=%d", 100+n)
				}
				fetch(b, path, c.status)
				n++
			}
			reportCPU(b, cpu0, n)
		})
	}
}
