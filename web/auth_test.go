package web

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"log/slog"
	"mime/multipart"
	"net/http"
	"net/http/cookiejar"
	"net/http/httptest"
	"net/url"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/go-chi/chi/v5"

	"coeval/static"
	"coeval/store"
)

// client is a browser-like HTTP client with its own cookies that does not follow redirects.
func client(t testing.TB) *http.Client {
	t.Helper()
	jar, _ := cookiejar.New(nil)
	return &http.Client{Jar: jar, CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}
}

// signIn signs c in as a demo account ("" leaves it anonymous).
func signIn(t testing.TB, c *http.Client, srv *httptest.Server, name string) {
	t.Helper()
	if name == "" {
		return
	}
	res, err := c.PostForm(srv.URL+"/login", url.Values{"name": {name}, "password": {store.DemoPassword}, "next": {"/"}})
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("sign in as %s: status %d", name, res.StatusCode)
	}
}

func do(t testing.TB, c *http.Client, method, u string, form url.Values) (int, string, http.Header) {
	t.Helper()
	var body io.Reader
	if form != nil {
		body = strings.NewReader(form.Encode())
	}
	req, _ := http.NewRequest(method, u, body)
	if form != nil {
		req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	}
	res, err := c.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	b, _ := io.ReadAll(res.Body)
	return res.StatusCode, string(b), res.Header
}

// routeRoles is the least role each route needs ("" = anyone). TestAuthorizationMatrix walks the router
// and fails on any route missing here, so a new route cannot be forgotten.
var routeRoles = map[string]string{
	"GET /":                                    "",
	"GET /static/*":                            "",
	"GET /login":                               "",
	"POST /login":                              "",
	"POST /logout":                             "",
	"GET /provinces":                           "",
	"GET /provinces/{id}":                      "",
	"GET /provinces/{id}/summary":              "",
	"GET /units/{id}":                          "",
	"GET /units/{id}/summary":                  "",
	"GET /dates":                               "",
	"GET /dates/{id}":                          "",
	"GET /dates/{id}/history":                  "",
	"GET /sections":                            "",
	"GET /sections/{id}":                       "",
	"GET /sections/{id}/measurements":          "",
	"GET /sections/{id}/ties":                  "",
	"GET /sections/{id}/events":                "",
	"GET /sections/{id}/figure.svg":            "",
	"GET /sections/{id}/ratios":                "",
	"GET /sections/{id}/anomalies":             "",
	"GET /sections/{id}/agemodel":              "",
	"GET /sections/aligned":                    "",
	"GET /sections/aligned/figure.svg":         "",
	"GET /provinces/{id}/timeline":             "",
	"GET /timescale":                           "",
	"GET /help":                                "",
	"GET /help/files/{kind}":                   "",
	"GET /releases":                            "",
	"GET /releases/new":                        store.RoleCurator,
	"POST /releases":                           store.RoleCurator,
	"GET /releases/{version}":                  "",
	"GET /releases/{version}/bundle.zip":       "",
	"POST /releases/{version}/doi":             store.RoleCurator,
	"GET /releases/{version}/view/*":           "",
	"GET /help/addresses":                      "",
	"GET /help/downloads/{kind}":               "",
	"GET /compare":                             "",
	"GET /coincidence":                         "",
	"GET /compilation":                         "",
	"GET /map":                                 "",
	"GET /compare/saved":                       "",
	"GET /compare/saved/{id}":                  "",
	"POST /compare/saved":                      store.RoleContributor,
	"GET /ties":                                "",
	"GET /events":                              "",
	"GET /calibrations":                        "",
	"GET /changes":                             "",
	"GET /changes/{id}":                        "",
	"GET /dates/new":                           store.RoleContributor,
	"POST /dates/new":                          store.RoleContributor,
	"POST /provinces/{id}/pulses":              store.RoleContributor,
	"GET /dates/{id}/edit":                     store.RoleContributor,
	"POST /dates/{id}/edit":                    store.RoleContributor,
	"GET /import":                              store.RoleContributor,
	"POST /import":                             store.RoleContributor,
	"POST /import/{id}/commit":                 store.RoleContributor,
	"GET /import/{id}/map":                     store.RoleContributor,
	"POST /import/{id}/map":                    store.RoleContributor,
	"POST /dates/{id}/review":                  store.RoleCurator,
	"POST /dates/{id}/delete":                  store.RoleCurator,
	"POST /revisions/{id}/revert":              store.RoleCurator,
	"POST /changes/{id}/undo":                  store.RoleCurator,
	"POST /changes/{id}/accept":                store.RoleCurator,
	"GET /provinces/new":                       store.RoleContributor,
	"POST /provinces/new":                      store.RoleContributor,
	"GET /provinces/{id}/edit":                 store.RoleCurator,
	"POST /provinces/{id}/edit":                store.RoleCurator,
	"POST /provinces/{id}/delete":              store.RoleCurator,
	"GET /provinces/{id}/history":              "",
	"GET /units/new":                           store.RoleContributor,
	"POST /units/new":                          store.RoleContributor,
	"GET /units/{id}/edit":                     store.RoleCurator,
	"POST /units/{id}/edit":                    store.RoleCurator,
	"POST /units/{id}/delete":                  store.RoleCurator,
	"GET /units/{id}/history":                  "",
	"GET /sections/new":                        store.RoleContributor,
	"POST /sections/new":                       store.RoleContributor,
	"GET /sections/{id}/edit":                  store.RoleCurator,
	"POST /sections/{id}/edit":                 store.RoleCurator,
	"POST /sections/{id}/delete":               store.RoleCurator,
	"GET /sections/{id}/history":               "",
	"GET /events/{id}":                         "",
	"GET /sections/{id}/events/new":            store.RoleContributor,
	"POST /sections/{id}/events/new":           store.RoleContributor,
	"GET /events/{id}/edit":                    store.RoleContributor,
	"POST /events/{id}/edit":                   store.RoleContributor,
	"POST /events/{id}/review":                 store.RoleCurator,
	"POST /events/{id}/delete":                 store.RoleCurator,
	"GET /events/{id}/history":                 "",
	"GET /ties/{id}":                           "",
	"GET /sections/{id}/ties/new":              store.RoleContributor,
	"POST /sections/{id}/ties/new":             store.RoleContributor,
	"GET /ties/{id}/edit":                      store.RoleCurator,
	"POST /ties/{id}/edit":                     store.RoleCurator,
	"POST /ties/{id}/delete":                   store.RoleCurator,
	"POST /ties/{id}/review":                   store.RoleCurator,
	"GET /ties/{id}/history":                   "",
	"GET /hiatuses/{id}":                       "",
	"GET /sections/{id}/hiatuses/new":          store.RoleContributor,
	"POST /sections/{id}/hiatuses/new":         store.RoleContributor,
	"GET /hiatuses/{id}/edit":                  store.RoleCurator,
	"POST /hiatuses/{id}/edit":                 store.RoleCurator,
	"POST /hiatuses/{id}/delete":               store.RoleCurator,
	"POST /hiatuses/{id}/review":               store.RoleCurator,
	"GET /hiatuses/{id}/history":               "",
	"GET /account":                             store.RoleReader,
	"POST /account/tokens":                     store.RoleReader,
	"POST /account/tokens/{id}/revoke":         store.RoleReader,
	"GET /admin":                               store.RoleAdmin,
	"POST /admin/users":                        store.RoleAdmin,
	"POST /calibrations/target":                store.RoleAdmin,
	"GET /admin/users/{id}":                    store.RoleAdmin,
	"POST /admin/users/{id}":                   store.RoleAdmin,
	"POST /admin/settings":                     store.RoleAdmin,
	"POST /admin/backup":                       store.RoleAdmin,
	"GET /sections/{id}/figure.png":            "",
	"GET /sections/{id}/figure.pdf":            "",
	"GET /sections/aligned/figure.png":         "",
	"GET /sections/aligned/figure.pdf":         "",
	"POST /sections/{id}/events":               store.RoleContributor,
	"POST /sections/{id}/anomalies/{n}/event":  store.RoleCurator,
	"POST /sections/{id}/anomalies/{n}/reject": store.RoleCurator,
}

