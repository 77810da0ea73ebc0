package web

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"math"
	"net"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"sync"
	"time"
	"unicode"
	"unicode/utf8"

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
	release        string // the release a handler serves as of ("" for the live compilation)
	prefix         string // the path it is served under
	// compilationBudget: how long the compilation page computes (compilationBudget; tests change it)
	compilationBudget time.Duration
	// noCompilationFinisher: a page cut short leaves the rest to the next request (tests)
	noCompilationFinisher bool
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

func newSessions(st Store, log *slog.Logger, o options) *scs.SessionManager {
	sm := scs.New()
	sm.Store = newSessionStore(st, st.ReadOnly(), log, o.sessionCleanup)
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

// loginLimiter slows down password guessing without letting anyone lock an account. It counts the
// failed sign-ins of each pair of account name and address; after freeAttempts failures the pair waits
// before its next try, firstDelay after the first failure beyond, then twice as long after each further
// one, up to maxDelay. Only that pair is slowed: the same account from another address, and other
// accounts from the same address (a group behind one proxy), sign in as usual. A pair is forgotten at a
// successful sign-in, or forgetAfter its last failure.
type loginLimiter struct {
	mu    sync.Mutex
	fails map[string]failures
	now   func() time.Time
}

type failures struct {
	n    int
	last time.Time
}

const (
	freeAttempts = 3
	firstDelay   = time.Second
	maxDelay     = 15 * time.Minute
	forgetAfter  = time.Hour
	// sweepAbove is the number of pairs above which forgotten ones are removed at each failure.
	sweepAbove = 10000
)

func newLoginLimiter(now func() time.Time) *loginLimiter {
	return &loginLimiter{fails: map[string]failures{}, now: now}
}

// loginKey is the pair an attempt is counted under.
func loginKey(name, addr string) string { return strings.ToLower(name) + "\x00" + addr }

// delayAfter is the wait before the next attempt after n failures: none for the first freeAttempts, then
// firstDelay doubling with each failure, at most maxDelay.
func delayAfter(n int) time.Duration {
	if n < freeAttempts {
		return 0
	}
	if n-freeAttempts >= 20 { // 2^20 s is far beyond maxDelay; also keeps the shift small
		return maxDelay
	}
	return min(firstDelay<<(n-freeAttempts), maxDelay)
}

// wait is how long key must wait before its next attempt (0: it may try now).
func (l *loginLimiter) wait(key string) time.Duration {
	l.mu.Lock()
	defer l.mu.Unlock()
	f, ok := l.fails[key]
	if !ok {
		return 0
	}
	now := l.now()
	if now.Sub(f.last) >= forgetAfter {
		delete(l.fails, key)
		return 0
	}
	return max(f.last.Add(delayAfter(f.n)).Sub(now), 0)
}

// fail records a failed attempt of key.
func (l *loginLimiter) fail(key string) {
	l.mu.Lock()
	defer l.mu.Unlock()
	now := l.now()
	if len(l.fails) > sweepAbove {
		for k, f := range l.fails {
			if now.Sub(f.last) >= forgetAfter {
				delete(l.fails, k)
			}
		}
	}
	f := l.fails[key]
	if now.Sub(f.last) >= forgetAfter {
		f.n = 0
	}
	l.fails[key] = failures{n: f.n + 1, last: now}
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
	key := loginKey(name, clientAddr(r))
	if wait := s.limiter.wait(key); wait > 0 {
		secs := int(math.Ceil(wait.Seconds()))
		w.Header().Set("Retry-After", strconv.Itoa(secs))
		s.render(w, r, http.StatusTooManyRequests, views.LoginPage(s.loginView(r, name,
			fmt.Sprintf("Too many failed attempts for this account from your address. Wait %s, then try again.", waitWords(secs)))))
		return nil
	}
	u, err := s.store.Authenticate(ctx, name, password)
	if errors.Is(err, store.ErrBadLogin) {
		s.limiter.fail(key)
		s.render(w, r, http.StatusUnprocessableEntity, views.LoginPage(s.loginView(r, name, "Wrong name or password.")))
		return nil
	}
	if err != nil {
		return err
	}
	s.limiter.reset(key)
	// A new session token at sign-in, so a token planted before cannot ride the new session.
	if err := s.sessions.RenewToken(ctx); err != nil {
		return err
	}
	s.sessions.Put(ctx, "user_id", u.ID)
	http.Redirect(w, r, safeNext(r.FormValue("next")), http.StatusSeeOther)
	return nil
}

// waitWords says a wait of secs seconds in words.
func waitWords(secs int) string {
	switch {
	case secs == 1:
		return "1 second"
	case secs < 120:
		return strconv.Itoa(secs) + " seconds"
	default:
		return strconv.Itoa((secs+59)/60) + " minutes"
	}
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
