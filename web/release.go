package web

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"strings"
	"sync"

	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
)

// Releases: citable versions of the compilation. A release is a frozen snapshot of the accepted records;
// every page, figure and download of a release is served by this same code from that snapshot, under
// /releases/{version}/view/…, so it is reproduced number for number.

// releaseStore is what the release pages need beyond reading: the live database cuts releases.
type releaseStore interface {
	CutRelease(ctx context.Context, f store.ReleaseForm, userID int64) (store.Release, error)
	Releases(ctx context.Context) ([]store.Release, error)
	ReleaseByVersion(ctx context.Context, version string) (store.Release, error)
	ReleasePath(ctx context.Context, r store.Release) (string, error)
	SetReleaseDOI(ctx context.Context, version, doi string) error
}

// releaseViews keeps one handler per release that has been opened, each on its own snapshot.
type releaseViews struct {
	mu       sync.Mutex
	handlers map[string]http.Handler
}

func (s *Server) releaseStore() (releaseStore, bool) {
	rs, ok := s.store.(releaseStore)
	return rs, ok && s.prefix == ""
}

func (s *Server) registerReleaseRoutes(r chi.Router) {
	if _, ok := s.releaseStore(); !ok {
		return // a release's own pages, or a store without releases
	}
	s.releases = &releaseViews{handlers: map[string]http.Handler{}}
	r.Get("/releases", s.handle(s.handleReleaseList))
	r.With(s.requireRole(store.RoleCurator)).Get("/releases/new", s.handle(s.handleReleaseForm))
	r.With(s.requireRole(store.RoleCurator)).Post("/releases", s.handle(s.handleReleaseCreate))
	r.Get("/releases/{version}", s.handle(s.handleRelease))
	r.Get("/releases/{version}/bundle.zip", s.handle(s.handleReleaseBundle))
	r.With(s.requireRole(store.RoleCurator)).Post("/releases/{version}/doi", s.handle(s.handleReleaseDOI))
	r.Get("/releases/{version}/view/*", s.handle(s.handleReleaseView))
}

// asOfRelease sends any page asked for with release=V to the same page as of that release.
func (s *Server) asOfRelease(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		paramRead("release")
		v := r.URL.Query().Get("release")
		if v == "" || s.releases == nil || r.Method != http.MethodGet {
			next.ServeHTTP(w, r)
			return
		}
		q := r.URL.Query()
		q.Del("release")
		target := "/releases/" + url.PathEscape(v) + "/view" + r.URL.Path
		if len(q) > 0 {
			target += "?" + q.Encode()
		}
		http.Redirect(w, r, target, http.StatusSeeOther)
	})
}

func (s *Server) releaseOf(r *http.Request) (store.Release, error) {
	rs, _ := s.releaseStore()
	v := chi.URLParam(r, "version")
	rel, err := rs.ReleaseByVersion(r.Context(), v)
	if errors.Is(err, store.ErrNotFound) {
		return rel, notFoundError{what: "release " + fmt.Sprintf("%q", v)}
	}
	return rel, err
}

// citation is the text to cite a release with.
func citation(rel store.Release) string {
	c := fmt.Sprintf("%s, version %s (%s).", rel.Title, rel.Version, rel.Date())
	if rel.DOI != "" {
		c += " https://doi.org/" + rel.DOI
	}
	return c
}

