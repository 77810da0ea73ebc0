package store

import (
	"bytes"
	"context"
	"math"
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

// fuzzImport runs an importer of kind on arbitrary files into a compilation holding the named sections:
// it accepts the file or refuses it whole (checkAllOrNothing), and what it accepted, review states
// included, exports, imports into a fresh compilation and exports again to the same file.
func fuzzImport(f *testing.F, kind, section, sections string) {
	addSeeds(f, kind, kind)
	f.Fuzz(func(t *testing.T, body string) {
		ctx := context.Background()
		db := mustOpenDB(t)
		if _, err := importString(t, db, "sections", "", sections); err != nil {
			t.Fatal(err)
		}
		before, _ := db.Counts(ctx)
		_, err := db.ImportReader(ctx, kind, section, "fuzz.csv", strings.NewReader(body))
		if !checkAllOrNothing(t, db, before, err) {
			return
		}
		var a, b bytes.Buffer
		if err := db.Export(ctx, kind, section, &a); err != nil {
			t.Fatal(err)
		}
		db2 := mustOpenDB(t)
		if _, err := importString(t, db2, "sections", "", sections); err != nil {
			t.Fatal(err)
		}
		if _, err := db2.ImportReader(ctx, kind, section, "again.csv", bytes.NewReader(a.Bytes())); err != nil {
			t.Fatalf("export of accepted %s does not re-import: %v\n%s", kind, err, a.String())
		}
		if err := db2.Export(ctx, kind, section, &b); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(a.Bytes(), b.Bytes()) {
			t.Fatalf("round trip differs:\n%s\n---\n%s", a.String(), b.String())
		}
	})
}

func FuzzImportDates(f *testing.F) {
	fuzzImport(f, "dates", "", "section\nVedholmen-1 Core\nSkarfell Creek\nMornesk Cliffs\n")
}

func FuzzImportMeasurements(f *testing.F) { fuzzImport(f, "measurements", "S", "section\nS\n") }

func FuzzImportTies(f *testing.F) { fuzzImport(f, "ties", "S", "section\nS\n") }

func FuzzImportHiatuses(f *testing.F) { fuzzImport(f, "hiatuses", "S", "section\nS\n") }

// FuzzParseDates exercises the dates parser alone (no database, so the fuzzer runs fast): it never panics,
// every problem points at a line of the file, and a row that passes has a usable age and 1σ.
func FuzzParseDates(f *testing.F) {
	addSeeds(f, "dates", "dates")
	f.Fuzz(func(t *testing.T, body string) {
		tab, err := readCSV("fuzz.csv", strings.NewReader(body))
		if err != nil {
			if _, ok := AsValidation(err); !ok {
				t.Fatalf("read: non-validation error %v", err)
			}
			return
		}
		tab.requireColumns([]string{"sample_code", "method", "interpretation", "age_ma", "sigma_ma", "sigma_level"}, dateColumns)
		if tab.err() != nil {
			return
		}
		seen := map[[2]string]int{}
		lines := strings.Count(body, "\n") + 1
		for i := range tab.rows {
			before := len(tab.problems)
			d := parseDateRow(tab.row(i), seen)
			if len(tab.problems) == before {
				if !(d.AgeMa > 0 && d.AgeMa <= 4600 && d.SigmaMa > 0 && (d.SigmaLevel == 1 || d.SigmaLevel == 2)) {
					t.Fatalf("row %d passed with age %v σ %v level %d", i, d.AgeMa, d.SigmaMa, d.SigmaLevel)
				}
			}
		}
		for _, p := range tab.problems {
			if p.Line < 0 || p.Line > lines || p.Message == "" {
				t.Fatalf("problem outside the file: %+v (file has %d lines)", p, lines)
			}
		}
	})
}

// FuzzParseMeasurements exercises the wide measurement parser alone: no panic, and values that pass are
// finite, with concentrations never negative.
func FuzzParseMeasurements(f *testing.F) {
	addSeeds(f, "measurements", "measurements")
	f.Fuzz(func(t *testing.T, body string) {
		tab, err := readCSV("fuzz.csv", strings.NewReader(body))
		if err != nil {
			return
		}
		tab.requireColumns([]string{"sample", "height_m"}, nil)
		pc := mapProxyColumns(tab)
		if tab.err() != nil {
			return
		}
		for i := range tab.rows {
			for _, col := range tab.header {
				pu, ok := pc.value[col]
				if !ok {
					continue
				}
				before := len(tab.problems)
				m, ok := parseMeasurementCell(tab.row(i), pc, col, pu)
				if !ok || len(tab.problems) != before || m.Value == nil {
					continue
				}
				v := *m.Value
				if math.IsNaN(v) || math.IsInf(v, 0) {
					t.Fatalf("non-finite value passed: %v", v)
				}
				if (pu.proxy == "hg" || pu.proxy == "toc" || pu.proxy == "ts" || pu.proxy == "al") && v < 0 {
					t.Fatalf("negative concentration passed: %v %s", v, col)
				}
			}
		}
	})
}

// FuzzDateForm fills a date form with arbitrary text: it is saved, or refused with problems that name
// form fields, and a refused form writes nothing.
func FuzzDateForm(f *testing.F) {
	f.Add("P", "U", "S-1", "upb_idtims", "eruption", "155.4", "0.06", "2", "", "")
	f.Add("", "U", "S-1", "arar_plateau", "eruption", "155.4", "0.3", "2", "28.201", "5.463e-10")
	f.Add("P", "U", "", "rocks", "?", "-1", "abc", "3", "x", "5.463")
	f.Add("P", "U", "<script>", "other", "minimum", "1e400", "NaN", "1", "", "")
	f.Fuzz(func(t *testing.T, province, unit, sample, method, interp, age, sigma, level, monitorAge, lambda string) {
		ctx := context.Background()
		db := mustOpenDB(t)
		form := Form{"province": province, "unit": unit, "sample_code": sample, "method": method, "interpretation": interp,
			"age_ma": age, "sigma_ma": sigma, "sigma_level": level, "monitor_age_ma": monitorAge, "lambda_per_a": lambda, FormNewUnit: "1"}
		before, _ := db.Counts(ctx)
		_, err := db.CreateDate(ctx, form, true)
		if err == nil {
			return
		}
		ve, ok := AsValidation(err)
		if !ok {
			t.Fatalf("non-validation error: %v", err)
		}
		for _, p := range ve.Problems {
			if p.Message == "" {
				t.Fatalf("problem without a message: %+v", p)
			}
		}
		if after, _ := db.Counts(ctx); after != before {
			t.Fatal("a refused form wrote something")
		}
	})
}
