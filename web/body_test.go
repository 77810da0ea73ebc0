package web

import (
	"bytes"
	"fmt"
	"io"
	"io/fs"
	"log/slog"
	"mime"
	"mime/multipart"
	"net/http"
	"net/http/httptest"
	"net/url"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/go-chi/chi/v5"

	"coeval/static"
	"coeval/store"
)

// multipartBody is a form with one file part of size bytes (and a kind field), as a browser sends it.
func multipartBody(t testing.TB, kind, name string, size int) ([]byte, string) {
	t.Helper()
	var buf bytes.Buffer
	mw := multipart.NewWriter(&buf)
	mw.WriteField("kind", kind)
	fw, err := mw.CreateFormFile("file", name)
	if err != nil {
		t.Fatal(err)
	}
	fw.Write(bytes.Repeat([]byte("x"), size))
	mw.Close()
	return buf.Bytes(), mw.FormDataContentType()
}

// filesUnder lists every file below dir (the temporary directory a test points TMPDIR at).
func filesUnder(t testing.TB, dir string) []string {
	t.Helper()
	var out []string
	filepath.WalkDir(dir, func(path string, d fs.DirEntry, err error) error {
		if err == nil && !d.IsDir() {
			out = append(out, path)
		}
		return nil
	})
	return out
}

// privateTemp points the process's temporary directory (where multipart parsing spills file parts) at
// an empty directory of the test's own, and returns it.
func privateTemp(t *testing.T) string {
	t.Helper()
	dir := t.TempDir()
	t.Setenv("TMPDIR", dir)
	if os.TempDir() != dir {
		t.Fatalf("os.TempDir() is %s, not the test's %s", os.TempDir(), dir)
	}
	return dir
}

// unsized hides a body's length, so the client sends it chunked (no Content-Length to refuse it by).
type unsized struct{ io.Reader }

func send(t testing.TB, c *http.Client, method, u, contentType string, body io.Reader) (int, string) {
	t.Helper()
	req, err := http.NewRequest(method, u, body)
	if err != nil {
		t.Fatal(err)
	}
	req.Header.Set("Content-Type", contentType)
	res, err := c.Do(req)
	if err != nil {
		t.Fatalf("%s %s: %v", method, u, err)
	}
	defer res.Body.Close()
	b, _ := io.ReadAll(res.Body)
	return res.StatusCode, string(b)
}

// Issue 14, High 1: a 50 MB multipart body to the sign-in page (GET or POST) was parsed with no limit and
// spilled to temporary files that were never removed (3 GB left in 14 s). Now a body over the limit is
// answered 413 and a multipart body on a page that takes no file 415, both unread, and nothing is left in
// the temporary directory.
func TestLargeBodyToSignInIsRefusedAndLeavesNoFile(t *testing.T) {
	srv, _ := mustServer(t)
	tmp := privateTemp(t)
	big, ct := multipartBody(t, "dates", "big.csv", 50<<20)
	form := "name=demo-reader&password=" + strings.Repeat("x", 2<<20)
	for _, c := range []struct {
		name, method, ct string
		body             func() io.Reader
		want             int
	}{
		{"GET, multipart 50 MB", http.MethodGet, ct, func() io.Reader { return bytes.NewReader(big) }, http.StatusRequestEntityTooLarge},
		{"POST, multipart 50 MB", http.MethodPost, ct, func() io.Reader { return bytes.NewReader(big) }, http.StatusRequestEntityTooLarge},
		{"GET, multipart 50 MB chunked", http.MethodGet, ct, func() io.Reader { return unsized{bytes.NewReader(big)} }, http.StatusUnsupportedMediaType},
		{"POST, multipart 50 MB chunked", http.MethodPost, ct, func() io.Reader { return unsized{bytes.NewReader(big)} }, http.StatusUnsupportedMediaType},
		{"POST, small multipart", http.MethodPost, ct, func() io.Reader { return bytes.NewReader(big[:300]) }, http.StatusUnsupportedMediaType},
		{"POST, 2 MB form", http.MethodPost, "application/x-www-form-urlencoded", func() io.Reader { return strings.NewReader(form) }, http.StatusRequestEntityTooLarge},
		{"POST, 2 MB form chunked", http.MethodPost, "application/x-www-form-urlencoded", func() io.Reader { return unsized{strings.NewReader(form)} }, http.StatusRequestEntityTooLarge},
	} {
		status, body := send(t, client(t), c.method, srv.URL+"/login", c.ct, c.body())
		if status != c.want {
			t.Errorf("%s: status %d, want %d", c.name, status, c.want)
		}
		if !strings.Contains(body, "nothing was kept") {
			t.Errorf("%s: the answer does not say what happened: %.300s", c.name, body)
		}
		if left := filesUnder(t, tmp); len(left) > 0 {
			t.Fatalf("%s: files left in the temporary directory: %v", c.name, left)
		}
	}
}

