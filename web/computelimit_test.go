package web

import (
	"context"
	"errors"
	"net/http"
	"net/http/httptest"
	"strings"
	"sync/atomic"
	"testing"
)

// Without an account the comparison's numbers of draws and replicates stay at their defaults: larger
// ones get a 400 that names each number, its limit, and says to sign in or lower it. Signed in, they are
// computed.
func TestLargestComparisonNeedsSignIn(t *testing.T) {
	srv, _ := mustServer(t)
	status, _, body := get(t, srv, "/compare?n=100000&draws=20000&reps=10000")
	if status != http.StatusBadRequest {
		t.Fatalf("anonymous comparison at the largest numbers: status %d, want 400", status)
	}
	for _, want := range []string{"n: 100000 joint draws need signing in", "draws: 20000 age-model draws need signing in",
		"reps: 10000 bootstrap replicates need signing in", "Sign in", "lower"} {
		if !strings.Contains(body, want) {
			t.Errorf("the refusal does not say %q", want)
		}
	}
	c := client(t)
	signIn(t, c, srv, "demo-reader")
	if status, body, _ := do(t, c, http.MethodGet, srv.URL+"/compare?n=12000&reps=200&draws=300&sens=0", nil); status != http.StatusOK {
		t.Errorf("a signed-in reader's comparison above the default draws: status %d: %.300s", status, body)
	}
}

// countingCtx is a request context whose Err reports cancellation from its k-th call on (k 0: never),
// and counts the calls: each is a point where the computation asks whether to go on.
type countingCtx struct {
	context.Context
	calls atomic.Int64
	k     int64
}

func (c *countingCtx) Err() error {
	if n := c.calls.Add(1); c.k > 0 && n >= c.k {
		return context.Canceled
	}
	return nil
}

// A request abandoned in the middle of its comparison stops: the computation returns context.Canceled
// at the next point where it asks (between sections, alternatives and sets, before every bootstrap
// replicate) instead of computing to the end. The uncancelled run counts the points; the abandoned one,
// cancelled halfway, may pass only the few that workers running at that moment reach.
func TestAbandonedComparisonStops(t *testing.T) {
	db := mustDemoDB(t)
	const path = "/compare?n=2000&reps=200&draws=300"
	run := func(k int64) (int64, error) {
		c := &comparer{Server: &Server{store: db}, cache: newCompareCache(4)}
		ctx := &countingCtx{Context: context.Background(), k: k}
		_, _, err := c.comparison(httptest.NewRequest(http.MethodGet, path, nil).WithContext(ctx))
		return ctx.calls.Load(), err
	}
	total, err := run(0)
	if err != nil {
		t.Fatal(err)
	}
	if total < 100 {
		t.Fatalf("the whole comparison asked %d times whether to go on; want at least once per bootstrap replicate", total)
	}
	half := total / 2
	calls, err := run(half)
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("a comparison cancelled halfway returned %v, want context.Canceled", err)
	}
	// After the cancellation only workers already running may ask once more each: the alternatives'
	// goroutines and their bootstrap workers (common practice: a generous bound, far below the half left).
	if extra := calls - half; extra > 64 || extra > total/4 {
		t.Errorf("after cancellation the comparison went on through %d more steps of %d left", extra, total-half)
	}
	t.Logf("%d steps in the whole comparison; cancelled at %d, stopped after %d", total, half, calls)
}
