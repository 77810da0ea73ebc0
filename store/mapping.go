package store

import (
	"bytes"
	"context"
	"database/sql"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
)

// Mapping says how a table as a paper publishes it (its own column names, ages in ka, σ at 2σ as a
// percentage of the age, a header over two rows, notes under the table) becomes the rows of our dates
// file. It is made once per layout, saved under a name, and recorded on every change it imported.
type Mapping struct {
	Name  string `json:"name"`
	Kind  string `json:"kind"`            // what the rows become: "dates"
	Sheet string `json:"sheet,omitempty"` // the sheet of an .xlsx workbook ("" = its first)
	// HeaderRow is the row where the header starts (1 = the first row; a title above the table pushes it
	// down); HeaderRows is how many rows it takes. The texts of a header over several rows are joined per
	// column, an upper row's text carried to the right over the empty cells of a merged heading.
	HeaderRow  int `json:"header_row"`
	HeaderRows int `json:"header_rows"`
	// Columns maps one of our columns to the file's column (its joined header text); Constants gives one
	// of our columns one value for every row. A column is given one way or the other, not both.
	Columns   map[string]string `json:"columns"`
	Constants map[string]string `json:"constants,omitempty"`
	// AgeUnit is the unit of the file's ages and uncertainties (Ma, ka, years); SigmaForm says whether its
	// uncertainties are absolute or a percentage of the row's age. The σ level is our sigma_level column,
	// a constant or a column. The monitor's age is always read in Ma.
	AgeUnit   string `json:"age_unit"`
	SigmaForm string `json:"sigma_form"`
	// Rows skipped besides blank ones: rows repeating the header (tables split over pages), and notes
	// (rows with text in one cell only: footnotes, group headings).
	SkipRepeatedHeaders bool `json:"skip_repeated_headers"`
	SkipNotes           bool `json:"skip_notes"`
	// Headers is the file's header as it was mapped, so the mapping is offered again for a file with the
	// same header.
	Headers []string `json:"headers,omitempty"`
}

// Units of ages a mapping reads, with the divisor that gives Ma.
var ageUnits = []struct {
	code, label string
	perMa       float64
}{{"Ma", "Ma", 1}, {"ka", "ka (thousands of years)", 1e3}, {"years", "years", 1e6}}

// AgeUnits lists the units a mapped file's ages may be in.
func AgeUnits() []Term {
	out := make([]Term, len(ageUnits))
	for i, u := range ageUnits {
		out[i] = Term{u.code, u.label}
	}
	return out
}

// SigmaForms lists how a mapped file may give its uncertainties.
func SigmaForms() []Term {
	return []Term{{"absolute", "absolute, in the unit of the age"}, {"percent", "a percentage of the age"}}
}

func perMa(unit string) (float64, bool) {
	for _, u := range ageUnits {
		if u.code == unit {
			return u.perMa, true
		}
	}
	return 0, false
}

// mappedNumberColumns are the columns that take the file's unit of age and form of uncertainty.
var mappedNumberColumns = []string{"age_ma", "sigma_ma", "sigma_y_ma", "sigma_z_ma"}

// MappingKinds lists the kinds of file a mapping can make.
func MappingKinds() []string { return []string{"dates"} }

// NewMapping is an empty mapping of the dates file: header on the first row, Ma, absolute uncertainties,
// repeated headers and notes skipped.
func NewMapping() Mapping {
	return Mapping{Kind: "dates", HeaderRow: 1, HeaderRows: 1, Columns: map[string]string{}, Constants: map[string]string{},
		AgeUnit: "Ma", SigmaForm: "absolute", SkipRepeatedHeaders: true, SkipNotes: true}
}

// RawTable is every row of a file (or of one sheet of a workbook) as it is, before any header is known.
type RawTable struct {
	File   string
	Sheet  string   // the sheet read, for a workbook
	Sheets []string // every sheet of a workbook
	Rows   [][]string
	Lines  []int // the file's line (a sheet's row) of each row
}

// ReadRawTable reads a CSV file, or one sheet of an .xlsx workbook ("" = the first), with every row as it
// is. A workbook is checked against the same limits as any upload.
func ReadRawTable(fileName string, body []byte, sheet string) (RawTable, error) {
	t := RawTable{File: fileName}
	if isWorkbook(fileName) {
		csvBody, sheets, used, err := workbookToCSV(fileName, body, sheet)
		if err != nil {
			return t, err
		}
		body, t.Sheets, t.Sheet = csvBody, sheets, used
	} else if sheet != "" {
		return t, &ValidationError{[]Problem{{File: fileName, Message: fmt.Sprintf("a CSV file has no sheets, but the mapping reads sheet %q: choose no sheet", sheet)}}}
	}
	cr := csv.NewReader(io.LimitReader(bytes.NewReader(body), maxImportBytes))
	cr.FieldsPerRecord = -1
	cr.LazyQuotes = true
	for {
		rec, err := cr.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			line := 0
			var pe *csv.ParseError
			if errors.As(err, &pe) {
				line = pe.Line
			}
			return t, &ValidationError{[]Problem{{File: fileName, Line: line, Message: "not readable as CSV: " + csvErrText(err)}}}
		}
		line, _ := cr.FieldPos(0)
		for i, c := range rec {
			rec[i] = strings.TrimSpace(strings.TrimPrefix(c, "\ufeff"))
			if len(rec[i]) > 1 && rec[i][0] == '\'' && isWorkbook(fileName) {
				rec[i] = unquoteFormula(rec[i])
			}
		}
		t.Rows = append(t.Rows, rec)
		t.Lines = append(t.Lines, line)
	}
	if len(t.Rows) == 0 {
		return t, &ValidationError{[]Problem{{File: fileName, Message: "the file is empty"}}}
	}
	return t, nil
}

