package web

import (
	"archive/zip"
	"bytes"
	"encoding/json"
	"fmt"
	"html"
	"io"
	"maps"
	"math/rand/v2"
	"mime/multipart"
	"net/http"
	"net/url"
	"regexp"
	"slices"
	"strings"
	"testing"

	"github.com/go-chi/chi/v5"
)

// internalMarkers are pieces of text that only internal errors carry: Go's runtime and formatting,
// the SQLite driver, database/sql, strconv, encoding/json and the workbook reader with its zip and XML
// layers. None may reach a user, whatever the user sent.
var internalMarkers = []string{"goroutine", "panic", "runtime error", ".go:", "sql:", "SQLITE", "sqlite", "constraint failed",
	"no such table", "no such column", "database is locked", "strconv.", "invalid syntax", "value out of range", "%!", "<nil>",
	"json:", "excelize", "zip:", "xml:", "unexpected EOF", "context canceled", "deadline exceeded", "0xc0"}

// userMessage is the text an answer shows a user about what went wrong: the alert of an error page or a
// form, the errors beside form fields, a JSON error with its problems, or a short plain-text answer.
func userMessage(contentType, body string) string {
	if strings.HasPrefix(contentType, "application/json") {
		var e struct {
			Error    string   `json:"error"`
			Problems []string `json:"problems"`
		}
		if json.Unmarshal([]byte(body), &e) != nil {
			return ""
		}
		return strings.TrimSpace(e.Error + " " + strings.Join(e.Problems, " "))
	}
	if !strings.HasPrefix(contentType, "text/html") {
		return strings.TrimSpace(body)
	}
	var parts []string
	for _, re := range messageBlocks {
		for _, m := range re.FindAllStringSubmatch(body, -1) {
			parts = append(parts, strings.TrimSpace(html.UnescapeString(tags.ReplaceAllString(m[1], " "))))
		}
	}
	return strings.Join(strings.Fields(strings.Join(parts, " ")), " ")
}

var (
	messageBlocks = []*regexp.Regexp{
		regexp.MustCompile(`(?s)<div class="error" role="alert">(.*?)</div>`),
		regexp.MustCompile(`(?s)<p class="error" role="alert">(.*?)</p>`),
		regexp.MustCompile(`(?s)<span class="field-error">(.*?)</span>`),
		regexp.MustCompile(`<p class="intro">(\d+ problem\(s\) found[^<]*)</p>`), // an upload's check
	}
	tags = regexp.MustCompile(`<[^>]*>`)
)

// errorCheck sends requests and checks every answer of status ≥ 400: no 5xx, a message of a few words
// saying what is wrong, and no internal text. It counts what it sent.
type errorCheck struct {
	t        *testing.T
	base     string
	c        *http.Client
	requests int
	errors   int
}

// check sends one request and returns the status and body; what names it in failures.
func (ec *errorCheck) check(what string, req *http.Request) (int, string) {
	ec.t.Helper()
	res, err := ec.c.Do(req)
	if err != nil {
		ec.t.Fatalf("%s: %v", what, err)
	}
	b, _ := io.ReadAll(res.Body)
	res.Body.Close()
	ec.requests++
	body := string(b)
	if res.StatusCode < 400 {
		return res.StatusCode, body
	}
	ec.errors++
	if res.StatusCode >= 500 {
		ec.t.Errorf("%s: status %d, want a user error: %.300s", what, res.StatusCode, userMessage(res.Header.Get("Content-Type"), body))
	}
	msg := userMessage(res.Header.Get("Content-Type"), body)
	if len(strings.Fields(msg)) < 3 {
		ec.t.Errorf("%s: status %d without a message saying what is wrong (%q): %.300s", what, res.StatusCode, msg, body)
	}
	// The markers are looked for in the whole answer, not only in the message.
	for _, m := range internalMarkers {
		if strings.Contains(body, m) {
			i := strings.Index(body, m)
			ec.t.Errorf("%s: status %d shows internal text %q: …%s…", what, res.StatusCode, m, body[max(0, i-150):min(len(body), i+150)])
		}
	}
	return res.StatusCode, body
}

func (ec *errorCheck) get(what, path string) (int, string) {
	ec.t.Helper()
	req, _ := http.NewRequest(http.MethodGet, ec.base+path, nil)
	return ec.check(what, req)
}

func (ec *errorCheck) post(what, path string, form url.Values) (int, string) {
	ec.t.Helper()
	req, _ := http.NewRequest(http.MethodPost, ec.base+path, strings.NewReader(form.Encode()))
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	return ec.check(what, req)
}