func (s *Server) handleReleaseList(w http.ResponseWriter, r *http.Request) error {
	rs, _ := s.releaseStore()
	p := newParams(r)
	format := p.oneOf("format", []string{"html", "json"}, "html")
	if err := p.err(); err != nil {
		return err
	}
	rels, err := rs.Releases(r.Context())
	if err != nil {
		return err
	}
	if format == "json" {
		writeJSON(w, http.StatusOK, map[string]any{"items": rels})
		return nil
	}
	v := views.Detail{Page: s.page(r.Context(), "Releases", "Releases")}
	v.Intro = "Citable versions of the compilation. Each holds the accepted records of its moment, unchanged since; its pages, figures and downloads can be opened as they were, and its files downloaded as one bundle to deposit with a paper."
	v.Page.Downloads = []views.Link{{Label: "JSON", URL: "/releases?format=json"}}
	if u, ok := currentUser(r.Context()); ok && store.RoleAtLeast(u.Role, store.RoleCurator) {
		v.Links = []views.Link{{Label: "Make a release", URL: "/releases/new"}}
	}
	t := views.Table{Caption: "Releases, newest first", Empty: "No release has been made yet.", Columns: []views.Column{
		{Label: "Version"}, {Label: "Title"}, {Label: "Made"}, {Label: "Dates", Num: true}, {Label: "Events", Num: true}, {Label: "DOI"},
	}}
	for _, rel := range rels {
		t.Rows = append(t.Rows, []views.Cell{{Text: rel.Version, URL: "/releases/" + url.PathEscape(rel.Version)}, {Text: rel.Title},
			{Text: rel.Date()}, {Text: itoa(rel.Counts.Dates), Num: true}, {Text: itoa(rel.Counts.Events), Num: true}, {Text: rel.DOI}})
	}
	v.Tables = []views.Table{t}
	s.render(w, r, http.StatusOK, views.DetailPage(v))
	return nil
}

func (s *Server) releaseFormView(r *http.Request, f store.ReleaseForm, problems map[string]string) views.Edit {
	e := views.Edit{Page: s.page(r.Context(), "Make a release", ""), Action: "/releases", Submit: "Make the release"}
	e.Crumbs = []views.Link{{Label: "Releases", URL: "/releases"}}
	e.Intro = "A release freezes the accepted records of this moment under a version you choose. Pending and rejected records are left out and named on the release's page. A release is never changed afterwards (only its DOI can be added), so check the compilation first."
	e.Inputs = []views.Input{
		{Name: "version", Label: "Version", Kind: "text", Value: f.Version, Help: "e.g. 2027.1 — letters, digits, dots, dashes", Error: problems["version"]},
		{Name: "title", Label: "Title", Kind: "text", Value: f.Title, Help: "part of the citation", Error: problems["title"]},
		{Name: "notes", Label: "Notes", Kind: "textarea", Value: f.Notes, Help: "what this release is for; shown on its page and in its citation file", Error: problems["notes"]},
	}
	return e
}

func (s *Server) handleReleaseForm(w http.ResponseWriter, r *http.Request) error {
	s.render(w, r, http.StatusOK, views.EditPage(s.releaseFormView(r, store.ReleaseForm{}, nil)))
	return nil
}

func (s *Server) handleReleaseCreate(w http.ResponseWriter, r *http.Request) error {
	rs, _ := s.releaseStore()
	f := store.ReleaseForm{Version: strings.TrimSpace(r.PostFormValue("version")), Title: r.PostFormValue("title"), Notes: r.PostFormValue("notes")}
	u, _ := currentUser(r.Context())
	rel, err := rs.CutRelease(r.Context(), f, u.ID)
	var fe store.FormError
	if errors.As(err, &fe) {
		s.render(w, r, http.StatusBadRequest, views.EditPage(s.releaseFormView(r, f, fe)))
		return nil
	}
	if err != nil {
		return err
	}
	http.Redirect(w, r, "/releases/"+url.PathEscape(rel.Version), http.StatusSeeOther)
	return nil
}

func (s *Server) handleRelease(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	rs, _ := s.releaseStore()
	rel, err := s.releaseOf(r)
	if err != nil {
		return err
	}
	p := newParams(r)
	format := p.oneOf("format", []string{"html", "json", "csv"}, "html")
	against := p.str("against")
	if err := p.err(); err != nil {
		return err
	}
	rels, err := rs.Releases(ctx)
	if err != nil {
		return err
	}
	// The changelog is against the release asked for, or the one before this.
	var prev *store.Release
	for i, o := range rels {
		if against != "" && o.Version == against && o.Version != rel.Version {
			prev = &rels[i]
		}
		if against == "" && o.ID < rel.ID && (prev == nil || o.ID > prev.ID) {
			prev = &rels[i]
		}
	}
	if against != "" && prev == nil {
		return badRequest{message: "This address has parameters that cannot be used. Fix them and reload:",
			problems: []string{fmt.Sprintf("against: want the version of another release, got %q", against)}}
	}
	var cl store.Changelog
	if prev != nil {
		from, err := rs.ReleasePath(ctx, *prev)
		if err != nil {
			return err
		}
		to, err := rs.ReleasePath(ctx, rel)
		if err != nil {
			return err
		}
		if cl, err = store.DiffReleases(ctx, from, to); err != nil {
			return err
		}
		cl.From, cl.To = prev.Version, rel.Version
	}
	switch format {
	case "json":
		writeJSON(w, http.StatusOK, map[string]any{"release": rel, "citation": citation(rel), "changes_from": cl.From, "changes": cl.Changes})
		return nil
	case "csv":
		return writeDownload(w, "release-"+rel.Version+"-changes.csv", func(out io.Writer) error {
			return writeChangelogCSV(out, cl)
		})
	}
	s.render(w, r, http.StatusOK, views.DetailPage(s.releaseView(r, rel, prev, cl)))
	return nil
}

