package store

import (
	"context"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"
)

// A workbook converts to the CSV a user would have saved: the first sheet, row N on line N, rows padded
// to the widest, so a problem found in the fourth row of the sheet is reported on line 4.
func TestToCSVKeepsTheSheetsRows(t *testing.T) {
	body := workbook(t, [][]string{
		{"section"},
		{"Vedholmen-1 Core"},
		{""},
		{"Skarfell Creek", "stray"},
	})
	out, err := ToCSV("sections.xlsx", body)
	if err != nil {
		t.Fatal(err)
	}
	if want := "section,\nVedholmen-1 Core,\n,\nSkarfell Creek,stray\n"; string(out) != want {
		t.Fatalf("converted %q, want %q", out, want)
	}
	db := mustOpenDB(t)
	_, err = db.ImportReader(context.Background(), "sections", "", "sections.xlsx", strings.NewReader(string(out)))
	ve, ok := AsValidation(err)
	if !ok {
		t.Fatalf("want the empty header cell refused, got %v", err)
	}
	lines := map[int]bool{}
	for _, p := range ve.Problems {
		lines[p.Line] = true
	}
	if !lines[1] {
		t.Errorf("problems %+v do not name row 1 (the header with an empty cell)", ve.Problems)
	}
}

// Stray cells far from the table and files that are not workbooks are refused with a message naming the
// file and saying what to do, before anything is imported.
func TestToCSVRefusals(t *testing.T) {
	f := excelize.NewFile()
	f.SetCellValue("Sheet1", "A1", "section")
	f.SetCellValue("Sheet1", "A2", "S")
	f.SetCellValue("Sheet1", "XFD7", "x")
	buf, err := f.WriteToBuffer()
	if err != nil {
		t.Fatal(err)
	}
	whole := workbook(t, [][]string{{"section"}, {"S"}})
	for _, c := range []struct {
		name string
		body []byte
		want string
	}{
		{"stray cell in the last column", buf.Bytes(), "row 7 has a cell in column XFD"},
		{"a CSV file named .xlsx", []byte("section\nS\n"), "not readable as an .xlsx workbook"},
		{"a truncated workbook", whole[:len(whole)/2], "not readable as an .xlsx workbook"},
	} {
		_, err := ToCSV("in.xlsx", c.body)
		ve, ok := AsValidation(err)
		if !ok || len(ve.Problems) != 1 {
			t.Errorf("%s: got %v, want one problem", c.name, err)
			continue
		}
		if p := ve.Problems[0]; p.File != "in.xlsx" || !strings.Contains(p.Message, c.want) {
			t.Errorf("%s: problem %+v, want file in.xlsx and %q", c.name, p, c.want)
		}
	}
}
