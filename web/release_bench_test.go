package web

import (
	"context"
	"fmt"
	"net/http"
	"net/http/httptest"
	"testing"

	"coeval/store"
)

// BenchmarkReleaseAtScale measures, on the invented compilation of 100,000 dates (newScaleDB): cutting a
// release (the snapshot, leaving out the pending dates, counts, checksum), and the same pages today and as
// of the release. Target (releases issue): a cut < 5 s; a page as of a release within 2× of today's.
// go test ./web -run '^$' -bench BenchmarkReleaseAtScale -benchtime 3x
func BenchmarkReleaseAtScale(b *testing.B) {
	s := newScaleDB(b, scaleDates)
	ctx := context.Background()
	n := 0
	b.Run("cut", func(b *testing.B) {
		for b.Loop() {
			n++
			if _, err := s.db.CutRelease(ctx, store.ReleaseForm{Version: fmt.Sprintf("b%d", n), Title: "bench"}, 0); err != nil {
				b.Fatal(err)
			}
		}
	})
	h := s.handler()
	for _, path := range []string{"/dates", "/dates?sort=sample&per=200", "/provinces/7", "/changes"} {
		for _, prefix := range []string{"", "/releases/b1/view"} {
			name := "today" + path
			if prefix != "" {
				name = "release" + path
			}
			b.Run(name, func(b *testing.B) {
				for b.Loop() {
					rec := httptest.NewRecorder()
					h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, prefix+path, nil))
					if rec.Code != http.StatusOK {
						b.Fatalf("%s: status %d", prefix+path, rec.Code)
					}
				}
			})
		}
	}
}
