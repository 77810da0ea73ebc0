package store

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
	"unicode/utf8"

	"coeval/stats"
)

// csvTable is a parsed CSV file with a header, and the problems found while reading its cells. Readers of
// rows record problems instead of stopping, so one pass reports every error of a file.
type csvTable struct {
	file     string
	header   []string
	idx      map[string]int
	rows     [][]string
	lines    []int // line number of each row in the file
	problems []Problem
}

// maxImportBytes bounds what one import reads, so a wrong file cannot exhaust memory.
const maxImportBytes = 256 << 20

// readCSV reads the whole of r as CSV with a header row. It fails only when the file cannot be read as CSV
// at all (the error names the line); cell problems are collected later by the row accessors.
func readCSV(file string, r io.Reader) (*csvTable, error) { return readCSVEach(file, r, nil, nil, nil) }

// readCSVEach reads r as readCSV does and, when each is non-nil, hands each data row to each as soon as it
// is read (each may then drop the row's cells: t.rows[i] = nil), so a long file is not held whole. The
// header is checked against required and allowed. The result is what reading the whole file, checking its
// header and then parsing every row would give: a problem of reading or of the header is returned as the
// error (with no problem of parsing); otherwise t holds the problems each recorded. each is called only
// while reading and the header have found no problem.
func readCSVEach(file string, r io.Reader, required, allowed []string, each func(t *csvTable, i int)) (*csvTable, error) {
	var parsed []Problem
	headerOK := false
	t, err := readCSVRows(file, r, func(t *csvTable) {
		if each != nil { // checked here to know whether to parse; recorded at the end, in readCSV's order
			n := len(t.problems)
			t.requireColumns(required, allowed)
			headerOK = len(t.problems) == n
			t.problems = t.problems[:n]
		}
	}, func(t *csvTable, i int) {
		if each == nil || !headerOK || len(t.problems) > 0 {
			return
		}
		read := t.problems
		t.problems = parsed
		each(t, i)
		parsed, t.problems = t.problems, read
	})
	if err != nil || each == nil {
		return t, err
	}
	t.requireColumns(required, allowed)
	if err := t.err(); err != nil {
		return nil, err
	}
	t.problems = parsed
	return t, nil
}

// readCSVRows reads r, calling onHeader once the header is read and onRow after each data row is added.
func readCSVRows(file string, r io.Reader, onHeader func(t *csvTable), onRow func(t *csvTable, i int)) (*csvTable, error) {
	cr := csv.NewReader(io.LimitReader(r, maxImportBytes))
	cr.FieldsPerRecord = -1
	t := &csvTable{file: file, idx: map[string]int{}}
	header, err := cr.Read()
	if errors.Is(err, io.EOF) {
		return nil, &ValidationError{[]Problem{{File: file, Message: "the file is empty: want a header row and data rows"}}}
	}
	if err != nil {
		return nil, &ValidationError{[]Problem{{File: file, Line: 1, Message: "not readable as CSV: " + csvErrText(err)}}}
	}
	for i, h := range header {
		h = strings.TrimSpace(h)
		if i == 0 {
			h = strings.TrimPrefix(h, "\ufeff")
		}
		header[i] = h
		if h == "" {
			t.problems = append(t.problems, Problem{File: file, Line: 1, Message: fmt.Sprintf("header cell %d is empty", i+1)})
			continue
		}
		if _, dup := t.idx[h]; dup {
			t.problems = append(t.problems, Problem{File: file, Line: 1, Column: h, Message: "column appears twice in the header"})
			continue
		}
		t.idx[h] = i
	}
	t.header = header
	onHeader(t)
	for {
		rec, err := cr.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			var pe *csv.ParseError
			line := 0
			if errors.As(err, &pe) {
				line = pe.Line
			}
			return nil, &ValidationError{[]Problem{{File: file, Line: line, Message: "not readable as CSV: " + csvErrText(err)}}}
		}
		line, _ := cr.FieldPos(0)
		if allBlank(rec) {
			continue
		}
		if len(rec) != len(header) {
			t.problems = append(t.problems, Problem{File: file, Line: line,
				Message: fmt.Sprintf("has %d cells, the header has %d", len(rec), len(header))})
			continue
		}
		for j := range rec {
			rec[j] = csvUnquote(rec[j])
		}
		t.rows = append(t.rows, rec)
		t.lines = append(t.lines, line)
		t.checkText(len(t.rows) - 1)
		onRow(t, len(t.rows)-1)
	}
	if len(t.rows) == 0 && len(t.problems) == 0 {
		t.problems = append(t.problems, Problem{File: file, Message: "the file has a header but no data rows"})
	}
	return t, nil
}

// multiline reports whether a column holds free text that may run over lines: notes and descriptions
// (typed in a text box) may hold tabs and line breaks, no other column may.
func multiline(col string) bool { return col == "notes" || col == "description" }

