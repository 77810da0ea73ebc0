// Package web serves coeval over HTTP: the chi router and its middleware, the handlers of every page, the
// CSV and JSON downloads, and the mapping from records and numerics to view models. It is the only package
// that imports store, stats and views together; nothing imports web but main.
package web

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"log/slog"
	"net/http"
	"strconv"
	"time"

	"github.com/a-h/templ"
	"github.com/alexedwards/scs/v2"
	"github.com/go-chi/chi/v5"
	"github.com/go-chi/chi/v5/middleware"

	"coeval/store"
	"coeval/views"
)

// Server holds what the handlers share.
type Server struct {
	store    Store
	log      *slog.Logger
	static   fs.FS
	sessions *scs.SessionManager
	limiter  *loginLimiter
	release  string           // the release this server shows the compilation as of ("" = live)
	prefix   string           // the path it is served under (a release's view)
	releases *releaseViews    // the handlers of releases opened from the live site
	router   http.Handler     // the whole site, for pages that read another page's numbers (an event's answer)
	heavy    *heavyLimit      // the slots of the pages that compute (web/heavy.go)
	secCache *sectionCache    // computed section analyses (web/sectioncache.go)
	tlCache  *timelineCache   // computed timelines (web/timelinecache.go)
	compKept *compilationKept // what the compilation view computed (web/compilation.go)
	budget   time.Duration    // how long the compilation page computes (compilationBudget)
}

// NewHandler builds the router with its middleware chain, in order: recoverer, request ID, logging,
// security headers, body limits, cross-origin protection, session, identification (session or access
// token), and the site-wide sign-in requirement. staticFS holds the files served under /static/.
func NewHandler(st Store, log *slog.Logger, staticFS fs.FS, opts ...Option) http.Handler {
	o := options{sessionCleanup: 5 * time.Minute, now: time.Now, compilationBudget: compilationBudget}
	for _, opt := range opts {
		opt(&o)
	}
	s := &Server{store: st, log: log, static: staticFS, sessions: newSessions(st, log, o),
		limiter: newLoginLimiter(o.now), release: o.release, prefix: o.prefix, heavy: defaultHeavyLimit(),
		secCache: newSectionCache(sectionCacheEntries, sectionCacheRows), tlCache: newTimelineCache(), compKept: &compilationKept{noFinish: o.noCompilationFinisher}, budget: o.compilationBudget}
	// A session that cannot be saved (read-only database, full disk) is answered like any other error.
	s.sessions.ErrorFunc = func(w http.ResponseWriter, r *http.Request, err error) {
		s.handle(func(http.ResponseWriter, *http.Request) error { return err })(w, r)
	}
	r := chi.NewRouter()
	r.Use(middleware.Recoverer)
	r.Use(middleware.RequestID)
	r.Use(s.logRequests)
	r.Use(securityHeaders)
	r.Use(s.limitBodies(r))
	cop := http.NewCrossOriginProtection()
	cop.SetDenyHandler(s.handle(func(http.ResponseWriter, *http.Request) error {
		return forbidden{message: "This form was sent from another site, so it was refused. Open the page on this site and send the form from there."}
	}))
	r.Use(cop.Handler)
	r.Use(s.sessions.LoadAndSave)
	r.Use(s.identify)
	r.Use(s.requireLoginSetting)
	r.Use(s.asOfRelease)
	r.Use(rememberPath)
	r.Use(takeFlash)
	r.Use(s.limitHeavy)

	r.Get("/static/*", http.StripPrefix("/static/", http.FileServerFS(staticFS)).ServeHTTP)
	r.Get("/", s.handle(s.handleHome))
	s.registerAuthRoutes(r)
	s.registerDateEditRoutes(r)
	s.registerProvinceEditRoutes(r)
	s.registerUnitEditRoutes(r)
	s.registerSectionEditRoutes(r)
	s.registerEventEditRoutes(r)
	s.registerTieEditRoutes(r)
	s.registerHiatusEditRoutes(r)
	s.registerUploadRoutes(r)
	s.registerAccountRoutes(r)
	s.registerProvinceRoutes(r)
	s.registerTimelineRoutes(r)
	s.registerUnitRoutes(r)
	s.registerDateRoutes(r)
	s.registerSectionRoutes(r)
	s.registerCompareRoutes(r)
	s.registerCoincidenceRoutes(r)
	s.registerMapRoutes(r)
	s.registerCompilationRoutes(r)
	s.registerHelpRoutes(r)
	s.registerReleaseRoutes(r)
	r.Get("/ties", s.handle(s.handleTieList))
	r.Get("/events", s.handle(s.handleEventList))
	r.Get("/calibrations", s.handle(s.handleCalibrationList))
	r.With(s.sessionOnly, s.requireRole(store.RoleAdmin)).Post("/calibrations/target", s.handle(s.handleCalibrationTarget))
	r.NotFound(s.handle(func(w http.ResponseWriter, r *http.Request) error {
		return notFoundError{what: "page " + r.URL.Path}
	}))
	r.MethodNotAllowed(s.handle(func(w http.ResponseWriter, r *http.Request) error {
		return wrongMethod{method: r.Method}
	}))
	s.router = r
	return r
}

