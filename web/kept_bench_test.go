package web

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"testing"
	"time"

	"coeval/static"
	"coeval/store"
	"coeval/testdata/demo/large"
)

// BenchmarkKeptAfterWrite measures computed pages asked for again after a write elsewhere in the
// compilation (a date of a province the page does not read edited before every request, as the writers
// of the load test do): the timeline of a province of 10,125 dates within the compilation of 100,000, and
// on issue 13's compilation (40 provinces, 8,000 dates, 30 sections × 300 samples) a section's page, the
// aligned sections and a comparison. The kept result is found by the versions of what it reads, so no
// record is read. cpu-ms/op is the CPU time of the whole process per request, the write left out (it is
// measured apart, as "write").
// go test ./web -run '^$' -bench BenchmarkKeptAfterWrite -benchtime 10x
func BenchmarkKeptAfterWrite(b *testing.B) {
	ctx := store.WithActor(context.Background(), 0)
	// edit returns a write of a date of the province, each with a new note.
	edit := func(b *testing.B, db *store.DB, province int64) func() {
		ds, _, err := db.Dates(ctx, store.DateFilter{ProvinceID: province, Limit: 1})
		if err != nil || len(ds) == 0 {
			b.Fatalf("no date in province %d: %v", province, err)
		}
		d, n := ds[0], 0
		return func() {
			n++
			f := store.FormOfDate(d)
			f["notes"] = fmt.Sprintf("edited %d", n)
			if d, err = db.UpdateDate(ctx, d.ID, d.Version, f, true); err != nil {
				b.Fatal(err)
			}
		}
	}
	run := func(b *testing.B, h http.Handler, write func(), path string) {
		fetch := func() {
			rec := httptest.NewRecorder()
			h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, path, nil))
			if rec.Code != http.StatusOK {
				b.Fatalf("%s: status %d", path, rec.Code)
			}
		}
		fetch() // computed once, outside the timing
		var cpu, cpuWrite time.Duration
		n := 0
		for b.Loop() {
			c0 := processCPU()
			write()
			c1 := processCPU()
			fetch()
			cpu += processCPU() - c1
			cpuWrite += c1 - c0
			n++
		}
		if n > 0 && cpu > 0 {
			b.ReportMetric(float64(cpu)/float64(time.Millisecond)/float64(n), "cpu-ms/op")
			b.ReportMetric(float64(cpuWrite)/float64(time.Millisecond)/float64(n), "write-cpu-ms/op")
		}
	}

	s := newScaleDB(b, scaleDates)
	s.moveUnits(b, 45)
	h := s.handler()
	provs, err := s.db.Provinces(ctx)
	if err != nil {
		b.Fatal(err)
	}
	other := int64(0) // a province with dates other than the one drawn
	for _, p := range provs {
		if p.ID != 1 && p.NDates > 0 {
			other = p.ID
		}
	}
	b.Run("timeline-10125", func(b *testing.B) { run(b, h, edit(b, s.db, other), "/provinces/1/timeline") })

	db, _ := newLargeSections(b, large.Sizes{Provinces: 40, Units: 400, Dates: 8000, Sections: 30, SamplesPerSection: 300, Ties: 150, Events: 150, Seed: 2013})
	h = NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS, WithSessionCleanup(0))
	write := edit(b, db, 40)
	for _, c := range []struct{ name, path string }{
		{"section", "/sections/4"},
		{"aligned-30x300", "/sections/aligned"},
		{"compare", "/compare?province=3&sections=1,2&sens=0"},
	} {
		b.Run(c.name, func(b *testing.B) { run(b, h, write, c.path) })
	}
}