func isWorkbook(fileName string) bool {
	return strings.HasSuffix(strings.ToLower(fileName), ".xlsx")
}

// unquoteFormula takes back the ' that NewCSVWriter puts before a formula-like cell.
func unquoteFormula(s string) string {
	if len(s) > 1 && strings.ContainsRune("=+-@\t\r", rune(s[1])) {
		return s[1:]
	}
	return s
}

// headerIndex is the index in t.Rows of the first row at or after the file's row m.HeaderRow.
func (t RawTable) headerIndex(m Mapping) int {
	for i, l := range t.Lines {
		if l >= max(m.HeaderRow, 1) {
			return i
		}
	}
	return len(t.Lines)
}

// Header returns the file's column names under m's header rows: the texts of each column joined with a
// space, an upper row's text carried right over the empty cells beside it (a merged heading), empty
// columns named by their position ("column 3"), and a name met twice numbered ("± 2σ (2)").
func (t RawTable) Header(m Mapping) []string {
	start := t.headerIndex(m)
	n := max(m.HeaderRows, 1)
	width := 0
	for i := start; i < min(start+n, len(t.Rows)); i++ {
		width = max(width, len(t.Rows[i]))
	}
	for i := start + n; i < len(t.Rows); i++ {
		width = max(width, lastNonEmpty(t.Rows[i])+1)
	}
	parts := make([][]string, width)
	for i := start; i < min(start+n, len(t.Rows)); i++ {
		row, upper := t.Rows[i], i < start+n-1
		carry := ""
		for c := range width {
			cell := ""
			if c < len(row) {
				cell = row[c]
			}
			if cell == "" && upper {
				cell = carry
			} else if upper {
				carry = cell
			}
			if cell != "" {
				parts[c] = append(parts[c], cell)
			}
		}
	}
	out := make([]string, width)
	seen := map[string]int{}
	for c := range width {
		h := strings.Join(strings.Fields(strings.Join(parts[c], " ")), " ")
		if h == "" {
			h = fmt.Sprintf("column %d", c+1)
		}
		if seen[h]++; seen[h] > 1 {
			h = fmt.Sprintf("%s (%d)", h, seen[h])
		}
		out[c] = h
	}
	return out
}

func lastNonEmpty(row []string) int {
	for i := len(row) - 1; i >= 0; i-- {
		if row[i] != "" {
			return i
		}
	}
	return -1
}

// MappedCell is one of our cells of a mapped row: the value our file gets and, when it came from the
// file's column, the cell as published.
type MappedCell struct {
	Value     string
	Original  string
	Converted bool // the value is the original converted (unit, percentage)
}

// MappedRow is one row of the file that becomes a record.
type MappedRow struct {
	Line  int
	Cells []MappedCell // in the order of our dates file's columns (DateColumns)
}

// SkippedRow is a row of the file that is not a record, and why.
type SkippedRow struct {
	Line   int
	Reason string
	Text   string // its first cells, to recognise it
}

// Mapped is a file read through a mapping: our dates file (CSV whose line N is the file's row N, so that
// every problem the import finds names the file's own row), the rows with their original cells, and the
// rows skipped.
type Mapped struct {
	Mapping Mapping
	Header  []string // the file's joined header
	Columns []string // our columns the mapping fills, in our file's order
	Rows    []MappedRow
	Skipped []SkippedRow
	CSV     []byte
}

// DateColumns lists the columns of our dates file, in the order exports write them.
func DateColumns() []string { return slices.Clone(dateColumns) }

