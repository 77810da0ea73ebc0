package store

import (
	"encoding/csv"
	"io"
)

// Cells of CSV downloads are made safe for spreadsheets, which run a cell beginning with =, +, -, @, a tab
// or a carriage return as a formula ("formula injection"; OWASP's CSV Injection page lists these, common
// practice). The rule, applied to every cell of every CSV the app writes:
//
//   - a cell that begins with one of those characters, and is not a number in decimal notation (so -1.5
//     and +2 stay as they are), is written with a single quote before it: '=SUM(A1:A9);
//   - a cell that is such a cell with one or more quotes already before it ('=x) gets one more quote, so
//     that reading gives it back unchanged.
//
// Reading a CSV file (imports, uploads) removes one leading quote from exactly those cells: a quote
// followed by zero or more quotes and then one of those characters (not starting a number). A downloaded
// file is thus re-imported as it is, and a cell that begins with a quote for any other reason ('t Hooft,
// '-1.5) is read as written.

// CSVSafe returns cell as a CSV download writes it (see the rule above).
func CSVSafe(cell string) string {
	if needsQuote(cell) {
		return "'" + cell
	}
	return cell
}

// csvUnquote undoes CSVSafe: it removes one leading quote from a cell CSVSafe would have quoted.
func csvUnquote(cell string) string {
	if len(cell) > 1 && cell[0] == '\'' && needsQuote(cell[1:]) {
		return cell[1:]
	}
	return cell
}

// needsQuote reports whether s, after any leading quotes, begins with a character a spreadsheet reads as
// the start of a formula, and is not a decimal number.
func needsQuote(s string) bool {
	i := 0
	for i < len(s) && s[i] == '\'' {
		i++
	}
	if i == len(s) {
		return false
	}
	switch s[i] {
	case '=', '@', '\t', '\r':
		return true
	case '+', '-':
		return !isDecimal(s[i:])
	}
	return false
}

// CSVWriter is a csv.Writer whose cells are made safe for spreadsheets with CSVSafe. Every CSV download
// is written with one.
type CSVWriter struct{ *csv.Writer }

// NewCSVWriter returns a CSVWriter writing to w.
func NewCSVWriter(w io.Writer) *CSVWriter { return &CSVWriter{csv.NewWriter(w)} }

// Write writes one record, each cell through CSVSafe (rec itself is left unchanged).
func (w *CSVWriter) Write(rec []string) error {
	safe := make([]string, len(rec))
	for i, c := range rec {
		safe[i] = CSVSafe(c)
	}
	return w.Writer.Write(safe)
}

// WriteAll writes records with Write and flushes.
func (w *CSVWriter) WriteAll(recs [][]string) error {
	for _, r := range recs {
		if err := w.Write(r); err != nil {
			return err
		}
	}
	w.Flush()
	return w.Error()
}
