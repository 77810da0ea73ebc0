package web

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"hash/fnv"
	"math"
	"math/rand/v2"
	"net/url"
	"slices"
	"sort"
	"strconv"
	"strings"
	"sync"
	"time"

	"coeval/stats"
	"coeval/store"
)

// The comparison of a province's eruptive pulses with the events of the sedimentary record: every
// choice is read from the URL (compareChoice), the inputs are built from what the timeline (density,
// bootstrap band, pulses), the unit summaries and the section pages (age models, events, anomalies)
// already compute, and the numbers are stats' engine of joint draws (DrawJoint, Table, Order,
// VolumeFractionBefore, Sensitivity). Results are cached by the full choice set and the compilation's
// stamp (compareCache).

// Defaults of the comparison.
const (
	defaultCompareDeltaMa = 0.1
	defaultCompareDraws   = stats.DefaultComparisonDraws
	minCompareDraws       = 1000
	maxCompareDraws       = 100_000
	maxCompareEvents      = 60
)

// compareChoice is every choice of the comparison page, read from the URL.
type compareChoice struct {
	Dens       densityChoice // the density and its pulses: count, weight, bw, h, adaptive, from, to, reps, cal, policy, rule, include, seed
	ProvinceID int64         // province= (default: the first province)
	Pulses     []string      // pulses=P1,P2 (default: all)
	Rows       string        // rows=pulses|units|both: what the table's rows are (default pulses, both with units=)
	UnitIDs    []int64       // units=ID,ID: the units compared as rows (default: every unit with a mean)
	EventIDs   []int64       // events=ID,ID (default: every event with an age in the chosen sections)
	SectionIDs []int64       // sections=ID,ID (default: all)
	Groups     []string      // group=KIND (repeatable): the events of that kind across sections as one correlated event
	Anomalies  bool          // anomalies=1: detected Hg anomalies as events too
	Point      string        // point=base|peak|top: the named point of an event that has an extent (default base, its onset)
	DeltaMa    float64       // delta= tolerance δ of P(|Δ| < δ), Ma
	Level      stats.ComparisonLevel
	N          int    // n= joint draws
	Model      string // model=mc|linear (age–height model)
	ModelDraws int    // draws= age-model draws
	TocMin     *float64
	Sens       bool     // sens=1 (default) computes the sensitivity column
	Order      []string // order=codes of the order matrix items
	Sort, Dir  string   // display only
	Format     string
}

var compareFormats = []string{"html", "csv", "json", "xlsx", "svg", "png", "pdf"}

// compareRowKinds are the values of rows=: the table's rows are the pulses of the density, single
// eruptive units (their weighted means), or both.
var compareRowKinds = []string{"pulses", "units", "both"}

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
	ch := compareChoice{Dens: dens}
	ch.Format = p.oneOf("format", compareFormats, "html")
	ch.ProvinceID = p.id("province")
	ch.Pulses = listParam(p, "pulses")
	for _, v := range listParam(p, "pulses") {
		if !strings.HasPrefix(v, "P") || len(v) < 2 {
			p.problems = append(p.problems, fmt.Sprintf("pulses: want pulse names such as P1,P2, got %q", v))
		}
	}
	ch.EventIDs = idList(p, "events", "event record numbers such as 3,7")
	ch.UnitIDs = idList(p, "units", "unit record numbers such as 7,12")
	defaultRows := "pulses"
	if len(ch.UnitIDs) > 0 {
		defaultRows = "both"
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
	ch.Point = p.oneOf("point", eventPoints, "base")
	ch.DeltaMa = paramFloatIn(p, "delta", defaultCompareDeltaMa, 0, 100, "a tolerance δ in Ma from 0 to 100")
	lv := p.oneOf("level", []string{"as-needed", "analytical", "full"}, "as-needed")
	ch.Level, _ = stats.ParseComparisonLevel(lv)
	ch.N = p.int("n", defaultCompareDraws, minCompareDraws, maxCompareDraws)
	ch.Model = p.oneOf("model", []string{"mc", "linear"}, "mc")
	ch.ModelDraws = p.int("draws", defaultSectionDraws, minSectionDraws, maxSectionDraws)
	if v := p.str("toc_min"); v != "" {
		f := paramFloatIn(p, "toc_min", 0, 0, 100, "a TOC threshold in wt% from 0 to 100")
		ch.TocMin = &f
	}
	ch.Sens = p.oneOf("sens", []string{"0", "1"}, "1") == "1"
	ch.Order = listParam(p, "order")
	ch.Sort = p.oneOf("sort", compareSorts, "pulse")
	ch.Dir = p.oneOf("dir", []string{"asc", "desc"}, "asc")
	return ch, nil
}

func (ch compareChoice) pulseRows() bool { return ch.Rows != "units" }
func (ch compareChoice) unitRows() bool  { return ch.Rows == "units" || ch.Rows == "both" }

// isUnitCode reports whether an order-matrix code names a unit (U7).
func isUnitCode(code string) bool {
	n, err := strconv.ParseInt(strings.TrimPrefix(code, "U"), 10, 64)
	return strings.HasPrefix(code, "U") && err == nil && n > 0
}

// unknownUnit says why units= names a unit that cannot be compared.
func unknownUnit(d *compareData, id int64) string {
	i := slices.IndexFunc(d.Units, func(u store.Unit) bool { return u.ID == id })
	if i < 0 {
		return fmt.Sprintf("units: there is no unit %d in %s", id, d.Province.Name)
	}
	return fmt.Sprintf("units: unit %d (%s) has no weighted mean under these choices (no date enters it: see its summary)", id, d.Units[i].Name)
}

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

// cacheKey is the choice set that decides the computed result (not the display: sort, format), with
// the compilation's stamp.
func (ch compareChoice) cacheKey(stamp int64) string {
	d := ch.Dens
	k := map[string]any{"stamp": stamp, "cal": d.Sum.Cal.Cal.Code, "policy": d.Sum.PolicyCode, "rule": d.Sum.Rule.String(), "mswd_range": d.Sum.Range.String(),
		"include": d.Sum.Include, "count": d.Count, "weight": d.Weight, "bw": d.Rule.String(), "h": d.UserHMa,
		"adaptive": d.Adaptive, "from": d.FromMa, "to": d.ToMa, "seed": d.Seed, "reps": d.Reps, "bw_each": d.BWEach,
		"province": ch.ProvinceID, "pulses": ch.Pulses, "rows": ch.Rows, "units": ch.UnitIDs, "events": ch.EventIDs, "sections": ch.SectionIDs, "groups": ch.Groups,
		"anomalies": ch.Anomalies, "point": ch.Point, "delta": ch.DeltaMa, "level": ch.Level.String(), "n": ch.N, "model": ch.Model,
		"draws": ch.ModelDraws, "toc": ch.TocMin, "sens": ch.Sens, "order": ch.Order}
	b, _ := json.Marshal(k) // maps marshal with sorted keys: one spelling per choice set
	return string(b)
}

// cacheKeyData is the choice set with a digest of the data read instead of the compilation's stamp.
func (ch compareChoice) cacheKeyData(digest string) string {
	return "data " + digest + " " + ch.cacheKey(0)
}

// digest is a version of exactly the data a comparison reads: a hash of the records loaded for it (the
// province's units and dates, the chosen sections' samples, ties, hiatuses and events, the linked dates,
// the calibrations, the direct ages). An edit elsewhere in the compilation leaves it unchanged, so the
// cached comparison is still used; an edit to anything it reads changes it.
func (d *compareData) digest() string {
	h := sha256.New()
	enc := json.NewEncoder(h)
	for _, v := range []any{d.Province, d.Units, d.Dates, d.Sections, d.Samples, d.Ties, d.TiesOut, d.EventsIn,
		d.EventsOut, d.Events, d.Direct, d.Hiatuses, d.TieIns, d.LinkDates, d.Cals} {
		if err := enc.Encode(v); err != nil {
			return "" // never cached by content then
		}
	}
	return hex.EncodeToString(h.Sum(nil))
}

