package store

import (
	"bytes"
	"context"
	"testing"
	"time"
)

// BenchmarkProvinceDates reads a province's 10,000 dates in 45 units (what a cold timeline reads first)
// and reports the CPU time of the process per read (cpu-ms/op).
// go test ./store -run '^$' -bench BenchmarkProvinceDates -benchtime 20x
func BenchmarkProvinceDates(b *testing.B) {
	ctx := context.Background()
	db := mustOpenDB(b)
	if _, err := db.ImportDates(ctx, "dates.csv", bytes.NewReader(datesCSV(10_000, 45))); err != nil {
		b.Fatal(err)
	}
	var cpu time.Duration
	for b.Loop() {
		cpu0 := cpuTime()
		pd, err := db.ProvinceDates(ctx, 1)
		cpu += cpuTime() - cpu0
		if err != nil || len(pd.Dates) != 10_000 {
			b.Fatalf("%d dates, %v", len(pd.Dates), err)
		}
	}
	b.ReportMetric(float64(cpu)/float64(time.Millisecond)/float64(b.N), "cpu-ms/op")
}