// Check lists what is wrong with m for a file of the given header, each problem naming our column: a
// required column left unset, a column of the file that is not there, a column given twice, a unit or
// vocabulary value not known.
func (m Mapping) Check(header []string) []Problem {
	var ps []Problem
	add := func(col, format string, args ...any) {
		ps = append(ps, Problem{Column: col, Message: fmt.Sprintf(format, args...)})
	}
	if m.Kind != "dates" {
		add("", "a mapping makes a dates file; %q is not one the mapping step knows", m.Kind)
		return ps
	}
	format := mustFormat("dates")
	known := map[string]FileColumn{}
	for _, c := range format.Columns {
		known[c.Name] = c
	}
	has := func(col string) bool { return m.Columns[col] != "" || strings.TrimSpace(m.Constants[col]) != "" }
	for col, from := range m.Columns {
		if _, ok := known[col]; !ok {
			add(col, "not a column of our dates file")
			continue
		}
		if from != "" && !slices.Contains(header, from) {
			add(col, "the file has no column %q; its columns are %s", from, quoteList(header))
		}
		if from != "" && strings.TrimSpace(m.Constants[col]) != "" {
			add(col, "given both as the file's column %q and as the value %q for every row: choose one", from, m.Constants[col])
		}
	}
	for col, v := range m.Constants {
		c, ok := known[col]
		if !ok {
			add(col, "not a column of our dates file")
			continue
		}
		v = strings.TrimSpace(v)
		if v == "" || len(c.Values) == 0 || col == "sigma_level" {
			continue
		}
		if !slices.ContainsFunc(c.Values, func(t Term) bool { return t.Code == v }) {
			add(col, "%q is not one of %s", v, termCodes(c.Values))
		}
	}
	if v := strings.TrimSpace(m.Constants["sigma_level"]); v != "" {
		if _, ok := parseSigmaLevel(v); !ok {
			add("sigma_level", "%q is not a σ level: want 1 or 2", v)
		}
	}
	for _, c := range format.Columns {
		if c.Required && !has(c.Name) {
			add(c.Name, "required, but not set: choose the file's column that holds it, or give one value for every row")
		}
	}
	for _, pair := range [][2]string{{"province", "unit"}, {"unit", "province"}, {"section", "height_m"}, {"height_m", "section"}} {
		if has(pair[0]) && !has(pair[1]) {
			add(pair[1], "set %s too: a date belongs to a unit of a province, or to a height of a section", pair[1])
		}
	}
	if !has("unit") && !has("section") {
		add("unit", "required, but not set: a date belongs to a unit (province and unit) or to a section's horizon (section and height_m); set one of them")
	}
	if _, ok := perMa(m.AgeUnit); !ok {
		add("", "the unit of the ages %q is not one of Ma, ka, years", m.AgeUnit)
	}
	if m.SigmaForm != "absolute" && m.SigmaForm != "percent" {
		add("", "the form of the uncertainties %q is not absolute or percent", m.SigmaForm)
	}
	if m.HeaderRow < 1 || m.HeaderRows < 1 || m.HeaderRows > 5 {
		add("", "the header starts at row %d and takes %d rows: want a row from 1 and 1 to 5 rows", m.HeaderRow, m.HeaderRows)
	}
	slices.SortStableFunc(ps, func(a, b Problem) int {
		return slices.Index(dateColumns, a.Column) - slices.Index(dateColumns, b.Column)
	})
	return ps
}

func parseSigmaLevel(v string) (int, bool) {
	switch strings.ToLower(strings.ReplaceAll(v, " ", "")) {
	case "1", "1s", "1σ", "1sigma":
		return 1, true
	case "2", "2s", "2σ", "2sigma":
		return 2, true
	}
	return 0, false
}

func termCodes(ts []Term) string {
	codes := make([]string, len(ts))
	for i, t := range ts {
		codes[i] = t.Code
	}
	return strings.Join(codes, ", ")
}

func quoteList(ss []string) string {
	q := make([]string, len(ss))
	for i, s := range ss {
		q[i] = "“" + s + "”"
	}
	return strings.Join(q, ", ")
}

