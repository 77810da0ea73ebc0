package store

import (
	"bytes"
	"context"
	"fmt"
	"runtime"
	"runtime/metrics"
	"syscall"
	"testing"
	"time"
)

// datesCSV writes an invented dates file of n rows spread over units units of one province, mixing
// U–Pb and ⁴⁰Ar/³⁹Ar dates (every ⁴⁰Ar/³⁹Ar date with its monitor age and decay constant).
func datesCSV(n, units int) []byte {
	var buf bytes.Buffer
	buf.WriteString("province,unit,sample_code,method,material,interpretation,age_ma,sigma_ma,sigma_level,monitor,monitor_age_ma,lambda_per_a,laboratory,notes\n")
	for i := range n {
		age := 150 + float64(i%100000)*0.0001 + float64(i/100000)*10
		if i%3 == 0 {
			fmt.Fprintf(&buf, "Bench Province (invented),Unit %d,B-%06d,arar_plateau,plagioclase,eruption,%.4f,0.2,1,FCs,28.201,5.463e-10,Bench Lab (invented),plateau\n", i%units, i, age)
		} else {
			fmt.Fprintf(&buf, "Bench Province (invented),Unit %d,B-%06d,upb_idtims,zircon,eruption,%.4f,0.05,2,,,,Bench Lab (invented),weighted mean\n", i%units, i, age)
		}
	}
	return buf.Bytes()
}

// heapPeak samples the live heap (runtime/metrics, which does not stop the world as ReadMemStats does)
// every millisecond until stop is called, and returns its highest value in bytes. A short peak can fall
// between samples, but unlike one reading at the end it does not depend on when the GC last ran.
func heapPeak() (stop func() uint64) {
	runtime.GC()
	var peak uint64
	done := make(chan struct{})
	finished := make(chan struct{})
	go func() {
		defer close(finished)
		sample := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
		t := time.NewTicker(time.Millisecond)
		defer t.Stop()
		for {
			metrics.Read(sample)
			peak = max(peak, sample[0].Value.Uint64())
			select {
			case <-done:
				return
			case <-t.C:
			}
		}
	}()
	return func() uint64 {
		close(done)
		<-finished
		return peak
	}
}

// benchImportDates imports a generated dates file into a fresh database each iteration and reports the time
// per row, the highest heap (peak-MB: live objects and garbage not yet collected, the input file included),
// the bytes allocated per import (alloc-MB) and the CPU time of the process (cpu-s/op, which includes the
// heap sampler and the GC).
func benchImportDates(b *testing.B, n, units int) {
	body := datesCSV(n, units)
	ctx := context.Background()
	var peak, alloc uint64
	var cpu time.Duration
	for b.Loop() {
		b.StopTimer()
		db := mustOpenDB(b)
		var before, after runtime.MemStats
		runtime.ReadMemStats(&before)
		stop := heapPeak()
		cpu0 := cpuTime()
		b.StartTimer()
		res, err := db.ImportDates(ctx, "dates.csv", bytes.NewReader(body))
		b.StopTimer()
		cpu += cpuTime() - cpu0
		p := stop()
		runtime.ReadMemStats(&after)
		if err != nil {
			b.Fatal(err)
		}
		if res.Added["dates"] != n {
			b.Fatalf("imported %d dates, want %d", res.Added["dates"], n)
		}
		peak = max(peak, p)
		alloc = after.TotalAlloc - before.TotalAlloc
		db.Close()
		b.StartTimer()
	}
	b.ReportMetric(float64(peak)/(1<<20), "peak-MB")
	b.ReportMetric(float64(alloc)/(1<<20), "alloc-MB")
	b.ReportMetric(b.Elapsed().Seconds()/float64(b.N)/float64(n)*1e6, "µs/row")
	b.ReportMetric(cpu.Seconds()/float64(b.N), "cpu-s/op")
}

// cpuTime is the CPU time (user and system) the process has used: on a shared machine it says what the
// work cost when the wall-clock time includes waiting for the other processes.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// BenchmarkImportDates100k: 100,000 dates over 400 units (issue 13 target: < 10 s, < 200 MB peak).
func BenchmarkImportDates100k(b *testing.B) { benchImportDates(b, 100000, 400) }

// BenchmarkImportDatesOneUnit20k: 20,000 dates of one unit (issue 13 target: < 3 s).
func BenchmarkImportDatesOneUnit20k(b *testing.B) { benchImportDates(b, 20000, 1) }

// BenchmarkImportDates2k: a small file, to show nothing small got slower.
func BenchmarkImportDates2k(b *testing.B) { benchImportDates(b, 2000, 20) }