// compareCache keeps computed comparisons keyed by the full choice set and the compilation's stamp
// (cacheKey). A change to the records makes a new change batch and so a new stamp: old entries are
// never read again and fall out by age. It holds at most max entries, dropping the oldest.
type compareCache struct {
	mu     sync.Mutex
	max    int
	order  []string
	m      map[string]*compareResult
	flying map[string]*compareFlight
}

// compareFlight is a comparison being computed: identical requests meanwhile wait for it instead of
// computing it again.
type compareFlight struct {
	done chan struct{}
	res  *compareResult
	err  error
}

func newCompareCache(max int) *compareCache {
	return &compareCache{max: max, m: map[string]*compareResult{}, flying: map[string]*compareFlight{}}
}

// join returns the flight computing key and whether the caller leads it (and must call land).
func (c *compareCache) join(key string) (*compareFlight, bool) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if f, ok := c.flying[key]; ok {
		return f, false
	}
	f := &compareFlight{done: make(chan struct{})}
	c.flying[key] = f
	return f, true
}

// land ends a flight with its result and lets the waiting requests go.
func (c *compareCache) land(key string, f *compareFlight, res *compareResult, err error) {
	c.mu.Lock()
	delete(c.flying, key)
	c.mu.Unlock()
	f.res, f.err = res, err
	close(f.done)
}

func (c *compareCache) get(k string) (*compareResult, bool) {
	c.mu.Lock()
	defer c.mu.Unlock()
	r, ok := c.m[k]
	return r, ok
}

func (c *compareCache) put(k string, r *compareResult) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if _, ok := c.m[k]; ok {
		return
	}
	c.m[k] = r
	c.order = append(c.order, k)
	for len(c.order) > c.max {
		delete(c.m, c.order[0])
		c.order = c.order[1:]
	}
}

// compareEvent is one event (or group of correlated events) as compared: its age as a quantity of the
// engine, where the age comes from, and the choices it depends on.
type compareEvent struct {
	Code      string // E12, G:cie_onset, A3.1
	Name      string
	Section   string
	SectionID int64
	Kind      string
	How       string   // how its age is made, in words
	Depends   []string // model choices its age depends on
	Q         stats.Quantity
	Summary   stats.DrawSummary
	Draws     []float64 // the draws of its age (random part) for the figure
	URL       string
	Point     string // which point of the event is compared, in words ("base (onset)", "peak", "top", "height")
	groupOnly bool   // chosen only as a member of a group
}

// pointWords says where an event is read, for its account: "its base (onset)", or "the event" at one height.
func pointWords(where string) string {
	if where == "height" {
		return "the event"
	}
	return "its " + where
}

// eventPoints are the values of point=: which point of an event with an extent (a carbon-isotope
// excursion from onset to recovery, an anomaly's run of samples) is compared.
var eventPoints = []string{"base", "peak", "top"}

// eventPoint returns the height of the chosen point of an event and its name in words. An event at one
// height is compared there; an event without a recorded peak is compared at its base, and the words say so.
func eventPoint(ea eventAge, point string) (float64, string) {
	if ea.BaseM == ea.TopM && (math.IsNaN(ea.PeakM) || ea.PeakM == ea.BaseM) {
		return ea.BaseM, "height"
	}
	switch point {
	case "top":
		return ea.TopM, "top"
	case "peak":
		if !math.IsNaN(ea.PeakM) {
			return ea.PeakM, "peak"
		}
		return ea.BaseM, "base (onset; no peak height is recorded)"
	}
	return ea.BaseM, "base (onset)"
}

// comparePulse is a pulse of the density with its edge draws.
type comparePulse struct {
	Name    string
	Summary stats.PulseSummary
	Edges   stats.PulseEdgeSamples
	Onset   stats.Quantity
	End     stats.Quantity
}

// compareUnit is a unit mean with its volume, for the fraction of the volume erupted before an event.
type compareUnit struct {
	ID     int64
	Name   string
	Q      stats.Quantity
	Volume stats.Volume
}

// compareUnitRow is a single eruptive unit compared as a row of the table: its weighted mean, a
// point-like age, with its decay system's systematic components (as for the volume fraction).
type compareUnitRow struct {
	Code    string // U12
	ID      int64
	Name    string
	URL     string
	System  string  // the decay system of the mean, e.g. U–Pb
	MeanMa  float64 // weighted mean of the dates include= lets in (all of them: flagged dates are flagged, not dropped)
	Sigma1s float64 // its analytical 1σ, as the policy leaves it
	N       int
	How     string // how the mean is made, in words
	Syst    string // which systematic components it carries
	Q       stats.Quantity
}

// Label names the row in the table: the unit's name with its code.
func (u compareUnitRow) Label() string { return u.Name + " (" + u.Code + ")" }

// compareInputs is one set of inputs: the pulses, the events and the units.
type compareInputs struct {
	Pulses   []comparePulse
	Events   []compareEvent
	Units    []compareUnit    // units with a volume, for the volume fraction
	UnitRows []compareUnitRow // units in the engine as point-like ages: the rows of rows=units|both, and U codes of order=
	EdgeNote string           // which systematic components the pulse edges carry
	Notes    []string
}

// compareData is what the store holds for a comparison, read once per request.
type compareData struct {
	Province  store.Province
	Provinces []store.Province
	Units     []store.Unit
	Dates     []store.Date
	Sections  []store.Section
	Samples   map[int64][]store.Sample
	Ties      map[int64][]store.TiePoint // the ties the age models use: those include= lets in
	TiesOut   map[int64][]store.TiePoint // the ties include= leaves out
	EventsIn  []store.Event              // the events include= lets in (section and direct), for its cautions
	EventsOut []store.Event              // the events include= leaves out
	Events    map[int64][]store.Event
	Direct    []store.Event // events with a direct age and no section
	Hiatuses  map[int64][]store.Hiatus
	TieIns    map[int64][]tieInput // the ties as the age model uses them (dates at the full level)
	LinkDates map[int64]store.Date // dates linked to tie points
	Cals      []store.Calibration
	stop      func() error // the request's context's Err, asked between the steps of the computation (nil: never)
}

// reviewedEvents keeps the events include= lets into the comparison (as for dates and ties) and notes
// the others, so the page can say what it left out.
func (d *compareData) reviewedEvents(evs []store.Event, include string) []store.Event {
	in, out := partitionReviewed(include, evs, eventState)
	d.EventsIn, d.EventsOut = append(d.EventsIn, in...), append(d.EventsOut, out...)
	return in
}

