package web

import (
	"context"
	"errors"
	"fmt"
	"io"
	"mime/multipart"
	"net/http"
	"net/url"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
)

// maxUploadBytes bounds a browser upload's file; up to uploadMemoryBytes of a multipart body is parsed in
// memory, the rest goes to temporary files that handleUploadPreview removes.
const (
	maxUploadBytes    = 64 << 20
	uploadMemoryBytes = 32 << 20
)

func (s *Server) registerUploadRoutes(r chi.Router) {
	r.With(s.requireRole(store.RoleContributor)).Group(func(r chi.Router) {
		r.Get("/import", s.handle(s.handleUploadForm))
		r.Post("/import", s.handle(s.handleUploadPreview))
		r.Post("/import/{id}/commit", s.handle(s.handleUploadCommit))
		r.Get("/import/{id}/map", s.handle(s.handleMapForm))
		r.Post("/import/{id}/map", s.handle(s.handleMapSubmit))
	})
	r.With(s.requireRole(store.RoleCurator)).Post("/changes/{id}/undo", s.handle(s.handleBatchUndo))
	r.With(s.requireRole(store.RoleCurator)).Post("/changes/{id}/accept", s.handle(s.handleBatchAccept))
	r.Get("/changes", s.handle(s.handleChangeList))
}

func (s *Server) uploadView(r *http.Request, kind, section, columns string, errs []string) (views.Edit, error) {
	sections, err := s.store.Sections(r.Context())
	if err != nil {
		return views.Edit{}, err
	}
	e := views.Edit{Page: s.page(r.Context(), "Import a file", ""), Action: "/import", Multipart: true, Submit: "Check the file", Errors: errs}
	e.Intro = "Upload a CSV file (or an .xlsx workbook: its first sheet) in one of the file formats below; each has a page of its columns and a template to download. " +
		"Dates may also come in a table as a paper publishes it (any sheet of a workbook): you then say which of its columns is which, once per layout, and can save that for the next file. " +
		"You will first see every row with its problems and warnings; nothing is imported until you confirm, and then all rows or none are."
	kinds := []views.Option{}
	for _, f := range store.FileFormats() {
		kinds = append(kinds, views.Option{Value: f.Kind, Label: f.Title, Selected: f.Kind == kind || kind == "" && f.Kind == "dates"})
		e.Links = append(e.Links, views.Link{Label: f.Title, URL: "/help/files/" + f.Kind})
	}
	secs := []views.Option{{Value: "", Label: "— (for measurements, ties, events, hiatuses)"}}
	for _, sec := range sections {
		secs = append(secs, views.Option{Value: sec.Name, Label: sec.Name, Selected: sec.Name == section})
	}
	e.Inputs = []views.Input{
		{Name: "kind", Label: "The file holds", Kind: "select", Options: kinds},
		{Name: "section", Label: "Section", Kind: "select", Options: secs, Help: "for measurements, tie points and events"},
		{Name: "columns", Label: "Its columns are", Kind: "select", Options: []views.Option{
			{Value: "ours", Label: "those of our file format", Selected: columns != "map"},
			{Value: "map", Label: "a table as a paper publishes it: I will say which column is which (dates only)", Selected: columns == "map"},
		}, Help: "a paper's table (its own column names, ages in ka, σ as a percentage, a header over two rows, notes under it) is mapped onto our columns in the next step"},
		{Name: "file", Label: "File", Kind: "file", Help: ".csv or .xlsx"},
	}
	return e, nil
}

func (s *Server) handleUploadForm(w http.ResponseWriter, r *http.Request) error {
	e, err := s.uploadView(r, r.URL.Query().Get("kind"), r.URL.Query().Get("section"), "", nil)
	if err != nil {
		return err
	}
	s.render(w, r, http.StatusOK, views.EditPage(e))
	return nil
}