// Apply reads t through m: the header rows, then each row below either skipped (blank, a repeated
// header, a note) and said so, or made into a row of our dates file, with the file's unit of age and
// form of uncertainty converted to Ma and absolute. Problems name the file's row and our column with the
// file's column beside it; the rows are made even then, so the import can check them too.
func (m Mapping) Apply(t RawTable) (Mapped, []Problem) {
	header := t.Header(m)
	out := Mapped{Mapping: m, Header: header}
	ps := m.Check(header)
	for i := range ps {
		ps[i].File = t.File
	}
	if len(ps) > 0 {
		return out, ps
	}
	idx := map[string]int{}
	for i, h := range header {
		idx[h] = i
	}
	for _, c := range dateColumns {
		if m.Columns[c] != "" || strings.TrimSpace(m.Constants[c]) != "" {
			out.Columns = append(out.Columns, c)
		}
	}
	start := t.headerIndex(m)
	n := max(m.HeaderRows, 1)
	headerRows := t.Rows[start:min(start+n, len(t.Rows))]
	div, _ := perMa(m.AgeUnit)
	var buf bytes.Buffer
	w := NewCSVWriter(&buf)
	w.Write(dateColumns)
	w.Flush()
	line := 1
	for i := start + n; i < len(t.Rows); i++ {
		row, rowLine := t.Rows[i], t.Lines[i]
		if reason := m.skip(row, headerRows); reason != "" {
			out.Skipped = append(out.Skipped, SkippedRow{Line: rowLine, Reason: reason, Text: rowText(row)})
			continue
		}
		cell := func(col string) (string, bool) {
			if from := m.Columns[col]; from != "" {
				if c := idx[from]; c < len(row) {
					return row[c], true
				}
				return "", true
			}
			return strings.TrimSpace(m.Constants[col]), false
		}
		mr := MappedRow{Line: rowLine, Cells: make([]MappedCell, len(dateColumns))}
		problem := func(col, format string, args ...any) {
			ps = append(ps, Problem{File: t.File, Line: rowLine, Column: m.describeColumn(col), Message: fmt.Sprintf(format, args...)})
		}
		ageText, _ := cell("age_ma")
		age, ageOK := ParseDecimal(ageText)
		for j, col := range dateColumns {
			v, fromFile := cell(col)
			mc := MappedCell{Value: v}
			if fromFile {
				mc.Original = v
			}
			if slices.Contains(mappedNumberColumns, col) && fromFile && v != "" {
				x, ok := ParseDecimal(v)
				switch {
				case !ok && col == "age_ma":
					problem(col, "%q is not a number: want the age in %s", v, m.AgeUnit)
				case !ok:
					problem(col, "%q is not a number: want the uncertainty %s", v, m.sigmaWords())
				case col != "age_ma" && m.SigmaForm == "percent" && !ageOK:
					problem(col, "%s is a percentage of the age, and this row's age cannot be read", v)
				default:
					if col != "age_ma" && m.SigmaForm == "percent" {
						x = age * x / 100
					}
					x /= div
					mc.Value = formatMapped(x)
					mc.Converted = mc.Value != v
				}
			}
			if strings.ContainsAny(mc.Value, "\r\n") { // one line per row, so line N stays the file's row N
				mc.Value = strings.Join(strings.Fields(mc.Value), " ")
			}
			mr.Cells[j] = mc
		}
		out.Rows = append(out.Rows, mr)
		for ; line < rowLine-1; line++ {
			buf.WriteByte('\n')
		}
		vals := make([]string, len(mr.Cells))
		for j, c := range mr.Cells {
			vals[j] = c.Value
		}
		w.Write(vals)
		w.Flush()
		line = max(line+1, rowLine)
	}
	out.CSV = buf.Bytes()
	return out, ps
}

// formatMapped writes a converted number with 12 significant digits, enough for any age or σ a paper
// gives and free of the last bits of binary rounding (0.7773, not 0.7773000000000001).
func formatMapped(x float64) string {
	if x == 0 || math.IsNaN(x) || math.IsInf(x, 0) {
		return strconv.FormatFloat(x, 'g', -1, 64)
	}
	v, _ := strconv.ParseFloat(strconv.FormatFloat(x, 'g', 12, 64), 64)
	return formatNumber(v)
}

func (m Mapping) sigmaWords() string {
	if m.SigmaForm == "percent" {
		return "as a percentage of the age"
	}
	return "in " + m.AgeUnit
}

// describeColumn names our column with the file's column it comes from.
func (m Mapping) describeColumn(col string) string {
	if from := m.Columns[col]; from != "" {
		return fmt.Sprintf("%s (the file's “%s”)", col, from)
	}
	if v := strings.TrimSpace(m.Constants[col]); v != "" {
		return fmt.Sprintf("%s (%q for every row)", col, v)
	}
	return col
}

// skip says why a row is not a record ("" when it is one).
func (m Mapping) skip(row []string, header [][]string) string {
	nonEmpty := 0
	for _, c := range row {
		if c != "" {
			nonEmpty++
		}
	}
	switch {
	case nonEmpty == 0:
		return "blank"
	case m.SkipNotes && nonEmpty == 1:
		return "a note or heading (text in one cell only)"
	case m.SkipRepeatedHeaders:
		for _, h := range header {
			same, filled := 0, 0
			for c, v := range h {
				if v == "" {
					continue
				}
				filled++
				if c < len(row) && strings.EqualFold(strings.Join(strings.Fields(row[c]), " "), strings.Join(strings.Fields(v), " ")) {
					same++
				}
			}
			if filled >= 2 && same*2 > filled {
				return "repeats the header"
			}
		}
	}
	return ""
}

func rowText(row []string) string {
	var parts []string
	for _, c := range row {
		if c != "" {
			parts = append(parts, c)
		}
		if len(parts) == 3 {
			break
		}
	}
	s := strings.Join(parts, " | ")
	if r := []rune(s); len(r) > 80 {
		s = string(r[:79]) + "…"
	}
	return s
}

// Described is one line of how a mapping reads a file: what (our column, or the sheet, header, rows
// skipped) and how.
type Described struct{ What, How string }

