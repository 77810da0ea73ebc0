package web

import (
	"context"
	"fmt"
	"strconv"

	"coeval/stats"
	"coeval/store"
	"coeval/web/analysis"
)

// The analysis behind a section page is analysis.AnalyseSection; this file reads its choices from the URL
// (sectionOptionsFrom) and its data from the store in one snapshot (analysis.LoadSectionAnalysis), and
// names its results as the section pages, figures and downloads use them.

// Bounds and defaults of the section analysis.
const (
	defaultSectionDraws = analysis.DefaultSectionDraws
	maxSectionDraws     = analysis.MaxSectionDraws
	minSectionDraws     = analysis.MinSectionDraws
	defaultAlignedDraws = analysis.DefaultAlignedDraws
	notEvaluableLabel   = analysis.NotEvaluableLabel
)

// The section analysis' options and results, as the pages and downloads name them.
type (
	sectionOptions = analysis.SectionOptions
	sampleRow      = analysis.SampleRow
	anomalyReport  = analysis.AnomalyReport
	segmentRow     = analysis.SegmentRow
	eventAge       = analysis.EventAge
	rateRow        = analysis.RateRow
	ageModelResult = analysis.AgeModel
	tieInput       = analysis.TieInput
)

// sectionAnalysis is a section's analysis with the page's own methods (sectionpage.go, sectiontie.go,
// sectiondecide.go) beside it.
type sectionAnalysis struct{ *analysis.SectionAnalysis }

// sectionParams names the URL parameter of each section option, for the 400 page of an unusable one.
var sectionParams = map[string]string{"Host": "host", "TocMinWtPct": "toc_min", "Baseline": "baseline",
	"Background": "bg_base, bg_top", "BgWidth": "bg_width", "ZMin": "z_min", "MinRun": "min_run", "Penalty": "penalty",
	"Model": "model", "Draws": "draws", "Seed": "seed", "Level": "sigma", "TieLevel": "tie_level", "Include": "include"}

// sectionOptionsFrom reads the options; what the URL leaves out is analysis.DefaultSectionOptions(sec)
// (the section's stored threshold is the default of toc_min). Problems are collected in p.
func sectionOptionsFrom(p *params, sec store.Section) sectionOptions {
	def := analysis.DefaultSectionOptions(sec)
	o := sectionOptions{
		Host:     p.oneOf("host", []string{"auto", "toc", "ts", "al"}, def.Host),
		Baseline: p.oneOf("baseline", []string{"section", "window", "running"}, def.Baseline),
		BgWidth:  p.int("bg_width", def.BgWidth, 3, 999),
		ZMin:     paramFloatIn(p, "z_min", def.ZMin, 0.5, 50, "a modified z-score from 0.5 to 50"),
		MinRun:   p.int("min_run", def.MinRun, 1, 50),
		Penalty:  paramFloatIn(p, "penalty", def.Penalty, 1e-9, 1e6, "a positive change-point penalty up to 1e6 (empty for the default 2·ln n)"),
		Model:    p.oneOf("model", []string{"mc", "linear"}, def.Model),
		Draws:    p.int("draws", def.Draws, minSectionDraws, maxSectionDraws),
		Seed:     paramSeed(p, "seed", def.Seed),
		Level:    p.sigmaLevel(),
		TieLevel: p.oneOf("tie_level", []string{"analytical", "tracer", "full"}, def.TieLevel),
		Include:  p.oneOf("include", includeCodes(), def.Include),
	}
	o.TocMinWtPct = paramFloatIn(p, "toc_min", def.TocMinWtPct, 0, 100, "a TOC threshold in wt% from 0 to 100")
	if o.BgWidth%2 == 0 {
		p.problems = append(p.problems, fmt.Sprintf("bg_width: want an odd number of samples, got %d", o.BgWidth))
	}
	if o.Baseline == "window" {
		lo, hi := p.optFloat("bg_base", "a height in m"), p.optFloat("bg_top", "a height in m")
		switch {
		case lo == nil || hi == nil:
			p.problems = append(p.problems, "bg_base, bg_top: baseline=window needs both heights of the background window (m)")
		case *lo >= *hi:
			p.problems = append(p.problems, "bg_base: must lie below bg_top")
		default:
			o.BgBaseM, o.BgTopM = *lo, *hi
		}
	}
	return o
}

// paramFloatIn reads a number within [lo, hi], def when absent.
func paramFloatIn(p *params, name string, def, lo, hi float64, what string) float64 {
	v := p.str(name)
	if v == "" {
		return def
	}
	f, ok := store.ParseDecimal(v)
	if !ok || f < lo || f > hi {
		p.problems = append(p.problems, fmt.Sprintf("%s: want %s, got %q", name, what, v))
		return def
	}
	return f
}

// paramSeed reads a random seed (a whole number ≥ 0).
func paramSeed(p *params, name string, def uint64) uint64 {
	v := p.str(name)
	if v == "" {
		return def
	}
	n, err := strconv.ParseUint(v, 10, 64)
	if err != nil {
		p.problems = append(p.problems, fmt.Sprintf("%s: want a whole number from 0 to 18446744073709551615, got %q", name, v))
		return def
	}
	return n
}

// loadSectionAnalysis reads a section's data in one snapshot and analyses it with the options; an option
// that does not fit the section is a 400 of its parameter.
func (s *Server) loadSectionAnalysis(ctx context.Context, sec store.Section, o sectionOptions) (*sectionAnalysis, error) {
	a, err := s.sectionLoader().One(ctx, s.store, sec, o)
	if err != nil {
		return nil, optionBadRequest(err, sectionParams)
	}
	return &sectionAnalysis{a}, nil
}

func hostProxy(h stats.Host) string { return analysis.HostProxy(h) }
func ratioName(h stats.Host) string { return analysis.RatioName(h) }
func maturityClass(s string) string { return analysis.MaturityClass(s) }
func cmpF(x, y float64) int         { return analysis.CmpF(x, y) }
