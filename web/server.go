// Package web serves coeval over HTTP: the chi router and its middleware, the handlers of every page, the
// CSV and JSON downloads, and the mapping from records and numerics to view models. It is the only package
// that imports store, stats and views together; nothing imports web but main.
package web

import (
	"bytes"
	"context"
	"database/sql"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"log/slog"
	"net/http"
	"time"

	"github.com/a-h/templ"
	"github.com/alexedwards/scs/v2"
	"github.com/go-chi/chi/v5"
	"github.com/go-chi/chi/v5/middleware"

	"coeval/store"
	"coeval/views"
)

// Store is what the handlers need from the database (declared here, on the consumer side).
type Store interface {
	Counts(ctx context.Context) (store.Counts, error)
	Provinces(ctx context.Context) ([]store.Province, error)
	Province(ctx context.Context, id int64) (store.Province, error)
	Units(ctx context.Context, provinceID int64) ([]store.Unit, error)
	Unit(ctx context.Context, id int64) (store.Unit, error)
	Dates(ctx context.Context, f store.DateFilter) ([]store.Date, int, error)
	Date(ctx context.Context, id int64) (store.Date, error)
	Materials(ctx context.Context) ([]string, error)
	Calibrations(ctx context.Context) ([]store.Calibration, error)
	Sections(ctx context.Context) ([]store.Section, error)
	Section(ctx context.Context, id int64) (store.Section, error)
	Samples(ctx context.Context, sectionID int64) ([]store.Sample, []string, error)
	Proxies(ctx context.Context) ([]store.Proxy, error)
	TiePoints(ctx context.Context, sectionID int64) ([]store.TiePoint, error)
	Events(ctx context.Context, sectionID int64) ([]store.Event, error)
	Hiatuses(ctx context.Context, sectionID int64) ([]store.Hiatus, error)
	LatestBatches(ctx context.Context, limit int) ([]store.Batch, error)
	RevisionCount(ctx context.Context, recordType string, id int64) (int, error)
	Setting(ctx context.Context, key string) (string, error)
	Authenticate(ctx context.Context, name, password string) (store.User, error)
	UserByID(ctx context.Context, id int64) (store.User, error)
	UserByToken(ctx context.Context, token string) (store.User, error)
	SQL() *sql.DB
	ReadOnly() bool
	CreateDate(ctx context.Context, f store.Form, asCurator bool) (store.Date, error)
	UpdateDate(ctx context.Context, id int64, version int, f store.Form, asCurator bool) (store.Date, error)
	DeleteDate(ctx context.Context, id int64, version int) error
	Review(ctx context.Context, recordType string, id int64, version int, accept bool, note string) error
	Revisions(ctx context.Context, recordType string, id int64) ([]store.Revision, error)
	RevisionByID(ctx context.Context, id int64) (store.Revision, error)
	RevertRevision(ctx context.Context, revID int64) error
	CreateUnit(ctx context.Context, f store.Form) (store.Unit, error)
	UpdateUnit(ctx context.Context, id int64, version int, f store.Form) (store.Unit, error)
	DeleteUnit(ctx context.Context, id int64, version int) error
	CreateSection(ctx context.Context, f store.Form) (store.Section, error)
	UpdateSection(ctx context.Context, id int64, version int, f store.Form) (store.Section, error)
	DeleteSection(ctx context.Context, id int64, version int) error
	Event(ctx context.Context, id int64) (store.Event, error)
	CreateEvent(ctx context.Context, sectionID int64, f store.Form, asCurator bool) (store.Event, error)
	UpdateEvent(ctx context.Context, id int64, version int, f store.Form, asCurator bool) (store.Event, error)
	DeleteEvent(ctx context.Context, id int64, version int) error
	TiePoint(ctx context.Context, id int64) (store.TiePoint, error)
	CreateTie(ctx context.Context, sectionID int64, f store.Form, asCurator bool) (store.TiePoint, error)
	UpdateTie(ctx context.Context, id int64, version int, f store.Form, asCurator bool) (store.TiePoint, error)
	DeleteTie(ctx context.Context, id int64, version int) error
	Hiatus(ctx context.Context, id int64) (store.Hiatus, error)
	CreateHiatus(ctx context.Context, sectionID int64, f store.Form, asCurator bool) (store.Hiatus, error)
	UpdateHiatus(ctx context.Context, id int64, version int, f store.Form, asCurator bool) (store.Hiatus, error)
	DeleteHiatus(ctx context.Context, id int64, version int) error
	CreateProvince(ctx context.Context, f store.Form) (store.Province, error)
	UpdateProvince(ctx context.Context, id int64, version int, f store.Form) (store.Province, error)
	DeleteProvince(ctx context.Context, id int64, version int) error
	BatchRevisions(ctx context.Context, batchID int64) ([]store.Revision, error)
	BatchRevisionsAfter(ctx context.Context, batchID, after int64, limit int) ([]store.Revision, error)
	BatchByID(ctx context.Context, id int64) (store.BatchRow, error)
	DatesPage(ctx context.Context, f store.DateFilter) (store.DatePage, error)
	EachDate(ctx context.Context, f store.DateFilter, fn func(store.Date) error) error
	SaveUpload(ctx context.Context, u store.Upload) (int64, error)
	UploadByID(ctx context.Context, id int64) (store.Upload, error)
	PreviewUpload(ctx context.Context, u store.Upload) (store.Preview, error)
	CommitUpload(ctx context.Context, u store.Upload) (store.ImportResult, error)
	UndoBatch(ctx context.Context, batchID int64) (int, error)
	AcceptBatch(ctx context.Context, batchID int64) (int, []string, error)
	PendingInBatch(ctx context.Context, batchID int64) (int, error)
	Batches(ctx context.Context, f store.BatchFilter) ([]store.BatchRow, int, error)
	CreateUser(ctx context.Context, name, role, password string) (store.User, error)
	Users(ctx context.Context) ([]store.User, error)
	CreateToken(ctx context.Context, userID int64, name string) (string, error)
	RevokeToken(ctx context.Context, userID, tokenID int64) error
	Tokens(ctx context.Context, userID int64) ([]store.Token, error)
	RecordAuthor(ctx context.Context, recordType string, id int64) (int64, error)
	SetSetting(ctx context.Context, key, value string) error
	Backup(ctx context.Context, path string) error
	SavePulses(ctx context.Context, provinceID int64, source string, ps []store.Pulse) ([]store.Pulse, error)
	Pulses(ctx context.Context, provinceID int64) ([]store.Pulse, error)
	DataStamp(ctx context.Context) (int64, error)
	SaveComparison(ctx context.Context, c store.Comparison) (int64, error)
	Comparisons(ctx context.Context) ([]store.Comparison, error)
	Comparison(ctx context.Context, id int64) (store.Comparison, error)
	AddSectionEvent(ctx context.Context, sectionID int64, f store.EventForm, asCurator bool) (store.Event, error)
	AnomalyDecisions(ctx context.Context, sectionID int64) ([]store.AnomalyDecision, error)
	AnomalyToEvent(ctx context.Context, k store.AnomalyKey, name, notes string) (store.Event, store.AnomalyDecision, error)
	RejectAnomaly(ctx context.Context, k store.AnomalyKey, reason string) (store.AnomalyDecision, error)
}