func (s *Server) loadCompareData(ctx context.Context, ch *compareChoice) (*compareData, error) {
	d := &compareData{Samples: map[int64][]store.Sample{}, Ties: map[int64][]store.TiePoint{}, TiesOut: map[int64][]store.TiePoint{}, Events: map[int64][]store.Event{},
		Hiatuses: map[int64][]store.Hiatus{}, TieIns: map[int64][]tieInput{}, LinkDates: map[int64]store.Date{}}
	var err error
	if d.Provinces, err = s.store.Provinces(ctx); err != nil {
		return nil, err
	}
	if len(d.Provinces) == 0 {
		return nil, notFoundError{what: "province to compare (the compilation has none)"}
	}
	if ch.ProvinceID == 0 {
		ch.ProvinceID = d.Provinces[0].ID
	}
	if d.Province, err = s.store.Province(ctx, ch.ProvinceID); err != nil {
		return nil, badRequest{message: "This address has parameters that cannot be used. Fix them and reload:",
			problems: []string{fmt.Sprintf("province: there is no province %d", ch.ProvinceID)}}
	}
	if d.Units, err = s.store.Units(ctx, ch.ProvinceID); err != nil {
		return nil, err
	}
	if d.Dates, _, err = s.store.Dates(ctx, store.DateFilter{ProvinceID: ch.ProvinceID}); err != nil {
		return nil, err
	}
	if d.Cals, err = s.store.Calibrations(ctx); err != nil {
		return nil, err
	}
	all, err := s.store.Sections(ctx)
	if err != nil {
		return nil, err
	}
	var bad []string
	for _, id := range ch.SectionIDs {
		if !slices.ContainsFunc(all, func(x store.Section) bool { return x.ID == id }) {
			bad = append(bad, fmt.Sprintf("sections: there is no section %d", id))
		}
	}
	if len(bad) > 0 {
		return nil, badRequest{message: "This address has parameters that cannot be used. Fix them and reload:", problems: bad}
	}
	for _, sec := range all {
		if len(ch.SectionIDs) > 0 && !slices.Contains(ch.SectionIDs, sec.ID) {
			continue
		}
		d.Sections = append(d.Sections, sec)
		if d.Samples[sec.ID], _, err = s.store.Samples(ctx, sec.ID); err != nil {
			return nil, err
		}
		ties, err := s.store.TiePoints(ctx, sec.ID)
		if err != nil {
			return nil, err
		}
		// The age models rest on the ties the review choice (include=, as for the dates) lets in.
		d.Ties[sec.ID], d.TiesOut[sec.ID] = partitionReviewed(ch.Dens.Sum.Include, ties, tieState)
		evs, err := s.store.Events(ctx, sec.ID)
		if err != nil {
			return nil, err
		}
		d.Events[sec.ID] = d.reviewedEvents(evs, ch.Dens.Sum.Include)
		if d.Hiatuses[sec.ID], err = s.store.Hiatuses(ctx, sec.ID); err != nil {
			return nil, err
		}
		// Absolute ages compared across systems and laboratories: ties from dates at the full level.
		if d.TieIns[sec.ID], err = s.tieInputs(ctx, d.Ties[sec.ID], "full"); err != nil {
			return nil, err
		}
		for _, t := range d.Ties[sec.ID] {
			if t.DateID != nil {
				if dt, err := s.store.Date(ctx, *t.DateID); err == nil {
					d.LinkDates[*t.DateID] = dt
				}
			}
		}
	}
	evs, err := s.store.Events(ctx, 0)
	if err != nil {
		return nil, err
	}
	known := map[int64]bool{}
	for _, e := range evs {
		known[e.ID] = true
		if e.SectionID == nil && e.AgeMa != nil && e.SigmaMa != nil {
			d.Direct = append(d.Direct, d.reviewedEvents([]store.Event{e}, ch.Dens.Sum.Include)...)
		}
	}
	for _, id := range ch.EventIDs {
		if !known[id] {
			bad = append(bad, fmt.Sprintf("events: there is no event %d", id))
		}
	}
	if len(bad) > 0 {
		return nil, badRequest{message: "This address has parameters that cannot be used. Fix them and reload:", problems: bad}
	}
	return d, nil
}

// pulseInputs computes the density with the choice and returns its pulses with their edge draws, the
// density (for the figure) and the unit summaries.
func pulseInputs(d *compareData, dc densityChoice) ([]comparePulse, densityResult, []unitSummary, string, error) {
	dc.stop = d.stop
	sums, err := summarizeUnits(d.Units, d.Dates, dc.Sum)
	if err != nil {
		return nil, densityResult{}, nil, "", err
	}
	res, err := computeDensity(sums, dc, dateBars(sums, dc))
	if err != nil {
		return nil, res, sums, "", err
	}
	if res.Band == nil {
		return nil, res, sums, "", nil
	}
	edges, err := stats.PulseEdgeDraws(*res.Band, stats.PulseOptions{})
	if err != nil {
		return nil, res, sums, "", err
	}
	// stats lists pulses youngest first (ascending mode); name them from the oldest.
	apply, note := edgeSystematics(sums, res, dc)
	summaries := oldestFirst(res.Pulses)
	var out []comparePulse
	for i := range edges {
		e := edges[len(edges)-1-i]
		if len(e.StartMa) == 0 {
			continue
		}
		name := pulseName(i)
		on, end := e.Quantities(name, "pulse "+name)
		cp := comparePulse{Name: name, Edges: e, Onset: apply(on), End: apply(end)}
		if i < len(summaries) {
			cp.Summary = summaries[i]
		}
		out = append(out, cp)
	}
	return out, res, sums, note, nil
}

// edgeSystematics decides which systematic components the pulse edges carry: those of the decay system
// of the values counted in the density (all U–Pb: λ238 and, with one tracer, its calibration; all
// ⁴⁰Ar/³⁹Ar: the chosen calibration's monitor age and λ). A density that mixes systems gets the
// majority's components, with a note saying so.
func edgeSystematics(sums []unitSummary, res densityResult, dc densityChoice) (func(stats.Quantity) stats.Quantity, string) {
	count := map[string]int{}
	for _, v := range res.Values {
		count[v.System]++
	}
	major, n := "", 0
	for sys, c := range count {
		if c > n || (c == n && sys < major) {
			major, n = sys, c
		}
	}
	mixed := len(count) > 1
	tracer, rel := upbTracer(sums, dc)
	var apply func(stats.Quantity) stats.Quantity
	var note string
	switch major {
	case "U–Pb":
		apply = func(q stats.Quantity) stats.Quantity { return q.With(stats.UPbSystematics(tracer, rel)...) }
		note = "pulse edges carry the U–Pb systematic components: λ238"
		if tracer != "" {
			note += fmt.Sprintf(" and the %s tracer (%.3f %% 2σ)", tracer, 200*rel)
		}
	case "⁴⁰Ar/³⁹Ar":
		cal := dc.Sum.Cal.Stats
		apply = func(q stats.Quantity) stats.Quantity { q.ArAr = &cal; return q }
		note = "pulse edges carry the ⁴⁰Ar/³⁹Ar calibration " + cal.Name + " " + calDrawn(cal, "draw")
	default:
		apply = func(q stats.Quantity) stats.Quantity { return q }
		note = "pulse edges carry no systematic component (no U–Pb or ⁴⁰Ar/³⁹Ar value counted)"
	}
	if mixed {
		var parts []string
		for sys, c := range count {
			parts = append(parts, fmt.Sprintf("%d %s", c, sys))
		}
		slices.Sort(parts)
		note += fmt.Sprintf("; the density mixes systems (%s values): the edges carry the majority's components only, so against other systems the edges are slightly too narrow — compare at level=full or count one system", strings.Join(parts, ", "))
	}
	return apply, note
}

// upbTracer returns the tracer of the U–Pb dates of the province when there is one, with its relative
// 1σ (from the dates' published X and Y, or the default).
func upbTracer(sums []unitSummary, dc densityChoice) (string, float64) {
	tracers := map[string]bool{}
	var rel float64
	wt := dc.Sum
	wt.Level = stats.WithTracer
	for _, us := range sums {
		for _, sys := range us.Systems {
			if sys.Key != "upb" || !sys.Computed {
				continue
			}
			for _, e := range sys.Entries {
				if e.D.Tracer != "" {
					tracers[e.D.Tracer] = true
				}
			}
			c := sys
			rel = math.Max(rel, tracerRelSigma(&c, wt))
		}
	}
	if len(tracers) != 1 {
		return "", 0
	}
	for t := range tracers {
		return t, rel
	}
	return "", 0
}

// unitInputs returns the unit means of units with a volume, each with its decay system's components.
func unitInputs(sums []unitSummary, dc densityChoice) []compareUnit {
	tracer, rel := upbTracer(sums, dc)
	var out []compareUnit
	for _, us := range sums {
		u := us.Unit
		if u.VolumeKm3 == nil {
			continue
		}
		sys, ok := unitMean(us)
		if !ok {
			continue
		}
		v := stats.Volume{Km3: *u.VolumeKm3}
		if u.VolumeSigmaKm3 != nil {
			v.SigmaKm3 = *u.VolumeSigmaKm3
		}
		out = append(out, compareUnit{ID: u.ID, Name: u.Name, Q: unitQuantity(u.Name, sys, tracer, rel, dc), Volume: v})
	}
	return out
}

