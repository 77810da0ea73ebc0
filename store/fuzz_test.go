package store

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// addSeeds adds every file of testdata/fuzz/NAME and the demo files whose names start with prefix.
func addSeeds(f *testing.F, name, prefix string) {
	f.Helper()
	for _, pattern := range []string{filepath.Join("..", "testdata", "fuzz", name, "*.csv"), filepath.Join("..", "testdata", "demo", prefix+"*.csv")} {
		files, err := filepath.Glob(pattern)
		if err != nil {
			f.Fatal(err)
		}
		for _, file := range files {
			b, err := os.ReadFile(file)
			if err != nil {
				f.Fatal(err)
			}
			f.Add(string(b))
		}
	}
}

// checkAllOrNothing asserts the importer's contract: success, or a validation error (never another
// error, never a panic) with nothing written.
func checkAllOrNothing(t *testing.T, db *DB, before Counts, err error) bool {
	t.Helper()
	after, cerr := db.Counts(context.Background())
	if cerr != nil {
		t.Fatal(cerr)
	}
	if err == nil {
		return true
	}
	ve, ok := AsValidation(err)
	if !ok {
		t.Fatalf("import failed with a non-validation error: %v", err)
	}
	if len(ve.Problems) == 0 {
		t.Fatal("a validation error without problems")
	}
	for _, p := range ve.Problems {
		if strings.TrimSpace(p.Message) == "" {
			t.Fatalf("a problem without a message: %+v", p)
		}
	}
	if after != before {
		t.Fatalf("a rejected file changed the compilation: %+v → %+v", before, after)
	}
	return false
}

func FuzzImportDates(f *testing.F) {
	addSeeds(f, "dates", "dates")
	f.Fuzz(func(t *testing.T, body string) {
		ctx := context.Background()
		db := mustOpenDB(t)
		if _, err := importString(t, db, "sections", "", "section\nVedholmen-1 Core\nSkarfell Creek\nMornesk Cliffs\n"); err != nil {
			t.Fatal(err)
		}
		before, _ := db.Counts(ctx)
		_, err := db.ImportDates(ctx, "fuzz.csv", strings.NewReader(body))
		if !checkAllOrNothing(t, db, before, err) {
			return
		}
		// What was accepted exports and re-imports to the same file.
		var a, b bytes.Buffer
		if err := db.Export(ctx, "dates", "", &a); err != nil {
			t.Fatal(err)
		}
		db2 := mustOpenDB(t)
		importString(t, db2, "sections", "", "section\nVedholmen-1 Core\nSkarfell Creek\nMornesk Cliffs\n")
		if _, err := db2.ImportDates(ctx, "again.csv", bytes.NewReader(a.Bytes())); err != nil {
			t.Fatalf("export of accepted dates does not re-import: %v\n%s", err, a.String())
		}
		if err := db2.Export(ctx, "dates", "", &b); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(a.Bytes(), b.Bytes()) {
			t.Fatalf("round trip differs:\n%s\n---\n%s", a.String(), b.String())
		}
	})
}

func FuzzImportMeasurements(f *testing.F) {
	addSeeds(f, "measurements", "measurements")
	f.Fuzz(func(t *testing.T, body string) {
		ctx := context.Background()
		db := mustOpenDB(t)
		if _, err := importString(t, db, "sections", "", "section\nS\n"); err != nil {
			t.Fatal(err)
		}
		before, _ := db.Counts(ctx)
		_, err := db.ImportMeasurements(ctx, "S", "fuzz.csv", strings.NewReader(body))
		if !checkAllOrNothing(t, db, before, err) {
			return
		}
		var a, b bytes.Buffer
		if err := db.Export(ctx, "measurements", "S", &a); err != nil {
			t.Fatal(err)
		}
		db2 := mustOpenDB(t)
		importString(t, db2, "sections", "", "section\nS\n")
		if _, err := db2.ImportMeasurements(ctx, "S", "again.csv", bytes.NewReader(a.Bytes())); err != nil {
			t.Fatalf("export of accepted measurements does not re-import: %v\n%s", err, a.String())
		}
		db2.Export(ctx, "measurements", "S", &b)
		if !bytes.Equal(a.Bytes(), b.Bytes()) {
			t.Fatalf("round trip differs:\n%s\n---\n%s", a.String(), b.String())
		}
	})
}

func FuzzImportTies(f *testing.F) {
	addSeeds(f, "ties", "ties")
	f.Fuzz(func(t *testing.T, body string) {
		ctx := context.Background()
		db := mustOpenDB(t)
		if _, err := importString(t, db, "sections", "", "section\nS\n"); err != nil {
			t.Fatal(err)
		}
		before, _ := db.Counts(ctx)
		_, err := db.ImportTies(ctx, "S", "fuzz.csv", strings.NewReader(body))
		checkAllOrNothing(t, db, before, err)
	})
}
