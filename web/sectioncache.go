package web

import (
	"context"
	"encoding/json"
	"errors"
	"sync"

	"coeval/web/analysis"
)

// Section analyses (change points, age models) are cached as comparisons are (comparecache.go): keyed by
// the section's options and a digest of exactly the data the analysis reads (analysis.SectionInputs.Digest:
// its samples, ties and their linked dates, events, hiatuses, the section record and the calibrations),
// so an edit to one section recomputes that section alone, and an edit elsewhere in the compilation
// recomputes nothing. Identical analyses asked for meanwhile wait for the one being computed.
//
// A cached analysis keeps its age model's summaries, not its draws (stats.AgeModel.AgesMa is dropped: at
// 10,000 samples and 2,000 draws it holds 160 MB): the section pages, figures and downloads show only
// the summaries. Code that needs the draws analyses the section itself (as the comparison does).

// Bounds of the section cache: entries, and sample rows held over all entries.
const (
	sectionCacheEntries = 256
	sectionCacheRows    = 200_000
)

type sectionCache struct {
	mu      sync.Mutex
	max     int
	maxRows int
	rows    int
	order   []string
	m       map[string]*analysis.SectionAnalysis
	flying  map[string]*sectionFlight
	// computed, when set (tests only), is told of every analysis computed rather than found.
	computed func(sectionID int64)
}

type sectionFlight struct {
	done chan struct{}
	a    *analysis.SectionAnalysis
	err  error
}

func newSectionCache(max, maxRows int) *sectionCache {
	return &sectionCache{max: max, maxRows: maxRows, m: map[string]*analysis.SectionAnalysis{}, flying: map[string]*sectionFlight{}}
}

// sectionCacheKey is the section, the options that decide its analysis and the digest of its data.
func sectionCacheKey(in *analysis.SectionInputs, o sectionOptions) string {
	dg := in.Digest()
	if dg == "" {
		return ""
	}
	b, err := json.Marshal(struct {
		Section int64
		Digest  string
		Options sectionOptions
	}{in.Sec.ID, dg, o})
	if err != nil {
		return ""
	}
	return string(b)
}

// analyse is an analysis.SectionAnalyser: the cached analysis of the inputs with the options, computed
// when there is none.
func (c *sectionCache) analyse(ctx context.Context, in *analysis.SectionInputs, o sectionOptions) (*analysis.SectionAnalysis, error) {
	key := sectionCacheKey(in, o)
	if key == "" {
		return c.compute(in, o)
	}
	for {
		if a, ok := c.get(key); ok {
			return a, nil
		}
		f, lead := c.join(key)
		if !lead {
			select {
			case <-f.done:
			case <-ctx.Done():
				return nil, ctx.Err()
			}
			if f.err != nil && ctx.Err() == nil && (errors.Is(f.err, context.Canceled) || errors.Is(f.err, context.DeadlineExceeded)) {
				continue // its request went away; this one computes
			}
			return f.a, f.err
		}
		var a *analysis.SectionAnalysis
		var err error
		func() {
			defer func() { c.land(key, f, a, err) }() // also when the computation panics
			a, err = c.compute(in, o)
		}()
		if err != nil {
			return nil, err
		}
		c.put(key, a)
		return a, nil
	}
}

// compute analyses the section and keeps the age model's summaries, not its draws.
func (c *sectionCache) compute(in *analysis.SectionInputs, o sectionOptions) (*analysis.SectionAnalysis, error) {
	if c.computed != nil {
		c.computed(in.Sec.ID)
	}
	a, err := in.Analyse(o)
	if err != nil {
		return nil, err
	}
	if a.Model != nil && a.Model.MC != nil {
		m, mc := *a.Model, *a.Model.MC
		mc.AgesMa = nil
		m.MC = &mc
		a.Model = &m
	}
	return a, nil
}

func (c *sectionCache) join(key string) (*sectionFlight, bool) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if f, ok := c.flying[key]; ok {
		return f, false
	}
	f := &sectionFlight{done: make(chan struct{})}
	c.flying[key] = f
	return f, true
}

func (c *sectionCache) land(key string, f *sectionFlight, a *analysis.SectionAnalysis, err error) {
	c.mu.Lock()
	delete(c.flying, key)
	c.mu.Unlock()
	f.a, f.err = a, err
	close(f.done)
}

func (c *sectionCache) get(key string) (*analysis.SectionAnalysis, bool) {
	c.mu.Lock()
	defer c.mu.Unlock()
	a, ok := c.m[key]
	return a, ok
}

// put keeps a, dropping the oldest entries while there are more than max or they hold more than maxRows
// samples (an analysis larger than maxRows alone is kept until the next one comes).
func (c *sectionCache) put(key string, a *analysis.SectionAnalysis) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if _, ok := c.m[key]; ok {
		return
	}
	c.m[key] = a
	c.order = append(c.order, key)
	c.rows += len(a.Samples)
	for len(c.order) > 1 && (len(c.order) > c.max || c.rows > c.maxRows) {
		c.rows -= len(c.m[c.order[0]].Samples)
		delete(c.m, c.order[0])
		c.order = c.order[1:]
	}
}

// sectionLoader reads and analyses sections through the server's cache (none when the server has none).
func (s *Server) sectionLoader() analysis.SectionLoader {
	if s.secCache == nil {
		return analysis.SectionLoader{}
	}
	return analysis.SectionLoader{Analyse: s.secCache.analyse}
}