type route struct{ method, pattern string }

// routesOf lists every route of the server's chi router.
func routesOf(t testing.TB, srv *httptest.Server) []route {
	t.Helper()
	routes, ok := srv.Config.Handler.(chi.Routes)
	if !ok {
		t.Fatal("the handler is not a chi router")
	}
	var all []route
	chi.Walk(routes, func(method, pattern string, _ http.Handler, _ ...func(http.Handler) http.Handler) error {
		all = append(all, route{method, pattern})
		return nil
	})
	return all
}

// userID returns the id of the account named name.
func userID(t testing.TB, db *store.DB, name string) int64 {
	t.Helper()
	users, err := db.Users(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	for _, u := range users {
		if u.Name == name {
			return u.ID
		}
	}
	t.Fatalf("no account %s", name)
	return 0
}

// matrixPaths adds the records the routes of the matrix need and returns how a route's pattern becomes a
// path: contributors edit their own drafts, so the date and event edit routes get a pending date and a
// draft event added by demo-contributor.
func matrixPaths(t testing.TB, db *store.DB) func(pattern string) string {
	t.Helper()
	ctx := store.WithActor(context.Background(), userID(t, db, "demo-contributor"))
	d1, err := db.Date(ctx, 1)
	if err != nil {
		t.Fatal(err)
	}
	f := store.FormOfDate(d1)
	f["sample_code"] = "MATRIX-1"
	pending, err := db.CreateDate(ctx, f, false)
	if err != nil {
		t.Fatal(err)
	}
	draft, err := db.CreateEvent(ctx, 1, store.Form{"name": "draft", "kind": "other", "base_height_m": "1"}, false)
	if err != nil {
		t.Fatal(err)
	}
	// The demo has no hiatus: this one (record 1) gives the hiatus routes a record to show.
	if _, err := db.CreateHiatus(context.Background(), 1, store.Form{"height_m": "30", "min_duration_ma": "0.1"}, false); err != nil {
		t.Fatal(err)
	}
	return func(pattern string) string {
		id := "1"
		if pattern == "/dates/{id}/edit" {
			id = fmt.Sprint(pending.ID)
		}
		if pattern == "/events/{id}/edit" {
			id = fmt.Sprint(draft.ID)
		}
		return strings.NewReplacer("{id}", id, "{n}", "1", "{kind}", "dates", "{version}", "2027.1", "*", "style.css").Replace(pattern)
	}
}

// Every route × {anonymous, reader, contributor, curator, admin} → allowed or refused as routeRoles says.
func TestAuthorizationMatrix(t *testing.T) {
	srv, db := mustServer(t)
	pathOf := matrixPaths(t, db)
	clients := map[string]*http.Client{}
	for _, role := range append([]string{""}, store.Roles()...) {
		c := client(t)
		if role != "" {
			signIn(t, c, srv, "demo-"+role)
		}
		clients[role] = c
	}
	for _, rt := range routesOf(t, srv) {
		key := rt.method + " " + rt.pattern
		min, listed := routeRoles[key]
		if !listed {
			t.Errorf("route %s has no expected role in routeRoles: add it", key)
			continue
		}
		path := pathOf(rt.pattern)
		for role, c := range clients {
			var form url.Values
			if rt.method == http.MethodPost {
				form = url.Values{}
			}
			status, body, h := do(t, c, rt.method, srv.URL+path, form)
			if rt.pattern == "/logout" && role != "" {
				signIn(t, c, srv, "demo-"+role) // the matrix goes on with the same account
			}
			allowed := min == "" || (role != "" && store.RoleAtLeast(role, min))
			toLogin := status == http.StatusSeeOther && strings.HasPrefix(h.Get("Location"), "/login")
			switch {
			case status >= 500:
				t.Errorf("%s as %q: status %d: %.200s", key, role, status, body)
			case allowed && (status == http.StatusForbidden || status == http.StatusUnauthorized || (toLogin && rt.pattern != "/logout")):
				t.Errorf("%s as %q: refused (%d), want allowed", key, role, status)
			case !allowed && role == "" && rt.method == http.MethodGet && !toLogin:
				t.Errorf("%s anonymous: status %d, want a redirect to sign in", key, status)
			case !allowed && (role != "" || rt.method == http.MethodPost) && status != http.StatusForbidden:
				t.Errorf("%s as %q: status %d, want 403", key, role, status)
			}
		}
	}
}

// tokenRefusedReads are the pages an access token may not read whatever its role: the account (tokens)
// and the administration (accounts, settings, backups).
func tokenRefusedRead(pattern string) bool {
	return pattern == "/account" || strings.HasPrefix(pattern, "/account/") || pattern == "/admin" || strings.HasPrefix(pattern, "/admin/")
}

// Every route × a token of each role: a token reads what its role may read (GET), and nothing else — no
// POST anywhere (403 saying a token only reads), no account or administration page even for an admin's
// token. Before, an admin's token added accounts and changed settings, and a reader's made new tokens.
func TestAccessTokensOnlyRead(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	pathOf := matrixPaths(t, db)
	tokens := map[string]string{}
	for _, role := range store.Roles() {
		tok, err := db.CreateToken(ctx, userID(t, db, "demo-"+role), "script")
		if err != nil {
			t.Fatal(err)
		}
		tokens[role] = tok
	}
	send := func(method, path, token string, form url.Values) (int, string, http.Header) {
		var body io.Reader
		if form != nil {
			body = strings.NewReader(form.Encode())
		}
		req, _ := http.NewRequest(method, srv.URL+path, body)
		if form != nil {
			req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
		}
		req.Header.Set("Authorization", "Bearer "+token)
		res, err := client(t).Do(req)
		if err != nil {
			t.Fatal(err)
		}
		defer res.Body.Close()
		b, _ := io.ReadAll(res.Body)
		return res.StatusCode, string(b), res.Header
	}
	for _, rt := range routesOf(t, srv) {
		key := rt.method + " " + rt.pattern
		min, listed := routeRoles[key]
		if !listed {
			continue // TestAuthorizationMatrix names it
		}
		path := pathOf(rt.pattern)
		for role, tok := range tokens {
			var form url.Values
			if rt.method != http.MethodGet {
				form = url.Values{"name": {"from-a-token"}, "role": {"admin"}, "password": {"a-long-password"}, SettingRequireLogin: {"true"}, "version": {"1"}}
			}
			status, body, h := send(rt.method, path, tok, form)
			switch {
			case status >= 500:
				t.Errorf("%s with a %s's token: status %d: %.200s", key, role, status, body)
			case rt.method != http.MethodGet:
				if status != http.StatusForbidden || !strings.Contains(body, "only reads") {
					t.Errorf("%s with a %s's token: status %d %.200q, want 403 saying a token only reads", key, role, status, body)
				}
			case tokenRefusedRead(rt.pattern):
				if status != http.StatusForbidden || !strings.Contains(body, "cannot open account or administration pages") {
					t.Errorf("%s with a %s's token: status %d %.200q, want 403 (a token does not open account or administration pages)", key, role, status, body)
				}
			case min == "" || store.RoleAtLeast(role, min):
				if status == http.StatusForbidden || status == http.StatusUnauthorized || (status == http.StatusSeeOther && strings.HasPrefix(h.Get("Location"), "/login")) {
					t.Errorf("%s with a %s's token: refused (%d), want allowed", key, role, status)
				}
			default:
				if status != http.StatusForbidden {
					t.Errorf("%s with a %s's token: status %d, want 403 (the role may not)", key, role, status)
				}
			}
		}
	}
	// What the attacks of the issue did, checked by their effect: no account, no setting, no new token.
	users, _ := db.Users(ctx)
	if len(users) != 4 {
		t.Errorf("%d accounts after the tokens' requests, want the demo's 4", len(users))
	}
	if v, _ := db.Setting(ctx, SettingRequireLogin); v == "true" {
		t.Error("an admin's token made the compilation private")
	}
	toks, _ := db.Tokens(ctx, userID(t, db, "demo-reader"))
	if len(toks) != 1 {
		t.Errorf("the reader has %d tokens, want the 1 made here (a token made another)", len(toks))
	}
	// A signed-in session still makes tokens.
	c := client(t)
	signIn(t, c, srv, "demo-reader")
	if status, body, _ := do(t, c, http.MethodPost, srv.URL+"/account/tokens", url.Values{"name": {"by hand"}}); status != http.StatusOK || !strings.Contains(body, "coeval_") {
		t.Errorf("a signed-in reader making a token: status %d, want 200 with the token", status)
	}
}

func TestSignInDoesNotTellWhichPartWasWrongAndIsRateLimited(t *testing.T) {
	srv, _ := mustServer(t)
	// The session cookie is HttpOnly and SameSite=Lax.
	c0 := client(t)
	res, err := c0.PostForm(srv.URL+"/login", url.Values{"name": {"demo-reader"}, "password": {store.DemoPassword}})
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	if ck := res.Header.Get("Set-Cookie"); !strings.Contains(ck, "HttpOnly") || !strings.Contains(ck, "SameSite=Lax") {
		t.Errorf("session cookie %q: want HttpOnly and SameSite=Lax", ck)
	}
	c := client(t)
	_, unknown, _ := do(t, c, http.MethodPost, srv.URL+"/login", url.Values{"name": {"nobody"}, "password": {"whatever-long"}})
	status, wrongPw, _ := do(t, c, http.MethodPost, srv.URL+"/login", url.Values{"name": {"demo-admin"}, "password": {"not-the-password"}})
	if status != http.StatusUnprocessableEntity || !strings.Contains(unknown, "Wrong name or password.") || !strings.Contains(wrongPw, "Wrong name or password.") {
		t.Fatalf("unknown name and wrong password must read the same (status %d)", status)
	}
	for range 4 {
		do(t, c, http.MethodPost, srv.URL+"/login", url.Values{"name": {"demo-admin"}, "password": {"not-the-password"}})
	}
	status, body, _ := do(t, c, http.MethodPost, srv.URL+"/login", url.Values{"name": {"demo-admin"}, "password": {store.DemoPassword}})
	if status != http.StatusTooManyRequests || !strings.Contains(body, "Too many failed attempts") {
		t.Errorf("after 5 failures the right password: status %d, want 429", status)
	}
}

// A contributor's new date is pending; a curator accepts it; history shows both; a revert restores.
func TestContributeReviewHistoryRevert(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	contrib, curator := client(t), client(t)
	signIn(t, contrib, srv, "demo-contributor")
	signIn(t, curator, srv, "demo-curator")
	form := url.Values{"province": {"Hvarn Plateau Basalts (invented)"}, "unit": {"Haldruna Flow"}, "sample_code": {"NEW-1"},
		"method": {"upb_idtims"}, "material": {"zircon"}, "interpretation": {"eruption"}, "age_ma": {"155.35"},
		"sigma_ma": {"-0.05"}, "sigma_level": {"2"}, "review_state": {"accepted"}}
	status, body, _ := do(t, contrib, http.MethodPost, srv.URL+"/dates/new", form)
	if status != http.StatusUnprocessableEntity || !strings.Contains(body, "greater than 0") {
		t.Fatalf("a negative σ: status %d, want 422 with the field's message", status)
	}
	form.Set("sigma_ma", "0.05")
	status, _, h := do(t, contrib, http.MethodPost, srv.URL+"/dates/new", form)
	if status != http.StatusSeeOther {
		t.Fatalf("create: status %d", status)
	}
	var id int64
	fmt.Sscanf(h.Get("Location"), "/dates/%d", &id)
	d, err := db.Date(ctx, id)
	if err != nil {
		t.Fatal(err)
	}
	if d.ReviewState != "pending" {
		t.Errorf("a contributor's date is %q, want pending (the form's review state is for curators)", d.ReviewState)
	}
	status, _, _ = do(t, curator, http.MethodPost, fmt.Sprintf("%s/dates/%d/review", srv.URL, id), url.Values{"version": {fmt.Sprint(d.Version)}, "decision": {"accept"}})
	if status != http.StatusSeeOther {
		t.Fatalf("accept: status %d", status)
	}
	if d, _ = db.Date(ctx, id); d.ReviewState != "accepted" {
		t.Fatalf("after accept: %q", d.ReviewState)
	}
	// The contributor can no longer edit an accepted date; the curator can.
	status, _, _ = do(t, contrib, http.MethodGet, fmt.Sprintf("%s/dates/%d/edit", srv.URL, id), nil)
	if status != http.StatusForbidden {
		t.Errorf("contributor editing an accepted date: status %d, want 403", status)
	}
	edit := url.Values{}
	for k, v := range store.FormOfDate(d) {
		edit.Set(k, v)
	}
	edit.Set("version", fmt.Sprint(d.Version))
	edit.Set("age_ma", "155.30")
	if status, _, _ = do(t, curator, http.MethodPost, fmt.Sprintf("%s/dates/%d/edit", srv.URL, id), edit); status != http.StatusSeeOther {
		t.Fatalf("curator edit: status %d", status)
	}
	_, hist, _ := do(t, curator, http.MethodGet, fmt.Sprintf("%s/dates/%d/history", srv.URL, id), nil)
	for _, want := range []string{"demo-contributor", "demo-curator", "accept date", "edit date", "155.35", "155.3"} {
		if !strings.Contains(hist, want) {
			t.Errorf("history lacks %q", want)
		}
	}
	revs, _ := db.Revisions(ctx, "date", id)
	if status, _, _ = do(t, curator, http.MethodPost, fmt.Sprintf("%s/revisions/%d/revert", srv.URL, revs[0].ID), url.Values{}); status != http.StatusSeeOther {
		t.Fatalf("revert: status %d", status)
	}
	if d, _ = db.Date(ctx, id); d.AgeMa != 155.35 {
		t.Errorf("after revert the age is %v, want 155.35", d.AgeMa)
	}
}

// Two curators edit one date from the same version: one wins, the other sees the conflict page with both
// values; nothing is lost.
func TestConcurrentEditsThroughTheWeb(t *testing.T) {
	srv, db := mustServer(t)
	a, b := client(t), client(t)
	signIn(t, a, srv, "demo-curator")
	signIn(t, b, srv, "demo-admin")
	d, _ := db.Date(context.Background(), 2)
	mk := func(notes string) url.Values {
		v := url.Values{}
		for k, x := range store.FormOfDate(d) {
			v.Set(k, x)
		}
		v.Set("review_state", string(d.ReviewState))
		v.Set("version", fmt.Sprint(d.Version))
		v.Set("notes", notes)
		return v
	}
	s1, _, _ := do(t, a, http.MethodPost, srv.URL+"/dates/2/edit", mk("first"))
	s2, body, _ := do(t, b, http.MethodPost, srv.URL+"/dates/2/edit", mk("second"))
	if s1 != http.StatusSeeOther || s2 != http.StatusConflict {
		t.Fatalf("statuses %d, %d: want 303 then 409", s1, s2)
	}
	if !strings.Contains(body, "first") || !strings.Contains(body, "second") || !strings.Contains(body, "not saved") {
		t.Error("the conflict page does not show both values and say nothing was saved")
	}
	if got, _ := db.Date(context.Background(), 2); got.Notes != "first" {
		t.Errorf("stored notes %q, want the first edit's", got.Notes)
	}
}

// Every text field comes back escaped; filters with SQL in them are plain text.
func TestXSSIsEscapedAndSQLInFiltersIsHarmless(t *testing.T) {
	srv, db := mustServer(t)
	c := client(t)
	signIn(t, c, srv, "demo-curator")
	payload := `<script>alert("x")</script>`
	form := url.Values{"province": {payload}, "unit": {payload}, "sample_code": {payload}, "method": {"other"},
		"material": {payload}, "interpretation": {"eruption"}, "age_ma": {"100"}, "sigma_ma": {"1"}, "sigma_level": {"1"},
		"tracer": {payload}, "laboratory": {payload}, "citation": {payload}, "notes": {payload}, "review_state": {"accepted"},
		store.FormNewUnit: {"1"}}
	status, _, h := do(t, c, http.MethodPost, srv.URL+"/dates/new", form)
	if status != http.StatusSeeOther {
		t.Fatalf("create: %d", status)
	}
	var id int64
	fmt.Sscanf(h.Get("Location"), "/dates/%d", &id)
	for _, p := range []string{fmt.Sprintf("/dates/%d", id), "/dates", "/provinces", fmt.Sprintf("/dates/%d/history", id), "/changes"} {
		_, body, _ := do(t, c, http.MethodGet, srv.URL+p, nil)
		if strings.Contains(body, payload) {
			t.Errorf("%s: the payload came back unescaped", p)
		}
	}
	before, _ := db.Counts(context.Background())
	for _, q := range []string{"q=' OR 1=1 --", "material=x' OR '1'='1", "q=%", "q=_", "kind=' OR 1=1 --"} {
		k, v, _ := strings.Cut(q, "=")
		path := "/dates?format=json&" + url.Values{k: {v}}.Encode()
		if k == "kind" {
			path = "/changes?format=json&" + url.Values{k: {v}}.Encode()
		}
		status, body, _ := do(t, c, http.MethodGet, srv.URL+path, nil)
		var l struct{ Total int }
		json.Unmarshal([]byte(body), &l)
		if status != 200 || (l.Total != 0 && !strings.Contains(q, "%") && !strings.Contains(q, "_")) {
			t.Errorf("%s: status %d, total %d: want 200 and no match", q, status, l.Total)
		}
	}
	after, _ := db.Counts(context.Background())
	if before != after {
		t.Error("a filter changed the compilation")
	}
}

func TestTokensAndPrivateCompilation(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	admin := client(t)
	signIn(t, admin, srv, "demo-admin")
	reader, _ := db.Users(ctx)
	var rid int64
	for _, u := range reader {
		if u.Name == "demo-reader" {
			rid = u.ID
		}
	}
	token, err := db.CreateToken(ctx, rid, "script")
	if err != nil {
		t.Fatal(err)
	}
	if s, _, _ := do(t, admin, http.MethodPost, srv.URL+"/admin/settings", url.Values{SettingRequireLogin: {"true"}}); s != http.StatusSeeOther {
		t.Fatalf("settings: %d", s)
	}
	anon := client(t)
	if s, _, h := do(t, anon, http.MethodGet, srv.URL+"/dates", nil); s != http.StatusSeeOther || !strings.HasPrefix(h.Get("Location"), "/login") {
		t.Errorf("private compilation, anonymous page: %d, want a redirect to sign in", s)
	}
	if s, _, _ := do(t, anon, http.MethodGet, srv.URL+"/dates?format=json", nil); s != http.StatusUnauthorized {
		t.Errorf("private compilation, anonymous JSON: %d, want 401", s)
	}
	req, _ := http.NewRequest(http.MethodGet, srv.URL+"/dates?format=json", nil)
	req.Header.Set("Authorization", "Bearer "+token)
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	if res.StatusCode != 200 {
		t.Errorf("with a token: %d, want 200", res.StatusCode)
	}
	toks, _ := db.Tokens(ctx, rid)
	db.RevokeToken(ctx, rid, toks[0].ID)
	res, _ = http.DefaultClient.Do(req)
	res.Body.Close()
	if res.StatusCode != http.StatusUnauthorized {
		t.Errorf("with a revoked token: %d, want 401", res.StatusCode)
	}
	// The token is stored hashed: its text is nowhere in the database.
	var n int
	db.SQL().QueryRow(`SELECT count(*) FROM api_tokens WHERE token_hash = ?`, token).Scan(&n)
	if n != 0 {
		t.Error("the token is stored in clear")
	}
}

func upload(t testing.TB, c *http.Client, srv *httptest.Server, kind, name, body string) (int, string) {
	t.Helper()
	var buf bytes.Buffer
	mw := multipart.NewWriter(&buf)
	mw.WriteField("kind", kind)
	fw, _ := mw.CreateFormFile("file", name)
	fw.Write([]byte(body))
	mw.Close()
	req, _ := http.NewRequest(http.MethodPost, srv.URL+"/import", &buf)
	req.Header.Set("Content-Type", mw.FormDataContentType())
	res, err := c.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	b, _ := io.ReadAll(res.Body)
	return res.StatusCode, string(b)
}

// A failing upload imports nothing; a good one is previewed, committed as one change, and undone whole.
func TestUploadPreviewCommitUndo(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	contrib, curator := client(t), client(t)
	signIn(t, contrib, srv, "demo-contributor")
	signIn(t, curator, srv, "demo-curator")
	before, _ := db.Counts(ctx)
	bad := "province,unit,sample_code,method,interpretation,age_ma,sigma_ma,sigma_level\nP,U,X-1,upb_idtims,eruption,abc,0.1,2\nP,U,X-2,upb_idtims,eruption,150,0.1,7\n"
	status, body := upload(t, contrib, srv, "dates", "bad.csv", bad)
	if status != http.StatusUnprocessableEntity || !strings.Contains(body, "nothing can be imported") || !strings.Contains(body, "age_ma: want a number") || strings.Contains(body, "/commit") {
		t.Fatalf("bad upload: status %d; want 422 listing the problems and no commit button", status)
	}
	// The cells at fault are marked with their problem, and the page leads to uploading the corrected file.
	for _, cell := range []string{`<td class="bad-cell" title="want a number`, `<td class="bad-cell" title="`} {
		if !strings.Contains(body, cell) {
			t.Errorf("the preview does not mark the bad cell (%s)", cell)
		}
	}
	if n := strings.Count(body, `class="bad-cell"`); n != 2 {
		t.Errorf("%d cells marked, want the age of line 2 and the σ level of line 3", n)
	}
	if !strings.Contains(body, `href="/import?kind=dates">Upload the corrected file`) {
		t.Error("the preview of a refused file does not lead to uploading the corrected one")
	}
	if after, _ := db.Counts(ctx); after != before {
		t.Fatal("a failing upload changed the compilation")
	}
	good := "province,unit,sample_code,method,interpretation,age_ma,sigma_ma,sigma_level\nP,U,X-1,upb_idtims,eruption,150.1,0.1,2\nP,U,X-2,upb_idtims,eruption,150.2,0.1,2\n"
	status, body = upload(t, contrib, srv, "dates", "good.csv", good)
	m := regexp.MustCompile(`/import/(\d+)/commit`).FindStringSubmatch(body)
	if status != 200 || m == nil || !strings.Contains(body, "2 dates") {
		t.Fatalf("good upload: status %d, commit link %v", status, m)
	}
	status, _, h := do(t, contrib, http.MethodPost, srv.URL+"/import/"+m[1]+"/commit", url.Values{})
	if status != http.StatusSeeOther {
		t.Fatalf("commit: %d", status)
	}
	after, _ := db.Counts(ctx)
	if after.Dates != before.Dates+2 {
		t.Fatalf("after commit %d dates, want %d", after.Dates, before.Dates+2)
	}
	if s, _, _ := do(t, contrib, http.MethodPost, srv.URL+"/import/"+m[1]+"/commit", url.Values{}); s != http.StatusConflict {
		t.Errorf("committing twice: %d, want 409", s)
	}
	batch := strings.TrimPrefix(h.Get("Location"), "/changes/")
	// A contributor's rows arrive pending; the change's page counts them and offers the curator one accept.
	if p, _, _ := db.Dates(ctx, store.DateFilter{ReviewState: "pending", Text: "X-"}); len(p) != 2 {
		t.Fatalf("a contributor's uploaded dates: %d pending, want 2", len(p))
	}
	if _, body, _ := do(t, curator, http.MethodGet, srv.URL+"/changes/"+batch, nil); !strings.Contains(body, "Accept the 2 pending record(s)") {
		t.Fatalf("the change page does not offer to accept the 2 pending dates:\n%.2000s", body)
	}
	if s, _, _ := do(t, contrib, http.MethodPost, srv.URL+"/changes/"+batch+"/accept", url.Values{}); s != http.StatusForbidden {
		t.Errorf("a contributor accepting their own upload: %d, want 403", s)
	}
	if s, _, _ := do(t, curator, http.MethodPost, srv.URL+"/changes/"+batch+"/accept", url.Values{}); s != http.StatusSeeOther {
		t.Fatalf("accept: %d", s)
	}
	if p, _, _ := db.Dates(ctx, store.DateFilter{ReviewState: "accepted", Text: "X-"}); len(p) != 2 {
		t.Fatalf("after the curator's accept %d accepted, want 2", len(p))
	}
	// The import cannot be undone over the acceptance; the acceptance is undone first.
	if s, body, _ := do(t, curator, http.MethodPost, srv.URL+"/changes/"+batch+"/undo", url.Values{}); s != http.StatusConflict || !strings.Contains(body, "changed after change") {
		t.Fatalf("undo of the import over its acceptance: %d, want 409 naming the later change", s)
	}
	accepts, _, _ := db.Batches(ctx, store.BatchFilter{Kind: "accept change"})
	if len(accepts) != 1 {
		t.Fatalf("%d accept changes, want 1", len(accepts))
	}
	if s, _, _ := do(t, curator, http.MethodPost, fmt.Sprintf("%s/changes/%d/undo", srv.URL, accepts[0].ID), url.Values{}); s != http.StatusSeeOther {
		t.Fatalf("undo of the acceptance: %d", s)
	}
	if s, _, _ := do(t, curator, http.MethodPost, srv.URL+"/changes/"+batch+"/undo", url.Values{}); s != http.StatusSeeOther {
		t.Fatalf("undo: %d", s)
	}
	if final, _ := db.Counts(ctx); final != before {
		t.Errorf("after undo %+v, want %+v", final, before)
	}
}

// hostileNext are values of the sign-in page's next parameter that lead a browser to another site (or run
// a script) if sent back as they are. Browsers drop tabs and line breaks anywhere in a URL, trim leading
// and trailing control characters and spaces, and read a backslash as a slash (WHATWG URL Standard, basic
// URL parser; common practice in open-redirect testing).
var hostileNext = []string{
	"/\t/evil.example", "/\n/evil.example", "/\r\n/evil.example", "/\t\t/evil.example/x?y=1",
	"//evil.example", "///evil.example", "/\\evil.example", "\\/evil.example", "\\\\evil.example", "/\\/evil.example",
	"https://evil.example", "http:evil.example", "http:/evil.example", "javascript:alert(1)", "evil.example",
	" //evil.example", "\x00//evil.example", "/\x00/evil.example", "/\x7f/evil.example", "/\u0085/evil.example",
	"/\xff/evil.example", "//user@evil.example", "/%zz",
}

// sameSiteLocation reports why a Location sent to a browser on base leaves base's site ("" if it stays):
// it reads loc as a browser does (see hostileNext), then resolves it against base.
func sameSiteLocation(base *url.URL, loc string) string {
	browser := strings.TrimFunc(loc, func(r rune) bool { return r <= ' ' })
	browser = strings.Map(func(r rune) rune {
		switch r {
		case '\t', '\n', '\r':
			return -1
		case '\\':
			return '/'
		}
		return r
	}, browser)
	if !strings.HasPrefix(browser, "/") || strings.HasPrefix(browser, "//") {
		return "not a path of this site as a browser reads it: " + strconv.Quote(browser)
	}
	u, err := url.Parse(browser)
	if err != nil {
		return "not a URL: " + err.Error()
	}
	if to := base.ResolveReference(u); to.Scheme != base.Scheme || to.Host != base.Host {
		return "leads to " + to.Scheme + "://" + to.Host
	}
	return ""
}

// After signing in, next sends the browser back where it was — but only to a page of this site. Before,
// next=/%09/evil.example sent it to evil.example.
func TestSignInNextStaysOnThisSite(t *testing.T) {
	srv, _ := mustServer(t)
	base, _ := url.Parse(srv.URL)
	signInWith := func(next string) string {
		t.Helper()
		status, _, h := do(t, client(t), http.MethodPost, srv.URL+"/login",
			url.Values{"name": {"demo-reader"}, "password": {store.DemoPassword}, "next": {next}})
		if status != http.StatusSeeOther {
			t.Fatalf("sign in with next=%q: status %d, want 303", next, status)
		}
		return h.Get("Location")
	}
	for _, next := range hostileNext {
		if loc := signInWith(next); loc != "/" {
			t.Errorf("next=%q: Location %q, want / (the home page)", next, loc)
		}
	}
	for _, next := range []string{"/", "/dates?unit=3&sort=-age", "/provinces/1/summary", "/compare?include=all#pulses", "/dates/%2F%2Fx"} {
		loc := signInWith(next)
		if loc != next {
			t.Errorf("next=%q: Location %q, want it kept", next, loc)
		}
		if why := sameSiteLocation(base, loc); why != "" {
			t.Errorf("next=%q: Location %q %s", next, loc, why)
		}
	}
	// The sign-in form carries next only when it is safe.
	_, body, _ := do(t, client(t), http.MethodGet, srv.URL+"/login?next="+url.QueryEscape("/\t/evil.example"), nil)
	if strings.Contains(body, "evil.example") {
		t.Error("the sign-in form carries a next that leads to another site")
	}
}

// FuzzSignInNext signs in with arbitrary next values: the Location is always a path of this site as a
// browser reads it.
func FuzzSignInNext(f *testing.F) {
	for _, s := range hostileNext {
		f.Add(s)
	}
	for _, s := range []string{"/", "/dates?unit=3", "/%09/evil.example", "/./evil.example", "/..//evil.example", "/a/../../evil.example"} {
		f.Add(s)
	}
	db := mustDemoDB(f)
	h := NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS, WithSessionCleanup(0))
	base, _ := url.Parse("http://coeval.test")
	f.Fuzz(func(t *testing.T, next string) {
		form := url.Values{"name": {"demo-reader"}, "password": {store.DemoPassword}, "next": {next}}
		req := httptest.NewRequest(http.MethodPost, base.String()+"/login", strings.NewReader(form.Encode()))
		req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, req)
		if rec.Code != http.StatusSeeOther {
			t.Fatalf("next=%q: status %d, want 303", next, rec.Code)
		}
		if loc := rec.Header().Get("Location"); sameSiteLocation(base, loc) != "" {
			t.Fatalf("next=%q: Location %q %s", next, loc, sameSiteLocation(base, loc))
		}
	})
}