// checkText records a problem for each cell of row i that is not UTF-8 text or holds a control character
// (U+0000–U+001F; tab, line feed and carriage return are allowed in notes and descriptions). Such
// characters cannot be shown, and they make the figures' SVG, which carry names and notes, malformed XML.
func (t *csvTable) checkText(i int) {
	for j, c := range t.rows[i] {
		col := ""
		if j < len(t.header) {
			col = t.header[j]
		}
		if msg := textProblem(c, multiline(col)); msg != "" {
			t.problems = append(t.problems, Problem{File: t.file, Line: t.lines[i], Column: col, Message: msg})
		}
	}
}

// freeText checks text typed outside a record's form (a review note, a name) as checkText checks cells:
// it returns a validation error naming field col, or nil.
func freeText(col, s string, multiline bool) error {
	if msg := textProblem(s, multiline); msg != "" {
		return &ValidationError{[]Problem{{Column: col, Message: msg}}}
	}
	return nil
}

// textProblem says what is wrong with s as the text of a cell, or "" when nothing is.
func textProblem(s string, multiline bool) string {
	if !utf8.ValidString(s) {
		return "is not UTF-8 text; save the file as UTF-8 (in a spreadsheet: CSV UTF-8)"
	}
	n := 0
	for _, r := range s {
		n++
		if r >= 0x20 || (multiline && (r == '\t' || r == '\n' || r == '\r')) {
			continue
		}
		allowed := "no control characters are allowed here (not even tabs or line breaks)"
		if multiline {
			allowed = "only tabs and line breaks are allowed among the control characters"
		}
		return fmt.Sprintf("holds the control character U+%04X at character %d: %s", r, n, allowed)
	}
	return ""
}

func csvErrText(err error) string {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		return pe.Err.Error()
	}
	return err.Error()
}

func allBlank(rec []string) bool {
	for _, c := range rec {
		if strings.TrimSpace(c) != "" {
			return false
		}
	}
	return true
}

// requireColumns records a problem for every required column missing from the header and for every
// header column not in allowed (when allowed is non-nil).
func (t *csvTable) requireColumns(required, allowed []string) {
	for _, c := range required {
		if _, ok := t.idx[c]; !ok {
			t.problems = append(t.problems, Problem{File: t.file, Line: 1, Column: c, Message: "required column is missing"})
		}
	}
	if allowed == nil {
		return
	}
	for _, h := range t.header {
		if h != "" && !slices.Contains(allowed, h) {
			t.problems = append(t.problems, Problem{File: t.file, Line: 1, Column: h,
				Message: "unknown column; the columns of this file are: " + strings.Join(allowed, ", ")})
		}
	}
}

func (t *csvTable) has(col string) bool { _, ok := t.idx[col]; return ok }

// err returns a *ValidationError when any problem was recorded, else nil.
func (t *csvTable) err() error {
	if len(t.problems) == 0 {
		return nil
	}
	return &ValidationError{Problems: t.problems}
}

// row gives checked access to the cells of one data row.
type row struct {
	t *csvTable
	i int
}

func (t *csvTable) row(i int) row { return row{t, i} }

func (r row) line() int { return r.t.lines[r.i] }

func (r row) problem(col, format string, args ...any) {
	r.t.problems = append(r.t.problems, Problem{File: r.t.file, Line: r.line(), Column: col, Message: fmt.Sprintf(format, args...)})
}

// str returns the trimmed cell of col, or "" when the column is absent.
func (r row) str(col string) string {
	j, ok := r.t.idx[col]
	if !ok {
		return ""
	}
	return strings.TrimSpace(r.t.rows[r.i][j])
}

// requiredStr returns the cell of col, recording a problem when it is empty.
func (r row) requiredStr(col string) string {
	s := r.str(col)
	if s == "" {
		r.problem(col, "is empty; a value is required")
	}
	return s
}

// parseNumber parses a finite number in decimal notation (ParseDecimal).
func parseNumber(s string) (float64, error) {
	v, ok := ParseDecimal(s)
	if !ok {
		return 0, fmt.Errorf("want a number, got %q (decimal notation, e.g. 155.4 or 1.2e-3)", s)
	}
	return v, nil
}

// ParseDecimal reads a finite number written in decimal notation: an optional sign, digits with an
// optional decimal point (at least one digit), and an optional exponent (e or E, optional sign, digits).
// Everything else strconv.ParseFloat would also take is refused: hexadecimal (0x1p10), digit separators
// (1_000), Inf, NaN, and values beyond the float64 range. Every number read from a file, a form or an
// address goes through it.
func ParseDecimal(s string) (float64, bool) {
	if !isDecimal(s) {
		return 0, false
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, false
	}
	return v, true
}

