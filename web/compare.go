package web

import (
	"context"
	"errors"
	"fmt"
	"net/url"
	"slices"
	"strconv"
	"strings"

	"coeval/stats"
	"coeval/store"
	"coeval/web/analysis"
)

// The comparison of a province's eruptive pulses with the events of the sedimentary record is
// analysis.Compare on the data analysis.LoadCompareData reads in one snapshot. This file reads every
// choice from the URL (compareChoice) and turns it into analysis.CompareOptions, maps the options'
// problems to their parameters for the 400, and caches results by the full choice set and the
// compilation's stamp (compareCache).

// Defaults of the comparison.
const (
	defaultCompareDraws = analysis.DefaultCompareDraws
	maxCompareDraws     = analysis.MaxCompareDraws
	maxCompareEvents    = analysis.MaxCompareEvents
)

// compareChoice is every choice of the comparison page, read from the URL.
type compareChoice struct {
	Dens        densityChoice // the density and its pulses: count, weight, bw, h, adaptive, from, to, reps, cal, policy, rule, include, seed
	ProvinceID  int64         // province= (default: the first province)
	Pulses      []string      // pulses=P155.4,P157 (by age; default: all)
	Rows        string        // rows=pulses|units|both: what the table's rows are (default pulses, both with units=)
	UnitIDs     []int64       // units=ID,ID: the units compared as rows (default: every unit with a mean)
	EventIDs    []int64       // events=ID,ID (default: every event with an age in the chosen sections)
	SectionIDs  []int64       // sections=ID,ID (default: all)
	Groups      []string      // group=KIND (repeatable): the events of that kind across sections as one correlated event
	Anomalies   bool          // anomalies=1: detected Hg anomalies as events too
	Point       string        // point=base|peak|top: the named point of an event that has an extent (default base, its onset)
	DeltaMa     float64       // delta= tolerance δ of P(|Δ| < δ), Ma
	Level       stats.ComparisonLevel
	N           int      // n= joint draws
	Model       string   // model=mc|linear (age–height model)
	ModelDraws  int      // draws= age-model draws
	TocMinWtPct *float64 // toc_min= (default: each section's own threshold)
	Sensitivity bool     // sens=1 (default) computes the sensitivity column
	Order       []string // order=codes of the order matrix items
	Sort, Dir   string   // display only
	Format      string
}

var compareFormats = []string{"html", "csv", "json", "xlsx", "svg", "png", "pdf"}

// compareRowKinds are the values of rows=: the table's rows are the pulses of the density, single
// eruptive units (their weighted means), or both.
var compareRowKinds = analysis.CompareRowKinds

// compareSorts are the table's sortable columns.
var compareSorts = []string{"pulse", "event", "after", "within", "lag", "near", "ovl", "volume"}