// Describe says in plain words how each of our columns is read, for the change's page and the preview.
func (m Mapping) Describe() []Described {
	var out []Described
	if m.Sheet != "" {
		out = append(out, Described{"sheet", fmt.Sprintf("“%s”", m.Sheet)})
	}
	rows := fmt.Sprintf("row %d", m.HeaderRow)
	if m.HeaderRows > 1 {
		rows = fmt.Sprintf("rows %d–%d, joined", m.HeaderRow, m.HeaderRow+m.HeaderRows-1)
	}
	out = append(out, Described{"header", rows})
	for _, col := range dateColumns {
		from, v := m.Columns[col], strings.TrimSpace(m.Constants[col])
		switch {
		case from != "":
			s := fmt.Sprintf("the file's column “%s”", from)
			if slices.Contains(mappedNumberColumns, col) {
				s += m.conversionWords(col)
			}
			out = append(out, Described{col, s})
		case v != "":
			out = append(out, Described{col, fmt.Sprintf("“%s” for every row", v)})
		}
	}
	skips := []string{"blank rows"}
	if m.SkipRepeatedHeaders {
		skips = append(skips, "rows repeating the header")
	}
	if m.SkipNotes {
		skips = append(skips, "notes (text in one cell only)")
	}
	out = append(out, Described{"skipped", strings.Join(skips, ", ")})
	return out
}

// conversionWords says how a number column is converted (", in ka, ÷ 1000").
func (m Mapping) conversionWords(col string) string {
	div, _ := perMa(m.AgeUnit)
	s := ""
	if col != "age_ma" && m.SigmaForm == "percent" {
		s += ", a percentage of the age (× age ÷ 100)"
	}
	if div != 1 {
		s += fmt.Sprintf(", in %s (÷ %s to Ma)", m.AgeUnit, formatNumber(div))
	} else {
		s += ", in Ma"
	}
	return s
}

// ---- Suggestions

// Suggestion proposes the file's column for one of ours, and says why.
type Suggestion struct {
	Ours, Theirs, Why string
}

// SuggestLayout proposes where the header is in a raw table: its first row with at least two cells of
// text and no more numbers than texts, and a second header row when the row under it is text too and the
// row after that holds numbers.
func SuggestLayout(t RawTable) (headerRow, headerRows int) {
	kind := func(row []string) (texts, nums int) {
		for _, c := range row {
			if c == "" {
				continue
			}
			if _, ok := ParseDecimal(c); ok {
				nums++
			} else {
				texts++
			}
		}
		return
	}
	for i, row := range t.Rows {
		texts, nums := kind(row)
		if texts < 2 || nums > texts {
			continue
		}
		rows := 1
		if i+2 < len(t.Rows) {
			t2, n2 := kind(t.Rows[i+1])
			_, n3 := kind(t.Rows[i+2])
			if t2 >= 1 && n2 == 0 && n3 > 0 {
				rows = 2
			}
		}
		return t.Lines[i], rows
	}
	return 1, 1
}

