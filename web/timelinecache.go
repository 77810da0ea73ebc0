package web

import (
	"context"
	"encoding/json"
	"fmt"

	"coeval/web/analysis"
)

// Timelines (a province's unit summaries, density, bootstrap band and pulses) are cached as comparisons
// are (comparecache.go), keyed by the province, every option that decides the result and the
// compilation's data stamp: any accepted change makes a new stamp, so a kept timeline is never shown
// after its data changed. Identical requests meanwhile wait for the one being computed. Reading a
// province's dates is most of a timeline's cost at size (10,000 dates: ~100 ms of 260), so the key is one
// that can be known without reading them.

// Bounds of the timeline cache: entries, and dates held over all entries.
const (
	timelineCacheEntries = 64
	timelineCacheDates   = 100_000
)

type timelineCache = flightCache[*analysis.Timeline]

func newTimelineCache() *timelineCache {
	dates := func(t *analysis.Timeline) int { return len(t.Data.Dates) }
	return newFlightCache(timelineCacheEntries, dates, timelineCacheDates)
}

// timelineKey is the province, the options and the data stamp; "" when the options cannot be written
// (nothing is then cached).
func timelineKey(id int64, o analysis.DensityOptions, stamp int64) string {
	b, err := json.Marshal(o)
	if err != nil {
		return ""
	}
	return fmt.Sprintf("%d %d %s", id, stamp, b)
}

// timeline reads a province's units and dates in one snapshot and computes their density with the
// URL's choices, from the cache when the same choices were computed on the same data. The result is
// shared: callers must not change it.
func (s *Server) timeline(ctx context.Context, id int64, ch densityChoice) (analysis.Timeline, error) {
	o := ch.options()
	compute := func() (*analysis.Timeline, error) {
		tl, err := analysis.ProvinceDensity(ctx, s.store, id, o)
		return &tl, optionBadRequest(err, densityParams)
	}
	if s.tlCache == nil {
		tl, err := compute()
		return *tl, err
	}
	stamp, err := s.store.DataStamp(ctx)
	if err != nil {
		return analysis.Timeline{}, err
	}
	key := timelineKey(id, o, stamp)
	if key == "" {
		tl, err := compute()
		return *tl, err
	}
	tl, _, err := s.tlCache.do(ctx, key, compute)
	if err != nil {
		return analysis.Timeline{}, err
	}
	return *tl, nil
}
