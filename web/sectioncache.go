package web

import (
	"context"
	"encoding/json"

	"coeval/store"
	"coeval/web/analysis"
)

// Section analyses (change points, age models) are cached under the section's options and the version
// of exactly the data the analysis reads (analysis.SectionVersion: kept by the database for its samples,
// ties and their linked dates, events, hiatuses, the section record and the calibrations), read with the
// section in its snapshot: a kept analysis is found without reading the section's records, an edit to
// one section recomputes that section alone, and an edit elsewhere in the compilation recomputes
// nothing. Identical analyses asked for meanwhile wait for the one being computed.
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
	*flightCache[*analysis.SectionAnalysis]
	// computed, when set (tests only), is told of every analysis computed rather than found.
	computed func(sectionID int64)
}

// newSectionCache keeps at most max analyses holding at most maxRows sample rows in all, dropping the
// oldest (an analysis larger than maxRows alone is kept until the next one comes).
func newSectionCache(max, maxRows int) *sectionCache {
	rows := func(a *analysis.SectionAnalysis) int { return len(a.Samples) }
	return &sectionCache{flightCache: newFlightCache(max, rows, maxRows)}
}

// sectionCacheKey is the section's record, the version of its data and the options that decide its
// analysis; "" without a version (nothing is then kept). The record is in the key as the analysis was
// given it (a caller may have read it before the snapshot the version comes from).
func sectionCacheKey(sec store.Section, version string, o sectionOptions) string {
	if version == "" {
		return ""
	}
	b, err := json.Marshal(struct {
		Section store.Section
		Version string
		Options sectionOptions
	}{sec, version, o})
	if err != nil {
		return ""
	}
	return string(b)
}

// kept is the analysis kept for the section's version and options (analysis.SectionLoader.Kept).
func (c *sectionCache) kept(sec store.Section, version string, o sectionOptions) (*analysis.SectionAnalysis, bool) {
	key := sectionCacheKey(sec, version, o)
	if key == "" {
		return nil, false
	}
	return c.get(key)
}

// analyse is an analysis.SectionAnalyser: the cached analysis of the inputs with the options, computed
// when there is none.
func (c *sectionCache) analyse(ctx context.Context, in *analysis.SectionInputs, o sectionOptions) (*analysis.SectionAnalysis, error) {
	key := sectionCacheKey(in.Sec, in.Version, o)
	if key == "" {
		return c.compute(in, o)
	}
	a, _, err := c.do(ctx, key, func() (*analysis.SectionAnalysis, error) { return c.compute(in, o) })
	return a, err
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

// sectionLoader reads and analyses sections through the server's cache (none when the server has none).
func (s *Server) sectionLoader() analysis.SectionLoader {
	if s.secCache == nil {
		return analysis.SectionLoader{}
	}
	return analysis.SectionLoader{Analyse: s.secCache.analyse, Kept: s.secCache.kept}
}
