package web

import (
	"net/http"
	"regexp"
	"runtime"
	"strconv"
	"time"
)

// Pages that compute (the comparison, the compilation view, timelines, section models, the coincidence test, an event's
// answer and the list of events with theirs) share a bounded number of slots, so that many readers asking at once queue for the machine's
// cores instead of piling up memory. A request that would wait longer than heavyWait, or find the queue
// full, is told plainly that the server is busy and when to come back (503 with Retry-After), and
// nothing is lost: reading it again later gives the page.

// heavyPath matches the addresses that compute.
var heavyPath = regexp.MustCompile(`^/(compare|coincidence|compilation|sections/aligned|sections/\d+(/(anomalies|agemodel|ratios|figure\.(svg|png|pdf)))?|provinces/\d+/timeline(\.(svg|png|pdf))?|events(/\d+)?)$`)

const (
	heavyWait       = 20 * time.Second // the longest a computing page waits for a slot
	heavyRetryAfter = 10               // seconds, said to a client told to come back
)

// heavyLimit holds the slots and the queue of computing pages.
type heavyLimit struct {
	slots chan struct{}
	queue chan struct{}
	wait  time.Duration
}

func newHeavyLimit(slots, queue int, wait time.Duration) *heavyLimit {
	return &heavyLimit{slots: make(chan struct{}, slots), queue: make(chan struct{}, queue), wait: wait}
}

// defaultHeavyLimit: two computations per core, and up to eight per core waiting.
func defaultHeavyLimit() *heavyLimit {
	n := runtime.GOMAXPROCS(0)
	return newHeavyLimit(2*n, 8*n, heavyWait)
}

// limit lets a computing GET through when a slot is free, waits for one within the limit's wait, and
// answers 503 with Retry-After otherwise.
func (s *Server) limitHeavy(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		if s.heavy == nil || r.Method != http.MethodGet || !heavyPath.MatchString(r.URL.Path) || r.Context().Value(internalKey{}) != nil {
			next.ServeHTTP(w, r)
			return
		}
		busy := func() {
			w.Header().Set("Retry-After", strconv.Itoa(heavyRetryAfter))
			s.handle(func(http.ResponseWriter, *http.Request) error { return serverBusy{} })(w, r)
		}
		select {
		case s.heavy.queue <- struct{}{}:
		default:
			busy()
			return
		}
		defer func() { <-s.heavy.queue }()
		t := time.NewTimer(s.heavy.wait)
		defer t.Stop()
		select {
		case s.heavy.slots <- struct{}{}:
		case <-t.C:
			busy()
			return
		case <-r.Context().Done():
			return // the client left while waiting
		}
		defer func() { <-s.heavy.slots }()
		next.ServeHTTP(w, r)
	})
}

// internalKey marks a request a page makes of the site itself (internalJSON): it runs in the slot of
// the page that asked, so it never waits for another.
type internalKey struct{}

// serverBusy is the answer to a computing page when every slot is taken for too long (503).
type serverBusy struct{}

func (serverBusy) Error() string { return "busy" }
