package web

import (
	"fmt"
	"net/http"
	"slices"
	"strconv"
	"strings"

	"coeval/store"
	"coeval/views"
)

// The mapping step of an upload: a table as a paper publishes it (its own column names, units and σ
// levels) is read through a mapping of its columns onto ours, chosen here, then previewed and committed
// as any upload. Saved mappings are offered again for a file with the same columns.

// noConstant lists our columns that come only from the file, never one value for every row.
var noConstant = []string{"sample_code", "age_ma", "sigma_ma", "sigma_y_ma", "sigma_z_ma"}

// mapUpload loads an upload for its mapping step: the signed-in account's, mapped, not yet imported.
func (s *Server) mapUpload(r *http.Request) (store.Upload, error) {
	id, err := pathID(r, "id")
	if err != nil {
		return store.Upload{}, err
	}
	up, err := s.store.UploadByID(r.Context(), id)
	if err != nil {
		return up, err
	}
	if u, _ := currentUser(r.Context()); u.ID != up.UserID {
		return up, forbidden{"This upload belongs to another account."}
	}
	if up.BatchID != nil {
		return up, conflictError{"This file was already imported."}
	}
	if !up.Mapped {
		return up, notFoundError{what: "a mapping step for this upload (its file is in our own format)"}
	}
	return up, nil
}

// mapState is what the mapping page shows: the file as read under the mapping's sheet and header rows.
type mapState struct {
	up     store.Upload
	m      store.Mapping
	raw    store.RawTable
	header []string
	saved  []store.Mapping // every saved mapping
	notes  []string
	errs   []string
	field  map[string]string // errors of our columns
}

func (s *Server) handleMapForm(w http.ResponseWriter, r *http.Request) error {
	up, err := s.mapUpload(r)
	if err != nil {
		return err
	}
	st := mapState{up: up, field: map[string]string{}}
	if up.Mapping != nil {
		st.m = *up.Mapping
		st.notes = append(st.notes, "The mapping you last checked this file with is filled in below.")
	} else {
		matching, err := s.store.MappingsForFile(r.Context(), up.FileName, up.Body)
		if err != nil {
			return err
		}
		if len(matching) > 0 {
			st.m = matching[0]
			st.notes = append(st.notes, fmt.Sprintf("The saved mapping “%s” was made for a file with these same columns: it is filled in below. Check it, then check the file.", matching[0].Name))
		} else {
			raw, err := store.ReadRawTable(up.FileName, up.Body, "")
			if ve, ok := store.AsValidation(err); ok {
				return badRequest{message: ve.Problems[0].String()}
			} else if err != nil {
				return err
			}
			st.m = store.NewMapping()
			st.m.HeaderRow, st.m.HeaderRows = store.SuggestLayout(raw)
			st.suggest(raw)
		}
	}
	return s.renderMap(w, r, http.StatusOK, st)
}

// suggest fills the mapping's unset columns from the file's header and values, and says what it proposed.
func (st *mapState) suggest(raw store.RawTable) {
	header := raw.Header(st.m)
	sug, why := store.SuggestMapping(header, raw.Samples(st.m, 5))
	var said []string
	for _, sg := range why {
		if sg.Theirs != "" && st.m.Columns[sg.Ours] == "" && strings.TrimSpace(st.m.Constants[sg.Ours]) == "" {
			st.m.Columns[sg.Ours] = sg.Theirs
			said = append(said, fmt.Sprintf("%s from “%s” (%s)", sg.Ours, sg.Theirs, sg.Why))
		}
	}
	if st.m.Columns["age_ma"] == sug.Columns["age_ma"] && sug.Columns["age_ma"] != "" {
		st.m.AgeUnit = sug.AgeUnit
		st.m.SigmaForm = sug.SigmaForm
		if v := sug.Constants["sigma_level"]; v != "" && st.m.Columns["sigma_level"] == "" {
			st.m.Constants["sigma_level"] = v
			said = append(said, fmt.Sprintf("a σ level of %sσ, the ages in %s, uncertainties %s (from the headers)", v, sug.AgeUnit, map[string]string{"absolute": "absolute", "percent": "as a percentage of the age"}[sug.SigmaForm]))
		}
	}
	if len(said) > 0 {
		st.notes = append(st.notes, "Suggested from the file's headers and values, for you to check (nothing is imported until you have seen the rows and confirmed): "+strings.Join(said, "; ")+".")
	} else {
		st.notes = append(st.notes, "No column of the file could be matched to ours from its headers: choose each below.")
	}
}

