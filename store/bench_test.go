package store

import (
	"bytes"
	"context"
	"fmt"
	"testing"
)

// BenchmarkImportMeasurements imports a 2,000-sample wide file (hg, toc, d13c_org, ts: 8,000 values) into a fresh
// section each iteration: the throughput of the all-or-nothing import path.
func BenchmarkImportMeasurements(b *testing.B) {
	var buf bytes.Buffer
	buf.WriteString("sample,height_m,hg_ppb,hg_sigma_ppb,toc_wt_pct,d13c_org_permil,ts_wt_pct\n")
	for i := range 2000 {
		fmt.Fprintf(&buf, "S-%05d,%.2f,%.1f,%.1f,%.3f,%.2f,%.3f\n", i, float64(i)*0.05, 40+float64(i%50), 2.0, 1+float64(i%7)/10, -27+float64(i%9)/10, 0.5)
	}
	body := buf.Bytes()
	db := mustOpenDB(b)
	ctx := context.Background()
	n := 0
	for b.Loop() {
		n++
		name := fmt.Sprintf("S%d", n)
		if _, err := db.ImportSections(ctx, "s.csv", bytes.NewReader([]byte("section\n"+name+"\n"))); err != nil {
			b.Fatal(err)
		}
		if _, err := db.ImportMeasurements(ctx, name, "m.csv", bytes.NewReader(body)); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(b.Elapsed().Seconds())/float64(n)/8000*1e6, "µs/value")
}