// unitMean returns the mean that stands for a unit: its first computed system in the order U–Pb,
// ⁴⁰Ar/³⁹Ar, K–Ar, Re–Os, as the density counts it.
func unitMean(us unitSummary) (*systemSummary, bool) {
	for i := range us.Systems {
		if us.Systems[i].Computed {
			return &us.Systems[i], true
		}
	}
	return nil, false
}

// unitQuantity is a unit's weighted mean (all the dates in it, analytical σ as the policy leaves it) as a
// quantity of the engine, with its decay system's systematic components: U–Pb λ238 and the province's
// tracer, ⁴⁰Ar/³⁹Ar the chosen calibration's monitor age and λ; other systems none.
func unitQuantity(name string, sys *systemSummary, tracer string, rel float64, dc densityChoice) stats.Quantity {
	switch sys.Key {
	case "upb":
		return stats.UPbDate(name, sys.All.MeanMa, sys.All.Sigma1s, tracer, rel)
	case "arar":
		return stats.ArArDate(name, sys.All.MeanMa, sys.All.Sigma1s, dc.Sum.Cal.Stats)
	}
	return stats.NormalAge(name, sys.All.MeanMa, sys.All.Sigma1s)
}

// unitRowInputs returns every unit of the province with a mean as a point-like age, oldest first, with
// how its mean is made. Units without a mean are named in the notes.
func unitRowInputs(sums []unitSummary, dc densityChoice) ([]compareUnitRow, []string) {
	tracer, rel := upbTracer(sums, dc)
	var out []compareUnitRow
	var notes []string
	for _, us := range sums {
		u := us.Unit
		sys, ok := unitMean(us)
		if !ok {
			if len(us.Systems) > 0 {
				notes = append(notes, fmt.Sprintf("unit %s (U%d): no date enters a mean (%s), so it is not compared", u.Name, u.ID, includeLabel(dc.Sum.Include)))
			}
			continue
		}
		q := unitQuantity(u.Name, sys, tracer, rel, dc)
		r := compareUnitRow{Code: "U" + strconv.FormatInt(u.ID, 10), ID: u.ID, Name: u.Name, URL: idURL("/units", u.ID),
			System: sys.Label, MeanMa: sys.All.MeanMa, Sigma1s: sys.All.Sigma1s, N: sys.All.N, Q: q}
		r.How = unitMeanHow(us, sys, dc)
		switch {
		case q.ArAr != nil:
			r.Syst = "the ⁴⁰Ar/³⁹Ar calibration " + q.ArAr.Name + " " + calDrawn(*q.ArAr, "joint draw")
		case len(q.Systematics) > 0:
			r.Syst = "λ238"
			if tracer != "" {
				r.Syst += fmt.Sprintf(" and the %s tracer (%.3f %% 2σ)", tracer, 200*rel)
			}
			r.Syst += ", drawn once per joint draw"
		default:
			r.Syst = "none (no systematic terms are stored for " + sys.Label + ")"
		}
		out = append(out, r)
	}
	slices.SortStableFunc(out, func(a, b compareUnitRow) int { return cmpF(b.MeanMa, a.MeanMa) })
	return out, notes
}

// unitMeanHow says how a unit's mean was made: system, dates, ± and the choices behind it.
func unitMeanHow(us unitSummary, sys *systemSummary, dc densityChoice) string {
	var codes []string
	for _, e := range sys.Entries {
		codes = append(codes, e.D.SampleCode)
	}
	slices.Sort(codes)
	a := sys.Report.All
	parts := []string{fmt.Sprintf("%s weighted mean of %s (%s): %s ± %s Ma (1σ analytical",
		sys.Label, count(sys.All.N, "date"), strings.Join(codes, ", "), fixed(sys.All.MeanMa, 4), fixed(sys.All.Sigma1s, 4))}
	if a.Inflated {
		parts[0] += fmt.Sprintf(", inflated by √MSWD = %.2f under policy %s)", a.Factor, dc.Sum.PolicyCode)
	} else {
		parts[0] += ", policy " + dc.Sum.PolicyCode + ")"
	}
	if a.MSWDDefined {
		parts = append(parts, fmt.Sprintf("MSWD %s (p %s)", fmtMSWD(a.MSWD), fmtP(a.P)))
	}
	if sys.Key == "arar" {
		parts = append(parts, "recalculated to "+dc.Sum.Cal.Cal.Code)
	}
	switch f := flaggedCodes(*sys); {
	case dc.Sum.Rule == stats.RuleNone:
	case sys.Report.Skipped != "":
		parts = append(parts, "outlier rule "+dc.Sum.Rule.String()+" not applied: "+sys.Report.Skipped)
	case len(f) > 0:
		parts = append(parts, fmt.Sprintf("outlier rule %s flags %s: flagged, not dropped (the mean is the unit summary's, as the density counts it)", dc.Sum.Rule, strings.Join(f, ", ")))
	default:
		parts = append(parts, "outlier rule "+dc.Sum.Rule.String()+": none flagged")
	}
	var left int
	for _, x := range sys.Excluded {
		if x.Review {
			left++
		}
	}
	parts = append(parts, includeLabel(dc.Sum.Include))
	if left > 0 {
		parts[len(parts)-1] += fmt.Sprintf(" (%s left out by include=%s)", count(left, "date"), dc.Sum.Include)
	}
	if us.Mixed {
		parts = append(parts, "the unit's other systems' means are set aside (one value per unit, first in the order U–Pb, ⁴⁰Ar/³⁹Ar, K–Ar, Re–Os)")
	}
	return strings.Join(parts, "; ")
}

// sectionChoice are the section choices that decide event ages: the age model and the TOC threshold.
type sectionChoice struct {
	Model  string
	Draws  int
	Seed   uint64
	TocMin *float64
}