func (s *Server) renderMap(w http.ResponseWriter, r *http.Request, status int, st mapState) error {
	raw, err := store.ReadRawTable(st.up.FileName, st.up.Body, st.m.Sheet)
	if ve, ok := store.AsValidation(err); ok {
		st.errs = append(st.errs, ve.Problems[0].String())
		st.m.Sheet = ""
		raw, err = store.ReadRawTable(st.up.FileName, st.up.Body, "")
	}
	if err != nil {
		return err
	}
	st.raw, st.header = raw, raw.Header(st.m)
	if st.saved, err = s.store.Mappings(r.Context()); err != nil {
		return err
	}
	s.render(w, r, status, views.EditPage(s.mapView(r, st)))
	return nil
}

// layoutKey names what the columns shown depend on; a change of it shows the page again instead of checking.
func layoutKey(m store.Mapping, saved string) string {
	return fmt.Sprintf("%s|%d|%d|%s", m.Sheet, m.HeaderRow, m.HeaderRows, saved)
}

func (s *Server) mapView(r *http.Request, st mapState) views.Edit {
	up, m := st.up, st.m
	e := views.Edit{Page: s.page(r.Context(), "Map the columns of "+up.FileName, ""), Action: fmt.Sprintf("/import/%d/map", up.ID),
		Submit: "Check the file with this mapping", Errors: st.errs}
	e.Page.Crumbs = []views.Link{{Label: "Import", URL: "/import"}}
	e.Intro = "Say which column of the file holds each of ours, or give one value for every row (a province, a method, a laboratory), " +
		"the unit of its ages and how it gives their uncertainties. The next page shows every row as it will be imported, with the file's own cell beside each converted value; nothing is imported until you confirm there. " +
		strings.Join(st.notes, " ")
	e.Links = []views.Link{{Label: "Our dates file: what each column means", URL: "/help/files/dates"}}
	savedName := ""
	if m.Name != "" && slices.ContainsFunc(st.saved, func(x store.Mapping) bool { return x.Name == m.Name }) {
		savedName = m.Name
	}
	e.Hidden = []views.KV{{Label: "shown", Value: layoutKey(m, savedName)}}
	yesNo := func(v bool) []views.Option {
		return []views.Option{{Value: "yes", Label: "yes", Selected: v}, {Value: "no", Label: "no", Selected: !v}}
	}
	var in []views.Input
	if len(st.raw.Sheets) > 0 {
		var opts []views.Option
		for _, sh := range st.raw.Sheets {
			opts = append(opts, views.Option{Value: sh, Label: sh, Selected: sh == st.raw.Sheet})
		}
		in = append(in, views.Input{Name: "sheet", Label: "Sheet of the workbook", Kind: "select", Options: opts, Help: "after choosing another sheet, check the file: the page shows that sheet's columns first"})
	}
	savedOpts := []views.Option{{Value: "", Label: "— none"}}
	for _, x := range st.saved {
		savedOpts = append(savedOpts, views.Option{Value: x.Name, Label: x.Name, Selected: x.Name == savedName})
	}
	rowOpts := func(n, top int) []views.Option {
		var o []views.Option
		for i := 1; i <= top; i++ {
			o = append(o, views.Option{Value: strconv.Itoa(i), Label: strconv.Itoa(i), Selected: i == n})
		}
		return o
	}
	in = append(in,
		views.Input{Name: "saved", Label: "Start from a saved mapping", Kind: "select", Options: savedOpts, Help: "choosing one fills the page with it"},
		views.Input{Name: "header_row", Label: "The header starts on row", Kind: "select", Options: rowOpts(m.HeaderRow, min(max(len(st.raw.Rows), 1), 30)), Help: "rows above it (a title) are left out"},
		views.Input{Name: "header_rows", Label: "Rows the header takes", Kind: "select", Options: rowOpts(m.HeaderRows, 5), Help: "a header over two rows is read as one name per column"},
		views.Input{Name: "age_unit", Label: "The file's ages and uncertainties are in", Kind: "select", Options: termOptions(store.AgeUnits(), m.AgeUnit), Help: "converted to Ma (ka ÷ 1000, years ÷ 1 000 000); the monitor's age is read in Ma"},
		views.Input{Name: "sigma_form", Label: "The file gives uncertainties as", Kind: "select", Options: termOptions(store.SigmaForms(), m.SigmaForm), Help: "a percentage is turned into an absolute uncertainty with the row's age"},
		views.Input{Name: "skip_headers", Label: "Skip rows that repeat the header", Kind: "select", Options: yesNo(m.SkipRepeatedHeaders), Help: "as where a table continues on a new page"},
		views.Input{Name: "skip_notes", Label: "Skip notes and headings (rows with text in one cell only)", Kind: "select", Options: yesNo(m.SkipNotes), Help: "blank rows are always skipped; every skipped row is listed on the next page"},
	)
	format, _ := store.FileFormatByKind("dates")
	colOpts := func(sel string) []views.Option {
		o := []views.Option{{Value: "", Label: "— not from the file"}}
		for _, h := range st.header {
			o = append(o, views.Option{Value: h, Label: h, Selected: h == sel})
		}
		return o
	}
	for _, c := range format.Columns {
		label := c.Name
		if c.Required {
			label += " (required)"
		}
		help := firstSentence(c.Meaning)
		if c.Name == "sigma_level" {
			help = "1σ or 2σ: the level of every uncertainty of the row, as published; stored as 1σ"
		}
		in = append(in, views.Input{Name: "col_" + c.Name, Label: label + ": the file's column", Kind: "select", Options: colOpts(m.Columns[c.Name]),
			Help: help, Error: st.field[c.Name]})
		if slices.Contains(noConstant, c.Name) {
			continue
		}
		ci := views.Input{Name: "const_" + c.Name, Label: c.Name + ": or one value for every row", Kind: "text", Value: m.Constants[c.Name]}
		if len(c.Values) > 0 {
			ci.Kind = "select"
			ci.Options = append([]views.Option{{Value: "", Label: "—"}}, termOptions(c.Values, m.Constants[c.Name])...)
		}
		in = append(in, ci)
	}
	in = append(in, views.Input{Name: "name", Label: "Save this mapping as (optional)", Kind: "text", Value: m.Name, Error: st.field["name"],
		Help: "a name, e.g. the laboratory whose layout it reads: saved when the file is checked, offered again for files with the same columns; a saved name is replaced"})
	e.Inputs = in
	// The file's columns with a few values, and which of ours each fills.
	ours := map[string][]string{}
	for c, h := range m.Columns {
		if h != "" {
			ours[h] = append(ours[h], c)
		}
	}
	t := views.Table{ID: "file-columns", Caption: "The file's columns, with the first values under the header", Columns: []views.Column{{Label: "Column of the file"}, {Label: "First values"}, {Label: "Read as"}}}
	samples := st.raw.Samples(m, 3)
	for i, h := range st.header {
		var vals []string
		for _, row := range samples {
			if i < len(row) && row[i] != "" {
				vals = append(vals, row[i])
			}
		}
		cols := ours[h]
		slices.Sort(cols)
		t.Rows = append(t.Rows, []views.Cell{{Text: h}, {Text: orDash(strings.Join(vals, " · "))}, {Text: orDash(strings.Join(cols, ", "))}})
	}
	e.Tables = []views.Table{t}
	return e
}

