package main

import (
	"bufio"
	"context"
	"fmt"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"syscall"
	"testing"
	"time"

	"coeval/store"
)

// buildCoeval builds the command once into dir and returns its path.
func buildCoeval(t *testing.T, dir string) string {
	t.Helper()
	bin := filepath.Join(dir, "coeval")
	out, err := exec.Command("go", "build", "-o", bin, ".").CombinedOutput()
	if err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	return bin
}

// bigMeasurementFile writes n samples with Hg and TOC (2n values).
func bigMeasurementFile(t *testing.T, path string, n int) {
	t.Helper()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w := bufio.NewWriter(f)
	w.WriteString("sample,height_m,hg_ppb,toc_wt_pct\n")
	for i := range n {
		fmt.Fprintf(w, "K-%06d,%.3f,%.1f,%.3f\n", i, float64(i)*0.01, 30+float64(i%40), 0.5+float64(i%17)/10)
	}
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	f.Close()
}

// Crash safety: the command imports a 100,000-row measurement file and is killed with SIGKILL at a
// random moment, 20 times; after each, the database passes PRAGMA integrity_check and holds the import
// either whole or not at all (SQLite's atomic commit; the import is one transaction).
func TestImportKilledMidwayLeavesAllOrNothing(t *testing.T) {
	if testing.Short() {
		t.Skip("crash-safety trials skipped with -short")
	}
	dir := t.TempDir()
	bin := buildCoeval(t, dir)
	const rows = 100_000
	csvPath := filepath.Join(dir, "big.csv")
	bigMeasurementFile(t, csvPath, rows)
	sections := filepath.Join(dir, "sections.csv")
	os.WriteFile(sections, []byte("section\nCrash Test Section\n"), 0o644)

	// How long one import takes here, to spread the kills over it.
	probe := filepath.Join(dir, "probe.db")
	if out, err := exec.Command(bin, "-db", probe, "import", "sections", sections).CombinedOutput(); err != nil {
		t.Fatalf("%v: %s", err, out)
	}
	start := time.Now()
	if out, err := exec.Command(bin, "-db", probe, "import", "measurements", "Crash Test Section", csvPath).CombinedOutput(); err != nil {
		t.Fatalf("%v: %s", err, out)
	}
	full := time.Since(start)
	t.Logf("a whole import of %d samples (%d values) takes %v", rows, 2*rows, full)

	rng := rand.New(rand.NewPCG(20261201, 1))
	var whole, none int
	for trial := range 20 {
		db := filepath.Join(dir, "trial"+strconv.Itoa(trial)+".db")
		if out, err := exec.Command(bin, "-db", db, "import", "sections", sections).CombinedOutput(); err != nil {
			t.Fatalf("%v: %s", err, out)
		}
		cmd := exec.Command(bin, "-db", db, "import", "measurements", "Crash Test Section", csvPath)
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		wait := time.Duration(rng.Float64() * 1.1 * float64(full))
		time.Sleep(wait)
		cmd.Process.Signal(syscall.SIGKILL)
		cmd.Wait()

		ctx := context.Background()
		s, err := store.Open(ctx, db)
		if err != nil {
			t.Fatalf("trial %d: reopen: %v", trial, err)
		}
		var check string
		if err := s.SQL().QueryRowContext(ctx, `PRAGMA integrity_check`).Scan(&check); err != nil || check != "ok" {
			t.Fatalf("trial %d (killed after %v): integrity_check %q %v", trial, wait, check, err)
		}
		c, err := s.Counts(ctx)
		s.Close()
		if err != nil {
			t.Fatal(err)
		}
		switch c.Measurements {
		case 0:
			none++
		case 2 * rows:
			whole++
		default:
			t.Fatalf("trial %d (killed after %v): %d values stored, want 0 or %d", trial, wait, c.Measurements, 2*rows)
		}
	}
	t.Logf("20 kills: %d imports wholly present, %d wholly absent, none partial", whole, none)
}
