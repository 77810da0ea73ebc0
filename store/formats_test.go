package store

import (
	"bytes"
	"context"
	"encoding/csv"
	"slices"
	"strings"
	"testing"
)

// templateSection is the section the per-section templates are imported into (the sections template's).
func templateSection() string { return mustFormat("sections").Columns[0].Example }

// rewrite returns the template with column col removed (drop) or a column added (add, with value).
func rewrite(t *testing.T, f FileFormat, drop, add, value string) string {
	t.Helper()
	rows, err := csv.NewReader(bytes.NewReader(f.Template())).ReadAll()
	if err != nil {
		t.Fatalf("%s template: %v", f.Kind, err)
	}
	var b strings.Builder
	w := csv.NewWriter(&b)
	for r, row := range rows {
		var out []string
		for i, cell := range row {
			if rows[0][i] != drop {
				out = append(out, cell)
			}
		}
		if add != "" {
			out = append(out, map[bool]string{true: add, false: value}[r == 0])
		}
		_ = w.Write(out)
	}
	w.Flush()
	return b.String()
}

// Every kind's template (header and one example row, as the help pages offer it) imports through the
// real importer, in the order of FileFormats, into an empty compilation: one record each, no problem.
func TestEveryTemplateImportsItsExampleRow(t *testing.T) {
	db := mustOpenDB(t)
	for _, f := range FileFormats() {
		section := ""
		if f.PerSection {
			section = templateSection()
		}
		res, err := db.ImportReader(context.Background(), f.Kind, section, "in.csv", bytes.NewReader(f.Template()))
		if err != nil {
			t.Fatalf("%s template refused: %v\n%s", f.Kind, err, f.Template())
		}
		if res.Rows != 1 {
			t.Errorf("%s template: %d rows imported, want 1", f.Kind, res.Rows)
		}
	}
	c, err := db.Counts(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if c.Provinces != 1 || c.Units != 1 || c.Sections != 1 || c.Dates != 1 {
		t.Errorf("counts after the templates: %+v", c)
	}
}

// What the help pages call required is exactly what the importer requires: dropping a required column
// is refused with a message naming it; an unknown column is refused too (so the page's list is the whole
// list); dropping an optional one is not what makes a file fail.
func TestFormatColumnsAreWhatTheImporterTakes(t *testing.T) {
	for _, f := range FileFormats() {
		if f.Kind == "measurements" {
			continue // wide: its proxy columns are checked by TestMeasurementFormatListsEveryProxyColumn
		}
		for _, c := range f.Columns {
			db := mustOpenDB(t)
			seedFor(t, db, f)
			body := rewrite(t, f, c.Name, "", "")
			_, err := importAny(t, db, f, body)
			if c.Required {
				if err == nil || !strings.Contains(err.Error(), c.Name) {
					t.Errorf("%s without required %s: want a refusal naming it, got %v", f.Kind, c.Name, err)
				}
				continue
			}
			if err != nil && strings.Contains(err.Error(), "missing") && strings.Contains(err.Error(), c.Name) {
				t.Errorf("%s: optional column %s reported missing: %v", f.Kind, c.Name, err)
			}
		}
		db := mustOpenDB(t)
		seedFor(t, db, f)
		if _, err := importAny(t, db, f, rewrite(t, f, "", "not_a_column_of_ours", "x")); err == nil ||
			!strings.Contains(err.Error(), "not_a_column_of_ours") {
			t.Errorf("%s: an unknown column must be refused by name, got %v", f.Kind, err)
		}
	}
}

// The measurement format lists every value column the importer places, and nothing else.
func TestMeasurementFormatListsEveryProxyColumn(t *testing.T) {
	f := mustFormat("measurements")
	names := f.ColumnNames()[2:]
	for _, pu := range proxyUnits() {
		if !slices.Contains(names, pu.prefix+"_"+pu.unit) {
			t.Errorf("column %s_%s missing from the format", pu.prefix, pu.unit)
		}
	}
	if len(names) != len(proxyUnits()) {
		t.Errorf("format lists %d proxy columns, importer takes %d", len(names), len(proxyUnits()))
	}
	for _, c := range f.Columns {
		if c.Meaning == "" || strings.Contains(c.Meaning, "%!") {
			t.Errorf("column %s: meaning %q", c.Name, c.Meaning)
		}
	}
}

// Each code a help page offers for a vocabulary column is one the importer accepts (checked on the kinds
// whose vocabulary columns are free of cross-field rules), and a code outside the list is refused.
func TestFormatVocabulariesAreTheImportersOwn(t *testing.T) {
	for _, f := range FileFormats() {
		for _, c := range f.Columns {
			if len(c.Values) == 0 || f.Kind == "dates" || f.Kind == "ties" && c.Name == "distribution" {
				continue
			}
			for _, v := range append(slices.Clone(c.Values), Term{Code: "no_such_code"}) {
				db := mustOpenDB(t)
				seedFor(t, db, f)
				body := strings.Replace(rewrite(t, f, c.Name, c.Name, v.Code), "\r\n", "\n", -1)
				_, err := importAny(t, db, f, body)
				if v.Code == "no_such_code" {
					if err == nil || !strings.Contains(err.Error(), c.Name) {
						t.Errorf("%s.%s = no_such_code: want a refusal naming the column, got %v", f.Kind, c.Name, err)
					}
				} else if err != nil {
					t.Errorf("%s.%s = %s (offered on the help page) refused: %v", f.Kind, c.Name, v.Code, err)
				}
			}
		}
	}
}

// seedFor loads what a kind's template refers to: the province and unit, and the section.
func seedFor(t *testing.T, db *DB, f FileFormat) {
	t.Helper()
	for _, k := range []string{"provinces", "units", "sections"} {
		if k == f.Kind {
			return
		}
		if _, err := importAny(t, db, mustFormat(k), string(mustFormat(k).Template())); err != nil {
			t.Fatalf("seeding %s: %v", k, err)
		}
	}
}

func importAny(t *testing.T, db *DB, f FileFormat, body string) (ImportResult, error) {
	t.Helper()
	section := ""
	if f.PerSection {
		section = templateSection()
	}
	return db.ImportReader(context.Background(), f.Kind, section, "in.csv", strings.NewReader(body))
}