func firstSentence(s string) string {
	if i := strings.Index(s, ". "); i > 0 {
		return s[:i+1]
	}
	return s
}

func termOptions(ts []store.Term, sel string) []views.Option {
	o := make([]views.Option, len(ts))
	for i, t := range ts {
		o[i] = views.Option{Value: t.Code, Label: t.Label, Selected: t.Code == sel}
	}
	return o
}

// mappingFromForm reads the mapping the page posted.
func mappingFromForm(r *http.Request) store.Mapping {
	m := store.NewMapping()
	f := r.PostForm
	m.Name = strings.TrimSpace(f.Get("name"))
	m.Sheet = f.Get("sheet")
	m.HeaderRow, _ = strconv.Atoi(f.Get("header_row"))
	m.HeaderRows, _ = strconv.Atoi(f.Get("header_rows"))
	m.AgeUnit, m.SigmaForm = f.Get("age_unit"), f.Get("sigma_form")
	m.SkipRepeatedHeaders, m.SkipNotes = f.Get("skip_headers") != "no", f.Get("skip_notes") != "no"
	for _, c := range store.DateColumns() {
		if v := f.Get("col_" + c); v != "" {
			m.Columns[c] = v
		} else if v := strings.TrimSpace(f.Get("const_" + c)); v != "" {
			m.Constants[c] = v
		}
	}
	return m
}