func (s *Server) releaseView(r *http.Request, rel store.Release, prev *store.Release, cl store.Changelog) views.Detail {
	esc := url.PathEscape(rel.Version)
	v := views.Detail{Page: s.page(r.Context(), "Release "+rel.Version+": "+rel.Title, "Releases")}
	v.Crumbs = []views.Link{{Label: "Releases", URL: "/releases"}}
	v.Intro = "Cite as: " + citation(rel)
	v.Page.Downloads = []views.Link{{Label: "JSON", URL: "/releases/" + esc + "?format=json"}}
	v.Links = []views.Link{
		{Label: "Open the compilation as of this release", URL: "/releases/" + esc + "/view/"},
		{Label: "Download the bundle to deposit (data files, manifest with checksums, column dictionary, citation file)", URL: "/releases/" + esc + "/bundle.zip"},
	}
	if rel.Notes != "" {
		v.Notes = append(v.Notes, rel.Notes)
	}
	by := rel.CreatedBy
	if by == "" {
		by = "the command line"
	}
	v.Groups = []views.FieldGroup{{Title: "This release", Fields: []views.KV{
		{Label: "Made", Value: rel.Date() + " by " + by},
		{Label: "Holds", Value: strings.Join([]string{count(rel.Counts.Provinces, "province"), count(rel.Counts.Units, "unit"),
			count(rel.Counts.Dates, "date"), count(rel.Counts.Sections, "section"), count(rel.Counts.Samples, "sample"),
			count(rel.Counts.TiePoints, "tie point"), count(rel.Counts.Events, "event"), hiatuses(rel.Counts.Hiatuses)}, ", ")},
		{Label: "DOI", Value: orDash(rel.DOI)},
		{Label: "Snapshot SHA-256", Value: rel.SHA256},
	}}}
	if u, ok := currentUser(r.Context()); ok && store.RoleAtLeast(u.Role, store.RoleCurator) {
		v.Actions = append(v.Actions, views.Action{Label: "Record the DOI", URL: "/releases/" + esc + "/doi", Reason: "DOI after depositing, 10.xxxx/…"})
	}
	left := views.Table{Caption: "Left out: not accepted when the release was made", Empty: "Nothing was pending or rejected.",
		Columns: []views.Column{{Label: "Kind"}, {Label: "Record"}, {Label: "Review state"}}}
	for _, it := range rel.LeftOut {
		left.Rows = append(left.Rows, []views.Cell{{Text: it.Kind}, {Text: releaseRecordName(it.Kind, it.Name)}, {Text: it.Review}})
	}
	changes := views.Table{Caption: "Changes since the first release", Empty: "This is the first release: everything in it is new."}
	if prev != nil {
		changes.Caption = fmt.Sprintf("Changes since release %s (%s)", prev.Version, prev.Date())
		changes.Empty = "No record changed."
		v.Page.Downloads = append(v.Page.Downloads, views.Link{Label: "Changes (CSV)", URL: "/releases/" + esc + "?format=csv&against=" + url.QueryEscape(prev.Version)})
	}
	changes.Columns = []views.Column{{Label: "Kind"}, {Label: "Record"}, {Label: "Change"}, {Label: "Field"}, {Label: "Before"}, {Label: "After"}}
	for _, c := range cl.Changes {
		rec := views.Cell{Text: releaseRecordName(c.Kind, c.Name)}
		if c.Change == "removed" && prev != nil {
			rec.URL = recordURL("/releases/"+url.PathEscape(prev.Version)+"/view", c.Kind, c.ID)
		} else {
			rec.URL = recordURL("/releases/"+esc+"/view", c.Kind, c.ID)
		}
		if len(c.Fields) == 0 {
			changes.Rows = append(changes.Rows, []views.Cell{{Text: c.Kind}, rec, {Text: c.Change}, {}, {}, {}})
		}
		for _, f := range c.Fields {
			changes.Rows = append(changes.Rows, []views.Cell{{Text: c.Kind}, rec, {Text: c.Change}, {Text: f.Field}, {Text: f.Before}, {Text: f.After}})
		}
	}
	summary := views.Table{Caption: "Changes by kind", Columns: []views.Column{{Label: "Kind"}, {Label: "Added", Num: true}, {Label: "Changed", Num: true}, {Label: "Removed", Num: true}}}
	if prev != nil {
		for _, k := range store.ReleaseKinds() {
			a, c, d := cl.Count(k)
			summary.Rows = append(summary.Rows, []views.Cell{{Text: k}, {Text: itoa(a), Num: true}, {Text: itoa(c), Num: true}, {Text: itoa(d), Num: true}})
		}
		v.Tables = append(v.Tables, summary)
	}
	if prev == nil {
		v.Notes = append(v.Notes, "This is the first release: everything in it is new.")
	} else {
		v.Tables = append(v.Tables, changes)
	}
	v.Tables = append(v.Tables, left)
	return v
}

