package web

import (
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"

	"coeval/static"
)

// FuzzQueryParameters sends arbitrary query strings to the pages that read the most parameters: every
// answer is a page or a clear 400/404, never a 5xx, a panic, or internal error text.
func FuzzQueryParameters(f *testing.F) {
	for _, seed := range []string{
		"method=upb_idtims&sort=-age&per=5&page=2", "age_min=abc", "age_min=156&age_max=155", "sigma=3", "format=xml",
		"cal=renne11-fcs28294&level=tracer&policy=never&rule=gesd&include=all", "bw=user&h=0.05&adaptive=1&pdp=1&reps=100",
		"bw=user", "from=999999&to=-5", "toc_min=0&min_run=1&penalty=1e-300&model=linear&draws=100", "q=%27%20OR%201%3D1",
		"per=1000000", "page=-1", "seed=18446744073709551615", "h=NaN", "age_min=Inf", "%zz", "a=1&a=2&a=3",
	} {
		f.Add(seed)
	}
	db := mustDemoDB(f)
	h := NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS, WithSessionCleanup(0))
	// The pages whose parameters are cheap to exercise; the timeline, section and comparison pages have
	// their own parameter tests (their computations make a fuzzer crawl).
	paths := []string{"/dates", "/provinces/1", "/units/1", "/changes", "/dates/1", "/ties", "/timescale"}
	f.Fuzz(func(t *testing.T, query string) {
		for _, p := range paths {
			req := httptest.NewRequest(http.MethodGet, "/", nil)
			req.URL.Path, req.URL.RawQuery = p, query
			rec := httptest.NewRecorder()
			h.ServeHTTP(rec, req)
			body := rec.Body.String()
			if rec.Code >= 500 {
				t.Fatalf("%s?%s: status %d: %.300s", p, query, rec.Code, body)
			}
			if strings.Contains(body, "goroutine ") || strings.Contains(body, "runtime error") {
				t.Fatalf("%s?%s: internal text in the answer", p, query)
			}
		}
	})
}
