package web

import (
	"context"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"
	"time"
)

// Computing pages share bounded slots: while the one slot is taken, a second computing page waits and,
// past the wait, is told the server is busy (503, Retry-After, a plain message); with the queue full it
// is told at once; pages that do not compute, and a page's own requests of the site, pass; a slot freed
// lets the next one in.
func TestComputingPagesQueueAndSayBusy(t *testing.T) {
	db := mustDemoDB(t)
	s := &Server{store: db, log: slog.New(slog.NewTextHandler(io.Discard, nil))}
	release := make(chan struct{})
	entered := make(chan struct{}, 4)
	h := s.limitHeavy(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		if r.URL.Path == "/compare" {
			entered <- struct{}{}
			<-release
		}
		w.WriteHeader(http.StatusOK)
	}))
	serve := func(path string, ctx context.Context) *httptest.ResponseRecorder {
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, path, nil).WithContext(ctx))
		return rec
	}
	for _, c := range []struct {
		name  string
		queue int
	}{{"wait runs out", 2}, {"queue full", 1}} {
		t.Run(c.name, func(t *testing.T) {
			s.heavy = newHeavyLimit(1, c.queue, 50*time.Millisecond)
			release = make(chan struct{})
			first := make(chan int)
			go func() { first <- serve("/compare", context.Background()).Code }()
			<-entered
			start := time.Now()
			rec := serve("/compare", context.Background())
			waited := time.Since(start)
			if rec.Code != http.StatusServiceUnavailable || rec.Header().Get("Retry-After") != "10" || !strings.Contains(rec.Body.String(), "Busy") {
				t.Errorf("second computing page: status %d, Retry-After %q", rec.Code, rec.Header().Get("Retry-After"))
			}
			if c.queue == 1 && waited > 40*time.Millisecond {
				t.Errorf("with the queue full it waited %v before saying so", waited)
			}
			if rec := serve("/dates", context.Background()); rec.Code != http.StatusOK {
				t.Errorf("a page that does not compute waited for a slot: %d", rec.Code)
			}
			inner := context.WithValue(context.Background(), internalKey{}, true)
			if rec := serve("/provinces/1/timeline", inner); rec.Code != http.StatusOK {
				t.Errorf("a page's own request of the site waited for a slot: %d", rec.Code)
			}
			close(release)
			if code := <-first; code != http.StatusOK {
				t.Errorf("the first page: %d", code)
			}
			if rec := serve("/provinces/1/timeline", context.Background()); rec.Code != http.StatusOK {
				t.Errorf("after the slot was freed: %d", rec.Code)
			}
		})
	}
	for _, p := range []string{"/compare", "/coincidence", "/compilation", "/sections/aligned", "/sections/3", "/sections/3/agemodel", "/sections/3/figure.svg",
		"/provinces/2/timeline", "/provinces/2/timeline.png", "/events/8"} {
		if !heavyPath.MatchString(p) {
			t.Errorf("%s is not counted as computing", p)
		}
	}
	for _, p := range []string{"/compare/saved", "/sections", "/sections/3/edit", "/provinces/2", "/events/8/edit", "/dates", "/events"} {
		if heavyPath.MatchString(p) {
			t.Errorf("%s is counted as computing", p)
		}
	}
}

// The list of events takes a computing slot itself, and only when it answers each event (few events, the
// page): with every slot taken it waits and says the server is busy; its downloads, which answer
// nothing, pass.
func TestEventListTakesASlotOnlyWhenItAnswers(t *testing.T) {
	db := mustDemoDB(t)
	evs, err := db.Events(context.Background(), 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(evs) > maxListedAnswers {
		t.Skipf("the demo holds %d events, more than the list answers", len(evs))
	}
	s := &Server{store: db, log: slog.New(slog.NewTextHandler(io.Discard, nil)), heavy: newHeavyLimit(1, 2, 50*time.Millisecond)}
	s.heavy.slots <- struct{}{} // every slot taken
	h := s.handle(s.handleEventList)
	serve := func(path string) *httptest.ResponseRecorder {
		rec := httptest.NewRecorder()
		h(rec, httptest.NewRequest(http.MethodGet, path, nil))
		return rec
	}
	if rec := serve("/events"); rec.Code != http.StatusServiceUnavailable || rec.Header().Get("Retry-After") != "10" {
		t.Errorf("the answered list with every slot taken: status %d, Retry-After %q", rec.Code, rec.Header().Get("Retry-After"))
	}
	for _, p := range []string{"/events?format=csv", "/events?format=json"} {
		if rec := serve(p); rec.Code != http.StatusOK {
			t.Errorf("%s with every slot taken: status %d", p, rec.Code)
		}
	}
	if n := len(s.heavy.queue); n != 0 {
		t.Errorf("%d places of the queue still held", n)
	}
}
