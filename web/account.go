package web

import (
	"cmp"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
)

func writeBatchesCSV(w io.Writer, rows []store.BatchRow) error {
	cw := store.NewCSVWriter(w)
	cw.Write([]string{"change_id", "at_utc", "user", "kind", "source", "records", "summary"})
	for _, b := range rows {
		cw.Write([]string{strconv.FormatInt(b.ID, 10), b.At, b.User, b.Kind, b.Source, strconv.Itoa(b.Revisions), b.Summary})
	}
	cw.Flush()
	return cw.Error()
}

func (s *Server) registerAccountRoutes(r chi.Router) {
	r.Get("/changes/{id}", s.handle(s.handleChangeShow))
	r.With(s.sessionOnly, s.requireRole(store.RoleReader)).Group(func(r chi.Router) {
		r.Get("/account", s.handle(s.handleAccount))
		r.Post("/account/tokens", s.handle(s.handleTokenCreate))
		r.Post("/account/tokens/{id}/revoke", s.handle(s.handleTokenRevoke))
	})
	r.With(s.sessionOnly, s.requireRole(store.RoleAdmin)).Group(func(r chi.Router) {
		r.Get("/admin", s.handle(s.handleAdmin))
		r.Post("/admin/users", s.handle(s.handleUserCreate))
		r.Get("/admin/users/{id}", s.handle(s.handleAccountEdit))
		r.Post("/admin/users/{id}", s.handle(s.handleAccountUpdate))
		r.Post("/admin/settings", s.handle(s.handleSettings))
		// A POST (a button on the administration page), so another site cannot start a download by a link.
		r.Post("/admin/backup", s.handle(s.handleBackup))
	})
}

// changePageSize is how many records of a change its page lists at a time: 200 keep a page of a
// 100,000-record change under 10 ms (500 took 10 ms of CPU, half of it reading and naming the records).
const changePageSize = 200

// handleChangeShow shows one change batch: what it did, record by record, and (for curators) its undo.
func (s *Server) handleChangeShow(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	p := newParams(r)
	after := p.id("after")
	per := p.int("per", changePageSize, 1, 1000)
	if err := p.err(); err != nil {
		return err
	}
	b, err := s.store.BatchByID(ctx, id)
	if errors.Is(err, store.ErrNotFound) || (err == nil && b.Revisions == 0) {
		return notFoundError{what: fmt.Sprintf("change %d", id)}
	}
	if err != nil {
		return err
	}
	revs, err := s.store.BatchRevisionsAfter(ctx, id, after, per+1)
	if err != nil {
		return err
	}
	more := len(revs) > per
	revs = revs[:min(len(revs), per)]
	v := views.Detail{Page: s.page(ctx, fmt.Sprintf("Change %d: %s", id, b.Kind), "")}
	v.Page.Crumbs = []views.Link{{Label: "Changes", URL: "/changes"}}
	v.Groups = []views.FieldGroup{{Title: "Change", Fields: []views.KV{
		{Label: "When", Value: when(b.At)}, {Label: "Who", Value: orDash(b.User)},
		{Label: "What", Value: b.Kind}, {Label: "Source", Value: orDash(b.Source)},
		{Label: "Records", Value: strconv.Itoa(b.Revisions)},
	}}}
	if m, err := s.store.BatchMapping(ctx, id); err != nil {
		return err
	} else if m != nil {
		v.Groups = append(v.Groups, mappingGroup("How the file's columns were read", *m))
	}
	t := views.Table{ID: "records", Columns: []views.Column{{Label: "Record"}, {Label: "Number", Num: true}, {Label: "Which"}, {Label: "Change"}},
		Empty: "No further record: this change holds no record after the one this page starts from."}
	if b.Revisions > per || after > 0 {
		t.Caption = fmt.Sprintf("Records of this change in the order they were made, %d a page", per)
	}
	for _, rev := range revs {
		what := "changed"
		switch {
		case rev.Before == nil:
			what = "added"
		case rev.After == nil:
			what = "removed"
		}
		c := views.Cell{Text: strconv.FormatInt(rev.RecordID, 10), Num: true}
		c.URL = historyURL(rev.RecordType, rev.RecordID)
		state := rev.After
		if state == nil {
			state = rev.Before
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: strings.ReplaceAll(rev.RecordType, "_", " ")}, c, {Text: recordName(state)}, {Text: what}})
	}
	if after > 0 {
		v.Links = append(v.Links, views.Link{Label: "← first records of this change", URL: withQuery(r, "after", "")})
	}
	if more {
		v.Links = append(v.Links, views.Link{Label: fmt.Sprintf("next %d records →", per),
			URL: withQuery(r, "after", strconv.FormatInt(revs[len(revs)-1].ID, 10))})
	}
	v.Tables = []views.Table{t}
	pending, err := s.store.PendingInBatch(ctx, id)
	if err != nil {
		return err
	}
	if pending > 0 {
		v.Notes = append(v.Notes, fmt.Sprintf("%d record(s) this change added wait for a curator's review; until accepted they are left out of computations.", pending))
	}
	if isCurator(r) {
		if pending > 0 {
			v.Actions = append(v.Actions, views.Action{Label: fmt.Sprintf("Accept the %d pending record(s) of this change", pending), URL: fmt.Sprintf("/changes/%d/accept", id)})
		}
		v.Actions = append(v.Actions, views.Action{Label: "Undo this change (remove what it added, restore what it changed)", URL: fmt.Sprintf("/changes/%d/undo", id), Danger: true})
	}
	s.render(w, r, http.StatusOK, views.DetailPage(v))
	return nil
}