// compareChoiceFrom reads the choices. The density's own parameters are read by densityChoice (the
// timeline's parsing) from a copy of the query in which level= is left to the comparison: the unit means
// that make the density are always analytical here, because the systematic components are drawn by the
// engine, once per draw, and must not also be in the bootstrap's jitter.
func (s *Server) compareChoiceFrom(ctx context.Context, p *params) (compareChoice, error) {
	q := url.Values{}
	for k, v := range p.q {
		q[k] = slices.Clone(v)
	}
	for _, k := range []string{"level", "format", "table", "sigma"} {
		q.Del(k)
	}
	pd := &params{q: q}
	dens, err := s.densityChoice(ctx, pd)
	if err != nil {
		return compareChoice{}, err
	}
	p.problems = append(p.problems, pd.problems...)
	dens.Sum.Level = stats.Analytical
	def := analysis.DefaultCompareOptions()
	ch := compareChoice{Dens: dens}
	ch.Format = p.oneOf("format", compareFormats, "html")
	ch.ProvinceID = p.id("province")
	ch.Pulses = listParam(p, "pulses")
	for _, v := range listParam(p, "pulses") {
		if !strings.HasPrefix(v, "P") || len(v) < 2 {
			p.problems = append(p.problems, fmt.Sprintf("pulses: want pulses named by their age, such as P155.4 (P and an age in Ma within the pulse), got %q", v))
		}
	}
	ch.EventIDs = idList(p, "events", "event record numbers such as 3,7")
	ch.UnitIDs = idList(p, "units", "unit record numbers such as 7,12")
	defaultRows := def.Rows
	if len(ch.UnitIDs) > 0 {
		defaultRows = analysis.RowsBoth
	}
	ch.Rows = p.oneOf("rows", compareRowKinds, defaultRows)
	ch.SectionIDs = idList(p, "sections", "section record numbers such as 1,2")
	for _, g := range p.all("group") {
		g = strings.TrimSpace(g)
		if g == "" {
			continue
		}
		var codes []string
		for _, k := range store.EventKinds() {
			codes = append(codes, k.Code)
		}
		if !slices.Contains(codes, g) {
			p.problems = append(p.problems, fmt.Sprintf("group: unknown event kind %q; want one of %s", g, strings.Join(codes, ", ")))
			continue
		}
		if !slices.Contains(ch.Groups, g) {
			ch.Groups = append(ch.Groups, g)
		}
	}
	ch.Anomalies = onOff(p, "anomalies")
	ch.Point = p.oneOf("point", analysis.EventPoints, def.Point)
	ch.DeltaMa = paramFloatIn(p, "delta", def.DeltaMa, 0, analysis.MaxCompareDeltaMa, "a tolerance δ in Ma from 0 to 100")
	lv := p.oneOf("level", []string{"as-needed", "analytical", "full"}, def.Level.String())
	ch.Level, _ = stats.ParseComparisonLevel(lv)
	ch.N = p.int("n", def.N, analysis.MinCompareDraws, maxCompareDraws)
	ch.Model = p.oneOf("model", []string{"mc", "linear"}, def.Model)
	ch.ModelDraws = p.int("draws", def.ModelDraws, minSectionDraws, maxSectionDraws)
	if v := p.str("toc_min"); v != "" {
		f := paramFloatIn(p, "toc_min", 0, 0, 100, "a TOC threshold in wt% from 0 to 100")
		ch.TocMinWtPct = &f
	}
	ch.Sensitivity = p.oneOf("sens", []string{"0", "1"}, map[bool]string{true: "1", false: "0"}[def.Sensitivity]) == "1"
	ch.Order = listParam(p, "order")
	ch.Sort = p.oneOf("sort", compareSorts, "pulse")
	ch.Dir = p.oneOf("dir", []string{"asc", "desc"}, "asc")
	return ch, nil
}

func (ch compareChoice) pulseRows() bool { return ch.Rows != "units" }
func (ch compareChoice) unitRows() bool  { return ch.Rows == "units" || ch.Rows == "both" }

// isUnitCode reports whether an order-matrix code names a unit (U7).
func isUnitCode(code string) bool { return analysis.IsUnitCode(code) }

// listParam reads a comma-separated list (also repeated parameters), blanks dropped.
func listParam(p *params, name string) []string {
	var out []string
	for _, v := range p.all(name) {
		for _, f := range strings.Split(v, ",") {
			if f = strings.TrimSpace(f); f != "" && !slices.Contains(out, f) {
				out = append(out, f)
			}
		}
	}
	return out
}

func idList(p *params, name, what string) []int64 {
	var out []int64
	for _, f := range listParam(p, name) {
		n, err := strconv.ParseInt(f, 10, 64)
		if err != nil || n <= 0 {
			p.problems = append(p.problems, fmt.Sprintf("%s: want %s, got %q", name, what, f))
			continue
		}
		out = append(out, n)
	}
	return out
}

// The comparison's data and inputs, as the pages and downloads name them.
type (
	compareData    = analysis.CompareData
	compareEvent   = analysis.CompareEvent
	comparePulse   = analysis.ComparePulse
	compareUnit    = analysis.CompareUnit
	compareUnitRow = analysis.CompareUnitRow
	compareInputs  = analysis.CompareInputs
)