// eventInputs analyses each section with the choice and returns the chosen events with their ages.
func eventInputs(d *compareData, ch compareChoice, sc sectionChoice) ([]compareEvent, []string, error) {
	var out []compareEvent
	var notes []string
	wanted := func(id int64) bool { return len(ch.EventIDs) == 0 || slices.Contains(ch.EventIDs, id) }
	for _, sec := range d.Sections {
		if err := d.stopped(); err != nil {
			return nil, nil, err
		}
		o := sectionOptionsFrom(&params{q: url.Values{}}, sec)
		o.Model, o.Draws, o.Seed, o.Include = sc.Model, sc.Draws, sc.Seed, ch.Dens.Sum.Include
		// The ties enter with their random part; their components are the engine's to draw, once per
		// joint draw, with every other quantity that carries them.
		o.TieLevel, o.SharedApart = "full", true
		if sc.TocMin != nil {
			o.TocMin = *sc.TocMin
		}
		a, err := analyseSection(sec, d.Samples[sec.ID], d.Ties[sec.ID], d.TieIns[sec.ID], d.Events[sec.ID], d.Hiatuses[sec.ID], o)
		if err != nil {
			return nil, nil, err
		}
		var comps []stats.SharedComponent
		if a.Model != nil {
			comps = tieComponents(a.Model.TieIns, "full")
		}
		modelText := fmt.Sprintf("Monte Carlo age–height model of %s (%d draws, seed %d)", sec.Name, sc.Draws, sc.Seed)
		if sc.Model == "linear" {
			modelText = "naive linear age–height model of " + sec.Name + " (normal with its 95 % interval)"
		}
		dep := []string{"age model: " + sc.Model}
		group := fmt.Sprintf("model %d", sec.ID)
		add := func(code, name, kind string, ea eventAge, url string, extra []string, groupOnly bool) {
			if math.IsNaN(ea.Age.Median) {
				notes = append(notes, fmt.Sprintf("%s (%s): %s", name, sec.Name, orDash(ea.Note)))
				return
			}
			ce := compareEvent{Code: code, Name: name, Section: sec.Name, SectionID: sec.ID, Kind: kind, URL: url,
				Depends: append(slices.Clone(dep), extra...), Summary: ea.Age, groupOnly: groupOnly}
			h, where := eventPoint(ea, ch.Point)
			ce.Point = where
			var shares func(c stats.SharedComponent) ([]float64, error)
			if a.Model != nil && a.Model.MC != nil {
				ag, err := a.Model.MC.EventAge(h, h, ea.Seed)
				if err != nil {
					notes = append(notes, fmt.Sprintf("%s (%s): %v", name, sec.Name, err))
					return
				}
				ce.Draws = ag.AgesMa
				ce.Summary = ag.Summary
				ce.Q = stats.SampledAge(name+" · "+sec.Name, ag.AgesMa, group)
				ce.How = fmt.Sprintf("%s, %s at %s m", modelText, pointWords(where), num(h))
				shares = func(c stats.SharedComponent) ([]float64, error) { return a.Model.MC.Shares(c.Carries, h) }
			} else if a.Model != nil && a.Model.Linear != nil {
				j, _ := slices.BinarySearch(a.Model.Linear.HeightsM, h)
				mu, sd := a.Model.Linear.AgeMa[j], a.Model.Linear.SigmaMa[j]
				ce.Summary = stats.DrawSummary{Median: mu, Lo95: a.Model.Linear.Lo95[j], Hi95: a.Model.Linear.Hi95[j]}
				ce.Q = stats.NormalAge(name+" · "+sec.Name, mu, sd)
				ce.How = fmt.Sprintf("%s, %s at %s m: N(%s, %s²) Ma", modelText, pointWords(where), num(h), fixed(mu, 4), fixed(sd, 4))
				shares = func(c stats.SharedComponent) ([]float64, error) {
					x, err := a.Model.Linear.Shares(c.Carries, h)
					return []float64{x}, err
				}
			} else {
				notes = append(notes, fmt.Sprintf("%s (%s): %s", name, sec.Name, orDash(ea.Note)))
				return
			}
			q, note, err := withSharedComponents(ce.Q, comps, shares)
			if err != nil {
				notes = append(notes, fmt.Sprintf("%s (%s): %v", name, sec.Name, err))
				return
			}
			ce.Q = q
			ce.How += "; " + note
			out = append(out, ce)
		}
		k := 0
		for _, ev := range a.Events {
			if ev.BaseHeightM == nil {
				continue
			}
			ea := a.EventAges[k]
			k++
			if !wanted(ev.ID) && !slices.Contains(ch.Groups, ev.Kind) {
				continue
			}
			add("E"+strconv.FormatInt(ev.ID, 10), ev.Name, ev.Kind, ea, idURL("/sections", sec.ID)+"#events", nil, !wanted(ev.ID))
		}
		if ch.Anomalies {
			for _, an := range a.Anomalies {
				if an.Age == nil {
					continue
				}
				code := fmt.Sprintf("A%d.%d", sec.ID, an.Number)
				add(code, fmt.Sprintf("Anomaly %d (%s)", an.Number, an.Series), "hg_anomaly", *an.Age,
					idURL("/sections", sec.ID)+"/anomalies", []string{fmt.Sprintf("Hg/TOC threshold %s wt%%", num(o.TocMin))}, false)
			}
		}
	}
	for _, e := range d.Direct {
		if len(ch.EventIDs) > 0 && !slices.Contains(ch.EventIDs, e.ID) {
			continue
		}
		out = append(out, compareEvent{Code: "E" + strconv.FormatInt(e.ID, 10), Name: e.Name, Kind: e.Kind,
			How:     fmt.Sprintf("direct age %s ± %s Ma (1σ, as stored), no systematic component", fixed(*e.AgeMa, 4), fixed(*e.SigmaMa, 4)),
			Q:       stats.NormalAge(e.Name, *e.AgeMa, *e.SigmaMa),
			Summary: stats.DrawSummary{Median: *e.AgeMa, Lo95: *e.AgeMa - 1.96**e.SigmaMa, Hi95: *e.AgeMa + 1.96**e.SigmaMa}})
	}
	out, gnotes := addGroups(out, ch, sc.Seed)
	notes = append(notes, gnotes...)
	return out, notes, nil
}

// eventsAtLeast counts, without computing anything, the events a comparison will surely have: the
// chosen events of each section that lie within the heights of its tie points with an age (at least two),
// and the chosen direct ages. Detected anomalies and correlated groups come on top; members used only by
// a group are not counted. Unless an age model fails to fit, it never counts more than the comparison
// will have.
func eventsAtLeast(d *compareData, ch compareChoice) int {
	n := 0
	chosen := func(id int64) bool { return len(ch.EventIDs) == 0 || slices.Contains(ch.EventIDs, id) }
	for _, sec := range d.Sections {
		lo, hi, k := math.Inf(1), math.Inf(-1), 0
		for _, t := range d.Ties[sec.ID] {
			if tieHasAge(t) {
				lo, hi, k = math.Min(lo, t.HeightM), math.Max(hi, t.HeightM), k+1
			}
		}
		if k < 2 {
			continue
		}
		for _, e := range d.Events[sec.ID] {
			if e.BaseHeightM == nil || !chosen(e.ID) || *e.BaseHeightM < lo || *e.BaseHeightM > hi {
				continue
			}
			if e.TopHeightM != nil && (*e.TopHeightM < lo || *e.TopHeightM > hi) {
				continue
			}
			n++
		}
	}
	for _, e := range d.Direct {
		if chosen(e.ID) {
			n++
		}
	}
	return n
}

// withSharedComponents gives an event's age the components of its age model's ties, each with the share of
// the age its ties make up there (1 between two ties that carry it, less next to a tie that does not),
// and says so.
func withSharedComponents(q stats.Quantity, comps []stats.SharedComponent, shares func(stats.SharedComponent) ([]float64, error)) (stats.Quantity, string, error) {
	if len(comps) == 0 {
		return q, "its ties carry no shared component (none is linked to a U–Pb or ⁴⁰Ar/³⁹Ar date)", nil
	}
	q.Shares = map[string][]float64{}
	var parts []string
	for _, c := range comps {
		sh, err := shares(c)
		if err != nil {
			return q, "", err
		}
		key := c.Key
		if c.Cal != nil {
			cal := *c.Cal
			q.ArAr = &cal
			key = stats.ArArCalibrationKey(cal)
		} else {
			q.Systematics = append(q.Systematics, c.Systematic)
		}
		if !allOne(sh) {
			q.Shares[key] = sh
		}
		med := stats.Median(sh)
		parts = append(parts, fmt.Sprintf("%s (share %s)", componentLabel(c), fixed(med, 2)))
	}
	return q, "its ties enter with their random part and carry " + strings.Join(parts, "; ") +
		" (the part of the age the ties carrying it make up; each drawn once per joint draw with every quantity that carries it)", nil
}

// allOne reports whether every share is 1 to within rounding: the component moves the whole age.
func allOne(sh []float64) bool {
	for _, x := range sh {
		if math.Abs(x-1) > 1e-9 {
			return false
		}
	}
	return true
}