// badValues are tried for every query parameter a route reads: not a number, not finite, out of any
// range, overflowing, and a fraction where a whole number is wanted.
var badValues = []string{"abc", "-1", "0", "1.5", "1e308", "1e-300", "NaN", "-Inf", "99999999999999999999"}

// paramNames are every query parameter a page of coeval reads (grep newParams' readers in web).
var paramNames = []string{"format", "sigma", "per", "page", "sort", "dir", "q", "method", "material", "province", "unit", "section",
	"kind", "review", "age_min", "age_max", "cal", "level", "policy", "rule", "include", "count", "weight", "bw", "h", "adaptive",
	"pdp", "from", "to", "seed", "reps", "table", "pulses", "events", "sections", "group", "anomalies", "delta", "n", "model",
	"draws", "toc_min", "sens", "order", "saved", "host", "baseline", "bg_base", "bg_top", "bg_width", "z_min", "min_run", "penalty",
	"tie_level", "series", "user", "rank", "bw_each", "rows", "units", "point", "mswd_range", "after", "before", "release", "against", "null", "ages", "onsets"}

// needs gives the other parameters under which a parameter is read at all.
var needs = map[string]string{"h": "bw=user", "bg_base": "baseline=window&bg_top=100", "bg_top": "baseline=window&bg_base=0",
	"bg_width": "baseline=running"}

// cheap are settings that keep the computing pages quick; a tried parameter replaces its own.
const cheap = "n=1000&sens=0&draws=100&reps=100"

