package main

import (
	"bufio"
	"bytes"
	"context"
	"encoding/csv"
	"fmt"
	"io"
	"net/http"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"
)

// startServe runs `coeval -db path -addr 127.0.0.1:0` and returns the URL it prints, everything it prints
// (read after stop), and a stop function that cancels it like SIGINT would and waits for it to return.
func startServe(t *testing.T, dbPath string) (string, func() (string, error)) {
	t.Helper()
	ctx, cancel := context.WithCancel(context.Background())
	pr, pw := io.Pipe()
	done := make(chan error, 1)
	go func() {
		done <- run(ctx, []string{"-db", dbPath, "-addr", "127.0.0.1:0"}, pw, io.Discard)
		pw.Close()
	}()
	var out bytes.Buffer
	urlc := make(chan string, 1)
	go func() {
		sc := bufio.NewScanner(pr)
		re := regexp.MustCompile(`serving (http://\S+)`)
		for sc.Scan() {
			out.WriteString(sc.Text() + "\n")
			if m := re.FindStringSubmatch(sc.Text()); m != nil {
				urlc <- m[1]
			}
		}
		close(urlc)
	}()
	var url string
	select {
	case url = <-urlc:
	case err := <-done:
		t.Fatalf("serve returned before serving: %v", err)
	case <-time.After(60 * time.Second):
		t.Fatal("serve did not print its URL within 60 s")
	}
	return url, func() (string, error) {
		cancel()
		var err error
		select {
		case err = <-done:
		case <-time.After(15 * time.Second):
			t.Fatal("serve did not stop within 15 s of cancellation")
		}
		for range urlc {
		}
		return out.String(), err
	}
}

// The first start creates, migrates and seeds the file; the second reuses it and does not seed again;
// cancellation (as on SIGINT/SIGTERM) shuts the server down gracefully.
func TestServeSeedsOnceAndStopsGracefully(t *testing.T) {
	dbPath := filepath.Join(t.TempDir(), "coeval.db")
	url, stop := startServe(t, dbPath)
	res, err := http.Get(url + "/")
	if err != nil {
		t.Fatal(err)
	}
	body, _ := io.ReadAll(res.Body)
	res.Body.Close()
	if res.StatusCode != 200 || !strings.Contains(string(body), "Hvarn Plateau Basalts") {
		t.Fatalf("home page: status %d, demo province missing", res.StatusCode)
	}
	out, err := stop()
	if err != nil {
		t.Fatalf("serve: %v", err)
	}
	if !strings.Contains(out, "seeded the invented demo scenario") || !strings.Contains(out, "stopped") {
		t.Errorf("first start printed %q: want the seeding and the stop", out)
	}
	url, stop = startServe(t, dbPath)
	res, err = http.Get(url + "/dates?format=json&per=1")
	if err != nil {
		t.Fatal(err)
	}
	body, _ = io.ReadAll(res.Body)
	res.Body.Close()
	out, err = stop()
	if err != nil {
		t.Fatal(err)
	}
	if strings.Contains(out, "seeded") {
		t.Errorf("second start seeded again: %q", out)
	}
	// As many dates as the demo's dates.csv has rows (header aside): imported once, not twice.
	f, err := os.Open(filepath.Join("testdata", "demo", "dates.csv"))
	if err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(f).ReadAll()
	f.Close()
	if err != nil {
		t.Fatal(err)
	}
	if want := fmt.Sprintf(`"total": %d,`, len(rows)-1); !strings.Contains(string(body), want) {
		t.Errorf("second start does not hold the demo's %d dates once: %.200s", len(rows)-1, body)
	}
}

func TestImportCommandRejectsWholeFileAndExportRoundTrips(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	dbPath := filepath.Join(dir, "c.db")
	bad := filepath.Join(dir, "bad.csv")
	os.WriteFile(bad, []byte("province,unit,sample_code,method,interpretation,age_ma,sigma_ma,sigma_level\n"+
		"P,U,A-1,upb_idtims,eruption,155.4,0.06,2\n"+
		"P,U,A-2,upb_idtims,eruption,,0.06,2\n"), 0o644)
	var stdout bytes.Buffer
	err := run(ctx, []string{"-db", dbPath, "import", "dates", bad}, &stdout, io.Discard)
	if err == nil || !strings.Contains(err.Error(), "bad.csv: line 3, column age_ma") || !strings.Contains(err.Error(), "nothing was imported") {
		t.Fatalf("bad import: got %v, want the file, line and column and 'nothing was imported'", err)
	}
	var exported bytes.Buffer
	if err := run(ctx, []string{"-db", dbPath, "export", "dates"}, &exported, io.Discard); err != nil {
		t.Fatal(err)
	}
	if n := strings.Count(exported.String(), "\n"); n != 1 {
		t.Fatalf("after a rejected import the export has %d lines, want only the header", n)
	}
	good := filepath.Join("testdata", "demo", "dates.csv")
	sections := filepath.Join("testdata", "demo", "sections.csv")
	if err := run(ctx, []string{"-db", dbPath, "import", "sections", sections}, &stdout, io.Discard); err != nil {
		t.Fatal(err)
	}
	if err := run(ctx, []string{"-db", dbPath, "import", "dates", good}, &stdout, io.Discard); err != nil {
		t.Fatal(err)
	}
	out1 := filepath.Join(dir, "out1.csv")
	if err := run(ctx, []string{"-db", dbPath, "export", "dates", "-o", out1}, io.Discard, io.Discard); err != nil {
		t.Fatal(err)
	}
	db2 := filepath.Join(dir, "c2.db")
	if err := run(ctx, []string{"-db", db2, "import", "sections", sections}, io.Discard, io.Discard); err != nil {
		t.Fatal(err)
	}
	if err := run(ctx, []string{"-db", db2, "import", "dates", out1}, io.Discard, io.Discard); err != nil {
		t.Fatalf("re-import of the export: %v", err)
	}
	out2 := filepath.Join(dir, "out2.csv")
	if err := run(ctx, []string{"-db", db2, "export", "dates", "-o", out2}, io.Discard, io.Discard); err != nil {
		t.Fatal(err)
	}
	a, _ := os.ReadFile(out1)
	b, _ := os.ReadFile(out2)
	if !bytes.Equal(a, b) || len(a) < 1000 {
		t.Error("import → export → import → export is not identical")
	}
	for _, args := range [][]string{{"import"}, {"import", "rocks", "x.csv"}, {"import", "measurements", "x.csv"}, {"export", "ties"}, {"frobnicate"}} {
		if err := run(ctx, append([]string{"-db", dbPath}, args...), io.Discard, io.Discard); err == nil {
			t.Errorf("%v: want a usage error", args)
		}
	}
}
