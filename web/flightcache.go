package web

import (
	"context"
	"errors"
	"sync"
)

// flightCache keeps computed results by key, at most max entries and (when weigh is set) at most
// maxWeight of their summed weight, dropping the oldest first (one entry heavier than maxWeight alone is
// kept until the next comes). Identical requests asked for while one is being computed wait for it (a
// "flight") instead of computing it again. The comparisons (comparecache.go), the section analyses
// (sectioncache.go) and the timelines (timelinecache.go) are kept in one each.
type flightCache[V any] struct {
	mu        sync.Mutex
	max       int
	maxWeight int
	weigh     func(V) int
	weight    int
	order     []string
	m         map[string]V
	flying    map[string]*flight[V]
}

// flight is a result being computed.
type flight[V any] struct {
	done chan struct{}
	res  V
	err  error
}

func newFlightCache[V any](max int, weigh func(V) int, maxWeight int) *flightCache[V] {
	return &flightCache[V]{max: max, weigh: weigh, maxWeight: maxWeight, m: map[string]V{}, flying: map[string]*flight[V]{}}
}

// do returns the result kept under key, or the one being computed under it, or computes it (and keeps it
// when it succeeds). found says it was not computed by this call. A waiting request whose computing
// request went away (its context ended) computes it itself; a waiting request that goes away returns its
// own context's error.
func (c *flightCache[V]) do(ctx context.Context, key string, compute func() (V, error)) (res V, found bool, err error) {
	for {
		if v, ok := c.get(key); ok {
			return v, true, nil
		}
		f, lead := c.join(key)
		if !lead {
			select {
			case <-f.done:
			case <-ctx.Done():
				return res, false, ctx.Err()
			}
			if f.err != nil && ctx.Err() == nil && (errors.Is(f.err, context.Canceled) || errors.Is(f.err, context.DeadlineExceeded)) {
				continue // its request went away; this one computes
			}
			return f.res, f.err == nil, f.err
		}
		func() {
			defer func() { c.land(key, f, res, err) }() // also when the computation panics
			res, err = compute()
		}()
		if err != nil {
			return res, false, err
		}
		c.put(key, res)
		return res, false, nil
	}
}

// join returns the flight computing key and whether the caller leads it (and must call land).
func (c *flightCache[V]) join(key string) (*flight[V], bool) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if f, ok := c.flying[key]; ok {
		return f, false
	}
	f := &flight[V]{done: make(chan struct{})}
	c.flying[key] = f
	return f, true
}

// land ends a flight with its result and lets the waiting requests go.
func (c *flightCache[V]) land(key string, f *flight[V], res V, err error) {
	c.mu.Lock()
	delete(c.flying, key)
	c.mu.Unlock()
	f.res, f.err = res, err
	close(f.done)
}

func (c *flightCache[V]) get(key string) (V, bool) {
	c.mu.Lock()
	defer c.mu.Unlock()
	v, ok := c.m[key]
	return v, ok
}

// put keeps v under key (a key already kept keeps its first value).
func (c *flightCache[V]) put(key string, v V) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if _, ok := c.m[key]; ok {
		return
	}
	c.m[key] = v
	c.order = append(c.order, key)
	c.weight += c.weightOf(v)
	for len(c.order) > 1 && (len(c.order) > c.max || (c.weigh != nil && c.weight > c.maxWeight)) {
		c.weight -= c.weightOf(c.m[c.order[0]])
		delete(c.m, c.order[0])
		c.order = c.order[1:]
	}
}

func (c *flightCache[V]) weightOf(v V) int {
	if c.weigh == nil {
		return 0
	}
	return c.weigh(v)
}