func (s *Server) handleMapSubmit(w http.ResponseWriter, r *http.Request) error {
	r = actingCtx(r) // a mapping saved here records who saved it
	up, err := s.mapUpload(r)
	if err != nil {
		return err
	}
	if err := r.ParseForm(); err != nil {
		return badRequest{message: "The form could not be read; send it again."}
	}
	ctx := r.Context()
	m := mappingFromForm(r)
	st := mapState{up: up, m: m, field: map[string]string{}}
	// What the page showed: its sheet, header rows and saved mapping. A change of them shows the page
	// again (that sheet's columns, the saved mapping's choices) instead of checking the file.
	shown := strings.SplitN(r.PostForm.Get("shown"), "|", 4)
	for len(shown) < 4 {
		shown = append(shown, "")
	}
	if saved := r.PostForm.Get("saved"); saved != "" && saved != shown[3] {
		sm, err := s.store.MappingByName(ctx, saved)
		if err != nil {
			return err
		}
		st.m = sm
		st.notes = append(st.notes, fmt.Sprintf("The saved mapping “%s” is filled in below. Check it, then check the file.", sm.Name))
		return s.renderMap(w, r, http.StatusOK, st)
	}
	if m.HeaderRow < 1 {
		m.HeaderRow = 1
	}
	if m.HeaderRows < 1 || m.HeaderRows > 5 {
		m.HeaderRows = 1
	}
	st.m = m
	if layoutKey(m, shown[3]) != strings.Join(shown, "|") {
		// Another sheet or header: its columns are not those the choices were made from. Show them.
		if raw, err := store.ReadRawTable(up.FileName, up.Body, m.Sheet); err == nil {
			header := raw.Header(m)
			for c, h := range st.m.Columns {
				if !slices.Contains(header, h) {
					delete(st.m.Columns, c)
				}
			}
			st.suggest(raw)
		}
		st.notes = append([]string{"The columns below are those of the sheet and header rows you chose: check the choices, then check the file."}, st.notes...)
		return s.renderMap(w, r, http.StatusOK, st)
	}
	raw, err := store.ReadRawTable(up.FileName, up.Body, m.Sheet)
	if ve, ok := store.AsValidation(err); ok {
		st.errs = append(st.errs, ve.Problems[0].String())
		return s.renderMap(w, r, http.StatusUnprocessableEntity, st)
	} else if err != nil {
		return err
	}
	m.Headers = raw.Header(m)
	if ps := m.Check(m.Headers); len(ps) > 0 {
		for _, p := range ps {
			if p.Column != "" && st.field[p.Column] == "" {
				st.field[p.Column] = p.Message
			}
			st.errs = append(st.errs, mapProblemText(p))
		}
		return s.renderMap(w, r, http.StatusUnprocessableEntity, st)
	}
	if m.Name != "" {
		// A saved mapping is replaced by the account that saved it, or by a curator.
		by, exists, err := s.store.MappingCreator(ctx, m.Name)
		if err != nil {
			return err
		}
		if u, _ := currentUser(ctx); exists && by != u.ID && !isCurator(r) {
			st.field["name"] = "another account saved a mapping of this name; only a curator may replace it: choose another name"
			st.errs = append(st.errs, "name: "+st.field["name"])
			return s.renderMap(w, r, http.StatusUnprocessableEntity, st)
		}
		if err := s.store.SaveMapping(ctx, m); err != nil {
			if ve, ok := store.AsValidation(err); ok {
				st.field["name"] = ve.Problems[0].Message
				st.errs = append(st.errs, mapProblemText(ve.Problems[0]))
				return s.renderMap(w, r, http.StatusUnprocessableEntity, st)
			}
			return err
		}
	}
	if err := s.store.SetUploadMapping(ctx, up.ID, m); err != nil {
		return err
	}
	up.Mapping = &m
	pv, err := s.store.PreviewUpload(uploadCtx(r), up)
	if err != nil {
		return err
	}
	status := http.StatusOK
	if len(pv.Problems) > 0 {
		status = http.StatusUnprocessableEntity
	}
	s.render(w, r, status, views.DetailPage(s.previewView(r, pv)))
	return nil
}