// SuggestMapping proposes, from the file's header and some values under it, which of its columns holds
// which of ours, the unit of its ages, the form and level of its uncertainties. These are only
// suggestions for the curator to confirm: nothing is imported until they do.
func SuggestMapping(header []string, samples [][]string) (Mapping, []Suggestion) {
	m := NewMapping()
	var sug []Suggestion
	norm := func(h string) string { return strings.ToLower(strings.Join(strings.Fields(h), " ")) }
	used := map[int]bool{}
	take := func(ours string, c int, why string) {
		if _, done := m.Columns[ours]; done || used[c] {
			return
		}
		m.Columns[ours], used[c] = header[c], true
		sug = append(sug, Suggestion{ours, header[c], why})
	}
	// Our own names first.
	for c, h := range header {
		if slices.Contains(dateColumns, norm(h)) {
			take(norm(h), c, "the header is our column's name")
		}
	}
	isSigma := func(h string) bool {
		return strings.ContainsAny(h, "±σ") || containsWord(h, "sigma", "err", "error", "uncertainty", "2s", "1s", "2se", "2sd", "sd", "se", "unc", "unc.")
	}
	numeric := func(c int) bool {
		n := 0
		for _, r := range samples {
			if c < len(r) && r[c] != "" {
				if _, ok := ParseDecimal(r[c]); !ok {
					return false
				}
				n++
			}
		}
		return n > 0
	}
	var ages []int
	for c, h := range header {
		l := norm(h)
		if (containsWord(l, "age", "date", "ages", "dates") || strings.Contains(l, "age (")) && !isSigma(l) && !strings.Contains(l, "monitor") && numeric(c) {
			ages = append(ages, c)
		}
	}
	if len(ages) > 0 {
		why := "the header names an age and its values are numbers"
		if len(ages) > 1 {
			why = fmt.Sprintf("the first of %d columns of ages (%s): choose the one to keep", len(ages), quoteList(pick(header, ages)))
		}
		take("age_ma", ages[0], why)
		l := norm(header[ages[0]])
		switch {
		case containsWord(l, "ka", "kyr"):
			m.AgeUnit = "ka"
		case containsWord(l, "yr", "years", "a") && !containsWord(l, "ma", "myr"):
			m.AgeUnit = "years"
		}
		// The σ of the chosen age: the next column, if it reads as one.
		if s := ages[0] + 1; s < len(header) && isSigma(norm(header[s])) {
			take("sigma_ma", s, "the column after the age, and its header names an uncertainty")
			sl := norm(header[s])
			if strings.Contains(sl, "%") || containsWord(sl, "rel", "relative", "pct", "percent") {
				m.SigmaForm = "percent"
			}
			switch {
			case strings.Contains(sl, "2σ") || containsWord(sl, "2s", "2sigma", "2se", "2sd", "95%"):
				m.Constants["sigma_level"] = "2"
			case strings.Contains(sl, "1σ") || containsWord(sl, "1s", "1sigma", "1se", "1sd"):
				m.Constants["sigma_level"] = "1"
			}
			if m.Constants["sigma_level"] != "" {
				sug = append(sug, Suggestion{"sigma_level", "", fmt.Sprintf("the header %q names the σ level", header[s])})
			}
		}
	}
	words := []struct {
		ours  string
		words []string
	}{
		{"sample_code", []string{"sample", "sample id", "sample name", "sample code", "sample no.", "specimen"}},
		{"material", []string{"material", "mineral", "phase", "dated material"}},
		{"province", []string{"province", "lip"}},
		{"unit", []string{"unit", "flow", "formation", "sill", "dyke", "dike", "lava", "member"}},
		{"section", []string{"section", "core", "outcrop"}},
		{"height_m", []string{"height (m)", "height", "stratigraphic height (m)", "height m"}},
		{"method", []string{"method", "technique", "system"}},
		{"interpretation", []string{"interpretation"}},
		{"laboratory", []string{"lab", "laboratory"}},
		{"citation", []string{"reference", "citation", "source"}},
		{"doi", []string{"doi"}},
		{"tracer", []string{"tracer", "spike"}},
		{"monitor", []string{"monitor", "standard", "flux monitor"}},
		{"latitude", []string{"latitude", "lat", "lat (°n)", "latitude (°n)"}},
		{"longitude", []string{"longitude", "lon", "long", "lon (°e)", "longitude (°e)"}},
		{"notes", []string{"notes", "note", "comment", "comments", "remarks"}},
	}
	for _, w := range words {
		for c, h := range header {
			if slices.Contains(w.words, norm(h)) {
				take(w.ours, c, "the header reads as this column")
				break
			}
		}
	}
	return m, sug
}

// containsWord reports whether one of words is a whole word of s (words split at anything not a letter,
// digit, σ, % or .).
func containsWord(s string, words ...string) bool {
	f := strings.FieldsFunc(strings.ToLower(s), func(r rune) bool {
		return !(r >= 'a' && r <= 'z' || r >= '0' && r <= '9' || r == 'σ' || r == '%' || r == '.')
	})
	for _, w := range f {
		if slices.Contains(words, w) || slices.Contains(words, strings.TrimSuffix(w, ".")) {
			return true
		}
	}
	return false
}

func pick(ss []string, idx []int) []string {
	out := make([]string, len(idx))
	for i, j := range idx {
		out[i] = ss[j]
	}
	return out
}

// Samples returns up to n rows under m's header that are not skipped, to show beside the columns.
func (t RawTable) Samples(m Mapping, n int) [][]string {
	start := t.headerIndex(m) + max(m.HeaderRows, 1)
	if start > len(t.Rows) {
		return nil
	}
	header := t.Rows[t.headerIndex(m):start]
	var out [][]string
	for _, row := range t.Rows[start:] {
		if m.skip(row, header) == "" {
			out = append(out, row)
			if len(out) == n {
				break
			}
		}
	}
	return out
}

// ---- Saved mappings

// SaveMapping keeps m under its name (replacing the mapping of that name) after checking it against the
// header it was made for.
func (d *DB) SaveMapping(ctx context.Context, m Mapping) error {
	m.Name = strings.TrimSpace(m.Name)
	if m.Name == "" || len([]rune(m.Name)) > 200 || strings.ContainsFunc(m.Name, isControl) {
		return &ValidationError{[]Problem{{Column: "name", Message: "give the mapping a name of 1 to 200 characters, without control characters, e.g. the laboratory whose layout it reads"}}}
	}
	if ps := m.Check(m.Headers); len(ps) > 0 {
		return &ValidationError{ps}
	}
	return d.inTx(ctx, func(tx *sql.Tx) error { return d.saveMapping(ctx, tx, m) })
}

func (d *DB) saveMapping(ctx context.Context, tx *sql.Tx, m Mapping) error {
	body, err := json.Marshal(m)
	if err != nil {
		return err
	}
	headers, err := json.Marshal(m.Headers)
	if err != nil {
		return err
	}
	now := d.stamp()
	_, err = tx.ExecContext(ctx, `INSERT INTO import_mappings (name, kind, headers_json, mapping_json, created_by, created_at, updated_at)
		VALUES (?,?,?,?,?,?,?) ON CONFLICT (name) DO UPDATE SET kind = excluded.kind, headers_json = excluded.headers_json,
		mapping_json = excluded.mapping_json, updated_at = excluded.updated_at`,
		m.Name, m.Kind, string(headers), string(body), actor(ctx), now, now)
	if err != nil {
		return fmt.Errorf("save mapping %q: %w", m.Name, err)
	}
	return nil
}