// A password longer than bcrypt's 72 bytes (golang.org/x/crypto/bcrypt: GenerateFromPassword refuses
// more) is refused on the form with the limit; before, the account form answered 500. The form states the
// limit before anyone tries.
func TestOverlongPasswordIsRefusedWithTheLimit(t *testing.T) {
	srv, db := mustServer(t)
	admin := client(t)
	signIn(t, admin, srv, "demo-admin")
	if _, body, _ := do(t, admin, http.MethodGet, srv.URL+"/admin", nil); !strings.Contains(body, "at most 72 bytes") {
		t.Error("the account form does not say the longest password")
	}
	for _, tc := range []struct {
		name, password string
		ok             bool
	}{
		{"exactly72", strings.Repeat("a", 72), true},
		{"ascii73", strings.Repeat("a", 73), false},
		{"accented36", strings.Repeat("é", 36), true},  // 36 characters, 72 bytes
		{"accented37", strings.Repeat("é", 37), false}, // 37 characters, 74 bytes
		{"long1000", strings.Repeat("long-password ", 1000), false},
	} {
		status, body, _ := do(t, admin, http.MethodPost, srv.URL+"/admin/users", url.Values{"name": {tc.name}, "role": {"reader"}, "password": {tc.password}})
		switch {
		case tc.ok && status != http.StatusSeeOther:
			t.Errorf("%s: status %d, want 303 (the account made)", tc.name, status)
		case !tc.ok && (status != http.StatusUnprocessableEntity || !strings.Contains(body, "password: want at most 72 bytes")):
			t.Errorf("%s: status %d, want 422 naming the password and its limit", tc.name, status)
		}
		if tc.ok {
			c := client(t)
			if s, _, _ := do(t, c, http.MethodPost, srv.URL+"/login", url.Values{"name": {tc.name}, "password": {tc.password}}); s != http.StatusSeeOther {
				t.Errorf("%s: signing in with the accepted password: status %d", tc.name, s)
			}
		}
	}
	users, _ := db.Users(context.Background())
	if len(users) != 4+2 {
		t.Errorf("%d accounts, want the demo's 4 and the 2 accepted", len(users))
	}
}