func (s *Server) logRequests(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		start := time.Now()
		ww := middleware.NewWrapResponseWriter(w, r.ProtoMajor)
		next.ServeHTTP(ww, r)
		s.log.Info("request", "method", r.Method, "path", r.URL.Path, "status", ww.Status(),
			"bytes", ww.BytesWritten(), "ms", time.Since(start).Milliseconds(), "id", middleware.GetReqID(r.Context()))
	})
}

func securityHeaders(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		h := w.Header()
		h.Set("Content-Security-Policy", "default-src 'self'; img-src 'self' data:; style-src 'self'; script-src 'self'; frame-ancestors 'none'; base-uri 'self'; form-action 'self'")
		h.Set("X-Content-Type-Options", "nosniff")
		h.Set("Referrer-Policy", "same-origin")
		next.ServeHTTP(w, r)
	})
}

// badRequest is an error the user can fix by changing the URL or form: its problems are shown.
type badRequest struct {
	message  string
	problems []string
}

func (e badRequest) Error() string { return e.message }

// notFoundError names what was not found.
type notFoundError struct{ what string }

func (e notFoundError) Error() string { return e.what + " not found" }

// wrongMethod is a request with a method its address does not take (a POST to a page).
type wrongMethod struct{ method string }

func (e wrongMethod) Error() string { return e.method + " not allowed" }

// handle adapts a handler that returns an error: user errors get their status and message, anything else
// is logged once and shown as a generic 500 without its text.
func (s *Server) handle(fn func(http.ResponseWriter, *http.Request) error) http.HandlerFunc {
	return func(w http.ResponseWriter, r *http.Request) {
		err := fn(w, r)
		if err == nil {
			return
		}
		var br badRequest
		var nf notFoundError
		var fb forbidden
		var ce conflictError
		var wm wrongMethod
		var tl bodyTooLarge
		var naf notAForm
		var sb serverBusy
		view := views.ErrorView{Page: s.page(r.Context(), "", "")}
		switch {
		case errors.As(err, &br):
			view.Status, view.Page.Title, view.Message, view.Details = http.StatusBadRequest, "Cannot show this page", br.message, br.problems
			if in := settingsForm(r, br.problems); len(in) > 0 {
				view.Message = "This page cannot be shown with these settings. They are kept below: change the ones marked and show it again."
				view.Settings, view.SettingsAction = in, r.URL.Path
			}
		case errors.As(err, &ce):
			view.Status, view.Page.Title, view.Message = http.StatusConflict, "Changed meanwhile", ce.message
		case errors.As(err, &fb):
			view.Status, view.Page.Title, view.Message = http.StatusForbidden, "Not allowed", fb.message
		case errors.As(err, &wm):
			view.Status, view.Page.Title = http.StatusMethodNotAllowed, "Not this way"
			view.Message = "This address does not take a " + wm.method + " request: open it as a page, or send the form on the page that leads here."
		case errors.As(err, &tl):
			view.Status, view.Page.Title = http.StatusRequestEntityTooLarge, "Too much sent"
			view.Message = tl.message()
		case errors.As(err, &naf):
			view.Status, view.Page.Title = http.StatusUnsupportedMediaType, "No file is taken here"
			view.Message = "This page takes a form without files, so what was sent was refused and nothing was kept. Files are sent on the Import page."
		case errors.As(err, &sb):
			view.Status, view.Page.Title = http.StatusServiceUnavailable, "Busy: try again shortly"
			view.Message = "The server is computing other pages and could not start this one in time. Nothing is lost: open it again in " + strconv.Itoa(heavyRetryAfter) + " seconds."
		case errors.As(err, &nf):
			view.Status, view.Page.Title, view.Message = http.StatusNotFound, "Not found", "There is no "+nf.what+"."
		case errors.Is(err, store.ErrNotFound):
			view.Status, view.Page.Title, view.Message = http.StatusNotFound, "Not found", "That record is not in the compilation."
		case errors.Is(err, context.Canceled):
			return
		case store.IsBusy(err):
			// Another change holds the database for longer than the busy timeout: try again shortly.
			s.log.Warn("database busy", "method", r.Method, "path", r.URL.Path, "err", err)
			w.Header().Set("Retry-After", "5")
			view.Status, view.Page.Title = http.StatusServiceUnavailable, "Busy: try again in a few seconds"
			view.Message = "The database is busy with another change, so this request was not done and nothing was saved. Try again in a few seconds."
		case store.IsUnwritable(err):
			s.log.Warn("write refused by the database", "method", r.Method, "path", r.URL.Path, "err", err)
			view.Status, view.Page.Title = http.StatusServiceUnavailable, "Changes are not possible right now"
			view.Message = "The database cannot take changes at the moment (it is read-only or its disk is full), so nothing was saved. Reading goes on as usual. Tell an administrator; try again later."
		default:
			s.log.Error("request failed", "method", r.Method, "path", r.URL.Path, "err", err, "id", middleware.GetReqID(r.Context()))
			view.Status, view.Page.Title = http.StatusInternalServerError, "Something went wrong"
			view.Message = "The server could not complete this request. It has been logged; try again, or tell the curators what you were doing."
		}
		if wantsJSON(r) {
			writeJSON(w, view.Status, map[string]any{"error": view.Message, "problems": view.Details})
			return
		}
		s.render(w, r, view.Status, views.ErrorPage(view))
	}
}