// recordURL is the page of a record of a kind a release holds ("" for kinds without a page).
func recordURL(base, kind string, id int64) string {
	path := map[string]string{"province": "/provinces/", "unit": "/units/", "section": "/sections/", "date": "/dates/",
		"tie point": "/ties/", "hiatus": "/hiatuses/", "event": "/events/"}[kind]
	if path == "" {
		return ""
	}
	return fmt.Sprintf("%s%s%d", base, path, id)
}

func writeChangelogCSV(w io.Writer, cl store.Changelog) error {
	cw := store.NewCSVWriter(w)
	cw.Write([]string{"from_release", "to_release", "kind", "record_id", "record", "change", "field", "before", "after"})
	for _, c := range cl.Changes {
		if len(c.Fields) == 0 {
			cw.Write([]string{cl.From, cl.To, c.Kind, itoa(int(c.ID)), c.Name, c.Change, "", "", ""})
		}
		for _, f := range c.Fields {
			cw.Write([]string{cl.From, cl.To, c.Kind, itoa(int(c.ID)), c.Name, c.Change, f.Field, f.Before, f.After})
		}
	}
	cw.Flush()
	return cw.Error()
}

func (s *Server) handleReleaseBundle(w http.ResponseWriter, r *http.Request) error {
	rs, _ := s.releaseStore()
	rel, err := s.releaseOf(r)
	if err != nil {
		return err
	}
	path, err := rs.ReleasePath(r.Context(), rel)
	if err != nil {
		return err
	}
	var buf bytes.Buffer
	if err := store.WriteReleaseBundle(r.Context(), path, rel, &buf); err != nil {
		return err
	}
	w.Header().Set("Content-Type", "application/zip")
	w.Header().Set("Content-Disposition", fmt.Sprintf("attachment; filename=%q", "coeval-release-"+rel.Version+".zip"))
	_, err = w.Write(buf.Bytes())
	return err
}

func (s *Server) handleReleaseDOI(w http.ResponseWriter, r *http.Request) error {
	rs, _ := s.releaseStore()
	rel, err := s.releaseOf(r)
	if err != nil {
		return err
	}
	err = rs.SetReleaseDOI(r.Context(), rel.Version, r.PostFormValue("note"))
	var fe store.FormError
	if errors.As(err, &fe) {
		return badRequest{message: "The DOI cannot be recorded:", problems: []string{"DOI: " + fe["doi"]}}
	}
	if err != nil {
		return err
	}
	http.Redirect(w, r, "/releases/"+url.PathEscape(rel.Version), http.StatusSeeOther)
	return nil
}