func mapProblemText(p store.Problem) string {
	if p.Column == "" {
		return p.Message
	}
	return p.Column + ": " + p.Message
}

// mappedPreviewTable lists every row of a mapped file: our columns the mapping fills, each converted value
// with the file's cell beside it, and the rows skipped with the reason.
func mappedPreviewTable(pv store.Preview, byLine map[int][]string) views.Table {
	mp := pv.Mapped
	lineLabel := "Line"
	if strings.HasSuffix(strings.ToLower(pv.Upload.FileName), ".xlsx") {
		lineLabel = "Row"
	}
	t := views.Table{ID: "preview", Caption: fmt.Sprintf("Rows of %s as they will be imported (the file's own cell in brackets where a value was converted)", pv.Upload.FileName)}
	t.Columns = []views.Column{{Label: lineLabel, Num: true}, {Label: "Problems"}}
	cols := map[string]int{}
	for i, c := range store.DateColumns() {
		cols[c] = i
	}
	for _, c := range mp.Columns {
		col := views.Column{Label: c}
		if from := mp.Mapping.Columns[c]; from != "" {
			col.Title = "from the file's column " + from
		}
		t.Columns = append(t.Columns, col)
	}
	type line struct {
		n     int
		cells []views.Cell
	}
	var lines []line
	for _, row := range mp.Rows {
		cells := []views.Cell{{Text: strconv.Itoa(row.Line), Num: true}}
		if ps := byLine[row.Line]; len(ps) > 0 {
			cells = append(cells, views.Cell{Text: joinSemi(ps), Class: "caution"})
		} else {
			cells = append(cells, views.Cell{Text: "ok"})
		}
		for _, c := range mp.Columns {
			mc := row.Cells[cols[c]]
			text := mc.Value
			if mc.Converted {
				text = fmt.Sprintf("%s (%s)", mc.Value, mc.Original)
			}
			cells = append(cells, views.Cell{Text: text})
		}
		lines = append(lines, line{row.Line, cells})
	}
	for _, sk := range mp.Skipped {
		cells := []views.Cell{{Text: strconv.Itoa(sk.Line), Num: true}, {Text: "skipped: " + sk.Reason}}
		for i := range mp.Columns {
			text := ""
			if i == 0 {
				text = sk.Text
			}
			cells = append(cells, views.Cell{Text: text, Class: "muted"})
		}
		lines = append(lines, line{sk.Line, cells})
	}
	slices.SortStableFunc(lines, func(a, b line) int { return a.n - b.n })
	const maxRows = 500
	for i, l := range lines {
		if i == maxRows {
			t.Notes = append(t.Notes, fmt.Sprintf("Only the first %d of %d rows are shown; every row was checked.", maxRows, len(lines)))
			break
		}
		t.Rows = append(t.Rows, l.cells)
	}
	t.Notes = append(t.Notes, fmt.Sprintf("%d rows become dates; %d rows are skipped.", len(mp.Rows), len(mp.Skipped)),
		"Uncertainties are shown as the file gives them, at the row's σ level (sigma_level), converted to Ma where the file's unit is another; they are stored as 1σ.")
	return t
}