// Server holds what the handlers share.
type Server struct {
	store    Store
	log      *slog.Logger
	static   fs.FS
	sessions *scs.SessionManager
	limiter  *loginLimiter
}

// NewHandler builds the router with its middleware chain, in order: recoverer, request ID, logging,
// security headers, body limits, cross-origin protection, session, identification (session or access
// token), and the site-wide sign-in requirement. staticFS holds the files served under /static/.
func NewHandler(st Store, log *slog.Logger, staticFS fs.FS, opts ...Option) http.Handler {
	o := options{sessionCleanup: 5 * time.Minute, now: time.Now}
	for _, opt := range opts {
		opt(&o)
	}
	s := &Server{store: st, log: log, static: staticFS, sessions: newSessions(st, log, o),
		limiter: newLoginLimiter(o.now)}
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
	r.Get("/ties", s.handle(s.handleTieList))
	r.Get("/events", s.handle(s.handleEventList))
	r.Get("/calibrations", s.handle(s.handleCalibrationList))
	r.NotFound(s.handle(func(w http.ResponseWriter, r *http.Request) error {
		return notFoundError{what: "page " + r.URL.Path}
	}))
	r.MethodNotAllowed(s.handle(func(w http.ResponseWriter, r *http.Request) error {
		return wrongMethod{method: r.Method}
	}))
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
		view := views.ErrorView{Page: s.page(r.Context(), "", "")}
		switch {
		case errors.As(err, &br):
			view.Status, view.Page.Title, view.Message, view.Details = http.StatusBadRequest, "Cannot show this page", br.message, br.problems
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
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	w.WriteHeader(status)
	w.Write(buf.Bytes())
}

// readOnlyBanner is shown on every page while the database is open for reading only.
const readOnlyBanner = "The database is on storage that cannot be written, so the compilation is open for reading only: nothing can be added, edited or imported. Signing in works, but lasts only until the server restarts. An administrator can make the storage writable again."

// page builds the common part of a page's view model.
func (s *Server) page(ctx context.Context, title, nav string) views.Page {
	p := views.Page{Title: title, Nav: nav}
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
	if s.store.ReadOnly() {
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