func isControl(r rune) bool { return r < 0x20 || r == 0x7f }

// Mappings lists the saved mappings by name.
func (d *DB) Mappings(ctx context.Context) ([]Mapping, error) {
	return queryAll(ctx, d.reader(), `SELECT mapping_json FROM import_mappings ORDER BY name`, nil, scanMapping)
}

func scanMapping(s interface{ Scan(...any) error }) (Mapping, error) {
	var body string
	if err := s.Scan(&body); err != nil {
		return Mapping{}, err
	}
	m := NewMapping()
	if err := json.Unmarshal([]byte(body), &m); err != nil {
		return m, fmt.Errorf("read saved mapping: %w", err)
	}
	return m, nil
}

// MappingByName returns the saved mapping of that name, or ErrNotFound.
func (d *DB) MappingByName(ctx context.Context, name string) (Mapping, error) {
	m, err := scanMapping(d.reader().QueryRowContext(ctx, `SELECT mapping_json FROM import_mappings WHERE name = ?`, name))
	if errors.Is(err, sql.ErrNoRows) {
		return m, fmt.Errorf("no saved mapping named %q: %w", name, ErrNotFound)
	}
	return m, err
}

// MappingsFor returns the saved mappings made for a file with exactly this header.
func (d *DB) MappingsFor(ctx context.Context, header []string) ([]Mapping, error) {
	all, err := d.Mappings(ctx)
	var out []Mapping
	for _, m := range all {
		if slices.Equal(m.Headers, header) {
			out = append(out, m)
		}
	}
	return out, err
}

// BatchMapping returns the mapping a change's import read its file through, or nil when it used none.
func (d *DB) BatchMapping(ctx context.Context, batchID int64) (*Mapping, error) {
	m, err := scanMapping(d.reader().QueryRowContext(ctx, `SELECT mapping_json FROM batch_mappings WHERE batch_id = ?`, batchID))
	if errors.Is(err, sql.ErrNoRows) {
		return nil, nil
	}
	return &m, err
}

// ExportMappings writes every saved mapping as a JSON array, for ImportMappings.
func (d *DB) ExportMappings(ctx context.Context, w io.Writer) error {
	all, err := d.Mappings(ctx)
	if err != nil {
		return err
	}
	if all == nil {
		all = []Mapping{}
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(all)
}

// ImportMappings reads a JSON array of mappings (as ExportMappings writes) and saves them, all or none:
// every mapping is checked first; one whose name is saved with other content is refused (the same
// content is left as it is).
func (d *DB) ImportMappings(ctx context.Context, file string, r io.Reader) (int, error) {
	var in []Mapping
	dec := json.NewDecoder(io.LimitReader(r, maxImportBytes))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&in); err != nil {
		return 0, &ValidationError{[]Problem{{File: file, Message: "not a list of mappings as an export of mappings writes: " + err.Error()}}}
	}
	var ps []Problem
	seen := map[string]bool{}
	for i, m := range in {
		where := fmt.Sprintf("mapping %d (%q)", i+1, m.Name)
		if strings.TrimSpace(m.Name) == "" || seen[m.Name] {
			ps = append(ps, Problem{File: file, Column: "name", Message: where + ": a name is missing or given twice"})
		}
		seen[m.Name] = true
		for _, p := range m.Check(m.Headers) {
			p.File, p.Message = file, where+": "+p.Message
			ps = append(ps, p)
		}
	}
	if len(ps) > 0 {
		return 0, &ValidationError{ps}
	}
	added := 0
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		for i, m := range in {
			var body string
			err := tx.QueryRowContext(ctx, `SELECT mapping_json FROM import_mappings WHERE name = ?`, m.Name).Scan(&body)
			if err == nil {
				old := NewMapping()
				_ = json.Unmarshal([]byte(body), &old)
				a, _ := json.Marshal(old)
				b, _ := json.Marshal(m)
				if !bytes.Equal(a, b) {
					ps = append(ps, Problem{File: file, Column: "name", Message: fmt.Sprintf("mapping %d: a different mapping named %q is already saved; rename one of them", i+1, m.Name)})
				}
				continue
			} else if !errors.Is(err, sql.ErrNoRows) {
				return err
			}
			if err := d.saveMapping(ctx, tx, m); err != nil {
				return err
			}
			added++
		}
		if len(ps) > 0 {
			return &ValidationError{ps}
		}
		return nil
	})
	if err != nil {
		return 0, err
	}
	return added, nil
}

// ---- Importing through a mapping

type mappingUseKey struct{}