// handleReleaseView serves any page as of a release, from the release's snapshot, through a handler of
// its own (made on first use and kept).
func (s *Server) handleReleaseView(w http.ResponseWriter, r *http.Request) error {
	rel, err := s.releaseOf(r)
	if err != nil {
		return err
	}
	h, err := s.releaseHandler(r.Context(), rel)
	if err != nil {
		return err
	}
	r2 := r.Clone(r.Context())
	r2.URL.Path = "/" + chi.URLParam(r, "*")
	r2.URL.RawPath = ""
	// The inner router routes by its own context, not the outer one's.
	r2 = r2.WithContext(context.WithValue(r2.Context(), chi.RouteCtxKey, nil))
	h.ServeHTTP(w, r2)
	return nil
}

func (s *Server) releaseHandler(ctx context.Context, rel store.Release) (http.Handler, error) {
	s.releases.mu.Lock()
	defer s.releases.mu.Unlock()
	if h, ok := s.releases.handlers[rel.Version]; ok {
		return h, nil
	}
	rs, _ := s.releaseStore()
	path, err := rs.ReleasePath(ctx, rel)
	if err != nil {
		return nil, err
	}
	snap, err := store.OpenSnapshot(context.WithoutCancel(ctx), path)
	if err != nil {
		return nil, fmt.Errorf("release %s: %w", rel.Version, err)
	}
	prefix := "/releases/" + url.PathEscape(rel.Version) + "/view"
	h := NewHandler(snap, s.log, s.static, WithSessionCleanup(0), withReleaseView(rel.Version, prefix))
	s.releases.handlers[rel.Version] = h
	return h, nil
}

// withReleaseView makes a handler that serves a release's snapshot under prefix.
func withReleaseView(version, prefix string) Option {
	return func(o *options) { o.release, o.prefix = version, prefix }
}

// leaveLinks are the paths a page of a release links to in the current compilation: signing in, the
// account pages, imports and the releases themselves belong to the live site.
var leaveLinks = []string{"/static/", "/releases", "/login", "/logout", "/account", "/admin", "/import", "/dates/new"}

// prefixLinks points a rendered page's own links (href and form actions that start with "/") into the
// release's view, so browsing from a page of a release stays in that release.
func prefixLinks(page []byte, prefix string) []byte {
	var out bytes.Buffer
	out.Grow(len(page) + len(page)/20)
	for {
		i := bytes.Index(page, []byte(`="/`))
		if i < 0 {
			out.Write(page)
			return out.Bytes()
		}
		attrStart := bytes.LastIndexAny(page[:i], " \t\n<")
		attr := string(page[attrStart+1 : i])
		out.Write(page[:i+2])
		rest := page[i+2:]
		if (attr == "href" || attr == "action" || attr == "xlink:href") && !hasAnyPrefix(rest, leaveLinks) {
			out.WriteString(prefix)
		}
		page = rest
	}
}

func hasAnyPrefix(b []byte, prefixes []string) bool {
	for _, p := range prefixes {
		if bytes.HasPrefix(b, []byte(p)) {
			return true
		}
	}
	return false
}

type pathKey struct{}

// rememberPath keeps the request's path and query in its context, for links back to the same page.
func rememberPath(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		next.ServeHTTP(w, r.WithContext(context.WithValue(r.Context(), pathKey{}, r.URL.RequestURI())))
	})
}

func requestPath(ctx context.Context) string {
	p, _ := ctx.Value(pathKey{}).(string)
	if p == "" {
		return "/"
	}
	return p
}

// releaseRecordName writes a record's name for people: a date's method by its label, not its code.
func releaseRecordName(kind, name string) string {
	if kind != "date" || !strings.HasSuffix(name, ")") {
		return name
	}
	i := strings.LastIndex(name, " (")
	if i < 0 {
		return name
	}
	return name[:i] + " (" + methodLabel(name[i+2:len(name)-1]) + ")"
}

func hiatuses(n int) string {
	if n == 1 {
		return "1 hiatus"
	}
	return itoa(n) + " hiatuses"
}
