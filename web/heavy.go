package web

import (
	"net/http"
	"regexp"
	"runtime"
	"strconv"
	"sync"
	"sync/atomic"
	"time"
)

// Pages that compute (the comparison, the compilation view, timelines, section models, the coincidence test, an event's
// answer and the list of events with theirs — the list takes its slot itself, takeSlot, only when it answers) share a bounded number of slots, so that many readers asking at once queue for the machine's
// cores instead of piling up memory. A request that would wait longer than heavyWait, or find the queue
// full, is told plainly that the server is busy and when to come back (503 with Retry-After), and
// nothing is lost: reading it again later gives the page.

// heavyPath matches the addresses that compute.
var heavyPath = regexp.MustCompile(`^/(compare|coincidence|compilation|sections/aligned|sections/\d+(/(anomalies|agemodel|ratios|figure\.(svg|png|pdf)))?|provinces/\d+/timeline(\.(svg|png|pdf))?|events/\d+)$`)

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
		release, ok := s.takeSlot(w, r)
		if !ok {
			return
		}
		defer release()
		next.ServeHTTP(w, r)
	})
}

// takeSlot waits for a computing slot as limitHeavy does, for a page that computes only in some of its
// forms (the list of events, which answers each event only when they are few). When none comes it has
// answered the request (503 with Retry-After, or nothing to a client that left) and returns false;
// otherwise release gives the slot back. A page's own request of the site (internalJSON), or a server
// without slots, takes none.
func (s *Server) takeSlot(w http.ResponseWriter, r *http.Request) (release func(), ok bool) {
	if s.heavy == nil || r.Context().Value(internalKey{}) != nil {
		return func() {}, true
	}
	busy := func() {
		w.Header().Set("Retry-After", strconv.Itoa(heavyRetryAfter))
		s.handle(func(http.ResponseWriter, *http.Request) error { return serverBusy{} })(w, r)
	}
	select {
	case s.heavy.queue <- struct{}{}:
	default:
		busy()
		return nil, false
	}
	t := time.NewTimer(s.heavy.wait)
	defer t.Stop()
	select {
	case s.heavy.slots <- struct{}{}:
	case <-t.C:
		<-s.heavy.queue
		busy()
		return nil, false
	case <-r.Context().Done():
		<-s.heavy.queue
		return nil, false // the client left while waiting
	}
	return func() { <-s.heavy.slots; <-s.heavy.queue }, true
}

// internalKey marks a request a page makes of the site itself (internalJSON): it runs in the slot of
// the page that asked, so it never waits for another.
type internalKey struct{}

// serverBusy is the answer to a computing page when every slot is taken for too long (503).
type serverBusy struct{}

func (serverBusy) Error() string { return "busy" }

// tryTake takes a free slot without waiting (false when every slot is taken); give it back with give.
func (h *heavyLimit) tryTake() bool {
	select {
	case h.slots <- struct{}{}:
		return true
	default:
		return false
	}
}

func (h *heavyLimit) give() { <-h.slots }

// inSlots runs job(0) … job(n-1): in the caller's goroutine (the slot of the page that asks) and, at
// the same time, in as many more goroutines as computing slots are free now, each taken without waiting
// and given back when its goroutine has nothing more to do — so a page with many things to compute uses
// idle cores and never more than the slots allow. With no limit (a server made without one), up to
// one goroutine per core. No job starts once stop returns true (stop may be nil); the jobs started
// finish before inSlots returns. done[i] says job i ran.
func (s *Server) inSlots(n int, stop func() bool, job func(i int)) (done []bool) {
	done = make([]bool, n)
	var next atomic.Int64
	work := func() {
		for {
			if stop != nil && stop() {
				return
			}
			i := int(next.Add(1) - 1)
			if i >= n {
				return
			}
			job(i)
			done[i] = true
		}
	}
	var wg sync.WaitGroup
	for extra := 0; extra < n-1; extra++ {
		if s.heavy != nil {
			if !s.heavy.tryTake() {
				break
			}
		} else if extra >= runtime.GOMAXPROCS(0)-1 {
			break
		}
		wg.Add(1)
		go func() {
			defer wg.Done()
			if s.heavy != nil {
				defer s.heavy.give()
			}
			work()
		}()
	}
	work()
	wg.Wait()
	return done
}
