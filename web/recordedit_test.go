package web

import (
	"context"
	"fmt"
	"html"
	"net/http"
	"net/http/httptest"
	"net/url"
	"strings"
	"testing"

	"coeval/store"
)

// editFlow describes one record type's forms for checkEditFlow.
type editFlow struct {
	newPath  string     // where the creation form is
	path     string     // records are at path/{id}
	form     url.Values // a valid creation form
	badField string     // a field set to badValue makes the form refused …
	badValue string
	badMsg   string     // … with this message
	text     []string   // free-text fields, for the XSS payload
	again    url.Values // fields of the second record the flow creates, when what keeps records apart is not text (a hiatus's height)
	notes    string     // the free-text field the edits change ("notes" when empty)
	// state reads what the test compares: the stored notes field of record id (false when it is gone).
	state  func(id int64) (string, bool)
	recRev string // record_type of its revisions
	db     *store.DB
}

// checkEditFlow runs a record's whole editing flow through HTTP: a refused form (422 naming the field), a
// creation (303), two edits from one version (303, then 409 showing both), the history with the diff, a
// restore, an XSS payload in every text field coming back escaped, and the deletion.
func checkEditFlow(t *testing.T, srv *httptest.Server, creator, curator *http.Client, f editFlow) int64 {
	t.Helper()
	if f.notes == "" {
		f.notes = "notes"
	}
	bad := url.Values{}
	for k, v := range f.form {
		bad[k] = v
	}
	bad.Set(f.badField, f.badValue)
	status, body, _ := do(t, creator, http.MethodPost, srv.URL+f.newPath, bad)
	if status != http.StatusUnprocessableEntity || !fieldError(body, f.badField, f.badMsg) {
		t.Fatalf("bad %s: status %d, want 422 with %q beside the field", f.badField, status, f.badMsg)
	}
	status, _, h := do(t, creator, http.MethodPost, srv.URL+f.newPath, f.form)
	if status != http.StatusSeeOther {
		t.Fatalf("create: status %d, want 303", status)
	}
	var id int64
	if _, err := fmt.Sscanf(h.Get("Location"), f.path+"/%d", &id); err != nil {
		t.Fatalf("create went to %q", h.Get("Location"))
	}
	original, _ := f.state(id)

	status, page, _ := do(t, curator, http.MethodGet, fmt.Sprintf("%s%s/%d", srv.URL, f.path, id), nil)
	if status != 200 || !strings.Contains(page, fmt.Sprintf("%s/%d/history", f.path, id)) || !strings.Contains(page, fmt.Sprintf("%s/%d/edit", f.path, id)) {
		t.Errorf("record page: status %d, want 200 with links to its history and edit form", status)
	}
	status, editPage, _ := do(t, curator, http.MethodGet, fmt.Sprintf("%s%s/%d/edit", srv.URL, f.path, id), nil)
	if status != 200 || !strings.Contains(editPage, `name="version" value="1"`) {
		t.Fatalf("edit form: status %d, want 200 with the version", status)
	}
	edit := func(notes string) (int, string) {
		v := url.Values{}
		for k, x := range f.form {
			v[k] = x
		}
		v.Set("version", "1")
		v.Set(f.notes, notes)
		s, b, _ := do(t, curator, http.MethodPost, fmt.Sprintf("%s%s/%d/edit", srv.URL, f.path, id), v)
		return s, b
	}
	if s, _ := edit("first edit"); s != http.StatusSeeOther {
		t.Fatalf("edit: status %d, want 303", s)
	}
	s, conflict := edit("second edit")
	if s != http.StatusConflict || !strings.Contains(conflict, "first edit") || !strings.Contains(conflict, "second edit") || !strings.Contains(conflict, "not saved") {
		t.Fatalf("edit from the same version: status %d, want 409 showing both values", s)
	}
	if got, _ := f.state(id); got != "first edit" {
		t.Errorf("after the conflict the notes are %q, want the first edit's", got)
	}
	_, hist, _ := do(t, curator, http.MethodGet, fmt.Sprintf("%s%s/%d/history", srv.URL, f.path, id), nil)
	for _, want := range []string{"demo-curator", "first edit", "— created", "/revert"} {
		if !strings.Contains(hist, want) {
			t.Errorf("history lacks %q", want)
		}
	}
	revs, err := f.db.Revisions(context.Background(), f.recRev, id)
	if err != nil || len(revs) < 2 {
		t.Fatalf("revisions: %v (%d)", err, len(revs))
	}
	if s, _, _ := do(t, curator, http.MethodPost, fmt.Sprintf("%s/revisions/%d/revert", srv.URL, revs[0].ID), url.Values{}); s != http.StatusSeeOther {
		t.Fatalf("restore: status %d, want 303", s)
	}
	if got, _ := f.state(id); got != original {
		t.Errorf("after the restore the notes are %q, want %q", got, original)
	}

	// An XSS payload in every text field comes back escaped on every page that shows it.
	payload := `<script>alert("x")</script>`
	xss := url.Values{}
	for k, v := range f.form {
		xss[k] = v
	}
	for _, k := range f.text {
		xss.Set(k, payload+k)
	}
	for k, v := range f.again {
		xss[k] = v
	}
	status, _, h = do(t, creator, http.MethodPost, srv.URL+f.newPath, xss)
	if status != http.StatusSeeOther {
		t.Fatalf("create with the payload: status %d", status)
	}
	var xid int64
	fmt.Sscanf(h.Get("Location"), f.path+"/%d", &xid)
	for _, p := range []string{"", "/edit", "/history"} {
		_, b, _ := do(t, curator, http.MethodGet, fmt.Sprintf("%s%s/%d%s", srv.URL, f.path, xid, p), nil)
		if strings.Contains(b, "<script>alert") {
			t.Errorf("%s/%d%s: the payload came back unescaped", f.path, xid, p)
		}
		if !strings.Contains(b, "&lt;script&gt;") {
			t.Errorf("%s/%d%s: the payload is not shown at all", f.path, xid, p)
		}
	}

	// Deletion needs the current version, and the history stays readable.
	del := func(version int) int {
		s, _, _ := do(t, curator, http.MethodPost, fmt.Sprintf("%s%s/%d/delete", srv.URL, f.path, xid), url.Values{"version": {fmt.Sprint(version)}})
		return s
	}
	if s := del(7); s != http.StatusConflict {
		t.Errorf("delete at a wrong version: %d, want 409", s)
	}
	if s := del(1); s != http.StatusSeeOther {
		t.Fatalf("delete: status %d, want 303", s)
	}
	if _, ok := f.state(xid); ok {
		t.Error("the deleted record is still there")
	}
	if s, b, _ := do(t, curator, http.MethodGet, fmt.Sprintf("%s%s/%d/history", srv.URL, f.path, xid), nil); s != 200 || !strings.Contains(b, "— deleted") {
		t.Errorf("history of a deleted record: status %d", s)
	}
	return id
}

// signedIn returns clients of the demo contributor and curator.
func signedIn(t *testing.T, srv *httptest.Server) (contributor, curator *http.Client) {
	t.Helper()
	contributor, curator = client(t), client(t)
	signIn(t, contributor, srv, "demo-contributor")
	signIn(t, curator, srv, "demo-curator")
	return contributor, curator
}

// fieldError reports whether the form in body shows an error starting with msg inside the label of field.
func fieldError(body, field, msg string) bool {
	body = html.UnescapeString(body)
	i := strings.Index(body, `name="`+field+`"`)
	if i < 0 {
		return false
	}
	label, _, _ := strings.Cut(body[i:], "</label>")
	_, e, ok := strings.Cut(label, `class="field-error">`)
	return ok && strings.HasPrefix(e, msg)
}