// withMappingUse marks ctx so that the import records m on its change.
func withMappingUse(ctx context.Context, m Mapping) context.Context {
	return context.WithValue(ctx, mappingUseKey{}, m)
}

// recordMappingUse keeps the mapping of ctx, if any, with the import's change batch.
func recordMappingUse(ctx context.Context, tx *sql.Tx, batch int64) error {
	m, ok := ctx.Value(mappingUseKey{}).(Mapping)
	if !ok {
		return nil
	}
	body, err := json.Marshal(m)
	if err != nil {
		return err
	}
	_, err = tx.ExecContext(ctx, `INSERT INTO batch_mappings (batch_id, mapping_json) VALUES (?, ?)`, batch, string(body))
	return err
}

// MapFile reads a file (CSV or .xlsx) through m.
func MapFile(m Mapping, fileName string, body []byte) (Mapped, []Problem, error) {
	t, err := ReadRawTable(fileName, body, m.Sheet)
	if err != nil {
		return Mapped{}, nil, err
	}
	mp, ps := m.Apply(t)
	return mp, ps, nil
}

// ImportMapped imports a file through m, all or nothing: the mapping's problems and the import's are
// listed together, the import's naming the file's column beside ours. The change records m.
func (d *DB) ImportMapped(ctx context.Context, m Mapping, fileName string, body []byte) (ImportResult, Mapped, error) {
	mp, ps, err := MapFile(m, fileName, body)
	res := ImportResult{Kind: m.Kind, File: fileName, Added: map[string]int{}}
	if err != nil {
		return res, mp, err
	}
	if mp.CSV == nil { // the mapping itself is wrong: there are no rows to check
		return res, mp, &ValidationError{ps}
	}
	if len(ps) > 0 { // the rows' own problems are checked too, on a copy, so one run lists every one
		snap, done, err := d.snapshot(ctx)
		if err != nil {
			return res, mp, err
		}
		defer done()
		_, err = snap.ImportReader(withDryRun(ctx), m.Kind, "", fileName, bytes.NewReader(mp.CSV))
		return res, mp, &ValidationError{mergeProblems(m, ps, err)}
	}
	res, err = d.ImportReader(withMappingUse(ctx, m), m.Kind, "", fileName, bytes.NewReader(mp.CSV))
	if ve, ok := AsValidation(err); ok {
		return res, mp, &ValidationError{mergeProblems(m, nil, ve)}
	}
	if err == nil {
		res.Notes = append(res.Notes, mappedNote(m, mp))
	}
	return res, mp, err
}

func mappedNote(m Mapping, mp Mapped) string {
	name := "a mapping"
	if m.Name != "" {
		name = fmt.Sprintf("the mapping “%s”", m.Name)
	}
	return fmt.Sprintf("read through %s: %s made into dates, %s skipped", name, rowsWord(len(mp.Rows)), rowsWord(len(mp.Skipped)))
}

// mergeProblems lists the mapping's problems and then the import's, naming the file's column beside ours,
// without a second problem for a cell the mapping already reported.
func mergeProblems(m Mapping, mapping []Problem, importErr error) []Problem {
	out := slices.Clone(mapping)
	said := map[[2]any]bool{}
	for _, p := range mapping {
		said[[2]any{p.Line, p.Column}] = true
	}
	ve, ok := AsValidation(importErr)
	if !ok {
		return out
	}
	for _, p := range ve.Problems {
		if p.Column != "" {
			p.Column = m.describeColumn(p.Column)
		}
		if !said[[2]any{p.Line, p.Column}] {
			out = append(out, p)
		}
	}
	return out
}

// MappingsForFile returns the saved mappings that read this file (CSV or .xlsx) to the header they were
// made for: each is tried with its own sheet and header rows.
func (d *DB) MappingsForFile(ctx context.Context, fileName string, body []byte) ([]Mapping, error) {
	all, err := d.Mappings(ctx)
	if err != nil {
		return nil, err
	}
	tables := map[string]*RawTable{}
	var out []Mapping
	for _, m := range all {
		t, ok := tables[m.Sheet]
		if !ok {
			if raw, err := ReadRawTable(fileName, body, m.Sheet); err == nil {
				t = &raw
			}
			tables[m.Sheet] = t
		}
		if t != nil && slices.Equal(t.Header(m), m.Headers) {
			out = append(out, m)
		}
	}
	return out, nil
}

func rowsWord(n int) string {
	if n == 1 {
		return "1 row"
	}
	return fmt.Sprintf("%d rows", n)
}

// MappingCreator returns the account that first saved the mapping of that name (0 when none is known)
// and whether such a mapping is saved.
func (d *DB) MappingCreator(ctx context.Context, name string) (int64, bool, error) {
	var by sql.NullInt64
	err := d.reader().QueryRowContext(ctx, `SELECT created_by FROM import_mappings WHERE name = ?`, strings.TrimSpace(name)).Scan(&by)
	if errors.Is(err, sql.ErrNoRows) {
		return 0, false, nil
	}
	return by.Int64, err == nil, err
}