// compareResult is a computed comparison with the choices of the address it was computed for, the data
// stamp it was read at and when.
type compareResult struct {
	*analysis.Comparison
	Choice compareChoice
	Stamp  int64
	At     string
}

// compareParams names the URL parameter of each comparison option, for the 400 page of an unusable one
// (the density's as the timeline names them).
var compareParams = func() map[string]string {
	m := map[string]string{"ProvinceID": "province", "Pulses": "pulses", "Rows": "rows", "UnitIDs": "units", "EventIDs": "events",
		"SectionIDs": "sections", "Groups": "group", "Anomalies": "anomalies", "Point": "point", "DeltaMa": "delta", "Level": "level",
		"N": "n", "Model": "model", "ModelDraws": "draws", "TocMinWtPct": "toc_min", "Sensitivity": "sens", "Order": "order",
		"Calibration": "cal"}
	for k, v := range densityParams {
		if _, ok := m[k]; !ok {
			m[k] = v
		}
	}
	return m
}()

// options are the analysis options the choice stands for. The calibration is passed by code only when
// the address chose one: otherwise it is the compilation's target, read with the data.
func (ch compareChoice) options() analysis.CompareOptions {
	o := analysis.CompareOptions{Density: ch.Dens.options(), ProvinceID: ch.ProvinceID, Pulses: ch.Pulses, Rows: ch.Rows,
		UnitIDs: ch.UnitIDs, EventIDs: ch.EventIDs, SectionIDs: ch.SectionIDs, Groups: ch.Groups, Anomalies: ch.Anomalies,
		Point: ch.Point, DeltaMa: ch.DeltaMa, Level: ch.Level, N: ch.N, Model: ch.Model, ModelDraws: ch.ModelDraws,
		TocMinWtPct: ch.TocMinWtPct, Sensitivity: ch.Sensitivity, Order: ch.Order}
	if !ch.Dens.Sum.Cal.Override {
		o.Density.Summary.Calibration = stats.Calibration{}
	}
	return o
}

// compareError turns the problems of a comparison's options into the 400 of their parameters, and a
// compilation without provinces into a 404.
func compareError(err error) error {
	if errors.Is(err, analysis.ErrNoProvince) {
		return notFoundError{what: "province to compare (the compilation has none)"}
	}
	return optionBadRequest(err, compareParams)
}

// loadCompareData reads the comparison's data as one snapshot; the province read becomes the choice's.
func (s *Server) loadCompareData(ctx context.Context, ch *compareChoice) (*compareData, error) {
	d, err := analysis.LoadCompareData(ctx, s.store, ch.options())
	if err != nil {
		return nil, compareError(err)
	}
	ch.ProvinceID = d.Province.ID
	return d, nil
}

// computeComparison computes the comparison of d with the choice; it stops when ctx is done.
func computeComparison(ctx context.Context, d *compareData, ch compareChoice, stamp int64) (*compareResult, error) {
	c, err := analysis.Compare(ctx, d, ch.options())
	if err != nil {
		return nil, compareError(err)
	}
	return &compareResult{Comparison: c, Choice: ch, Stamp: stamp}, nil
}

// pointWords says where an event is read, for its account.
func pointWords(where string) string { return analysis.PointWords(where) }

// sensRowName names a probability of the sensitivity analysis.
func sensRowName(pulse, event, what string) string { return analysis.SensRowName(pulse, event, what) }

// sensVolumeName names the volume fraction's conclusion for an event in the sensitivity analysis.
func sensVolumeName(event string) string { return analysis.SensVolumeName(event) }

// sensVolumeAbsent is the SensMissing entry of the volume fraction.
const sensVolumeAbsent = analysis.SensVolumeAbsent

// eventURL is the page an event of the comparison links to: its section's events, or the section's
// anomalies for a detected anomaly; none for a direct age or a correlated group.
func eventURL(e compareEvent) string {
	switch {
	case e.SectionID == 0:
		return ""
	case strings.HasPrefix(e.Code, "A"):
		return idURL("/sections", e.SectionID) + "/anomalies"
	}
	return idURL("/sections", e.SectionID) + "#events"
}