func wantsJSON(r *http.Request) bool { return r.URL.Query().Get("format") == "json" }

// render writes a component with a status, rendering it to a buffer first so that a failure cannot
// leave a half-written page behind a 200.
func (s *Server) render(w http.ResponseWriter, r *http.Request, status int, c templ.Component) {
	var buf bytes.Buffer
	if err := c.Render(r.Context(), &buf); err != nil {
		s.log.Error("render failed", "path", r.URL.Path, "err", err)
		http.Error(w, "The page could not be rendered.", http.StatusInternalServerError)
		return
	}
	page := buf.Bytes()
	if s.prefix != "" {
		page = prefixLinks(page, s.prefix)
	}
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	w.WriteHeader(status)
	w.Write(page)
}

// readOnlyBanner is shown on every page while the database is open for reading only.
const readOnlyBanner = "The database is on storage that cannot be written, so the compilation is open for reading only: nothing can be added, edited or imported. Signing in works, but lasts only until the server restarts. An administrator can make the storage writable again."

// page builds the common part of a page's view model.
func (s *Server) page(ctx context.Context, title, nav string) views.Page {
	p := views.Page{Title: title, Nav: nav, Done: flashOf(ctx)}
	if u, ok := currentUser(ctx); ok {
		p.User, p.Role = u.Name, u.Role
		if store.RoleAtLeast(u.Role, store.RoleContributor) {
			p.UserLinks = append(p.UserLinks, views.Link{Label: "New date", URL: "/dates/new"}, views.Link{Label: "Import", URL: "/import"})
		}
		p.UserLinks = append(p.UserLinks, views.Link{Label: "Account", URL: "/account"})
		if store.RoleAtLeast(u.Role, store.RoleAdmin) {
			p.UserLinks = append(p.UserLinks, views.Link{Label: "Admin", URL: "/admin"})
		}
	}
	if demo, err := s.store.Setting(ctx, store.SettingDemo); err == nil && demo != "" {
		p.Demo = demo
	}
	switch {
	case s.release != "":
		p.Release, p.CurrentURL = s.release, requestPath(ctx)
	case s.store.ReadOnly():
		p.ReadOnly = readOnlyBanner
	}
	return p
}

// writeDownload renders a CSV body to a buffer, then sends it as an attachment named file.
func writeDownload(w http.ResponseWriter, file string, write func(io.Writer) error) error {
	var buf bytes.Buffer
	if err := write(&buf); err != nil {
		return fmt.Errorf("write %s: %w", file, err)
	}
	w.Header().Set("Content-Type", "text/csv; charset=utf-8")
	w.Header().Set("Content-Disposition", fmt.Sprintf("attachment; filename=%q", file))
	w.Write(buf.Bytes())
	return nil
}
