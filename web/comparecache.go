package web

import (
	"encoding/json"
	"net/http"
	"time"

	"coeval/store"
)

// comparison reads the choices and returns the computed comparison, from the cache when the same
// choices were computed on the same versions of what they read. The data are read as one snapshot
// (analysis.LoadCompareData), with the versions they are kept under, so they belong to one state of the
// compilation.
func (c *comparer) comparison(r *http.Request) (*compareResult, bool, error) {
	ctx := r.Context()
	p := newParams(r)
	ch, err := c.compareChoiceFrom(ctx, p)
	if err != nil {
		return nil, false, err
	}
	p.id("saved")
	if err := p.err(); err != nil {
		return nil, false, err
	}
	if err := anonymousComputeLimits(ctx, ch); err != nil {
		return nil, false, err
	}
	base := ch
	// Found by the versions of what it reads (one small read, no record read): an edit elsewhere in the
	// compilation keeps it.
	vs, err := c.store.DataVersions(ctx)
	if err != nil {
		return nil, false, err
	}
	if res, ok := c.cache.get(base.cacheKey(vs)); ok {
		return res, true, nil
	}
	d, err := c.loadCompareData(ctx, &ch)
	if err != nil {
		return nil, false, err
	}
	// Kept under the versions read with the data, in its snapshot. Identical requests meanwhile wait for
	// this one instead of computing it again.
	res, found, err := c.cache.do(ctx, base.cacheKey(d.Versions), func() (*compareResult, error) {
		res, err := computeComparison(ctx, d, ch, d.Stamp)
		if err == nil {
			res.At = time.Now().UTC().Format(time.RFC3339)
		}
		return res, err
	})
	if err != nil {
		return nil, false, err
	}
	return res, found, nil
}

// cacheKey is the choice set that decides the computed result (not the display: sort, format), with
// the versions of the data it reads (dataVersions).
func (ch compareChoice) cacheKey(vs store.DataVersions) string {
	d := ch.Dens
	k := map[string]any{"data": ch.dataVersions(vs), "cal": d.Sum.Cal.Cal.Code, "policy": d.Sum.PolicyCode, "rule": d.Sum.Rule.String(), "mswd_range": d.Sum.Range.String(),
		"include": d.Sum.Include, "count": d.Count, "weight": d.Weight, "bw": d.Rule.String(), "h": d.UserHMa,
		"adaptive": d.Adaptive, "from": d.FromMa, "to": d.ToMa, "seed": d.Seed, "reps": d.Reps, "bw_each": d.BWEach,
		"province": ch.ProvinceID, "pulses": ch.Pulses, "rows": ch.Rows, "units": ch.UnitIDs, "events": ch.EventIDs, "sections": ch.SectionIDs, "groups": ch.Groups,
		"anomalies": ch.Anomalies, "point": ch.Point, "delta": ch.DeltaMa, "level": ch.Level.String(), "n": ch.N, "model": ch.Model,
		"draws": ch.ModelDraws, "toc": ch.TocMinWtPct, "sens": ch.Sensitivity, "order": ch.Order}
	b, _ := json.Marshal(k) // maps marshal with sorted keys: one spelling per choice set
	return string(b)
}

// dataVersions are the versions of what a comparison with the choices reads (analysis.LoadCompareData):
// the province (the first by name when none is chosen), the chosen sections (every section when none is
// chosen: their ties decide which come near the province), the calibrations and the events with a
// direct age, and, when events are chosen, the events' (those chosen must exist).
func (ch compareChoice) dataVersions(vs store.DataVersions) map[string]any {
	prov := ch.ProvinceID
	if prov == 0 {
		prov = vs.FirstProvince
	}
	secs := vs.Sections
	if len(ch.SectionIDs) > 0 {
		secs = map[int64]int64{}
		for _, id := range ch.SectionIDs {
			secs[id] = vs.Sections[id]
		}
	}
	out := map[string]any{"province": prov, "province_version": vs.Provinces[prov], "sections": secs,
		"calibrations": vs.Calibrations, "direct_events": vs.DirectEvents}
	if len(ch.EventIDs) > 0 {
		out["events"] = vs.Events
	}
	return out
}

// compareCache keeps computed comparisons keyed by the full choice set and the versions of what they
// read (cacheKey). A change to what a comparison reads bumps a version: old entries are never read
// again and fall out by age; a change to anything else keeps them.
type compareCache = flightCache[*compareResult]

// newCompareCache keeps at most max comparisons, dropping the oldest.
func newCompareCache(max int) *compareCache { return newFlightCache[*compareResult](max, nil, 0) }