// A backup is a POST from the administration page (a link or image on another site cannot start one), and
// it holds neither sign-in sessions nor uploaded files waiting for their import. Before, a restored copy
// accepted the admin's cookie of the moment of the backup, and previews' bodies were in it.
func TestBackupIsAPostWithoutSessionsOrUploads(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	admin, contrib := client(t), client(t)
	signIn(t, admin, srv, "demo-admin")
	signIn(t, contrib, srv, "demo-contributor")
	base, _ := url.Parse(srv.URL)
	var cookie string
	for _, c := range admin.Jar.Cookies(base) {
		if c.Name == "coeval_session" {
			cookie = c.Value
		}
	}
	if cookie == "" {
		t.Fatal("no session cookie after signing in")
	}
	const marker = "PREVIEWONLY-7Q3"
	if status, _ := upload(t, contrib, srv, "dates", "p.csv", "province,unit,sample_code,method,interpretation,age_ma,sigma_ma,sigma_level\nP,U,"+marker+",upb_idtims,eruption,150.1,0.1,2\n"); status != http.StatusOK {
		t.Fatalf("preview: status %d", status)
	}
	var live []byte
	db.SQL().QueryRow(`SELECT body FROM uploads ORDER BY id DESC LIMIT 1`).Scan(&live)
	if !strings.Contains(string(live), marker) {
		t.Fatalf("the preview's body is not in the live database: %q", live)
	}

	if status, _, _ := do(t, admin, http.MethodGet, srv.URL+"/admin/backup", nil); status != http.StatusMethodNotAllowed {
		t.Errorf("GET of the backup: status %d, want 405", status)
	}
	req, _ := http.NewRequest(http.MethodPost, srv.URL+"/admin/backup", nil)
	req.Header.Set("Sec-Fetch-Site", "cross-site")
	if res, err := admin.Do(req); err != nil || res.StatusCode != http.StatusForbidden {
		t.Errorf("a backup asked from another site: %v %v, want 403", res.StatusCode, err)
	}
	if _, body, _ := do(t, admin, http.MethodGet, srv.URL+"/admin", nil); !strings.Contains(body, `action="/admin/backup"`) {
		t.Error("the administration page has no backup button")
	}
	status, snap, h := do(t, admin, http.MethodPost, srv.URL+"/admin/backup", url.Values{})
	if status != http.StatusOK || !strings.HasPrefix(snap, "SQLite format 3\x00") || !strings.Contains(h.Get("Content-Disposition"), "attachment") {
		t.Fatalf("backup: status %d, %d bytes, want 200 and an SQLite file", status, len(snap))
	}
	// Neither the cookie nor the preview's text is anywhere in the file's bytes (deleted pages included).
	for what, s := range map[string]string{"the admin's session token": cookie, "the preview's body": marker} {
		if strings.Contains(snap, s) {
			t.Errorf("the backup's bytes hold %s", what)
		}
	}
	path := filepath.Join(t.TempDir(), "restored.db")
	if err := os.WriteFile(path, []byte(snap), 0o600); err != nil {
		t.Fatal(err)
	}
	restored, err := store.Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { restored.Close() })
	var sessions, uploads int
	restored.SQL().QueryRow(`SELECT count(*) FROM sessions`).Scan(&sessions)
	restored.SQL().QueryRow(`SELECT count(*) FROM uploads`).Scan(&uploads)
	if sessions != 0 || uploads != 0 {
		t.Errorf("the backup holds %d sessions and %d uploads, want none", sessions, uploads)
	}
	if got, want := mustCounts(t, restored), mustCounts(t, db); got != want {
		t.Errorf("the backup holds %+v, want the live %+v", got, want)
	}
	// The restored copy, served: the old admin cookie is a stranger's; the admin signs in again.
	rsrv := httptest.NewServer(NewHandler(restored, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS, WithSessionCleanup(0)))
	t.Cleanup(rsrv.Close)
	req, _ = http.NewRequest(http.MethodGet, rsrv.URL+"/admin", nil)
	req.AddCookie(&http.Cookie{Name: "coeval_session", Value: cookie})
	res, err := client(t).Do(req)
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	if res.StatusCode != http.StatusSeeOther || !strings.HasPrefix(res.Header.Get("Location"), "/login") {
		t.Errorf("the restored copy with the old admin cookie: status %d, want a redirect to sign in", res.StatusCode)
	}
	signIn(t, client(t), rsrv, "demo-admin")
}