// addGroups adds one correlated event per group kind: in each draw the inverse-variance weighted mean
// of the members' ages (members from different sections are independent, so pairing their draws is
// fair); it assumes the members are one synchronous event. Members used only by a group are removed.
func addGroups(evs []compareEvent, ch compareChoice, seed uint64) ([]compareEvent, []string) {
	var notes []string
	var out []compareEvent
	for _, e := range evs {
		if !e.groupOnly {
			out = append(out, e)
		}
	}
	for _, kind := range ch.Groups {
		var members []compareEvent
		for _, e := range evs {
			if e.Kind == kind && e.SectionID != 0 {
				members = append(members, e)
			}
		}
		label := store.Label(store.EventKinds(), kind)
		if len(members) < 2 {
			notes = append(notes, fmt.Sprintf("group %s: needs events of that kind in at least two sections, found %d", label, len(members)))
			continue
		}
		n := 0
		for _, m := range members {
			n = max(n, len(m.Draws))
		}
		if n == 0 {
			n = defaultSectionDraws
		}
		draws := make([][]float64, len(members))
		w := make([]float64, len(members))
		var names []string
		for i, m := range members {
			ds := m.Draws
			if len(ds) == 0 { // a normal age: draw it
				h := fnv.New64a()
				h.Write([]byte("group " + kind + " " + m.Code))
				r := rand.New(rand.NewPCG(seed, h.Sum64()))
				ds = make([]float64, n)
				for k := range ds {
					ds[k] = m.Q.AgeMa + m.Q.SigmaMa*r.NormFloat64()
				}
			}
			draws[i] = ds
			v := variance(ds)
			if v <= 0 {
				v = 1e-12
			}
			w[i] = 1 / v
			names = append(names, m.Name+" ("+m.Section+")")
		}
		comb := make([]float64, n)
		for k := range comb {
			var sw, sx float64
			for i := range draws {
				x := draws[i][k%len(draws[i])]
				sw += w[i]
				sx += w[i] * x
			}
			comb[k] = sx / sw
		}
		// Only the components every member carries are kept.
		syst := slices.Clone(members[0].Q.Systematics)
		for _, m := range members[1:] {
			syst = slices.DeleteFunc(syst, func(s stats.Systematic) bool { return !slices.Contains(m.Q.Systematics, s) })
		}
		name := label + " (correlated)"
		q := stats.SampledAge(name, comb, "group "+kind).With(syst...)
		out = append(out, compareEvent{Code: "G:" + kind, Name: name, Section: fmt.Sprintf("%d sections", len(members)), Kind: kind,
			How: "one synchronous event: in each draw the inverse-variance weighted mean of " + strings.Join(names, "; ") +
				"; shared components kept: " + keysText(syst),
			Depends: []string{"age model: " + ch.Model, "synchroneity of the members assumed"}, Q: q, Draws: comb,
			Summary: summarize(comb)})
	}
	return out, notes
}

func keysText(s []stats.Systematic) string {
	if len(s) == 0 {
		return "none"
	}
	var k []string
	for _, x := range s {
		k = append(k, x.Key)
	}
	return strings.Join(k, ", ")
}

func variance(x []float64) float64 {
	if len(x) < 2 {
		return 0
	}
	var m float64
	for _, v := range x {
		m += v
	}
	m /= float64(len(x))
	var s float64
	for _, v := range x {
		s += (v - m) * (v - m)
	}
	return s / float64(len(x)-1)
}

// summarize returns the median and 2.5/97.5 % of draws (type 7).
func summarize(x []float64) stats.DrawSummary {
	s := slices.Clone(x)
	sort.Float64s(s)
	q := func(p float64) float64 {
		h := p * float64(len(s)-1)
		lo := math.Floor(h)
		if int(lo)+1 >= len(s) {
			return s[len(s)-1]
		}
		return s[int(lo)] + (h-lo)*(s[int(lo)+1]-s[int(lo)])
	}
	return stats.DrawSummary{Median: q(0.5), Lo95: q(0.025), Hi95: q(0.975)}
}

// compareResult is a computed comparison: what the page, the figure and the downloads show.
type compareResult struct {
	Province    store.Province
	Choice      compareChoice
	Stamp       int64
	Computed    time.Duration
	At          string
	Density     densityResult
	Sums        []unitSummary
	In          compareInputs
	Table       stats.ComparisonTable   // pulse rows (rows=pulses|both)
	UnitTable   stats.PairTable         // unit rows (rows=units|both): each unit's mean against each event
	Volume      []*stats.VolumeFraction // per event; nil without volumes
	VolumeNote  string
	Order       stats.OrderMatrix
	OrderCodes  []string
	Sens        *stats.SensitivityResult
	SensMissing map[string][]string // row name → sets in which an input was absent
	// SensVolume is the median volume fraction before each event under each sensitivity set
	// ([set][event]); nil without a volume fraction or sensitivity.
	SensVolume [][]float64
	Keys       []string
	MinSamples int
	Notes      []string
	Cautions   []string
}

// sensRowName names a probability of the sensitivity analysis.
// eventReviewCautions names the events waiting for review that include= left out of the comparison, and
// the unreviewed or rejected ones it let in.
func eventReviewCautions(used, left []store.Event, include string) []string {
	r := func(es []store.Event) []reviewed {
		out := make([]reviewed, len(es))
		for i, e := range es {
			name := e.Name
			if e.Section != "" {
				name += " (" + e.Section + ")"
			}
			out[i] = reviewed{name, string(e.ReviewState)}
		}
		return out
	}
	return reviewCautions(compareScope, "", "event", "events", r(used), r(left), include)
}

func sensRowName(pulse, event, what string) string { return pulse + " × " + event + " · " + what }

// sensVolumeName names the volume fraction's conclusion for an event in the sensitivity analysis:
// P(more than half the volume erupted before the event).
func sensVolumeName(event string) string { return sensRowName("volume", event, "most before") }

// sensVolumeAbsent is the SensMissing entry of the volume fraction: the sets in which a unit with a
// volume had no mean.
const sensVolumeAbsent = "volume fraction"

