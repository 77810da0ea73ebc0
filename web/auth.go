package web

import (
	"context"
	"errors"
	"net"
	"net/http"
	"net/url"
	"strings"
	"sync"
	"time"
	"unicode"
	"unicode/utf8"

	"github.com/alexedwards/scs/sqlite3store"
	"github.com/alexedwards/scs/v2"
	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
)

// SettingRequireLogin, when "true", makes every page require a signed-in account (reading is public by
// default).
const SettingRequireLogin = "require_login"

// Option changes how NewHandler builds the server.
type Option func(*options)

type options struct {
	sessionCleanup time.Duration
	secureCookies  bool
	now            func() time.Time
}

// WithSessionCleanup sets how often expired sessions are deleted (0: never, for tests).
func WithSessionCleanup(d time.Duration) Option { return func(o *options) { o.sessionCleanup = d } }

// WithSecureCookies marks the session cookie Secure (serve over TLS, directly or behind a proxy).
func WithSecureCookies(on bool) Option { return func(o *options) { o.secureCookies = on } }

type ctxKey int

const (
	userKey ctxKey = iota + 1
	tokenKey
)

// currentUser returns the signed-in user of the request (ok false when anonymous).
func currentUser(ctx context.Context) (store.User, bool) {
	u, ok := ctx.Value(userKey).(store.User)
	return u, ok
}

func newSessions(st Store, o options) *scs.SessionManager {
	sm := scs.New()
	sm.Store = sqlite3store.NewWithCleanupInterval(st.SQL(), o.sessionCleanup)
	sm.Lifetime = 7 * 24 * time.Hour
	sm.IdleTimeout = 24 * time.Hour
	sm.Cookie.Name = "coeval_session"
	sm.Cookie.HttpOnly = true
	sm.Cookie.SameSite = http.SameSiteLaxMode
	sm.Cookie.Secure = o.secureCookies
	sm.Cookie.Path = "/"
	return sm
}

// identify puts the request's user in its context: from a personal access token (Authorization: Bearer)
// or from the session. A bad token is refused outright rather than treated as anonymous. A token only
// reads: any other method than GET or HEAD is refused (403), and the account and administration pages
// refuse tokens too (sessionOnly), so a leaked token can neither change the compilation nor make
// further tokens.
func (s *Server) identify(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		ctx := r.Context()
		if h := r.Header.Get("Authorization"); h != "" {
			token, ok := strings.CutPrefix(h, "Bearer ")
			u, err := s.store.UserByToken(ctx, strings.TrimSpace(token))
			if !ok || err != nil {
				writeJSON(w, http.StatusUnauthorized, map[string]any{"error": "the access token is not valid (revoked, mistyped, or not sent as 'Authorization: Bearer TOKEN')"})
				return
			}
			if r.Method != http.MethodGet && r.Method != http.MethodHead {
				writeJSON(w, http.StatusForbidden, map[string]any{"error": errTokenReadOnly})
				return
			}
			ctx = context.WithValue(ctx, tokenKey, true)
			next.ServeHTTP(w, r.WithContext(context.WithValue(ctx, userKey, u)))
			return
		}
		if id := s.sessions.GetInt64(ctx, "user_id"); id != 0 {
			if u, err := s.store.UserByID(ctx, id); err == nil && !u.Disabled {
				ctx = context.WithValue(ctx, userKey, u)
			}
		}
		next.ServeHTTP(w, r.WithContext(ctx))
	})
}

// errTokenReadOnly is the refusal of a change sent with an access token.
const errTokenReadOnly = "an access token only reads (GET requests); sign in to make changes"

// viaToken reports whether the request was identified by a personal access token.
func viaToken(ctx context.Context) bool {
	v, _ := ctx.Value(tokenKey).(bool)
	return v
}

// sessionOnly refuses requests identified by an access token: the account and administration pages
// (tokens, accounts, settings, backups) need a signed-in session.
func (s *Server) sessionOnly(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		if viaToken(r.Context()) {
			writeJSON(w, http.StatusForbidden, map[string]any{"error": "an access token cannot open account or administration pages; sign in instead"})
			return
		}
		next.ServeHTTP(w, r)
	})
}

// requireLoginSetting sends anonymous visitors to the sign-in page when the compilation is private.
func (s *Server) requireLoginSetting(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		if _, ok := currentUser(r.Context()); ok || r.URL.Path == "/login" || strings.HasPrefix(r.URL.Path, "/static/") {
			next.ServeHTTP(w, r)
			return
		}
		if v, err := s.store.Setting(r.Context(), SettingRequireLogin); err == nil && v == "true" {
			if wantsJSON(r) || r.Header.Get("Authorization") != "" {
				writeJSON(w, http.StatusUnauthorized, map[string]any{"error": "this compilation requires signing in or an access token"})
				return
			}
			http.Redirect(w, r, "/login?next="+url.QueryEscape(r.URL.RequestURI()), http.StatusSeeOther)
			return
		}
		next.ServeHTTP(w, r)
	})
}

// requireRole refuses requests of users below min: anonymous ones are sent to sign in, others get 403.
func (s *Server) requireRole(min string) func(http.Handler) http.Handler {
	return func(next http.Handler) http.Handler {
		return s.handle(func(w http.ResponseWriter, r *http.Request) error {
			u, ok := currentUser(r.Context())
			if !ok {
				if r.Method == http.MethodGet && !wantsJSON(r) {
					http.Redirect(w, r, "/login?next="+url.QueryEscape(r.URL.RequestURI()), http.StatusSeeOther)
					return nil
				}
				return forbidden{"Sign in to do this."}
			}
			if !store.RoleAtLeast(u.Role, min) {
				return forbidden{"Your account (" + u.Role + ") may not do this; it needs the " + min + " role."}
			}
			next.ServeHTTP(w, r)
			return nil
		})
	}
}