func mustCounts(t testing.TB, db *store.DB) store.Counts {
	t.Helper()
	c, err := db.Counts(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	return c
}

// A contributor edits only the drafts they added; another contributor's pending record (or one from the
// command line or the demo seeding) is for its author or a curator. Before, any contributor could rewrite
// any pending record. Every record kind a contributor may edit (routeRoles) has a case.
func TestContributorEditsOnlyTheirOwnDrafts(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	if _, err := db.CreateUser(ctx, "other-contributor", store.RoleContributor, store.DemoPassword); err != nil {
		t.Fatal(err)
	}
	author, other, curator := client(t), client(t), client(t)
	signIn(t, author, srv, "demo-contributor")
	signIn(t, other, srv, "other-contributor")
	signIn(t, curator, srv, "demo-curator")
	d1, _ := db.Date(ctx, 1)
	newDate := url.Values{}
	for k, v := range store.FormOfDate(d1) {
		newDate.Set(k, v)
	}
	newDate.Set("sample_code", "DRAFT-OWN-1")
	type kind struct {
		newPath string
		form    url.Values
		// edit gives the posted form of a change to the record, from its current state.
		edit func(id int64) url.Values
		// seeded is a pending record no account added.
		seeded func() int64
	}
	kinds := map[string]kind{
		"dates": {"/dates/new", newDate,
			func(id int64) url.Values {
				d, _ := db.Date(ctx, id)
				v := url.Values{"version": {fmt.Sprint(d.Version)}}
				for k, x := range store.FormOfDate(d) {
					v.Set(k, x)
				}
				v.Set("notes", "changed by "+fmt.Sprint(d.Version))
				return v
			},
			func() int64 {
				p, _, _ := db.Dates(ctx, store.DateFilter{ReviewState: "pending", Limit: 100})
				for _, d := range p {
					if d.SampleCode != "DRAFT-OWN-1" {
						return d.ID
					}
				}
				t.Fatal("the demo has no pending date")
				return 0
			}},
		"events": {"/sections/1/events/new", url.Values{"name": {"own draft"}, "kind": {"other"}, "base_height_m": {"2"}},
			func(id int64) url.Values {
				e, _ := db.Event(ctx, id)
				v := url.Values{"version": {fmt.Sprint(e.Version)}}
				for k, x := range store.FormOfEvent(e) {
					v.Set(k, x)
				}
				v.Set("notes", "changed by "+fmt.Sprint(e.Version))
				return v
			},
			func() int64 {
				e, err := db.CreateEvent(ctx, 1, store.Form{"name": "seeded draft", "kind": "other", "base_height_m": "3"}, false)
				if err != nil {
					t.Fatal(err)
				}
				return e.ID
			}},
	}
	for key, min := range routeRoles {
		method, pattern, _ := strings.Cut(key, " ")
		if method == http.MethodGet && strings.HasSuffix(pattern, "/{id}/edit") && min == store.RoleContributor {
			if _, ok := kinds[strings.Split(pattern, "/")[1]]; !ok {
				t.Errorf("contributors may edit %s: add its kind to this test", pattern)
			}
		}
	}
	for name, k := range kinds {
		t.Run(name, func(t *testing.T) {
			status, _, h := do(t, author, http.MethodPost, srv.URL+k.newPath, k.form)
			var id int64
			if _, err := fmt.Sscanf(h.Get("Location"), "/"+name+"/%d", &id); status != http.StatusSeeOther || err != nil {
				t.Fatalf("the author's new draft: status %d, Location %q", status, h.Get("Location"))
			}
			page := fmt.Sprintf("%s/%s/%d", srv.URL, name, id)
			if _, body, _ := do(t, other, http.MethodGet, page, nil); strings.Contains(body, "/edit\"") {
				t.Error("another contributor's page of the draft offers to edit it")
			}
			if status, body, _ := do(t, other, http.MethodGet, page+"/edit", nil); status != http.StatusForbidden || !strings.Contains(body, "only its author or a curator") {
				t.Errorf("another contributor opening the edit form: status %d, want 403 naming who may", status)
			}
			if status, _, _ := do(t, other, http.MethodPost, page+"/edit", k.edit(id)); status != http.StatusForbidden {
				t.Errorf("another contributor saving an edit: status %d, want 403", status)
			}
			if _, body, _ := do(t, author, http.MethodGet, page, nil); !strings.Contains(body, "/edit\"") {
				t.Error("the author's page of the draft does not offer to edit it")
			}
			for who, c := range map[string]*http.Client{"the author": author, "a curator": curator} {
				if status, _, _ := do(t, c, http.MethodGet, page+"/edit", nil); status != http.StatusOK {
					t.Errorf("%s opening the edit form: status %d, want 200", who, status)
				}
				if status, _, _ := do(t, c, http.MethodPost, page+"/edit", k.edit(id)); status != http.StatusSeeOther {
					t.Errorf("%s saving an edit: status %d, want 303", who, status)
				}
			}
			revs, _ := db.Revisions(ctx, strings.TrimSuffix(name, "s"), id)
			if len(revs) != 3 {
				t.Errorf("%d revisions of the draft, want 3 (added, the author's edit, the curator's)", len(revs))
			}
			seeded := fmt.Sprintf("%s/%s/%d/edit", srv.URL, name, k.seeded())
			if status, _, _ := do(t, author, http.MethodGet, seeded, nil); status != http.StatusForbidden {
				t.Errorf("a contributor opening a pending record no account added: status %d, want 403", status)
			}
		})
	}
}

// FuzzSafeNextRedirect is FuzzSignInNext without the sign-in (no password check, no session written), so
// it tries many more values a second: the redirect that safeNext's answer makes is always a path of this
// site as a browser reads it.
func FuzzSafeNextRedirect(f *testing.F) {
	for _, s := range hostileNext {
		f.Add(s)
	}
	f.Add("/dates?unit=3")
	base, _ := url.Parse("http://coeval.test")
	f.Fuzz(func(t *testing.T, next string) {
		rec := httptest.NewRecorder()
		http.Redirect(rec, httptest.NewRequest(http.MethodPost, "http://coeval.test/login", nil), safeNext(next), http.StatusSeeOther)
		if loc := rec.Header().Get("Location"); sameSiteLocation(base, loc) != "" {
			t.Fatalf("next=%q: Location %q %s", next, loc, sameSiteLocation(base, loc))
		}
	})
}

// The delays of failed sign-ins, on a clock the test moves: none for the first freeAttempts failures,
// then 1 s doubling with each failure up to 15 minutes (exponential backoff, common practice), counted per
// account and address only, cleared by a success and forgotten an hour after the last failure.
func TestSignInDelaysGrowPerAccountAndAddress(t *testing.T) {
	now := time.Date(2026, 1, 2, 3, 4, 5, 0, time.UTC)
	l := newLoginLimiter(func() time.Time { return now })
	a := loginKey("Demo-Admin", "192.0.2.1")
	want := []time.Duration{0, 0, time.Second, 2 * time.Second, 4 * time.Second, 8 * time.Second, 16 * time.Second,
		32 * time.Second, 64 * time.Second, 128 * time.Second, 256 * time.Second, 512 * time.Second, 15 * time.Minute, 15 * time.Minute}
	for i, w := range want {
		if got := l.wait(a); got != 0 {
			t.Fatalf("before attempt %d: wait %v, want 0 (the previous delay has passed)", i+1, got)
		}
		l.fail(a)
		if got := l.wait(a); got != w {
			t.Errorf("after %d failures: wait %v, want %v", i+1, got, w)
		}
		now = now.Add(w / 2)
		if got := l.wait(a); got != w-w/2 {
			t.Errorf("after %d failures and half the delay: wait %v, want %v", i+1, got, w-w/2)
		}
		now = now.Add(w - w/2)
	}
	if got := delayAfter(1 << 20); got != maxDelay {
		t.Errorf("after 2^20 failures: delay %v, want the largest, %v", got, maxDelay)
	}
	l.fail(a)
	for _, other := range []string{loginKey("demo-admin", "198.51.100.7"), loginKey("demo-reader", "192.0.2.1")} {
		if got := l.wait(other); got != 0 {
			t.Errorf("%q waits %v for another pair's failures, want 0", other, got)
		}
	}
	if got := l.wait(loginKey("DEMO-ADMIN", "192.0.2.1")); got != maxDelay {
		t.Errorf("the same account in other capitals: wait %v, want %v", got, maxDelay)
	}
	now = now.Add(forgetAfter)
	if got := l.wait(a); got != 0 {
		t.Errorf("an hour after the last failure: wait %v, want 0", got)
	}
	l.fail(a)
	if got := l.wait(a); got != 0 {
		t.Errorf("the first failure after being forgotten: wait %v, want 0 (counted from 1)", got)
	}
	l.fail(a)
	l.fail(a)
	l.reset(a)
	if got := l.wait(a); got != 0 {
		t.Errorf("after a successful sign-in: wait %v, want 0", got)
	}
}

// Failed sign-ins from one address do not stop the right password from another, nor another account from
// the same address; the address that failed is told how long to wait. Before, five failures from anywhere
// locked the account for everyone (429), and everyone behind one address shared one limit.
func TestFailuresFromOneAddressDoNotLockOthersOut(t *testing.T) {
	db := mustDemoDB(t)
	h := NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS, WithSessionCleanup(0))
	signInFrom := func(addr, name, password string) *httptest.ResponseRecorder {
		form := url.Values{"name": {name}, "password": {password}}
		req := httptest.NewRequest(http.MethodPost, "/login", strings.NewReader(form.Encode()))
		req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
		req.RemoteAddr = addr + ":40000"
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, req)
		return rec
	}
	refused := 0
	for range 30 {
		switch rec := signInFrom("192.0.2.1", "demo-admin", "a-wrong-guess"); rec.Code {
		case http.StatusUnprocessableEntity:
		case http.StatusTooManyRequests:
			refused++
		default:
			t.Fatalf("a wrong password: status %d", rec.Code)
		}
	}
	if refused == 0 {
		t.Error("30 quick wrong guesses from one address were never slowed down")
	}
	rec := signInFrom("192.0.2.1", "demo-admin", store.DemoPassword)
	if rec.Code != http.StatusTooManyRequests || rec.Header().Get("Retry-After") == "" || !strings.Contains(rec.Body.String(), "Too many failed attempts for this account from your address. Wait") {
		t.Errorf("the right password from the guessing address at once: status %d, Retry-After %q; want 429 saying how long to wait", rec.Code, rec.Header().Get("Retry-After"))
	}
	if rec := signInFrom("198.51.100.7", "demo-admin", store.DemoPassword); rec.Code != http.StatusSeeOther {
		t.Errorf("the right password from another address: status %d, want 303 (signed in)", rec.Code)
	}
	if rec := signInFrom("192.0.2.1", "demo-reader", store.DemoPassword); rec.Code != http.StatusSeeOther {
		t.Errorf("another account from the guessing address: status %d, want 303 (signed in)", rec.Code)
	}
}
