package web

import (
	"context"
	"encoding/json"
	"fmt"

	"coeval/web/analysis"
)

// Timelines (a province's unit summaries, density, bootstrap band and pulses) are cached under the
// province, every option that decides the result (the calibration's constants among them) and the
// province's data version (store.DataVersions: kept by the database, bumped by any write to the
// province's record, units or dates), found with one small read and no record read: an edit elsewhere
// in the compilation leaves every kept timeline of this province found. Identical requests meanwhile
// wait for the one being computed. The key a timeline is kept under is the version read with its data,
// in the same snapshot, so what is kept under a version is exactly what that version holds.

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

// timelineKey is the province, its data version and the options; "" when the options cannot be written
// or the province has no version (nothing is then cached).
func timelineKey(id int64, o analysis.DensityOptions, version int64) string {
	b, err := json.Marshal(o)
	if err != nil || version == 0 {
		return ""
	}
	return fmt.Sprintf("%d v%d %s", id, version, b)
}

// timeline reads a province's units and dates in one snapshot and computes their density with the
// URL's choices, from the cache when the same choices were computed on the same version of the
// province's data. The result is shared: callers must not change it.
func (s *Server) timeline(ctx context.Context, id int64, ch densityChoice) (analysis.Timeline, error) {
	o := ch.options()
	if err := o.Validate(); err != nil {
		return analysis.Timeline{}, optionBadRequest(err, densityParams)
	}
	if s.tlCache != nil {
		v, err := s.store.ProvinceVersion(ctx, id)
		if err != nil {
			return analysis.Timeline{}, err
		}
		if tl, ok := s.tlCache.get(timelineKey(id, o, v)); ok {
			return *tl, nil
		}
	}
	data, err := s.store.ProvinceDates(ctx, id)
	if err != nil {
		return analysis.Timeline{Data: data}, err
	}
	compute := func() (*analysis.Timeline, error) {
		tl, err := analysis.DensityOf(data, o)
		return &tl, optionBadRequest(err, densityParams)
	}
	key := timelineKey(id, o, data.Version)
	if s.tlCache == nil || key == "" {
		tl, err := compute()
		return *tl, err
	}
	tl, _, err := s.tlCache.do(ctx, key, compute)
	if err != nil {
		return analysis.Timeline{}, err
	}
	return *tl, nil
}