// computeComparison builds the inputs and runs the engine.
func computeComparison(d *compareData, ch compareChoice, stamp int64) (*compareResult, error) {
	start := time.Now()
	res := &compareResult{Province: d.Province, Choice: ch, Stamp: stamp}
	// The limit on events is checked before anything is computed, from what the data already say.
	if n := eventsAtLeast(d, ch); n > maxCompareEvents {
		return nil, badRequest{message: "This address has parameters that cannot be used. Fix them and reload:",
			problems: []string{fmt.Sprintf("events: at least %d events chosen, at most %d (choose with events= or sections=)", n, maxCompareEvents)}}
	}
	pulses, dens, sums, edgeNote, err := pulseInputs(d, ch.Dens)
	if err != nil {
		return nil, err
	}
	res.Density, res.Sums = dens, sums
	if dens.Band == nil {
		res.Cautions = append(res.Cautions, "No density, so no pulse to compare: "+dens.Message)
	}
	var bad []string
	if len(ch.Pulses) > 0 {
		var keep []comparePulse
		for _, name := range ch.Pulses {
			i := slices.IndexFunc(pulses, func(p comparePulse) bool { return p.Name == name })
			if i < 0 {
				bad = append(bad, fmt.Sprintf("pulses: there is no pulse %s with these density choices (there are %d)", name, len(pulses)))
				continue
			}
			keep = append(keep, pulses[i])
		}
		pulses = keep
	}
	sc := sectionChoice{Model: ch.Model, Draws: ch.ModelDraws, Seed: ch.Dens.Seed, TocMin: ch.TocMin}
	events, enotes, err := eventInputs(d, ch, sc)
	if err != nil {
		return nil, err
	}
	if len(events) > maxCompareEvents {
		bad = append(bad, fmt.Sprintf("events: %d events chosen, at most %d (choose with events= or sections=)", len(events), maxCompareEvents))
	}
	if len(bad) > 0 {
		return nil, badRequest{message: "This address has parameters that cannot be used. Fix them and reload:", problems: bad}
	}
	res.In = compareInputs{Pulses: pulses, Events: events, Units: unitInputs(sums, ch.Dens), EdgeNote: edgeNote, Notes: enotes}
	res.Notes = append(res.Notes, enotes...)
	if ch.unitRows() || slices.ContainsFunc(ch.Order, isUnitCode) {
		rows, unotes := unitRowInputs(sums, ch.Dens)
		if len(ch.UnitIDs) > 0 {
			var keep []compareUnitRow
			for _, id := range ch.UnitIDs {
				i := slices.IndexFunc(rows, func(u compareUnitRow) bool { return u.ID == id })
				if i < 0 {
					bad = append(bad, unknownUnit(d, id))
					continue
				}
				keep = append(keep, rows[i])
			}
			rows = keep
		} else if ch.unitRows() {
			res.Notes = append(res.Notes, unotes...)
		}
		res.In.UnitRows = rows
		if len(bad) > 0 {
			return nil, badRequest{message: "This address has parameters that cannot be used. Fix them and reload:", problems: bad}
		}
	}
	for _, sec := range d.Sections {
		res.Cautions = append(res.Cautions, tieReviewCautions(sec.Name, d.Ties[sec.ID], d.TiesOut[sec.ID], ch.Dens.Sum.Include)...)
		hIn, hOut := partitionReviewed(ch.Dens.Sum.Include, d.Hiatuses[sec.ID], hiatusState) // as analyseSection splits them
		res.Cautions = append(res.Cautions, hiatusReviewCautions(sec.Name, hIn, hOut, ch.Dens.Sum.Include)...)
	}
	res.Cautions = append(res.Cautions, eventReviewCautions(d.EventsIn, d.EventsOut, ch.Dens.Sum.Include)...)
	res.Cautions = append(res.Cautions, unusableSigmaCautions(sums)...)
	shownUnits := 0
	if ch.unitRows() {
		shownUnits = len(res.In.UnitRows)
		if shownUnits == 0 {
			res.Cautions = append(res.Cautions, "No unit of the province has a weighted mean under these choices: there is no unit row to compare.")
		}
	}
	pulseRows := 0
	if ch.pulseRows() {
		pulseRows = len(pulses)
	}
	if pulseRows+shownUnits == 0 || len(events) == 0 {
		if len(events) == 0 {
			res.Cautions = append(res.Cautions, "No event with an age to compare in the chosen sections.")
		}
		res.Computed = time.Since(start)
		return res, nil
	}
	qs, iv, evIdx, unitIdx, rowIdx := assemble(res.In)
	if err := d.stopped(); err != nil {
		return nil, err
	}
	jd, err := stats.DrawJoint(qs, stats.DrawOptions{N: ch.N, Seed: ch.Dens.Seed, Level: ch.Level})
	if err != nil {
		return nil, err
	}
	res.Keys, res.MinSamples = jd.Keys, jd.MinSamples
	opt := stats.PairOptions{DeltaMa: ch.DeltaMa, Overlap: true}
	if ch.pulseRows() {
		if res.Table, err = jd.Table(iv, evIdx, opt); err != nil {
			return nil, err
		}
	}
	if ch.unitRows() {
		if res.UnitTable, err = jd.PairTable(rowIdx, evIdx, opt); err != nil {
			return nil, err
		}
	}
	// The volume fraction, per event.
	if len(unitIdx) > 0 {
		vols := make([]stats.Volume, len(res.In.Units))
		for i, u := range res.In.Units {
			vols[i] = u.Volume
		}
		res.Volume = make([]*stats.VolumeFraction, len(events))
		for e, q := range evIdx {
			vf, err := jd.VolumeFractionBefore(unitIdx, vols, q)
			if err != nil {
				res.VolumeNote = "No volume fraction: " + err.Error()
				res.Volume = nil
				break
			}
			res.Volume[e] = &vf
		}
		if res.Volume != nil {
			res.VolumeNote = fmt.Sprintf("Volume before the event: %d units with a volume (each drawn from its volume ± 1σ, truncated at 0) and their weighted means; units without a volume are left out.", len(unitIdx))
		}
	} else {
		res.VolumeNote = "No volume fraction: no unit of the province has both a volume and a mean."
	}
	// The order matrix.
	codes := ch.Order
	if len(codes) == 0 {
		if ch.pulseRows() {
			for _, p := range pulses {
				codes = append(codes, p.Name, p.Name+".end")
			}
		}
		if ch.unitRows() {
			for _, u := range res.In.UnitRows {
				codes = append(codes, u.Code)
			}
		}
		for _, e := range events {
			codes = append(codes, e.Code)
		}
	}
	var items []int
	for _, c := range codes {
		i, ok := itemIndex(c, res.In, iv, evIdx, rowIdx)
		if !ok {
			bad = append(bad, fmt.Sprintf("order: unknown item %q; want a pulse (P1 for its onset, P1.end), a unit (U7), an event (E12), a group (G:cie_onset) or an anomaly (A3.1) of this comparison", c))
			continue
		}
		items = append(items, i)
	}
	if len(bad) > 0 {
		return nil, badRequest{message: "This address has parameters that cannot be used. Fix them and reload:", problems: bad}
	}
	res.OrderCodes = codes
	if res.Order, err = jd.Order(items); err != nil {
		return nil, err
	}
	if err := d.stopped(); err != nil {
		return nil, err
	}
	if ch.Sens {
		if err := res.sensitivity(d, ch, qs, iv, evIdx, unitIdx, rowIdx); err != nil {
			return nil, err
		}
	}
	res.Computed = time.Since(start)
	return res, nil
}

// assemble lays the inputs out as the engine's quantities: pulse onsets and ends, events, units with a
// volume, then the unit rows without one. A unit row with a volume is the volume fraction's quantity
// (rowIdx points at it), so a unit has one set of draws; and with no unit rows the quantities, and so
// every draw, are what they were before unit rows existed.
func assemble(in compareInputs) (qs []stats.Quantity, iv []stats.IntervalRef, evIdx, unitIdx, rowIdx []int) {
	for _, p := range in.Pulses {
		iv = append(iv, stats.IntervalRef{Name: p.Name, Onset: len(qs), End: len(qs) + 1})
		qs = append(qs, p.Onset, p.End)
	}
	for _, e := range in.Events {
		evIdx = append(evIdx, len(qs))
		qs = append(qs, e.Q)
	}
	for _, u := range in.Units {
		unitIdx = append(unitIdx, len(qs))
		qs = append(qs, u.Q)
	}
	for _, r := range in.UnitRows {
		if i := slices.IndexFunc(in.Units, func(u compareUnit) bool { return u.ID == r.ID }); i >= 0 {
			rowIdx = append(rowIdx, unitIdx[i])
			continue
		}
		rowIdx = append(rowIdx, len(qs))
		qs = append(qs, r.Q)
	}
	return unifyKeys(qs), iv, evIdx, unitIdx, rowIdx
}

// unifyKeys gives every quantity carrying a systematic key the same description of it: the tracer
// term of one tracer is estimated from different dates for the province and for each section, and the
// engine requires one σ per key; the largest is kept (the conservative choice).
func unifyKeys(qs []stats.Quantity) []stats.Quantity {
	widest := map[string]stats.Systematic{}
	for _, q := range qs {
		for _, s := range q.Systematics {
			if w, ok := widest[s.Key]; !ok || s.RelSigma > w.RelSigma || s.SigmaMa > w.SigmaMa {
				widest[s.Key] = s
			}
		}
	}
	for i := range qs {
		if len(qs[i].Systematics) == 0 {
			continue
		}
		sys := slices.Clone(qs[i].Systematics)
		for k, s := range sys {
			sys[k] = widest[s.Key]
		}
		qs[i].Systematics = sys
	}
	return qs
}

// itemIndex finds the quantity of an order-matrix code.
func itemIndex(code string, in compareInputs, iv []stats.IntervalRef, evIdx, rowIdx []int) (int, bool) {
	for i, u := range in.UnitRows {
		if u.Code == code {
			return rowIdx[i], true
		}
	}
	for i, p := range in.Pulses {
		switch code {
		case p.Name, p.Name + ".onset":
			return iv[i].Onset, true
		case p.Name + ".end":
			return iv[i].End, true
		}
	}
	for i, e := range in.Events {
		if e.Code == code {
			return evIdx[i], true
		}
	}
	return 0, false
}