// forbidden is a refusal the user should understand.
type forbidden struct{ message string }

func (e forbidden) Error() string { return e.message }

// loginLimiter counts failed sign-ins per account and per address and refuses more than max in window.
type loginLimiter struct {
	mu     sync.Mutex
	max    int
	window time.Duration
	fails  map[string][]time.Time
	now    func() time.Time
}

func newLoginLimiter(max int, window time.Duration, now func() time.Time) *loginLimiter {
	return &loginLimiter{max: max, window: window, fails: map[string][]time.Time{}, now: now}
}

func (l *loginLimiter) recent(key string) []time.Time {
	cut := l.now().Add(-l.window)
	ts := l.fails[key]
	i := 0
	for i < len(ts) && ts[i].Before(cut) {
		i++
	}
	ts = ts[i:]
	if len(ts) == 0 {
		delete(l.fails, key)
	} else {
		l.fails[key] = ts
	}
	return ts
}

// blocked reports whether any of the keys has used up its attempts; address keys ("addr:…") allow
// perAddress attempts, since a whole group may sign in from one address.
func (l *loginLimiter) blocked(keys ...string) bool {
	l.mu.Lock()
	defer l.mu.Unlock()
	for _, k := range keys {
		limit := l.max
		if strings.HasPrefix(k, "addr:") {
			limit = l.max * perAddressFactor
		}
		if len(l.recent(k)) >= limit {
			return true
		}
	}
	return false
}

// perAddressFactor multiplies the per-account limit for one address.
const perAddressFactor = 4

func (l *loginLimiter) fail(keys ...string) {
	l.mu.Lock()
	defer l.mu.Unlock()
	for _, k := range keys {
		l.fails[k] = append(l.recent(k), l.now())
	}
}

func (l *loginLimiter) reset(key string) {
	l.mu.Lock()
	defer l.mu.Unlock()
	delete(l.fails, key)
}

func clientAddr(r *http.Request) string {
	host, _, err := net.SplitHostPort(r.RemoteAddr)
	if err != nil {
		return r.RemoteAddr
	}
	return host
}

func (s *Server) registerAuthRoutes(r chi.Router) {
	r.Get("/login", s.handle(s.handleLoginForm))
	r.Post("/login", s.handle(s.handleLogin))
	r.Post("/logout", s.handle(s.handleLogout))
}

// safeNext keeps a post-login redirect on this site: a path that begins with one slash, holds no
// control character and no backslash (browsers drop tabs and line breaks and read a backslash as a slash,
// so "/<tab>/evil.example" and "/\\evil.example" lead to another site), and has neither scheme nor host
// once parsed. Anything else goes to the home page.
func safeNext(next string) string {
	if !strings.HasPrefix(next, "/") || strings.HasPrefix(next, "//") || !utf8.ValidString(next) {
		return "/"
	}
	for _, c := range next {
		if unicode.IsControl(c) || c == '\\' {
			return "/"
		}
	}
	u, err := url.Parse(next)
	if err != nil || u.Scheme != "" || u.Host != "" || u.User != nil || u.Opaque != "" || !strings.HasPrefix(u.Path, "/") {
		return "/"
	}
	return next
}

func (s *Server) loginView(r *http.Request, name, message string) views.Login {
	v := views.Login{Page: s.page(r.Context(), "Sign in", ""), Next: safeNext(r.FormValue("next")), Name: name, Message: message}
	if s.isDemo(r.Context()) {
		v.Hint = "Demo accounts: demo-reader, demo-contributor, demo-curator, demo-admin; password " + store.DemoPassword + " (they exist only in the demo database)."
	}
	return v
}

func (s *Server) handleLoginForm(w http.ResponseWriter, r *http.Request) error {
	s.render(w, r, http.StatusOK, views.LoginPage(s.loginView(r, "", "")))
	return nil
}

func (s *Server) handleLogin(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	name, password := strings.TrimSpace(r.FormValue("name")), r.FormValue("password")
	keys := []string{"name:" + strings.ToLower(name), "addr:" + clientAddr(r)}
	if s.limiter.blocked(keys...) {
		s.render(w, r, http.StatusTooManyRequests, views.LoginPage(s.loginView(r, name,
			"Too many failed attempts. Wait 15 minutes, then try again.")))
		return nil
	}
	u, err := s.store.Authenticate(ctx, name, password)
	if errors.Is(err, store.ErrBadLogin) {
		s.limiter.fail(keys...)
		s.render(w, r, http.StatusUnprocessableEntity, views.LoginPage(s.loginView(r, name, "Wrong name or password.")))
		return nil
	}
	if err != nil {
		return err
	}
	s.limiter.reset(keys[0])
	// A new session token at sign-in, so a token planted before cannot ride the new session.
	if err := s.sessions.RenewToken(ctx); err != nil {
		return err
	}
	s.sessions.Put(ctx, "user_id", u.ID)
	http.Redirect(w, r, safeNext(r.FormValue("next")), http.StatusSeeOther)
	return nil
}

func (s *Server) handleLogout(w http.ResponseWriter, r *http.Request) error {
	if err := s.sessions.Destroy(r.Context()); err != nil {
		return err
	}
	http.Redirect(w, r, "/", http.StatusSeeOther)
	return nil
}

func (s *Server) isDemo(ctx context.Context) bool {
	v, err := s.store.Setting(ctx, store.SettingDemo)
	return err == nil && v != ""
}
