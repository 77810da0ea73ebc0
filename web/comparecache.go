package web

import (
	"encoding/json"
	"net/http"
	"time"
)

// comparison reads the choices and returns the computed comparison, from the cache when the same
// choices were computed on the same data. The data are read as one snapshot (analysis.LoadCompareData),
// so they belong to the one state of the compilation their data stamp names.
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
	stamp, err := c.store.DataStamp(ctx)
	if err != nil {
		return nil, false, err
	}
	if res, ok := c.cache.get(base.cacheKey(stamp)); ok {
		return res, true, nil
	}
	d, err := c.loadCompareData(ctx, &ch)
	if err != nil {
		return nil, false, err
	}
	key := base.cacheKey(d.Stamp)
	if res, ok := c.cache.get(key); ok {
		return res, true, nil
	}
	// Keyed also by what it read: a change elsewhere in the compilation keeps the result.
	dataKey := ""
	if dg := d.Digest(); dg != "" {
		dataKey = base.cacheKeyData(dg)
		if res, ok := c.cache.get(dataKey); ok {
			c.cache.put(key, res)
			return res, true, nil
		}
	}
	// Identical requests meanwhile wait for this one instead of computing it again.
	res, found, err := c.cache.do(ctx, key, func() (*compareResult, error) {
		res, err := computeComparison(ctx, d, ch, d.Stamp)
		if err == nil {
			res.At = time.Now().UTC().Format(time.RFC3339)
		}
		return res, err
	})
	if err != nil {
		return nil, false, err
	}
	if dataKey != "" {
		c.cache.put(dataKey, res)
	}
	return res, found, nil
}

// cacheKey is the choice set that decides the computed result (not the display: sort, format), with
// the compilation's stamp.
func (ch compareChoice) cacheKey(stamp int64) string {
	d := ch.Dens
	k := map[string]any{"stamp": stamp, "cal": d.Sum.Cal.Cal.Code, "policy": d.Sum.PolicyCode, "rule": d.Sum.Rule.String(), "mswd_range": d.Sum.Range.String(),
		"include": d.Sum.Include, "count": d.Count, "weight": d.Weight, "bw": d.Rule.String(), "h": d.UserHMa,
		"adaptive": d.Adaptive, "from": d.FromMa, "to": d.ToMa, "seed": d.Seed, "reps": d.Reps, "bw_each": d.BWEach,
		"province": ch.ProvinceID, "pulses": ch.Pulses, "rows": ch.Rows, "units": ch.UnitIDs, "events": ch.EventIDs, "sections": ch.SectionIDs, "groups": ch.Groups,
		"anomalies": ch.Anomalies, "point": ch.Point, "delta": ch.DeltaMa, "level": ch.Level.String(), "n": ch.N, "model": ch.Model,
		"draws": ch.ModelDraws, "toc": ch.TocMinWtPct, "sens": ch.Sensitivity, "order": ch.Order}
	b, _ := json.Marshal(k) // maps marshal with sorted keys: one spelling per choice set
	return string(b)
}

// cacheKeyData is the choice set with a digest of the data read instead of the compilation's stamp.
func (ch compareChoice) cacheKeyData(digest string) string {
	return "data " + digest + " " + ch.cacheKey(0)
}

// compareCache keeps computed comparisons keyed by the full choice set and the compilation's stamp
// (cacheKey), or a digest of what they read (cacheKeyData). A change to the records makes a new change
// batch and so a new stamp: old entries are never read again and fall out by age.
type compareCache = flightCache[*compareResult]

// newCompareCache keeps at most max comparisons, dropping the oldest.
func newCompareCache(max int) *compareCache { return newFlightCache[*compareResult](max, nil, 0) }