// recordName is how a stored state names its record: a date's sample code, a tie point's label, else its
// name.
func recordName(state json.RawMessage) string {
	var v struct {
		SampleCode string `json:"sample_code"`
		Label      string `json:"label"`
		Name       string `json:"name"`
	}
	if json.Unmarshal(state, &v) != nil {
		return "—"
	}
	return orDash(cmp.Or(v.SampleCode, v.Label, v.Name))
}

func (s *Server) accountView(r *http.Request, newToken string, errs []string) (views.Edit, error) {
	ctx := r.Context()
	u, _ := currentUser(ctx)
	tokens, err := s.store.Tokens(ctx, u.ID)
	if err != nil {
		return views.Edit{}, err
	}
	e := views.Edit{Page: s.page(ctx, "Your account", ""), Action: "/account/tokens", Submit: "Make a token", Errors: errs}
	e.Intro = fmt.Sprintf("Signed in as %s (%s). Personal access tokens let scripts read the JSON and CSV downloads with your role (send 'Authorization: Bearer TOKEN'); a token only reads: it cannot change records, open this page or the administration, or make further tokens. A token is shown once; only a hash is kept.", u.Name, u.Role)
	if newToken != "" {
		e.Intro = "New token (copy it now; it will not be shown again): " + newToken
	}
	e.Inputs = []views.Input{{Name: "name", Label: "Token name", Kind: "text", Help: "what script or machine uses it"}}
	t := views.Table{ID: "tokens", Caption: "Your tokens", Columns: []views.Column{{Label: "Name"}, {Label: "Made"}, {Label: "Last used"}, {Label: "State"}},
		Empty: "No token yet."}
	for _, tk := range tokens {
		state := "active · revoke with POST /account/tokens/" + strconv.FormatInt(tk.ID, 10) + "/revoke"
		if tk.RevokedAt != nil {
			state = "revoked " + when(*tk.RevokedAt)
		}
		last := "never"
		if tk.LastUsedAt != nil {
			last = when(*tk.LastUsedAt)
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: tk.Name}, {Text: when(tk.CreatedAt)}, {Text: last}, {Text: state}})
	}
	e.Tables = []views.Table{t}
	return e, nil
}

func (s *Server) handleAccount(w http.ResponseWriter, r *http.Request) error {
	e, err := s.accountView(r, "", nil)
	if err != nil {
		return err
	}
	s.render(w, r, http.StatusOK, views.EditPage(e))
	return nil
}

func (s *Server) handleTokenCreate(w http.ResponseWriter, r *http.Request) error {
	u, _ := currentUser(r.Context())
	token, err := s.store.CreateToken(r.Context(), u.ID, r.PostFormValue("name"))
	if ve, ok := store.AsValidation(err); ok {
		e, err := s.accountView(r, "", problemTexts(ve.Problems))
		if err != nil {
			return err
		}
		s.render(w, r, http.StatusUnprocessableEntity, views.EditPage(e))
		return nil
	}
	if err != nil {
		return err
	}
	// Shown in this response only (not after a redirect), since it cannot be shown again.
	e, err := s.accountView(r, token, nil)
	if err != nil {
		return err
	}
	s.render(w, r, http.StatusOK, views.EditPage(e))
	return nil
}

func (s *Server) handleTokenRevoke(w http.ResponseWriter, r *http.Request) error {
	u, _ := currentUser(r.Context())
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	if err := s.store.RevokeToken(r.Context(), u.ID, id); err != nil {
		return err
	}
	http.Redirect(w, r, "/account", http.StatusSeeOther)
	return nil
}

