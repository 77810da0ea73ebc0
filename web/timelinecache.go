package web

import (
	"context"
	"encoding/json"
	"fmt"
	"strconv"

	"coeval/web/analysis"
)

// Timelines (a province's unit summaries, density, bootstrap band and pulses) are cached as comparisons
// are (comparecache.go): under the province, every option that decides the result (the calibration's
// constants among them) and the compilation's data stamp, found without reading anything; and under the
// same with a digest of exactly what the timeline reads (the province, its units and dates), so an edit
// elsewhere in the compilation reads the province again but computes nothing. Identical requests
// meanwhile wait for the one being computed. At 10,000 dates the read is ~100 ms of the 260–380 a cold
// timeline takes; a kept one is drawn in ~60.

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

// timelineKey is the province, the options and the version of the data (the compilation's stamp, or the
// digest of what the timeline reads); "" when the options cannot be written (nothing is then cached).
func timelineKey(id int64, o analysis.DensityOptions, version string) string {
	b, err := json.Marshal(o)
	if err != nil {
		return ""
	}
	return fmt.Sprintf("%d %s %s", id, version, b)
}

// timeline reads a province's units and dates in one snapshot and computes their density with the
// URL's choices, from the cache when the same choices were computed on the same data. The result is
// shared: callers must not change it.
func (s *Server) timeline(ctx context.Context, id int64, ch densityChoice) (analysis.Timeline, error) {
	o := ch.options()
	if s.tlCache == nil {
		tl, err := analysis.ProvinceDensity(ctx, s.store, id, o)
		return tl, optionBadRequest(err, densityParams)
	}
	if err := o.Validate(); err != nil {
		return analysis.Timeline{}, optionBadRequest(err, densityParams)
	}
	stamp, err := s.store.DataStamp(ctx)
	if err != nil {
		return analysis.Timeline{}, err
	}
	key := timelineKey(id, o, "stamp "+strconv.FormatInt(stamp, 10))
	if key == "" { // options that cannot be written: nothing is kept
		tl, err := analysis.ProvinceDensity(ctx, s.store, id, o)
		return tl, optionBadRequest(err, densityParams)
	}
	if tl, ok := s.tlCache.get(key); ok {
		return *tl, nil
	}
	data, err := s.store.ProvinceDates(ctx, id)
	if err != nil {
		return analysis.Timeline{}, err
	}
	// Computed under the digest of what it read when there is one (an edit elsewhere keeps it), found
	// again under the stamp.
	kept := key
	if dg := analysis.DigestProvince(data); dg != "" {
		kept = timelineKey(id, o, "data "+dg)
	}
	tl, _, err := s.tlCache.do(ctx, kept, func() (*analysis.Timeline, error) {
		tl, err := analysis.DensityOf(data, o)
		return &tl, optionBadRequest(err, densityParams)
	})
	if err != nil {
		return analysis.Timeline{}, err
	}
	s.tlCache.put(key, tl)
	return *tl, nil
}
