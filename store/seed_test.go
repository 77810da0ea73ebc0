package store

import (
	"bytes"
	"context"
	"encoding/csv"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// exportAll writes every kind of record into dir with the file names of the demo manifest, plus the
// manifest itself, so the folder can be seeded again.
func exportAll(t *testing.T, db *DB, manifest [][]string, dir string) {
	t.Helper()
	ctx := context.Background()
	for _, rec := range manifest[1:] {
		kind, section, file := rec[0], rec[1], rec[2]
		var buf bytes.Buffer
		if err := db.Export(ctx, kind, section, &buf); err != nil {
			t.Fatalf("export %s %s: %v", kind, section, err)
		}
		if err := os.WriteFile(filepath.Join(dir, file), buf.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	var m bytes.Buffer
	w := csv.NewWriter(&m)
	w.WriteAll(manifest)
	if err := os.WriteFile(filepath.Join(dir, "manifest.csv"), m.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

func readManifest(t *testing.T, dir string) [][]string {
	t.Helper()
	f, err := os.Open(filepath.Join(dir, "manifest.csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return recs
}

// The demo is seeded through the ordinary importers, once; export → import → export gives identical files.
func TestSeedDemoOnceAndRoundTrip(t *testing.T) {
	ctx := context.Background()
	demo := filepath.Join("..", "testdata", "demo")
	db1 := mustOpenDB(t)
	seeded, results, err := db1.SeedDemo(ctx, os.DirFS(demo), "invented")
	if err != nil {
		t.Fatal(err)
	}
	if !seeded || len(results) == 0 {
		t.Fatalf("first seed: seeded %v with %d imports, want true", seeded, len(results))
	}
	again, _, err := db1.SeedDemo(ctx, os.DirFS(demo), "invented")
	if err != nil || again {
		t.Fatalf("second seed: seeded %v, err %v; want no second seeding", again, err)
	}
	c1, err := db1.Counts(ctx)
	if err != nil {
		t.Fatal(err)
	}
	// The demo's promised size (first issue: ≥ 14 units, ≥ 60 dates, sections of 80–300 samples with ≥ 3 ties
	// each; compilation issue: ≥ 4 provinces at different ages, ≥ 5 sections).
	if c1.Provinces < 4 || c1.Units < 14 || c1.Dates < 60 || c1.Sections < 5 || c1.TiePoints < 3*c1.Sections ||
		c1.Samples < 80*c1.Sections || c1.Samples > 300*c1.Sections {
		t.Errorf("demo counts %+v below what the scenario promises", c1)
	}
	manifest := readManifest(t, demo)
	dirA, dirB := t.TempDir(), t.TempDir()
	exportAll(t, db1, manifest, dirA)

	db2 := mustOpenDB(t)
	if _, _, err := db2.SeedDemo(ctx, os.DirFS(dirA), "invented"); err != nil {
		t.Fatalf("re-import of the export: %v", err)
	}
	exportAll(t, db2, manifest, dirB)
	c2, _ := db2.Counts(ctx)
	if c1 != c2 {
		t.Errorf("counts after round trip %+v, want %+v", c2, c1)
	}
	for _, rec := range manifest[1:] {
		a, _ := os.ReadFile(filepath.Join(dirA, rec[2]))
		b, _ := os.ReadFile(filepath.Join(dirB, rec[2]))
		if !bytes.Equal(a, b) {
			t.Errorf("%s differs after import → export → import", rec[2])
		}
	}
}

// cancelAt is the demo folder, cancelling a seeding's context when the importer opens one file: the
// seeding stops there, as when the server is stopped (or killed) while it seeds.
type cancelAt struct {
	fs.FS
	file   string
	cancel context.CancelFunc
}

func (c cancelAt) Open(name string) (fs.File, error) {
	if name == c.file {
		c.cancel()
	}
	return c.FS.Open(name)
}

// A seeding stopped midway is finished by the next one: every file once, the accounts and the label, the
// same records as a seeding that was never stopped.
func TestSeedDemoStoppedMidwayIsFinishedNextTime(t *testing.T) {
	demo := os.DirFS(filepath.Join("..", "testdata", "demo"))
	whole := mustOpenDB(t)
	if _, _, err := whole.SeedDemo(context.Background(), demo, "invented"); err != nil {
		t.Fatal(err)
	}
	want, _ := whole.Counts(context.Background())
	nFiles := len(readManifest(t, filepath.Join("..", "testdata", "demo"))) - 1 // the manifest's rows, header aside
	for _, stopAt := range []string{"provinces.csv", "dates.csv", "events-vedholmen.csv", "events-mornesk.csv"} {
		t.Run(stopAt, func(t *testing.T) {
			db := mustOpenDB(t)
			ctx, cancel := context.WithCancel(context.Background())
			if seeded, _, err := db.SeedDemo(ctx, cancelAt{demo, stopAt, cancel}, "invented"); err == nil || seeded {
				t.Fatalf("stopped at %s: seeded %v, err %v; want the stop reported", stopAt, seeded, err)
			}
			seeded, _, err := db.SeedDemo(context.Background(), demo, "invented")
			if err != nil || !seeded {
				t.Fatalf("after the stop: seeded %v, err %v; want the seeding finished", seeded, err)
			}
			ctx = context.Background()
			if got, _ := db.Counts(ctx); got != want {
				t.Errorf("counts %+v, want those of a whole seeding %+v", got, want)
			}
			var imports, files int
			db.SQL().QueryRowContext(ctx, `SELECT count(*), count(DISTINCT source) FROM change_batches WHERE kind LIKE 'import %'`).Scan(&imports, &files)
			if imports != files || files != nFiles {
				t.Errorf("%d imports of %d files, want each of the %d demo files once", imports, files, nFiles)
			}
			if label, _ := db.Setting(ctx, SettingDemo); label != "invented" {
				t.Errorf("demo label %q", label)
			}
			if _, err := db.Authenticate(ctx, "demo-admin", DemoPassword); err != nil {
				t.Errorf("demo-admin cannot sign in: %v", err)
			}
			if again, _, err := db.SeedDemo(ctx, demo, "invented"); again || err != nil {
				t.Errorf("a third seeding: seeded %v, err %v; want none", again, err)
			}
		})
	}
}

// Every part of the demo says it is invented (compilation issue: "still labelled as invented everywhere"):
// province names carry "(invented)" and their descriptions "INVENTED", laboratories "(invented)", citations
// "Invented demo data", DOIs the Crossref test prefix 10.5555, and the notes of units and sections "Invented".
func TestDemoIsLabelledInventedEverywhere(t *testing.T) {
	demo := filepath.Join("..", "testdata", "demo")
	read := func(name string) []map[string]string {
		f, err := os.Open(filepath.Join(demo, name))
		if err != nil {
			t.Fatal(err)
		}
		defer f.Close()
		recs, err := csv.NewReader(f).ReadAll()
		if err != nil || len(recs) < 2 {
			t.Fatalf("%s: %d rows, %v", name, len(recs), err)
		}
		var rows []map[string]string
		for _, r := range recs[1:] {
			m := map[string]string{}
			for i, h := range recs[0] {
				m[h] = r[i]
			}
			rows = append(rows, m)
		}
		return rows
	}
	for _, p := range read("provinces.csv") {
		if !strings.HasSuffix(p["province"], "(invented)") || !strings.HasPrefix(p["description"], "INVENTED") {
			t.Errorf("province %q is not labelled invented", p["province"])
		}
		if p["pole_source"] != "" && !strings.HasPrefix(p["pole_source"], "Invented pole for the demo") {
			t.Errorf("province %q: pole source %q is not labelled invented", p["province"], p["pole_source"])
		}
	}
	for _, d := range read("dates.csv") {
		if !strings.HasSuffix(d["laboratory"], "(invented)") || !strings.HasPrefix(d["citation"], "Invented demo data") ||
			!strings.HasPrefix(d["doi"], "10.5555/") {
			t.Errorf("date %s: laboratory %q, citation %q, doi %q not labelled invented", d["sample_code"], d["laboratory"], d["citation"], d["doi"])
		}
	}
	for _, u := range read("units.csv") {
		if !strings.HasPrefix(u["notes"], "Invented") {
			t.Errorf("unit %s: notes %q", u["unit"], u["notes"])
		}
	}
	for _, s := range read("sections.csv") {
		if !strings.HasPrefix(s["notes"], "Invented") {
			t.Errorf("section %s: notes %q", s["section"], s["notes"])
		}
	}
}
