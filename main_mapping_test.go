package main

import (
	"bytes"
	"context"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"coeval/store"
)

// A paper's table (invented values: a title, a header over two rows, ages in ka with 2σ in %, the header
// repeated, a note) imported from the command line through a saved mapping; the mappings exported and
// imported into another database, which then reads the same table the same way.
func TestImportThroughASavedMappingAndMoveMappings(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	table := "Table S3 (invented values),,,\nSample,Unit,Plateau age,\n,,Age (ka),± 2σ (%)\nCL-1,Flow A,155460,0.5\n" +
		"Sample,Unit,Plateau age,\n,,Age (ka),± 2σ (%)\nCL-2,Flow B,155120,0.25\na Plateau ages preferred.,,,\n"
	file := filepath.Join(dir, "tableS3.csv")
	os.WriteFile(file, []byte(table), 0o644)
	dbA := filepath.Join(dir, "a.db")
	db, err := openStore(ctx, dbA)
	if err != nil {
		t.Fatal(err)
	}
	m := store.NewMapping()
	m.Name, m.HeaderRow, m.HeaderRows, m.AgeUnit, m.SigmaForm = "Invented lab", 2, 2, "ka", "percent"
	m.Columns = map[string]string{"sample_code": "Sample", "unit": "Unit", "age_ma": "Plateau age Age (ka)", "sigma_ma": "Plateau age ± 2σ (%)"}
	m.Constants = map[string]string{"province": "P", "method": "arar_plateau", "interpretation": "eruption", "sigma_level": "2"}
	m.Headers = []string{"Sample", "Unit", "Plateau age Age (ka)", "Plateau age ± 2σ (%)"}
	if err := db.SaveMapping(ctx, m); err != nil {
		t.Fatal(err)
	}
	db.Close()

	if err := run(ctx, []string{"-db", dbA, "import", "dates", file, "-mapping", "No such lab"}, io.Discard, io.Discard); err == nil || !strings.Contains(err.Error(), `no saved mapping named "No such lab" (saved: Invented lab)`) {
		t.Errorf("an unknown mapping: %v", err)
	}
	bad := filepath.Join(dir, "bad.csv")
	os.WriteFile(bad, []byte(strings.Replace(table, "155120", "n.d.", 1)), 0o644)
	err = run(ctx, []string{"-db", dbA, "import", "dates", bad, "-mapping", "Invented lab"}, io.Discard, io.Discard)
	if err == nil || !strings.Contains(err.Error(), "bad.csv: line 7, column age_ma (the file's “Plateau age Age (ka)”): \"n.d.\" is not a number") || !strings.Contains(err.Error(), "nothing was imported") {
		t.Errorf("an age holding text: %v", err)
	}
	var out bytes.Buffer
	if err := run(ctx, []string{"-db", dbA, "import", "dates", file, "-mapping=Invented lab"}, &out, io.Discard); err != nil {
		t.Fatal(err)
	}
	if s := out.String(); !strings.Contains(s, "imported 2 rows") || !strings.Contains(s, "skipped line 5 (repeats the header)") || !strings.Contains(s, "skipped line 8 (a note") {
		t.Errorf("the import says %q", s)
	}
	// 155460 ka = 155.46 Ma; 0.5 % of it = 0.7773 Ma at 2σ, exported as published (2σ).
	var dates bytes.Buffer
	run(ctx, []string{"-db", dbA, "export", "dates"}, &dates, io.Discard)
	if !strings.Contains(dates.String(), "CL-1,arar_plateau,,eruption,155.46,0.7773,") {
		t.Errorf("exported dates:\n%s", dates.String())
	}

	mappings := filepath.Join(dir, "mappings.json")
	if err := run(ctx, []string{"-db", dbA, "export", "mappings", "-o", mappings}, io.Discard, io.Discard); err != nil {
		t.Fatal(err)
	}
	dbB := filepath.Join(dir, "b.db")
	out.Reset()
	if err := run(ctx, []string{"-db", dbB, "import", "mappings", mappings}, &out, io.Discard); err != nil || !strings.Contains(out.String(), "1 mapping(s) added") {
		t.Fatalf("import mappings: %v, %q", err, out.String())
	}
	if err := run(ctx, []string{"-db", dbB, "import", "dates", file, "-mapping", "Invented lab"}, io.Discard, io.Discard); err != nil {
		t.Fatalf("the moved mapping: %v", err)
	}
	var datesB bytes.Buffer
	run(ctx, []string{"-db", dbB, "export", "dates"}, &datesB, io.Discard)
	if datesB.String() != dates.String() {
		t.Errorf("the same table through the moved mapping gives other dates:\n%s\nwant\n%s", datesB.String(), dates.String())
	}
}