// Every route that takes no file refuses a multipart body (415) before reading it; the upload route
// takes it.
func TestOnlyUploadRoutesTakeMultipart(t *testing.T) {
	srv, _ := mustServer(t)
	routes := srv.Config.Handler.(chi.Routes)
	body, ct := multipartBody(t, "dates", "small.csv", 100)
	n := 0
	chi.Walk(routes, func(method, pattern string, _ http.Handler, _ ...func(http.Handler) http.Handler) error {
		path := strings.NewReplacer("{id}", "1", "{n}", "1", "*", "style.css").Replace(pattern)
		status, _ := send(t, client(t), method, srv.URL+path, ct, bytes.NewReader(body))
		want := http.StatusUnsupportedMediaType
		if isUploadRoute(method + " " + pattern) {
			want = http.StatusForbidden // anonymous: refused by role, after the body was accepted
			n++
		}
		if status != want {
			t.Errorf("%s %s with a multipart body: status %d, want %d", method, pattern, status, want)
		}
		return nil
	})
	if n == 0 {
		t.Error("no upload route found")
	}
}

// Every upload over the in-memory threshold (32 MiB) left its temporary file behind; over the upload
// limit the answer is 413 with the form again.
func TestUploadOverMemoryThresholdLeavesNoFile(t *testing.T) {
	srv, _ := mustServer(t)
	c := client(t)
	signIn(t, c, srv, "demo-contributor")
	tmp := privateTemp(t)
	// A kind that does not exist: the file is parsed (and spilled to disk) and then refused.
	body, ct := multipartBody(t, "nonsense", "big.csv", uploadMemoryBytes+8<<20)
	status, page := send(t, c, http.MethodPost, srv.URL+"/import", ct, bytes.NewReader(body))
	if status != http.StatusUnprocessableEntity || !strings.Contains(page, "Choose what the file holds") {
		t.Errorf("40 MB upload of an unknown kind: status %d, want 422 asking for the kind: %.300s", status, page)
	}
	if left := filesUnder(t, tmp); len(left) > 0 {
		t.Fatalf("files left in the temporary directory after an upload: %v", left)
	}
	body, ct = multipartBody(t, "dates", "huge.csv", maxUploadBytes+2<<20)
	for name, r := range map[string]io.Reader{"sized": bytes.NewReader(body), "chunked": unsized{bytes.NewReader(body)}} {
		status, page = send(t, c, http.MethodPost, srv.URL+"/import", ct, r)
		if status != http.StatusRequestEntityTooLarge || !strings.Contains(page, "larger than 64 MiB") {
			t.Errorf("66 MB upload, %s: status %d, want 413 naming the 64 MiB limit: %.300s", name, status, page)
		}
		if left := filesUnder(t, tmp); len(left) > 0 {
			t.Fatalf("66 MB upload, %s: files left in the temporary directory: %v", name, left)
		}
	}
}

// Issue 14, Medium 5: files checked and not imported count against the account's quota; the upload over
// it is refused on the form with the sizes and the quota named.
func TestUploadOverQuotaIsRefusedOnTheForm(t *testing.T) {
	srv, db := mustServer(t)
	db.SetUploadQuota(3 << 19) // 1.5 MiB
	c := client(t)
	signIn(t, c, srv, "demo-contributor")
	body, ct := multipartBody(t, "dates", "dates.csv", 1<<20)
	if status, page := send(t, c, http.MethodPost, srv.URL+"/import", ct, bytes.NewReader(body)); status != http.StatusUnprocessableEntity || !strings.Contains(page, "nothing can be imported") {
		t.Fatalf("first upload: status %d, want 422 listing its problems: %.300s", status, page)
	}
	status, page := send(t, c, http.MethodPost, srv.URL+"/import", ct, bytes.NewReader(body))
	if want := "with this one (1.0 MiB) they would pass the 1.5 MiB one account may keep waiting"; status != http.StatusUnprocessableEntity || !strings.Contains(page, want) {
		t.Errorf("second upload: status %d, want 422 saying %q: %.300s", status, want, page)
	}
}

// repeated reads head, then chunk n times, then tail, without holding the whole body.
func repeated(head, chunk []byte, n int, tail []byte) io.Reader {
	rs := []io.Reader{bytes.NewReader(head)}
	if len(chunk) > 0 && n > 0 {
		rs = append(rs, io.LimitReader(&cycle{b: chunk}, int64(len(chunk))*int64(n)))
	}
	return io.MultiReader(append(rs, bytes.NewReader(tail))...)
}

type cycle struct {
	b []byte
	i int
}

func (c *cycle) Read(p []byte) (int, error) {
	n := 0
	for n < len(p) {
		k := copy(p[n:], c.b[c.i:])
		n += k
		c.i = (c.i + k) % len(c.b)
	}
	return n, nil
}