// sensitivity recomputes every cell under the alternative calibrations, bandwidth rules, age-model
// choices and (with anomalies) TOC thresholds, with the same seed and draws (common random numbers):
// the pulse rows' P(after onset), P(within) and P(|lag| < δ), the unit rows' P(after) and P(|lag| < δ)
// (a calibration moves the ⁴⁰Ar/³⁹Ar unit means), and each event's volume fraction — its median, and
// P(more than half the volume before the event) as the conclusion that may flip.
// An input absent under an alternative (a pulse the alternative density lacks, an anomaly the
// alternative threshold does not find) keeps its baseline value there and is named in SensMissing.
func (res *compareResult) sensitivity(d *compareData, ch compareChoice, base []stats.Quantity, iv []stats.IntervalRef, evIdx, unitIdx, rowIdx []int) error {
	type alt struct {
		name string
		dens *densityChoice
		sec  *sectionChoice
	}
	var alts []alt
	hasArAr := slices.ContainsFunc(d.Dates, func(dt store.Date) bool { k, _, _ := systemOf(dt.Method); return k == "arar" })
	if hasArAr {
		for _, c := range d.Cals {
			if c.Code == ch.Dens.Sum.Cal.Cal.Code {
				continue
			}
			dc := ch.Dens
			dc.Sum.Cal.Cal, dc.Sum.Cal.Stats = c, statsCalibration(c)
			alts = append(alts, alt{name: "calibration " + c.Code, dens: &dc})
		}
	}
	for _, rule := range []string{"isj", "scott", "silverman", "silverman-robust"} {
		if rule == ch.Dens.Rule.String() {
			continue
		}
		dc := ch.Dens
		dc.Rule, _ = stats.ParseBandwidthRule(rule)
		alts = append(alts, alt{name: "bandwidth " + rule, dens: &dc})
	}
	base0 := sectionChoice{Model: ch.Model, Draws: ch.ModelDraws, Seed: ch.Dens.Seed, TocMin: ch.TocMin}
	if slices.ContainsFunc(res.In.Events, func(e compareEvent) bool { return e.SectionID != 0 || strings.HasPrefix(e.Code, "G:") }) {
		sc := base0
		sc.Model = map[string]string{"mc": "linear", "linear": "mc"}[ch.Model]
		alts = append(alts, alt{name: "age model " + sc.Model, sec: &sc})
	}
	if ch.Anomalies {
		for _, t := range []float64{0.2, 0.5, 1} {
			if ch.TocMin != nil && *ch.TocMin == t {
				continue
			}
			sc := base0
			tt := t
			sc.TocMin = &tt
			alts = append(alts, alt{name: fmt.Sprintf("TOC threshold %s wt%%", num(t)), sec: &sc})
		}
	}
	sets := []stats.InputSet{{Name: "as chosen", Quantities: base}}
	missing := map[string][]string{}
	results := make([][]stats.Quantity, len(alts))
	errs := make([]error, len(alts))
	absent := make([][]string, len(alts))
	var wg sync.WaitGroup
	for k, a := range alts {
		wg.Go(func() {
			if errs[k] = d.stopped(); errs[k] != nil {
				return
			}
			qs := slices.Clone(base)
			if a.dens != nil {
				ps, _, sums, _, err := pulseInputs(d, *a.dens)
				if err != nil {
					errs[k] = err
					return
				}
				// The unit means under the alternative (another calibration moves the ⁴⁰Ar/³⁹Ar ones).
				units := unitInputs(sums, *a.dens)
				for i, u := range res.In.Units {
					j := slices.IndexFunc(units, func(x compareUnit) bool { return x.ID == u.ID })
					if j < 0 {
						absent[k] = append(absent[k], u.Name)
						if !slices.Contains(absent[k], sensVolumeAbsent) {
							absent[k] = append(absent[k], sensVolumeAbsent)
						}
						continue
					}
					q := units[j].Q
					q.Name = u.Q.Name
					qs[unitIdx[i]] = q
				}
				if len(res.In.UnitRows) > 0 {
					rows, _ := unitRowInputs(sums, *a.dens)
					for i, u := range res.In.UnitRows {
						j := slices.IndexFunc(rows, func(x compareUnitRow) bool { return x.ID == u.ID })
						if j < 0 {
							if !slices.Contains(absent[k], u.Name) {
								absent[k] = append(absent[k], u.Name)
							}
							continue
						}
						q := rows[j].Q
						q.Name = u.Q.Name
						qs[rowIdx[i]] = q
					}
				}
				for i, p := range res.In.Pulses {
					j := nearestPulse(ps, p.Summary.ModeMa)
					if j < 0 {
						absent[k] = append(absent[k], p.Name)
						continue
					}
					on, end := ps[j].Onset, ps[j].End
					on.Name, end.Name = p.Onset.Name, p.End.Name
					qs[iv[i].Onset], qs[iv[i].End] = on, end
				}
			}
			if a.sec != nil {
				evs, _, err := eventInputs(d, ch, *a.sec)
				if err != nil {
					errs[k] = err
					return
				}
				for i, e := range res.In.Events {
					j := slices.IndexFunc(evs, func(x compareEvent) bool { return x.Code == e.Code })
					if j < 0 {
						absent[k] = append(absent[k], e.Name)
						continue
					}
					q := evs[j].Q
					q.Name = e.Q.Name
					qs[evIdx[i]] = q
				}
			}
			results[k] = qs
		})
	}
	wg.Wait()
	for k, a := range alts {
		if errs[k] != nil {
			return fmt.Errorf("sensitivity %s: %w", a.name, errs[k])
		}
		sets = append(sets, stats.InputSet{Name: a.name, Quantities: unifyKeys(results[k])})
		for _, n := range absent[k] {
			missing[n] = append(missing[n], a.name)
		}
	}
	vols := make([]stats.Volume, len(res.In.Units))
	for i, u := range res.In.Units {
		vols[i] = u.Volume
	}
	var volMedians [][]float64
	compare := func(j *stats.JointDraws) ([]stats.NamedProbability, error) {
		if err := d.stopped(); err != nil {
			return nil, err
		}
		var out []stats.NamedProbability
		if ch.pulseRows() {
			t, err := j.Table(iv, evIdx, stats.PairOptions{DeltaMa: ch.DeltaMa})
			if err != nil {
				return nil, err
			}
			for i, row := range t.Cells {
				for e, c := range row {
					out = append(out,
						stats.NamedProbability{Name: sensRowName(t.Intervals[i], res.In.Events[e].Code, "after"), Probability: c.AfterOnset},
						stats.NamedProbability{Name: sensRowName(t.Intervals[i], res.In.Events[e].Code, "within"), Probability: c.Within},
						stats.NamedProbability{Name: sensRowName(t.Intervals[i], res.In.Events[e].Code, "near"), Probability: c.Near})
				}
			}
		}
		if ch.unitRows() && len(rowIdx) > 0 {
			t, err := j.PairTable(rowIdx, evIdx, stats.PairOptions{DeltaMa: ch.DeltaMa})
			if err != nil {
				return nil, err
			}
			for i, row := range t.Cells {
				for e, c := range row {
					code := res.In.UnitRows[i].Code
					out = append(out,
						stats.NamedProbability{Name: sensRowName(code, res.In.Events[e].Code, "after"), Probability: c.Older},
						stats.NamedProbability{Name: sensRowName(code, res.In.Events[e].Code, "near"), Probability: c.Near})
				}
			}
		}
		if res.Volume != nil {
			med := make([]float64, len(evIdx))
			for e, q := range evIdx {
				vf, err := j.VolumeFractionBefore(unitIdx, vols, q)
				if err != nil {
					return nil, err
				}
				med[e] = vf.Fraction.Median
				out = append(out, stats.NamedProbability{Name: sensVolumeName(res.In.Events[e].Code), Probability: vf.Majority})
			}
			// Sensitivity calls compare once per set, in order: the medians line up with its sets.
			volMedians = append(volMedians, med)
		}
		return out, nil
	}
	sr, err := stats.Sensitivity(sets, stats.SensitivityOptions{Draws: stats.DrawOptions{N: ch.N, Seed: ch.Dens.Seed, Level: ch.Level}}, compare)
	if err != nil {
		return err
	}
	res.Sens = &sr
	res.SensMissing = missing
	if res.Volume != nil {
		res.SensVolume = volMedians
	}
	return nil
}

// nearestPulse returns the index of the pulse whose mode is nearest modeMa, or −1 for none.
func nearestPulse(ps []comparePulse, modeMa float64) int {
	best, bd := -1, math.Inf(1)
	for i, p := range ps {
		if dd := math.Abs(p.Summary.ModeMa - modeMa); dd < bd {
			best, bd = i, dd
		}
	}
	return best
}