func (s *Server) handleUploadPreview(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	u, _ := currentUser(ctx)
	// The body limit is set by limitBodies. The form is parsed here, once and explicitly, so that the
	// temporary files a large file part spills to are removed when this handler returns: net/http's own
	// cleanup only reaches the request it made, not the copies the middleware hands on. Nothing below
	// reads the body again (FormValue and FormFile would re-parse it after a failed parse).
	parseErr := r.ParseMultipartForm(uploadMemoryBytes)
	defer func() {
		if r.MultipartForm != nil {
			r.MultipartForm.RemoveAll()
		}
	}()
	var kind, section, columns string
	if parseErr == nil {
		kind, section = firstValue(r.MultipartForm.Value["kind"]), firstValue(r.MultipartForm.Value["section"])
		columns = firstValue(r.MultipartForm.Value["columns"])
	}
	refuseWith := func(status int, msg string) error {
		e, err := s.uploadView(r, kind, section, columns, []string{msg})
		if err != nil {
			return err
		}
		s.render(w, r, status, views.EditPage(e))
		return nil
	}
	refuse := func(msg string) error { return refuseWith(http.StatusUnprocessableEntity, msg) }
	if mbe := (*http.MaxBytesError)(nil); errors.As(parseErr, &mbe) {
		w.Header().Set("Connection", "close")
		return refuseWith(http.StatusRequestEntityTooLarge, fmt.Sprintf("The file is larger than %s; nothing was kept. Split it into several files.", mib(maxUploadBytes)))
	}
	var hdr *multipart.FileHeader
	if parseErr == nil && len(r.MultipartForm.File["file"]) > 0 {
		hdr = r.MultipartForm.File["file"][0]
	}
	if hdr == nil {
		return refuse(fmt.Sprintf("Choose a file to upload (at most %s).", mib(maxUploadBytes)))
	}
	file, err := hdr.Open()
	if err != nil {
		return err
	}
	defer file.Close()
	body, err := io.ReadAll(io.LimitReader(file, maxUploadBytes+1))
	if err != nil {
		return refuse("The file could not be read completely; send it again.")
	}
	if len(body) > maxUploadBytes {
		return refuseWith(http.StatusRequestEntityTooLarge, fmt.Sprintf("The file is larger than %s; nothing was kept. Split it into several files.", mib(maxUploadBytes)))
	}
	if perSection, ok := store.ExportKinds[kind]; !ok {
		return refuse("Choose what the file holds.")
	} else if perSection && section == "" {
		return refuse("Choose the section the " + kind + " belong to.")
	}
	if columns == "map" {
		return s.uploadToMap(w, r, refuse, kind, hdr.Filename, body)
	}
	csvBody, err := store.ToCSV(hdr.Filename, body)
	if ve, ok := store.AsValidation(err); ok {
		return refuse(ve.Problems[0].String())
	} else if err != nil {
		return err
	}
	id, err := s.store.SaveUpload(ctx, store.Upload{UserID: u.ID, Kind: kind, Section: section, FileName: hdr.Filename, Body: csvBody})
	if ve, ok := store.AsValidation(err); ok {
		return refuse(ve.Problems[0].String()) // over the account's quota of files kept waiting
	} else if err != nil {
		return err
	}
	up, err := s.store.UploadByID(ctx, id)
	if err != nil {
		return err
	}
	return s.renderPreview(w, r, up)
}