// FuzzRequestBodies sends arbitrary bodies (head + chunk × repeat + tail, up to a few MiB over the upload
// limit), with arbitrary content types, declared or chunked, to the sign-in page, the upload route and
// a few forms, as a signed-in contributor. Every answer is below 500 and says nothing internal; a body
// declared over its route's limit is answered 413, a multipart body on a route that takes no file 413
// or 415; and no file is ever left in the temporary directory.
func FuzzRequestBodies(f *testing.F) {
	const boundary = "XyZ"
	ct := "multipart/form-data; boundary=" + boundary
	filePart := func(kind, name string) []byte {
		return []byte("--" + boundary + "\r\nContent-Disposition: form-data; name=\"kind\"\r\n\r\n" + kind + "\r\n--" + boundary +
			"\r\nContent-Disposition: form-data; name=\"file\"; filename=\"" + name + "\"\r\nContent-Type: text/csv\r\n\r\n")
	}
	end := []byte("\r\n--" + boundary + "--\r\n")
	form := "application/x-www-form-urlencoded"
	for _, s := range []struct {
		route       uint8
		contentType string
		head, chunk []byte
		repeat      uint32
		tail        []byte
		sized       bool
	}{
		{0, form, []byte("name=demo-reader&password=wrong"), nil, 0, nil, true},
		{0, form, []byte("name=demo-reader&password="), []byte("x"), 2 << 20, nil, false},
		{0, ct, filePart("dates", "a.csv"), []byte("x"), 100, end, true},
		{1, ct, filePart("dates", "a.csv"), []byte("x"), 100, end, false},
		{2, ct, filePart("sections", "s.csv"), []byte("section\nS\n"), 1, end, true},
		{2, ct, filePart("dates", "d.xlsx"), []byte("PK\x03\x04"), 10, end, true},
		{2, ct, filePart("nonsense", "big.csv"), []byte("0123456789abcdef"), (uploadMemoryBytes + 1<<20) / 16, end, true},
		{2, ct, filePart("dates", "big.csv"), []byte("0123456789abcdef"), 1 << 10, nil, false},
		{2, form, []byte("kind=dates"), nil, 0, nil, true},
		{2, "multipart/form-data", []byte("--"), nil, 0, nil, true},
		{3, form, []byte("province=P&unit=U"), []byte("&x=1"), 1000, nil, true},
		{4, "text/plain", []byte("hello"), nil, 0, nil, true},
	} {
		f.Add(s.route, s.contentType, s.head, s.chunk, s.repeat, s.tail, s.sized)
	}
	tmp := f.TempDir()
	db := mustDemoDB(f)
	f.Setenv("TMPDIR", tmp)
	h := NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS, WithSessionCleanup(0))
	rec := httptest.NewRecorder()
	login := httptest.NewRequest(http.MethodPost, "/login", strings.NewReader("name=demo-contributor&password="+url.QueryEscape(store.DemoPassword)))
	login.Header.Set("Content-Type", form)
	h.ServeHTTP(rec, login)
	cookies := rec.Result().Cookies()
	if rec.Code != http.StatusSeeOther || len(cookies) == 0 {
		f.Fatalf("sign in: status %d", rec.Code)
	}
	routes := []struct{ method, path string }{
		{http.MethodPost, "/login"}, {http.MethodGet, "/login"}, {http.MethodPost, "/import"},
		{http.MethodPost, "/dates/new"}, {http.MethodPost, "/compare/saved"},
	}
	f.Fuzz(func(t *testing.T, route uint8, contentType string, head, chunk []byte, repeat uint32, tail []byte, sized bool) {
		rt := routes[int(route)%len(routes)]
		upload := isUploadRoute(rt.method + " " + rt.path)
		limit := int64(maxFormBytes)
		if upload {
			limit = maxUploadBodyBytes
		}
		n := int64(len(chunk)) * int64(repeat)
		if n > limit+4<<20 { // a little over the largest limit is enough
			repeat = uint32((limit + 4<<20) / int64(len(chunk)))
			n = int64(len(chunk)) * int64(repeat)
		}
		size := int64(len(head)) + n + int64(len(tail))
		req := httptest.NewRequest(rt.method, rt.path, repeated(head, chunk, int(repeat), tail))
		req.ContentLength = -1
		if sized {
			req.ContentLength = size
		}
		req.Header.Set("Content-Type", contentType)
		for _, c := range cookies {
			req.AddCookie(c)
		}
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, req)
		body := rec.Body.String()
		what := fmt.Sprintf("%s %s (%q, %d bytes, sized %v)", rt.method, rt.path, contentType, size, sized)
		if rec.Code >= 500 {
			t.Fatalf("%s: status %d: %.300s", what, rec.Code, body)
		}
		if strings.Contains(body, "goroutine ") || strings.Contains(body, "runtime error") {
			t.Fatalf("%s: internal text in the answer", what)
		}
		if sized && size > limit && rec.Code != http.StatusRequestEntityTooLarge {
			t.Fatalf("%s: over the %d-byte limit, status %d, want 413", what, limit, rec.Code)
		}
		if mt, _, _ := mime.ParseMediaType(contentType); mt == "multipart/form-data" && !upload &&
			rec.Code != http.StatusUnsupportedMediaType && rec.Code != http.StatusRequestEntityTooLarge {
			t.Fatalf("%s: a multipart body where no file is taken: status %d, want 415 or 413", what, rec.Code)
		}
		if left := filesUnder(t, tmp); len(left) > 0 {
			for _, p := range left {
				os.Remove(p)
			}
			t.Fatalf("%s: files left in the temporary directory: %v", what, left)
		}
	})
}