// isDecimal reports whether s is [+-]? (digits [. digits?] | . digits) ([eE] [+-]? digits)?.
func isDecimal(s string) bool {
	i := 0
	if i < len(s) && (s[i] == '+' || s[i] == '-') {
		i++
	}
	digits := func() int {
		n := 0
		for i < len(s) && s[i] >= '0' && s[i] <= '9' {
			i++
			n++
		}
		return n
	}
	n := digits()
	if i < len(s) && s[i] == '.' {
		i++
		n += digits()
	}
	if n == 0 {
		return false
	}
	if i < len(s) && (s[i] == 'e' || s[i] == 'E') {
		i++
		if i < len(s) && (s[i] == '+' || s[i] == '-') {
			i++
		}
		if digits() == 0 {
			return false
		}
	}
	return i == len(s)
}

// optFloat returns the number in col, nil when empty; a non-number is recorded as a problem.
func (r row) optFloat(col string) *float64 {
	s := r.str(col)
	if s == "" {
		return nil
	}
	v, err := parseNumber(s)
	if err != nil {
		r.problem(col, "%v", err)
		return nil
	}
	return &v
}

// float returns the required number in col (ok false, with a problem recorded, when missing or invalid).
func (r row) float(col string) (float64, bool) {
	s := r.str(col)
	if s == "" {
		r.problem(col, "is empty; a number is required")
		return 0, false
	}
	v, err := parseNumber(s)
	if err != nil {
		r.problem(col, "%v", err)
		return 0, false
	}
	return v, true
}

// positive checks that *v (when present) is > 0 (or ≥ 0 when allowZero), recording a problem otherwise.
func (r row) positive(col string, v *float64, allowZero bool) {
	if v == nil {
		return
	}
	if *v < 0 || (!allowZero && *v == 0) {
		want := "greater than 0"
		if allowZero {
			want = "0 or more"
		}
		r.problem(col, "want a number %s, got %s", want, formatNumber(*v))
	}
}

// plausibleSigma checks that an uncertainty sigma (Ma, at σ level level; 0 when the level is not known,
// then read as 1σ) of a positive age can be weighted: at least 10⁻⁶ × the age at 1σ (stats.SigmaFloorMa),
// so that its weight 1/σ² is a finite number. Smaller ones are typing or unit mistakes.
func (r row) plausibleSigma(col string, age, sigma float64, level int) {
	k := float64(max(level, 1))
	if stats.UsableSigma(age, sigma/k) {
		return
	}
	at := ""
	if level > 0 {
		at = fmt.Sprintf(" at %dσ", level)
	}
	r.problem(col, "want an uncertainty of at least 10⁻⁶ × the age (%s Ma%s for %s Ma), got %s: a smaller one is not a plausible measurement and cannot be weighted",
		formatNumber(k*stats.SigmaFloorMa(age)), at, formatNumber(age), formatNumber(sigma))
}

// within checks lo ≤ *v ≤ hi when v is present.
func (r row) within(col string, v *float64, lo, hi float64) {
	if v != nil && (*v < lo || *v > hi) {
		r.problem(col, "want a number from %s to %s, got %s", formatNumber(lo), formatNumber(hi), formatNumber(*v))
	}
}

// enum returns the cell of col when it is one of allowed (def when empty; "" def makes it required).
func (r row) enum(col string, allowed []string, def string) string {
	s := r.str(col)
	if s == "" {
		if def == "" {
			r.problem(col, "is empty; want one of %s", strings.Join(allowed, ", "))
		}
		return def
	}
	if !slices.Contains(allowed, s) {
		r.problem(col, "unknown value %q; want one of %s", s, strings.Join(allowed, ", "))
		return def
	}
	return s
}

// optInt returns the integer in col, nil when empty.
func (r row) optInt(col string) *int {
	s := r.str(col)
	if s == "" {
		return nil
	}
	v, err := strconv.Atoi(s)
	if err != nil {
		r.problem(col, "want a whole number, got %q", s)
		return nil
	}
	return &v
}

// sigmaLevel parses the σ level of a row: 1 or 2 (also written 1s, 2sigma, 2σ).
func (r row) sigmaLevel(col string) int {
	s := strings.ToLower(r.str(col))
	switch s {
	case "1", "1s", "1sigma", "1σ", "1sd":
		return 1
	case "2", "2s", "2sigma", "2σ", "2sd":
		return 2
	case "":
		r.problem(col, "is empty; want 1 or 2 (the σ level of the uncertainties as published)")
	default:
		r.problem(col, "unknown σ level %q; want 1 or 2", r.str(col))
	}
	return 0
}

// formatNumber writes v so that parsing it gives v back exactly, without exponents for ordinary values.
func formatNumber(v float64) string {
	a := math.Abs(v)
	if v == 0 || (a >= 1e-4 && a < 1e15) {
		return strconv.FormatFloat(v, 'f', -1, 64)
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

func formatOpt(v *float64) string {
	if v == nil {
		return ""
	}
	return formatNumber(*v)
}

func formatOptScaled(v *float64, k float64) string {
	if v == nil {
		return ""
	}
	return formatNumber(*v * k)
}

func formatOptInt(v *int) string {
	if v == nil {
		return ""
	}
	return strconv.Itoa(*v)
}
