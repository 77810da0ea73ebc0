package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"coeval/store"
)

// readManifest returns the rows (kind, section, file) of dir/manifest.csv.
func readManifest(t *testing.T, dir string) [][]string {
	t.Helper()
	f, err := os.Open(filepath.Join(dir, "manifest.csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return rows[1:]
}

// importAll imports every file of dir's manifest into dbPath through the import command, in order.
func importAll(t *testing.T, ctx context.Context, dbPath, dir string) {
	t.Helper()
	for _, m := range readManifest(t, dir) {
		args := []string{"-db", dbPath, "import", m[0]}
		if m[1] != "" {
			args = append(args, m[1])
		}
		var out bytes.Buffer
		if err := run(ctx, append(args, filepath.Join(dir, m[2])), &out, io.Discard); err != nil {
			t.Fatalf("import %s: %v", m[2], err)
		}
	}
}

// exportAll exports every kind of dir's manifest from dbPath into out under the same file names.
func exportAll(t *testing.T, ctx context.Context, dbPath, dir, out string) {
	t.Helper()
	db, err := openStore(ctx, dbPath)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	for _, m := range readManifest(t, dir) {
		var b bytes.Buffer
		if err := db.Export(ctx, m[0], m[1], &b); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(out, m[2]), b.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	mf, _ := os.ReadFile(filepath.Join(dir, "manifest.csv"))
	os.WriteFile(filepath.Join(out, "manifest.csv"), mf, 0o644)
}

// `coeval demo large` writes files the importers take whole, with the sizes asked for; the compilation
// exported and imported again exports the same bytes; the same seed writes the same files.
func TestDemoLargeImportsAndRoundTrips(t *testing.T) {
	ctx := context.Background()
	tmp := t.TempDir()
	gen := func(dir, seed string) {
		var out bytes.Buffer
		err := run(ctx, []string{"demo", "large", "-o", dir, "-provinces", "3", "-units", "11", "-dates", "700",
			"-sections", "4", "-samples", "45", "-ties", "9", "-events", "6", "-seed", seed}, &out, io.Discard)
		if err != nil {
			t.Fatal(err)
		}
		if !strings.Contains(out.String(), "INVENTED") {
			t.Errorf("output %q does not say the data are invented", out.String())
		}
	}
	dir := filepath.Join(tmp, "gen")
	gen(dir, "7")
	dbPath := filepath.Join(tmp, "a.db")
	importAll(t, ctx, dbPath, dir)

	db, err := openStore(ctx, dbPath)
	if err != nil {
		t.Fatal(err)
	}
	c, err := db.Counts(ctx)
	if err != nil {
		t.Fatal(err)
	}
	var pending int
	provs, err := db.Provinces(ctx)
	if err != nil {
		t.Fatal(err)
	}
	db.Close()
	// The sizes asked for (4 sections × 45 samples, each with hg, toc and δ¹³C: 3 measurements).
	want := store.Counts{Provinces: 3, Units: 11, Dates: 700, DatesPending: c.DatesPending, Sections: 4, Samples: 180,
		Measurements: 180 * 3, TiePoints: 9, Events: 6}
	if c != want {
		t.Errorf("counts %+v, want %+v", c, want)
	}
	pending = c.DatesPending
	if pending == 0 || pending > 700/10 {
		t.Errorf("%d pending dates, want a few (about 1 in 50)", pending)
	}
	for _, p := range provs {
		if !strings.Contains(p.Name, "(invented)") || !strings.Contains(p.Description, "INVENTED") {
			t.Errorf("province %q (%q) is not labelled invented", p.Name, p.Description)
		}
	}

	// Round trip: export, import the exports into a second database, export again.
	exp1, exp2 := filepath.Join(tmp, "exp1"), filepath.Join(tmp, "exp2")
	os.Mkdir(exp1, 0o755)
	os.Mkdir(exp2, 0o755)
	exportAll(t, ctx, dbPath, dir, exp1)
	importAll(t, ctx, filepath.Join(tmp, "b.db"), exp1)
	exportAll(t, ctx, filepath.Join(tmp, "b.db"), dir, exp2)
	for _, m := range readManifest(t, dir) {
		a, _ := os.ReadFile(filepath.Join(exp1, m[2]))
		b, _ := os.ReadFile(filepath.Join(exp2, m[2]))
		if !bytes.Equal(a, b) || len(a) == 0 {
			t.Errorf("%s: the export of the re-imported compilation differs (%d and %d bytes)", m[2], len(a), len(b))
		}
	}

	// Determinism: the same seed writes the same bytes, another seed other dates.
	same, other := filepath.Join(tmp, "same"), filepath.Join(tmp, "other")
	gen(same, "7")
	gen(other, "8")
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		a, _ := os.ReadFile(filepath.Join(dir, e.Name()))
		b, err := os.ReadFile(filepath.Join(same, e.Name()))
		if err != nil || !bytes.Equal(a, b) {
			t.Errorf("%s differs between two runs with seed 7", e.Name())
		}
	}
	a, _ := os.ReadFile(filepath.Join(dir, "dates.csv"))
	b, _ := os.ReadFile(filepath.Join(other, "dates.csv"))
	if bytes.Equal(a, b) {
		t.Error("seeds 7 and 8 wrote the same dates")
	}
}

// Sizes out of range are refused naming the flag; nothing is written.
func TestDemoLargeRefusesBadSizes(t *testing.T) {
	ctx := context.Background()
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"-units", "2", "-provinces", "5"}, "units: want at least one per province"},
		{[]string{"-dates", "-1"}, "dates: want 0 or more"},
		{[]string{"-sections", "0"}, "sections: ties and events need sections"},
	} {
		dir := filepath.Join(t.TempDir(), "out")
		err := run(ctx, append([]string{"demo", "large", "-o", dir}, c.args...), io.Discard, io.Discard)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%v: error %v, want %q", c.args, err, c.want)
		}
		if _, serr := os.Stat(dir); serr == nil {
			t.Errorf("%v: %s was created", c.args, dir)
		}
	}
	if err := run(ctx, []string{"demo", "large"}, io.Discard, io.Discard); err == nil || !strings.Contains(err.Error(), "want -o DIR") {
		t.Errorf("no -o: %v", err)
	}
}
