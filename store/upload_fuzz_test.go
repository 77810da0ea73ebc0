package store

import (
	"bytes"
	"encoding/csv"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"
)

// workbook writes rows to the first sheet of a new .xlsx file, each cell as text.
func workbook(t testing.TB, rows [][]string) []byte {
	t.Helper()
	f := excelize.NewFile()
	defer f.Close()
	sheet := f.GetSheetName(0)
	for i, r := range rows {
		cell, err := excelize.CoordinatesToCellName(1, i+1)
		if err != nil {
			t.Fatal(err)
		}
		vals := make([]any, len(r))
		for j, v := range r {
			vals[j] = v
		}
		if err := f.SetSheetRow(sheet, cell, &vals); err != nil {
			t.Skipf("excelize refuses to write the row: %v", err)
		}
	}
	var buf bytes.Buffer
	if err := f.Write(&buf); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// xlsxSeeds are workbooks made from the demo's and the fuzz corpora's CSV files, plus broken ones.
func xlsxSeeds(f *testing.F) [][]byte {
	f.Helper()
	var out [][]byte
	files, _ := filepath.Glob(filepath.Join("..", "testdata", "demo", "*.csv"))
	more, _ := filepath.Glob(filepath.Join("..", "testdata", "fuzz", "*", "*.csv"))
	for _, file := range append(files, more...) {
		b, err := os.ReadFile(file)
		if err != nil {
			f.Fatal(err)
		}
		cr := csv.NewReader(bytes.NewReader(b))
		cr.FieldsPerRecord = -1
		rows, err := cr.ReadAll()
		if err != nil || len(rows) == 0 {
			continue
		}
		if len(rows) > 40 {
			rows = rows[:40] // small seeds keep the fuzzer fast
		}
		out = append(out, workbook(f, rows))
	}
	whole := workbook(f, [][]string{{"sample_code", "age_ma"}, {"X-1", "155.4"}})
	out = append(out, nil, []byte("sample_code,age_ma\nX-1,155.4\n"), whole[:len(whole)/2], whole[:len(whole)-1])
	return out
}

// FuzzUploadXLSX sends arbitrary bytes as an .xlsx upload. The conversion never panics; it either refuses
// with a problem that names the file and says what to do, or gives CSV that reads back as a rectangle of
// cells (every row as wide as the widest), which then goes through the same importers as a CSV upload.
func FuzzUploadXLSX(f *testing.F) {
	for _, s := range xlsxSeeds(f) {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, body []byte) {
		out, err := ToCSV("fuzz.xlsx", body)
		if err != nil {
			ve, ok := AsValidation(err)
			if !ok {
				t.Fatalf("non-validation error: %v", err)
			}
			for _, p := range ve.Problems {
				if p.File != "fuzz.xlsx" || strings.TrimSpace(p.Message) == "" {
					t.Fatalf("a problem that does not name the file or say what is wrong: %+v", p)
				}
			}
			return
		}
		cr := csv.NewReader(bytes.NewReader(out))
		cr.FieldsPerRecord = 0 // every record as wide as the first
		if _, err := cr.ReadAll(); err != nil {
			t.Fatalf("the converted workbook is not rectangular CSV: %v\n%q", err, out)
		}
	})
}

// FuzzXLSXCells writes arbitrary text into a workbook's cells (rows split at newlines, cells at tabs) and
// checks that the upload's conversion gives back every cell as written, in its row and column, so a
// problem reported for row N of the converted file is row N of the sheet.
func FuzzXLSXCells(f *testing.F) {
	f.Add("sample_code\tage_ma\tsigma_ma\nA-1\t155.40\t0.06\nA-2\t1.5e2\t")
	f.Add("a\tb\n\"quoted, with comma\"\t=1+1\n\t\t\nlast")
	f.Add("µ ± σ\t²⁰⁶Pb/²³⁸U\n0,123\t 12 ")
	f.Add("'=x\t''@y\t'-1.5\t-1.5\n@SUM(A1)\t-\t+cmd")
	f.Fuzz(func(t *testing.T, text string) {
		var rows [][]string
		width := 0
		for _, line := range strings.Split(text, "\n") {
			r := strings.Split(line, "\t")
			rows = append(rows, r)
			width = max(width, len(r))
		}
		if len(rows) > 200 || width > 50 {
			t.Skip("larger than a useful fuzz input")
		}
		body := workbook(t, rows)
		out, err := ToCSV("cells.xlsx", body)
		if err != nil {
			t.Fatalf("a workbook excelize wrote is refused: %v", err)
		}
		// Read the converted file as the importers do, keeping the line each record starts on.
		cr := csv.NewReader(bytes.NewReader(out))
		cr.FieldsPerRecord = -1
		got := map[int][]string{}
		for {
			rec, err := cr.Read()
			if err == io.EOF {
				break
			}
			if err != nil {
				t.Fatalf("converted CSV does not read: %v\n%q", err, out)
			}
			line, _ := cr.FieldPos(0)
			for k := range rec {
				rec[k] = csvUnquote(rec[k]) // as readCSV does: the conversion quotes formula-like cells
			}
			got[line] = rec
		}
		// Trailing empty rows and cells are not stored in a sheet, and the CSV reader skips a blank line
		// (a one-column sheet's empty row): compare what is there, row N of the sheet on line N.
		for i, r := range rows {
			for j, want := range r {
				have := ""
				if j < len(got[i+1]) {
					have = got[i+1][j]
				}
				if have != sheetText(want) {
					t.Fatalf("row %d cell %d: wrote %q, upload read %q\n%q", i+1, j+1, want, have, out)
				}
			}
		}
		for line, rec := range got {
			if line > len(rows) && strings.Join(rec, "") != "" {
				t.Fatalf("line %d appeared from nowhere: %q", line, rec)
			}
		}
	})
}

// sheetText is what a cell written as text reads back as: XML cannot carry most control characters, and
// excelize writes U+FFFD in their place.
func sheetText(s string) string {
	return strings.Map(func(r rune) rune {
		if r < 0x20 && r != '\t' && r != '\n' && r != '\r' || r == 0xFFFE || r == 0xFFFF {
			return '\uFFFD'
		}
		return r
	}, s)
}