// renderPreview previews an upload: every row with its problems (422 when there are any).
func (s *Server) renderPreview(w http.ResponseWriter, r *http.Request, up store.Upload) error {
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

// previewView lists what an upload would do: its problems (then nothing can be imported), its notes,
// and every row with the problems of its line.
func (s *Server) previewView(r *http.Request, pv store.Preview) views.Detail {
	v := views.Detail{Page: s.page(r.Context(), "Check "+pv.Upload.FileName, "")}
	v.Page.Crumbs = []views.Link{{Label: "Import", URL: "/import"}}
	byLine := map[int][]string{}
	byCell := map[[2]string]string{} // line and column → the problem of that cell
	var whole []string
	for _, p := range pv.Problems {
		msg := p.Message
		if p.Column != "" {
			msg = p.Column + ": " + msg
			key := [2]string{strconv.Itoa(p.Line), p.Column}
			byCell[key] = strings.TrimSpace(byCell[key] + " " + p.Message)
		}
		if p.Line > 1 {
			byLine[p.Line] = append(byLine[p.Line], msg)
		} else {
			whole = append(whole, msg)
		}
	}
	if len(pv.Problems) > 0 {
		v.Intro = fmt.Sprintf("%d problem(s) found: nothing can be imported from this file. Fix them in the file (the cells at fault are marked) and upload it again.", len(pv.Problems))
		again := "/import?kind=" + url.QueryEscape(pv.Upload.Kind)
		if pv.Upload.Section != "" {
			again += "&section=" + url.QueryEscape(pv.Upload.Section)
		}
		v.Links = append(v.Links, views.Link{Label: "Upload the corrected file", URL: again})
	} else {
		v.Intro = fmt.Sprintf("No problem found: importing will add %s. All rows are imported together, as one change that a curator can undo.", addedText(pv.Result))
		v.Actions = []views.Action{{Label: fmt.Sprintf("Import all %d rows", pv.Result.Rows), URL: fmt.Sprintf("/import/%d/commit", pv.Upload.ID)}}
	}
	v.Notes = append(v.Notes, whole...)
	for _, n := range pv.Result.Notes {
		v.Notes = append(v.Notes, "Note: "+n)
	}
	if pv.Upload.Mapped {
		if len(pv.Problems) > 0 {
			v.Intro = fmt.Sprintf("%d problem(s) found: nothing can be imported from this file. Fix them in the file and upload it again, or change the mapping.", len(pv.Problems))
		}
		v.Links = append(v.Links, views.Link{Label: "Change the mapping of the file's columns", URL: fmt.Sprintf("/import/%d/map", pv.Upload.ID)})
		if m := pv.Upload.Mapping; m != nil {
			v.Groups = append(v.Groups, mappingGroup("How the file's columns are read", *m))
		}
		if pv.Mapped != nil {
			v.Tables = []views.Table{mappedPreviewTable(pv, byLine)}
		}
		return v
	}
	t := views.Table{ID: "preview", Caption: fmt.Sprintf("Rows of %s (%s)", pv.Upload.FileName, pv.Upload.Kind)}
	lineLabel := "Line"
	if strings.HasSuffix(strings.ToLower(pv.Upload.FileName), ".xlsx") {
		lineLabel = "Row" // the conversion keeps row N of the sheet on line N
	}
	t.Columns = []views.Column{{Label: lineLabel, Num: true}, {Label: "Problems"}}
	for _, h := range pv.Header {
		t.Columns = append(t.Columns, views.Column{Label: h})
	}
	const maxRows = 500
	for i, row := range pv.Rows {
		if i == maxRows {
			t.Notes = append(t.Notes, fmt.Sprintf("Only the first %d of %d rows are shown; every row was checked.", maxRows, len(pv.Rows)))
			break
		}
		line := pv.Lines[i]
		cells := []views.Cell{{Text: strconv.Itoa(line), Num: true}}
		if ps := byLine[line]; len(ps) > 0 {
			cells = append(cells, views.Cell{Text: joinSemi(ps), Class: "caution"})
		} else {
			cells = append(cells, views.Cell{Text: "ok"})
		}
		for j, c := range row {
			cell := views.Cell{Text: c}
			if j < len(pv.Header) {
				if msg, bad := byCell[[2]string{strconv.Itoa(line), pv.Header[j]}]; bad {
					cell.Class, cell.Title = "bad-cell", msg
					if c == "" {
						cell.Text = "(empty)"
					}
				}
			}
			cells = append(cells, cell)
		}
		t.Rows = append(t.Rows, cells)
	}
	v.Tables = []views.Table{t}
	return v
}

func firstValue(vs []string) string {
	if len(vs) == 0 {
		return ""
	}
	return vs[0]
}

func joinSemi(ss []string) string {
	out := ""
	for i, s := range ss {
		if i > 0 {
			out += "; "
		}
		out += s
	}
	return out
}

func addedText(res store.ImportResult) string {
	out := ""
	for _, k := range []string{"provinces", "units", "sections", "dates", "samples", "measurements", "tie points", "events"} {
		if n := res.Added[k]; n > 0 {
			if out != "" {
				out += ", "
			}
			out += fmt.Sprintf("%d %s", n, k)
		}
	}
	if out == "" {
		return "nothing"
	}
	return out
}

// uploadCtx is the context an upload is previewed and imported in: a contributor's dates, events and tie
// points arrive pending review, as from the forms; a curator's keep the file's review_state (accepted when absent).
func uploadCtx(r *http.Request) context.Context {
	if isCurator(r) {
		return r.Context()
	}
	return store.AsContribution(r.Context())
}

func (s *Server) handleUploadCommit(w http.ResponseWriter, r *http.Request) error {
	r = actingCtx(r)
	ctx := r.Context()
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	up, err := s.store.UploadByID(ctx, id)
	if err != nil {
		return err
	}
	if u, _ := currentUser(ctx); u.ID != up.UserID {
		return forbidden{"This upload belongs to another account."}
	}
	res, err := s.store.CommitUpload(uploadCtx(r), up)
	if errors.Is(err, store.ErrConflict) {
		return conflictError{"This file was already imported."}
	}
	if ve, ok := store.AsValidation(err); ok {
		// The compilation changed between preview and commit: show the new problems.
		pv := store.Preview{Upload: up, Problems: ve.Problems}
		s.render(w, r, http.StatusUnprocessableEntity, views.DetailPage(s.previewView(r, pv)))
		return nil
	}
	if err != nil {
		return err
	}
	http.Redirect(w, r, fmt.Sprintf("/changes/%d", res.BatchID), http.StatusSeeOther)
	return nil
}

// handleBatchAccept accepts, as one change, the pending dates, events and tie points a change added (an
// upload's rows, or a record added by a form).
func (s *Server) handleBatchAccept(w http.ResponseWriter, r *http.Request) error {
	r = actingCtx(r)
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	// Records changed since the upload stay pending (AcceptBatch leaves them); the change's page, shown
	// next, still counts them and they are reviewed one by one from their own pages.
	_, _, err = s.store.AcceptBatch(r.Context(), id)
	if ve, ok := store.AsValidation(err); ok {
		return conflictError{joinSemi(problemTexts(ve.Problems))}
	}
	if err != nil {
		return err
	}
	http.Redirect(w, r, fmt.Sprintf("/changes/%d", id), http.StatusSeeOther)
	return nil
}

func (s *Server) handleBatchUndo(w http.ResponseWriter, r *http.Request) error {
	r = actingCtx(r)
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	_, err = s.store.UndoBatch(r.Context(), id)
	if ve, ok := store.AsValidation(err); ok {
		return conflictError{"This change cannot be undone as a whole: " + joinSemi(problemTexts(ve.Problems))}
	}
	if err != nil {
		return err
	}
	http.Redirect(w, r, "/changes", http.StatusSeeOther)
	return nil
}

// handleChangeList is the compilation-wide feed of changes, filterable by kind and account, with CSV.
func (s *Server) handleChangeList(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	p := newParams(r)
	format := p.format()
	f := store.BatchFilter{Kind: p.str("kind"), User: p.str("user")}
	per := p.int("per", 50, 1, 1000)
	page := p.int("page", 1, 1, 1_000_000)
	if err := p.err(); err != nil {
		return err
	}
	if format != "csv" {
		f.Limit, f.Offset = per, (page-1)*per
	}
	rows, total, err := s.store.Batches(ctx, f)
	if err != nil {
		return err
	}
	switch format {
	case "csv":
		return writeDownload(w, "changes.csv", func(w io.Writer) error { return writeBatchesCSV(w, rows) })
	case "json":
		return writeList(w, "changes", total, f.Offset, len(rows), rows)
	}
	t := views.Table{ID: "changes", Columns: []views.Column{{Label: "Change", Num: true}, {Label: "When"}, {Label: "Who"},
		{Label: "What"}, {Label: "Source"}, {Label: "Records", Num: true}, {Label: "Summary"}}, Empty: "No change matches."}
	for _, b := range rows {
		t.Rows = append(t.Rows, []views.Cell{{Text: strconv.FormatInt(b.ID, 10), Num: true, URL: fmt.Sprintf("/changes/%d", b.ID)}, {Text: when(b.At)},
			{Text: orDash(b.User)}, {Text: b.Kind}, {Text: b.Source}, {Text: strconv.Itoa(b.Revisions), Num: true}, {Text: b.Summary}})
	}
	l := views.List{Page: s.page(ctx, "Changes", ""), Table: t}
	l.Page.Downloads = toLinks(downloads(r))
	l.Intro = "Every change to the compilation, newest first: imports, edits, reviews, reverts. Each record's own history is on its page."
	l.Form = &views.Form{Action: "/changes", Reset: "/changes", Fields: []views.Field{
		{Name: "kind", Label: "What (starts with)", Kind: "text", Value: f.Kind, Placeholder: "import, edit, accept…"},
		{Name: "user", Label: "Who", Kind: "text", Value: f.User, Placeholder: "account name"},
	}}
	l.Pager = pagerFor(r, total, page, per, len(rows))
	s.render(w, r, http.StatusOK, views.ListPage(l))
	return nil
}

// mappingGroup says how a mapped file's columns are read, one line per column of ours.
func mappingGroup(title string, m store.Mapping) views.FieldGroup {
	g := views.FieldGroup{Title: title}
	if m.Name != "" {
		g.Title += fmt.Sprintf(" (the mapping “%s”)", m.Name)
	}
	for _, d := range m.Describe() {
		g.Fields = append(g.Fields, views.KV{Label: d.What, Value: d.How})
	}
	return g
}

// uploadToMap keeps a table as a paper publishes it, as sent, and goes on to the mapping of its columns.
func (s *Server) uploadToMap(w http.ResponseWriter, r *http.Request, refuse func(string) error, kind, fileName string, body []byte) error {
	if kind != "dates" {
		return refuse("Only dates can be read from a paper's table so far: choose Dates, or give the file our columns.")
	}
	if _, err := store.ReadRawTable(fileName, body, ""); err != nil {
		if ve, ok := store.AsValidation(err); ok {
			return refuse(ve.Problems[0].String())
		}
		return err
	}
	u, _ := currentUser(r.Context())
	id, err := s.store.SaveUpload(r.Context(), store.Upload{UserID: u.ID, Kind: kind, FileName: fileName, Body: body, Mapped: true})
	if ve, ok := store.AsValidation(err); ok {
		return refuse(ve.Problems[0].String())
	} else if err != nil {
		return err
	}
	http.Redirect(w, r, fmt.Sprintf("/import/%d/map", id), http.StatusSeeOther)
	return nil
}