func (s *Server) adminView(r *http.Request, errs []string) (views.Edit, error) {
	ctx := r.Context()
	users, err := s.store.Users(ctx)
	if err != nil {
		return views.Edit{}, err
	}
	private, _ := s.store.Setting(ctx, SettingRequireLogin)
	e := views.Edit{Page: s.page(ctx, "Administration", ""), Action: "/admin/users", Submit: "Add the account", Errors: errs}
	e.Intro = "Accounts and their roles: reader (reads), contributor (adds and edits drafts, imports), curator (accepts, rejects, edits anything, reverts, undoes imports), admin (also accounts and settings). Reading is public unless the compilation requires signing in (now: " + map[bool]string{true: "sign-in required", false: "public reading"}[private == "true"] + ")."
	roles := []views.Option{}
	for _, ro := range store.Roles() {
		roles = append(roles, views.Option{Value: ro, Label: ro, Selected: ro == store.RoleReader})
	}
	e.Inputs = []views.Input{
		{Name: "name", Label: "Account name", Kind: "text"},
		{Name: "role", Label: "Role", Kind: "select", Options: roles},
		{Name: "password", Label: "Password", Kind: "password", Help: store.PasswordRule()},
	}
	t := views.Table{ID: "users", Caption: "Accounts (open one to change its role, disable it or set a new password)", Columns: []views.Column{{Label: "Name"}, {Label: "Role"}, {Label: "Signing in"}, {Label: "Since"}}}
	for _, u := range users {
		status := "may sign in"
		if u.Disabled {
			status = "disabled"
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: u.Name, URL: fmt.Sprintf("/admin/users/%d", u.ID)}, {Text: u.Role}, {Text: status}, {Text: when(u.CreatedAt)}})
	}
	t.Notes = []string{"Backup: the button “Download a backup of the database” gives a consistent snapshot of the database, made while the server runs (SQLite VACUUM INTO). It leaves out who is signed in (after a restore everyone signs in again) and files uploaded but not imported; it holds the accounts with their password hashes, so keep it private. Restore: stop the server, replace the database file with the snapshot, start again."}
	e.Tables = []views.Table{t}
	next := map[bool]string{true: "false", false: "true"}[private == "true"]
	label := map[bool]string{true: "Make reading public", false: "Require signing in to read"}[private == "true"]
	e.Actions = []views.Action{{Label: label, URL: "/admin/settings", Hidden: []views.KV{{Label: SettingRequireLogin, Value: next}}},
		{Label: "Download a backup of the database", URL: "/admin/backup"}}
	return e, nil
}

func (s *Server) handleAdmin(w http.ResponseWriter, r *http.Request) error {
	e, err := s.adminView(r, nil)
	if err != nil {
		return err
	}
	s.render(w, r, http.StatusOK, views.EditPage(e))
	return nil
}

func (s *Server) handleUserCreate(w http.ResponseWriter, r *http.Request) error {
	r = actingCtx(r)
	_, err := s.store.CreateUser(r.Context(), r.PostFormValue("name"), r.PostFormValue("role"), r.PostFormValue("password"))
	if ve, ok := store.AsValidation(err); ok {
		e, err := s.adminView(r, problemTexts(ve.Problems))
		if err != nil {
			return err
		}
		s.render(w, r, http.StatusUnprocessableEntity, views.EditPage(e))
		return nil
	}
	if err != nil {
		return err
	}
	http.Redirect(w, r, "/admin", http.StatusSeeOther)
	return nil
}

func (s *Server) handleSettings(w http.ResponseWriter, r *http.Request) error {
	v := r.PostFormValue(SettingRequireLogin)
	if v != "true" && v != "false" {
		return badRequest{message: "require_login: want true or false"}
	}
	if err := s.store.SetSetting(r.Context(), SettingRequireLogin, v); err != nil {
		return err
	}
	http.Redirect(w, r, "/admin", http.StatusSeeOther)
	return nil
}

func (s *Server) handleBackup(w http.ResponseWriter, r *http.Request) error {
	dir, err := os.MkdirTemp("", "coeval-backup-*")
	if err != nil {
		return err
	}
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "coeval-backup.db")
	if err := s.store.Backup(r.Context(), path); err != nil {
		return err
	}
	w.Header().Set("Content-Type", "application/vnd.sqlite3")
	w.Header().Set("Content-Disposition", `attachment; filename="coeval-backup.db"`)
	http.ServeFile(w, r, path)
	return nil
}
