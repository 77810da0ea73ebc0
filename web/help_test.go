package web

import (
	"bytes"
	"context"
	"html"
	"net/http"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"sync"
	"testing"

	"github.com/go-chi/chi/v5"

	"coeval/migrations"
	"coeval/store"
)

// Each file kind's help page lists exactly the importer's columns (those store's importer reads its header
// with), in order, and its template, downloaded over HTTP, imports cleanly into an empty compilation
// through the real importer, kind after kind.
func TestFileFormatPagesListTheImportersColumnsAndTheirTemplatesImport(t *testing.T) {
	srv, _ := mustServer(t)
	ctx := context.Background()
	empty, err := store.Open(ctx, filepath.Join(t.TempDir(), "empty.db"))
	if err != nil {
		t.Fatal(err)
	}
	defer empty.Close()
	if _, err := empty.Migrate(ctx, migrations.FS); err != nil {
		t.Fatal(err)
	}
	status, _, index := get(t, srv, "/help")
	if status != http.StatusOK {
		t.Fatalf("/help: status %d", status)
	}
	for _, f := range store.FileFormats() {
		if !strings.Contains(index, `href="/help/files/`+f.Kind+`"`) {
			t.Errorf("/help does not link the %s format", f.Kind)
		}
		status, _, body := get(t, srv, "/help/files/"+f.Kind)
		if status != http.StatusOK {
			t.Fatalf("%s: status %d", f.Kind, status)
		}
		if got, want := firstColumn(t, body), f.ColumnNames(); strings.Join(got, ",") != strings.Join(want, ",") {
			t.Errorf("%s page lists columns\n%v\nthe importer reads\n%v", f.Kind, got, want)
		}
		status, h, tmpl := get(t, srv, "/help/files/"+f.Kind+"?format=csv")
		if status != http.StatusOK || !strings.Contains(h.Get("Content-Disposition"), "attachment") {
			t.Fatalf("%s template: status %d, disposition %q", f.Kind, status, h.Get("Content-Disposition"))
		}
		section := ""
		if f.PerSection {
			section = store.FileFormats()[2].Columns[0].Example // the sections template's section
		}
		res, err := empty.ImportReader(ctx, f.Kind, section, "template.csv", bytes.NewReader([]byte(tmpl)))
		if err != nil || res.Rows != 1 {
			t.Errorf("%s template: %d rows, %v", f.Kind, res.Rows, err)
		}
	}
	if status, _, _ := get(t, srv, "/help/files/nonsense"); status != http.StatusNotFound {
		t.Errorf("unknown file kind: status %d, want 404", status)
	}
	// The import page points to these pages, not to a file a web user cannot open.
	c := client(t)
	signIn(t, c, srv, "demo-contributor")
	_, upload, _ := do(t, c, http.MethodGet, srv.URL+"/import", nil)
	if strings.Contains(upload, "README") || !strings.Contains(upload, `href="/help/files/dates"`) {
		t.Error("the import page must link the file formats' help pages, not the README")
	}
}

var (
	tbodyRE = regexp.MustCompile(`(?s)<tbody>(.*?)</tbody>`)
	rowRE   = regexp.MustCompile(`(?s)<tr[^>]*>\s*<t[dh][^>]*>(.*?)</t[dh]>`)
	tagRE   = regexp.MustCompile(`<[^>]+>`)
)

// firstColumn returns the text of the first cell of each body row of the page's first table.
func firstColumn(t *testing.T, page string) []string {
	t.Helper()
	body := tbodyRE.FindStringSubmatch(page)
	if body == nil {
		t.Fatal("no table body on the page")
	}
	var out []string
	for _, m := range rowRE.FindAllStringSubmatch(body[1], -1) {
		out = append(out, strings.TrimSpace(html.UnescapeString(tagRE.ReplaceAllString(m[1], ""))))
	}
	return out
}

// Every parameter a page reads is described on the reference page for scripts, and the reference
// describes nothing no page reads: each GET route is requested (as an admin, so nothing is hidden), plain
// and with each parameter that needs another set, in each format, and the names read are recorded.
func TestEveryParameterAPageReadsIsDocumented(t *testing.T) {
	var mu sync.Mutex
	read := map[string][]string{}
	route := ""
	paramRead = func(name string) {
		mu.Lock()
		defer mu.Unlock()
		if !slices.Contains(read[name], route) {
			read[name] = append(read[name], route)
		}
	}
	defer func() { paramRead = func(string) {} }()
	srv, db := mustServer(t)
	if _, err := db.CutRelease(context.Background(), store.ReleaseForm{Version: "2027.1", Title: "Invented"}, 0); err != nil {
		t.Fatal(err) // the release pages read their parameters only for a release that exists
	}
	admin := client(t)
	signIn(t, admin, srv, "demo-admin")
	var patterns []string
	chi.Walk(srv.Config.Handler.(chi.Routes), func(method, pattern string, _ http.Handler, _ ...func(http.Handler) http.Handler) error {
		if method == http.MethodGet {
			patterns = append(patterns, pattern)
		}
		return nil
	})
	for _, pattern := range patterns {
		path := strings.NewReplacer("{id}", "1", "{n}", "1", "{kind}", "dates", "{version}", "2027.1", "*", "style.css").Replace(pattern)
		queries := []string{"", "format=csv", "format=json", cheap}
		for _, extra := range needs {
			queries = append(queries, extra+"&"+cheap)
		}
		for _, q := range queries {
			mu.Lock()
			route = pattern
			mu.Unlock()
			do(t, admin, http.MethodGet, srv.URL+path+"?"+q, nil)
		}
	}
	documented := paramNamesDocumented()
	for name, routes := range read {
		if !slices.Contains(documented, name) {
			t.Errorf("parameter %q, read by %v, is not described in paramDocs", name, routes)
		}
	}
	for _, name := range documented {
		if _, ok := read[name]; !ok {
			t.Errorf("paramDocs describes %q, which no page read", name)
		}
	}
	slices.Sort(documented)
	names := slices.Sorted(slices.Values(paramNames))
	if !slices.Equal(documented, names) {
		t.Errorf("paramNames (tried with bad values by TestEveryUserErrorSaysWhatToFix) and paramDocs differ:\n%v\n%v", names, documented)
	}
	_, body, _ := do(t, admin, http.MethodGet, srv.URL+"/help/addresses", nil)
	for _, name := range documented {
		if !strings.Contains(body, ">"+name+"<") {
			t.Errorf("the reference page does not list %q", name)
		}
	}
}

// Every page names an icon, and the icon is served (browsers ask for one on every page).
func TestFaviconIsServed(t *testing.T) {
	srv, _ := mustServer(t)
	_, _, home := get(t, srv, "/")
	m := regexp.MustCompile(`<link rel="icon"[^>]*href="([^"]+)"`).FindStringSubmatch(home)
	if m == nil {
		t.Fatal("the page names no icon")
	}
	status, h, body := get(t, srv, m[1])
	if status != http.StatusOK || !strings.HasPrefix(h.Get("Content-Type"), "image/svg+xml") || !strings.Contains(body, "<svg") {
		t.Errorf("%s: status %d, type %q", m[1], status, h.Get("Content-Type"))
	}
}