// Every error a user can cause — a bad query parameter on any page, a malformed or unknown record
// number, a bad form, a file that is empty, binary or not a workbook — is answered with a message that
// says what to fix, never a 5xx and never internal text.
func TestEveryUserErrorSaysWhatToFix(t *testing.T) {
	srv, _ := mustServer(t)
	admin := client(t)
	signIn(t, admin, srv, "demo-admin")
	ec := &errorCheck{t: t, base: srv.URL, c: admin}

	routes := srv.Config.Handler.(chi.Routes)
	type route struct{ method, pattern string }
	var all []route
	chi.Walk(routes, func(method, pattern string, _ http.Handler, _ ...func(http.Handler) http.Handler) error {
		all = append(all, route{method, pattern})
		return nil
	})
	withIDs := func(pattern, id string) string {
		return strings.NewReplacer("{id}", id, "{n}", "1", "*", "style.css").Replace(pattern)
	}

	t.Run("query parameters of every page", func(t *testing.T) {
		ec.t = t
		for _, rt := range all {
			if rt.method != http.MethodGet || rt.pattern == "/static/*" {
				continue
			}
			path := withIDs(rt.pattern, "1")
			// Which parameters the page reads: all of them bad at once; the 400 names each one it read.
			// A page may stop at its first problem, so the named ones are taken out and it is asked again.
			var read []string
			left := slices.Clone(paramNames)
			for range 5 {
				q := url.Values{}
				for _, n := range left {
					q.Set(n, "abc")
				}
				status, body := ec.get(path+" with every parameter bad", path+"?"+q.Encode())
				if status != http.StatusBadRequest {
					break
				}
				var named []string
				for _, n := range left {
					if strings.Contains(body, n+":") || strings.Contains(body, n+", ") {
						named = append(named, n)
					}
				}
				if len(named) == 0 {
					break
				}
				read = append(read, named...)
				left = slices.DeleteFunc(left, func(n string) bool { return slices.Contains(named, n) })
			}
			// Parameters read only under another setting (h with bw=user).
			for _, n := range slices.Sorted(maps.Keys(needs)) {
				status, body := ec.get(path+" with "+n+" bad", path+"?"+needs[n]+"&"+n+"=abc")
				if status == http.StatusBadRequest && strings.Contains(body, n+":") && !slices.Contains(read, n) {
					read = append(read, n)
				}
			}
			if strings.HasSuffix(path, ".png") || strings.HasSuffix(path, ".pdf") {
				read = nil // the parameters of the .svg figure, tried there; a PNG takes long to draw
			}
			for _, n := range read {
				for _, v := range badValues {
					q, _ := url.ParseQuery(cheap)
					if extra, ok := needs[n]; ok {
						e, _ := url.ParseQuery(extra)
						for k := range e {
							q.Set(k, e.Get(k))
						}
					}
					q.Set(n, v)
					what := fmt.Sprintf("%s?%s=%q", path, n, v)
					status, body := ec.get(what, path+"?"+q.Encode())
					if status == http.StatusBadRequest && !strings.Contains(body, n) {
						t.Errorf("%s: a 400 that does not name the parameter", what)
					}
				}
			}
		}
	})

	t.Run("combinations and JSON", func(t *testing.T) {
		ec.t = t
		for _, p := range []string{
			"/dates?age_min=156&age_max=155", "/dates?age_min=abc&format=json", "/dates?page=999999", "/dates?per=1000&page=9999999",
			"/dates?q=%27%20OR%201%3D1--", "/dates?q=%25", "/dates?q=%00", "/dates?sort=-nope", "/dates?format=xlsx",
			"/provinces/1/timeline?bw=user", "/provinces/1/timeline?bw=user&h=0", "/provinces/1/timeline?bw=user&h=1e-300&reps=100",
			"/provinces/1/timeline?bw=user&h=1e300&reps=100", "/provinces/1/timeline?from=160&to=160&reps=100",
			"/provinces/1/timeline?from=1000&to=2000&reps=100", "/provinces/1/timeline?from=-5&to=-1&reps=100",
			"/provinces/1/timeline?format=csv&table=nope", "/provinces/1/timeline?format=json&seed=abc",
			"/provinces/1/timeline?count=date&weight=volume&reps=100", "/provinces/1/timeline?adaptive=1&bw=user&h=1e-9&reps=100",
			"/compare?province=99999", "/compare?sections=99999", "/compare?events=99999", "/compare?pulses=P99&" + cheap,
			"/compare?order=ZZZ&" + cheap, "/compare?delta=0&" + cheap, "/compare?toc_min=100&" + cheap,
			"/compare?from=1000&to=2000&" + cheap, "/compare?format=json&seed=abc", "/compare?format=svg&from=1&to=2&" + cheap,
			"/compare?group=nope&group=", "/compare?sections=1,abc,,2", "/compare/saved?format=json&x=1", "/compare/saved/abc",
			"/sections/1?baseline=window", "/sections/1?baseline=window&bg_base=10&bg_top=5", "/sections/1?baseline=running&bg_width=4",
			"/sections/1?baseline=window&bg_base=1000&bg_top=2000&draws=100", "/sections/1?toc_min=100&draws=100",
			"/sections/1/anomalies?format=csv&z_min=abc", "/sections/aligned?sections=99999", "/sections/aligned?series=nope",
			"/sections/1/figure.svg?draws=abc", "/units/1/summary?format=json&cal=nope", "/provinces/1/summary?level=abc&format=json",
			"/changes?batch=abc", "/changes?user=99999&kind=nope", "/changes/abc", "/changes/99999",
			"/no/such/page", "/dates/1/nothing",
		} {
			ec.get(p, p)
		}
	})

	t.Run("record numbers", func(t *testing.T) {
		ec.t = t
		for _, rt := range all {
			if !strings.Contains(rt.pattern, "{id}") && !strings.Contains(rt.pattern, "{n}") {
				continue
			}
			for _, id := range []string{"abc", "0", "-1", "99999999", "99999999999999999999", "1.5", "1e3"} {
				path := strings.NewReplacer("{id}", id, "{n}", id).Replace(rt.pattern)
				what := rt.method + " " + path
				var status int
				if rt.method == http.MethodGet {
					status, _ = ec.get(what, path)
				} else {
					status, _ = ec.post(what, path, url.Values{"version": {"1"}, "name": {"x"}})
				}
				if status < 400 {
					t.Errorf("%s: status %d, want an error", what, status)
				}
			}
		}
	})

	t.Run("bad forms", func(t *testing.T) {
		ec.t = t
		garbage := url.Values{}
		for _, f := range []string{"version", "name", "kind", "province", "unit", "sample_code", "method", "material", "interpretation",
			"age_ma", "sigma_ma", "sigma_level", "sigma_x_ma", "sigma_y_ma", "sigma_z_ma", "review_state", "decision", "note", "notes",
			"height_m", "base_height_m", "top_height_m", "label", "date_id", "section", "volume_km3", "sigma_volume_km3", "rank",
			"toc_threshold_wt_pct", "role", "password", "query", "series", "settings", "reason", "key", "value", "require_login",
			"target", "sigma_height_m", "distribution", "lat", "lon", "file"} {
			garbage.Set(f, "abc")
		}
		huge := url.Values{}
		for k := range garbage {
			huge.Set(k, strings.Repeat("x", 70_000))
		}
		for _, rt := range all {
			if rt.method != http.MethodPost || rt.pattern == "/logout" || rt.pattern == "/login" {
				continue
			}
			path := withIDs(rt.pattern, "1")
			for name, form := range map[string]url.Values{"an empty form": {}, "words for every field": garbage, "70 kB in every field": huge,
				"negative numbers": {"version": {"-1"}, "age_ma": {"-1"}, "sigma_ma": {"-1"}, "height_m": {"-1e308"}, "name": {" "}}} {
				ec.post(fmt.Sprintf("POST %s with %s", path, name), path, form)
			}
		}
		// The form the comparison page posts, with settings that cannot be used.
		ec.post("save a comparison with bad settings", "/compare/saved", url.Values{"name": {"x"}, "query": {"seed=abc&n=5"}})
		ec.post("save a comparison with a broken query", "/compare/saved", url.Values{"name": {"x"}, "query": {"%zz"}})
		ec.post("save a comparison without a name", "/compare/saved", url.Values{"query": {"seed=1"}})
		ec.post("save pulses with bad settings", "/provinces/1/pulses?reps=abc&bw=nope", url.Values{})
		ec.post("save pulses of no province", "/provinces/99999/pulses?reps=100", url.Values{})
		ec.post("save pulses when none is found", "/provinces/1/pulses?from=1000&to=2000&reps=100", url.Values{})
		// A same-site form from another page of the site is fine; a cross-site one is refused in words.
		req, _ := http.NewRequest(http.MethodPost, srv.URL+"/dates/new", strings.NewReader("x=1"))
		req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
		req.Header.Set("Sec-Fetch-Site", "cross-site")
		if status, _ := ec.check("a cross-site POST", req); status != http.StatusForbidden {
			t.Errorf("a cross-site POST: status %d, want 403", status)
		}
		for _, m := range []string{http.MethodPost, http.MethodPut, http.MethodDelete} {
			req, _ := http.NewRequest(m, srv.URL+"/dates", nil)
			ec.check(m+" /dates", req)
		}
		// Signing in wrongly, last: it counts towards the limit of failed attempts.
		anon := &errorCheck{t: t, base: srv.URL, c: client(t)}
		anon.post("sign in with nothing", "/login", url.Values{})
		anon.post("sign in with a wrong password", "/login", url.Values{"name": {"demo-admin"}, "password": {"abc"}})
		anon.post("sign in with a NUL", "/login", url.Values{"name": {"\x00"}, "password": {"\x00"}})
		ec.requests += anon.requests
		ec.errors += anon.errors
	})

	t.Run("uploads", func(t *testing.T) {
		ec.t = t
		rng := rand.New(rand.NewPCG(7, 7))
		binary := make([]byte, 4096)
		for i := range binary {
			binary[i] = byte(rng.UintN(256))
		}
		var notBook bytes.Buffer
		zw := zip.NewWriter(&notBook)
		f, _ := zw.Create("hello.txt")
		f.Write([]byte("not a workbook"))
		zw.Close()
		var badSheet bytes.Buffer
		zw = zip.NewWriter(&badSheet)
		for _, name := range []string{"[Content_Types].xml", "xl/workbook.xml", "xl/worksheets/sheet1.xml", "xl/_rels/workbook.xml.rels"} {
			f, _ := zw.Create(name)
			f.Write([]byte("<x><y>unclosed"))
		}
		zw.Close()
		files := map[string][]byte{"empty": {}, "binary": binary, "garbage": []byte("hello\x00world\n\"unclosed,quote\n,,,\n"),
			"a zip that is not a workbook": notBook.Bytes(), "a workbook of broken XML": badSheet.Bytes(),
			"a header only": []byte("sample_code,age_ma\n"), "UTF-16": {0xff, 0xfe, 'a', 0, ',', 0, 'b', 0}}
		for name, body := range files {
			for _, ext := range []string{".csv", ".xlsx", ".txt"} {
				for _, kind := range []string{"dates", "measurements", "nope", ""} {
					var buf bytes.Buffer
					mw := multipart.NewWriter(&buf)
					mw.WriteField("kind", kind)
					mw.WriteField("section", map[bool]string{true: "Skarfell Creek"}[kind == "measurements"])
					fw, _ := mw.CreateFormFile("file", "upload"+ext)
					fw.Write(body)
					mw.Close()
					req, _ := http.NewRequest(http.MethodPost, srv.URL+"/import", &buf)
					req.Header.Set("Content-Type", mw.FormDataContentType())
					status, _ := ec.check(fmt.Sprintf("upload of %s as %s (%q)", name, ext, kind), req)
					if status < 400 {
						t.Errorf("upload of %s as %s (%q): status %d, want it refused", name, ext, kind, status)
					}
				}
			}
		}
		req, _ := http.NewRequest(http.MethodPost, srv.URL+"/import", strings.NewReader("--x\r\nbroken"))
		req.Header.Set("Content-Type", "multipart/form-data; boundary=x")
		ec.check("a broken multipart body", req)
		req, _ = http.NewRequest(http.MethodPost, srv.URL+"/import", strings.NewReader("kind=dates"))
		req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
		ec.check("an upload without a file", req)
	})
	ec.t = t
	t.Logf("%d requests, %d answered with an error status, every one with a message and no internal text", ec.requests, ec.errors)
}
