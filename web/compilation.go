package web

import (
	"cmp"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"maps"
	"math"
	"net/http"
	"net/url"
	"slices"
	"strconv"
	"strings"
	"sync"
	"time"

	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
)

// The compilation view (/compilation): every province's density and pulses as lanes on one age axis,
// every section's events under them at their age-model ages, the timescale strip; under the figure one
// table of each event against the nearest pulse of every province compared with it. The densities are
// each province's timeline with its default choices; the events' ages and the probabilities are their
// answers (web/eventanswer.go), so every number is the one the event's page and the comparison give.

func (s *Server) registerCompilationRoutes(r chi.Router) {
	r.Get("/compilation", s.handle(s.handleCompilation))
}

// compilationChoice is what the address chooses: the window (either end may be left automatic) and
// the format.
type compilationChoice struct {
	FromMa, ToMa *float64
	Format       string
}

// maxAgeMa is the oldest age an address may ask for (the age of the Earth, rounded up).
const maxAgeMa = 4600

func compilationChoiceFrom(p *params) compilationChoice {
	ch := compilationChoice{Format: p.oneOf("format", []string{"html", "svg", "png", "pdf", "csv", "json", "xlsx"}, "html")}
	ch.FromMa = p.optFloat("from", "an age in Ma from 0 to 4600")
	ch.ToMa = p.optFloat("to", "an age in Ma from 0 to 4600")
	for _, e := range []struct {
		name string
		v    *float64
	}{{"from", ch.FromMa}, {"to", ch.ToMa}} {
		if e.v != nil && (*e.v < 0 || *e.v > maxAgeMa) {
			p.problems = append(p.problems, fmt.Sprintf("%s: want an age in Ma from 0 to %d, got %s", e.name, maxAgeMa, num(*e.v)))
		}
	}
	if ch.FromMa != nil && ch.ToMa != nil && *ch.FromMa == *ch.ToMa {
		p.problems = append(p.problems, "from, to: the window needs two different ages (either order)")
	}
	return ch
}

// compilationLane is one province with its default timeline.
type compilationLane struct {
	Province    store.Province
	Density     densityResult
	NotComputed bool // not computed within the page's budget
}

// compilationEvent is one event with its answer.
type compilationEvent struct {
	Event  store.Event
	Answer eventAnswer
}

// compilationRow is one row of the table: an event against the nearest pulse of one province compared
// with it (Pulse nil and Province zero when no province was compared with the event).
type compilationRow struct {
	Event    store.Event
	Age      answerAge
	Province store.Province
	Pulse    *pulseAnswer
	Note     string
	// NotComputed: the province's comparison was not computed within the page's budget.
	NotComputed bool
}

// compilation is everything the page and its downloads show.
type compilation struct {
	Choice        compilationChoice
	Dens          densityChoice // the timelines' (default) choices
	Lanes         []compilationLane
	Events        []compilationEvent // with an age, in the window, by section then oldest first
	Outside       int                // events with an age outside the window
	NoAge         []store.Event      // accepted events their section's model does not reach
	Rows          []compilationRow
	MinMa, MaxMa  float64
	Auto          bool // the window is the automatic one (neither end chosen)
	Notes         []string
	ComparedPairs int
	// What the page's budget left out: lanes, events whose section's model was not computed, and
	// event–province pairs whose comparison was not.
	Budget           time.Duration // how long the page computes
	Finishing        bool          // what the page left out is being computed for the next reader
	LanesNotComputed int
	AgeNotComputed   []store.Event
	PairsNotComputed int
}

// compilationBudget is how long the page computes what is not kept before it starts no more: the
// timelines, section models and comparisons started by then finish, and the page shows what is ready,
// saying what is not. The downloads compute everything.
const compilationBudget = time.Second

// compilationScope is how much a format of the view computes.
type compilationScope int

const (
	compileWhole  compilationScope = iota // every lane, age and comparison (the table's downloads)
	compileFigure                         // every lane and age, no comparison (the figure's downloads)
	compilePage                           // what is ready within compilationBudget (the page)
)

// withCompilationBudget sets how long the compilation page computes (tests; 0 is the default).
func withCompilationBudget(d time.Duration) Option {
	return func(o *options) { o.compilationBudget = d }
}

func scopeOf(format string) compilationScope {
	switch format {
	case "csv", "json", "xlsx":
		return compileWhole
	case "svg", "png", "pdf":
		return compileFigure
	}
	return compilePage
}

// compilationKept is what the view has computed of one state of the compilation (its data stamp and the
// densities' choices): each province's density, each section page's ages and each comparison's rows,
// so that a page cut short by its budget is completed by the next request, whatever the other caches
// have dropped meanwhile. Kept results are shared: never change one.
type compilationKept struct {
	mu        sync.Mutex
	key       string
	part      compilationParts
	finishing bool // a finisher is computing (finishCompilation)
	noFinish  bool // pages cut short leave the rest to the next (tests)
}

// compilationFinishTime bounds a finisher's work.
const compilationFinishTime = 5 * time.Minute

// finishCompilation computes, after a page cut short by its budget, what it left out, so that the
// next reader finds it kept: in the background, as the table's downloads compute it, in one computing
// slot waited for as a page waits (and in more when they are free), at most one at a time on a server
// and for at most compilationFinishTime. It says whether it started one (or one is running).
func (s *Server) finishCompilation(r *http.Request) bool {
	k := s.compKept
	if k == nil {
		return false
	}
	k.mu.Lock()
	if k.noFinish || k.finishing {
		running := k.finishing
		k.mu.Unlock()
		return running
	}
	k.finishing = true
	k.mu.Unlock()
	ctx, cancel := context.WithTimeout(context.WithoutCancel(r.Context()), compilationFinishTime)
	req := r.Clone(ctx)
	go func() {
		defer cancel()
		defer func() {
			k.mu.Lock()
			k.finishing = false
			k.mu.Unlock()
		}()
		defer func() {
			if v := recover(); v != nil {
				s.log.Error("finishing the compilation", "panic", v)
			}
		}()
		if s.heavy != nil {
			select {
			case s.heavy.slots <- struct{}{}:
				defer s.heavy.give()
			case <-ctx.Done():
				return
			}
		}
		if _, err := s.compilationData(req, compilationChoice{Format: "json"}, compileWhole); err != nil {
			s.log.Warn("finishing the compilation", "err", err)
		}
	}()
	return true
}

// withoutCompilationFinisher leaves what a page cut short by its budget left out to the next request
// (tests).
func withoutCompilationFinisher() Option {
	return func(o *options) { o.noCompilationFinisher = true }
}

// cutShort says the budget left something out.
func (c *compilation) cutShort() bool {
	return c.LanesNotComputed > 0 || len(c.AgeNotComputed) > 0 || c.PairsNotComputed > 0
}

type compilationParts struct {
	lanes    map[int64]densityResult        // by province
	sections map[int64]*sectionAges         // by section
	compares map[string]*comparisonRowsJSON // by the comparison's address
	errs     map[string]error               // by the comparison's address
	near     map[[2]float64]nearProvinces   // the provinces near each event, by its age window
}

// take returns a copy of what is kept under key (empty when another state is kept).
func (k *compilationKept) take(key string) compilationParts {
	if k == nil {
		k = &compilationKept{}
	}
	k.mu.Lock()
	defer k.mu.Unlock()
	if k.key != key {
		return compilationParts{lanes: map[int64]densityResult{}, sections: map[int64]*sectionAges{},
			compares: map[string]*comparisonRowsJSON{}, errs: map[string]error{}, near: map[[2]float64]nearProvinces{}}
	}
	return compilationParts{lanes: maps.Clone(k.part.lanes), sections: maps.Clone(k.part.sections),
		compares: maps.Clone(k.part.compares), errs: maps.Clone(k.part.errs), near: maps.Clone(k.part.near)}
}

// keep adds what was computed under key (the state read before computing) to what is kept, replacing
// an older state's.
func (k *compilationKept) keep(key string, p compilationParts) {
	if k == nil {
		return
	}
	k.mu.Lock()
	defer k.mu.Unlock()
	if k.key != key {
		k.key, k.part = key, p
		return
	}
	maps.Copy(k.part.lanes, p.lanes)
	maps.Copy(k.part.sections, p.sections)
	maps.Copy(k.part.compares, p.compares)
	maps.Copy(k.part.errs, p.errs)
	maps.Copy(k.part.near, p.near)
}

// compilationData computes the timelines of every province and the answers of every accepted event of
// a section (each part in parallel, in the computing slots that are free), then chooses the window and
// the rows. What is not kept is computed as scope says: on the page, for compilationBudget.
func (s *Server) compilationData(r *http.Request, ch compilationChoice, scope compilationScope) (*compilation, error) {
	ctx := r.Context()
	begun := time.Now()
	budget := cmp.Or(s.budget, compilationBudget) // a server made without NewHandler: the default
	stop := func() bool { return ctx.Err() != nil || (scope == compilePage && time.Since(begun) >= budget) }
	c := &compilation{Choice: ch, Budget: budget}
	dens, err := s.densityChoice(ctx, &params{q: url.Values{}}) // the timeline's defaults, as the answers read them
	if err != nil {
		return nil, err
	}
	c.Dens = dens
	provs, err := s.store.Provinces(ctx)
	if err != nil {
		return nil, err
	}
	events, err := s.store.Events(ctx, 0)
	if err != nil {
		return nil, err
	}
	stamp, err := s.store.DataStamp(ctx)
	if err != nil {
		return nil, err
	}
	o, _ := json.Marshal(dens.options())
	key := fmt.Sprintf("%d %s", stamp, o)
	kept := s.compKept.take(key)
	// The lanes: each province's timeline with its default choices.
	var todo []store.Province
	for _, p := range provs {
		if _, ok := kept.lanes[p.ID]; !ok {
			todo = append(todo, p)
		}
	}
	lanes, errs := make([]densityResult, len(todo)), make([]error, len(todo))
	done := s.inSlots(len(todo), stop, func(i int) {
		tl, err := s.timeline(ctx, todo[i].ID, dens)
		lanes[i], errs[i] = tl.Density, err
	})
	for i, ok := range done {
		if ok && errs[i] != nil {
			return nil, errs[i]
		}
		if ok {
			kept.lanes[todo[i].ID] = lanes[i]
		}
	}
	for _, p := range provs {
		l, ok := kept.lanes[p.ID]
		c.Lanes = append(c.Lanes, compilationLane{Province: p, Density: l, NotComputed: !ok})
		if !ok {
			c.LanesNotComputed++
		}
	}
	// The events' ages: each section page's model.
	var secs []int64
	for _, ev := range events {
		if ev.ReviewState == store.ReviewAccepted && ev.SectionID != nil && kept.sections[*ev.SectionID] == nil && !slices.Contains(secs, *ev.SectionID) {
			secs = append(secs, *ev.SectionID)
		}
	}
	ages, errs := make([]*sectionAges, len(secs)), make([]error, len(secs))
	done = s.inSlots(len(secs), stop, func(i int) {
		ages[i] = &sectionAges{}
		errs[i] = internalJSON(s.router, r, idURL("/sections", secs[i]), nil, ages[i])
	})
	for i, ok := range done {
		if ok && errs[i] != nil {
			return nil, errs[i]
		}
		if ok {
			kept.sections[secs[i]] = ages[i]
		}
	}
	// The answers read each province's pulses from its timeline: hand them the ones just computed (the
	// same computation the timeline's JSON gives), and the sections' ages and the comparisons kept.
	as := s.answers(r)
	as.provinces = provs
	as.sections, as.compares, as.errs, as.near, as.keptOnly = kept.sections, kept.compares, kept.errs, kept.near, true
	for _, l := range c.Lanes {
		if !l.NotComputed {
			as.timelines[l.Province.ID] = timelinePulsesOf(l.Density)
		}
	}
	var withAge []compilationEvent
	for _, ev := range events {
		if ev.ReviewState != store.ReviewAccepted || ev.SectionID == nil {
			continue
		}
		if kept.sections[*ev.SectionID] == nil {
			c.AgeNotComputed = append(c.AgeNotComputed, ev)
			continue
		}
		a, err := as.age(ev)
		if err != nil {
			return nil, err
		}
		if a.Age == nil {
			c.NoAge = append(c.NoAge, ev)
			continue
		}
		withAge = append(withAge, compilationEvent{Event: ev, Answer: a})
	}
	// The comparisons the answers read, those not kept computed now (not for the figure).
	if scope != compileFigure {
		var addrs []url.Values
		seen := map[string]bool{}
		for _, e := range withAge {
			near, _, err := as.nearProvinces(*e.Answer.Age)
			if err != nil {
				return nil, err
			}
			for _, p := range near {
				q := comparisonAddress(p.ID, nil)
				if k := q.Encode(); !seen[k] && kept.compares[k] == nil {
					seen[k] = true
					addrs = append(addrs, q)
				}
			}
		}
		rows, errs := make([]*comparisonRowsJSON, len(addrs)), make([]error, len(addrs))
		done = s.inSlots(len(addrs), stop, func(i int) {
			rows[i] = &comparisonRowsJSON{}
			errs[i] = internalJSON(s.router, r, "/compare", addrs[i], rows[i])
		})
		for i, ok := range done {
			if ok && ctx.Err() == nil {
				kept.compares[addrs[i].Encode()], kept.errs[addrs[i].Encode()] = rows[i], errs[i]
			}
		}
		for i := range withAge {
			e := &withAge[i]
			if e.Answer, err = as.answerAt(e.Answer, "E"+strconv.FormatInt(e.Event.ID, 10), nil); err != nil {
				return nil, err
			}
		}
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	s.compKept.keep(key, kept)
	// The window: as chosen, an end left out taken from the automatic one (every density's window and
	// every event's 95 % interval, and 2 % beside).
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, l := range c.Lanes {
		if l.Density.Band != nil {
			lo, hi = math.Min(lo, l.Density.MinMa), math.Max(hi, l.Density.MaxMa)
		}
	}
	for _, e := range withAge {
		lo, hi = math.Min(lo, e.Answer.Age.Lo95), math.Max(hi, e.Answer.Age.Hi95)
	}
	if math.IsInf(lo, 0) {
		lo, hi = 0, 1
	}
	m := 0.02 * math.Max(hi-lo, 0.1)
	lo, hi = math.Max(0, lo-m), hi+m
	c.Auto = ch.FromMa == nil && ch.ToMa == nil
	switch {
	case ch.FromMa != nil && ch.ToMa != nil:
		lo, hi = math.Min(*ch.FromMa, *ch.ToMa), math.Max(*ch.FromMa, *ch.ToMa)
	case ch.FromMa != nil || ch.ToMa != nil:
		// One end chosen: it replaces the automatic end on its side of the automatic window's middle.
		v := *cmp.Or(ch.FromMa, ch.ToMa)
		if v >= (lo+hi)/2 {
			hi = v
		} else {
			lo = v
		}
		if !(hi > lo) {
			return nil, badRequest{message: "This address has parameters that cannot be used. Fix them and reload:",
				problems: []string{fmt.Sprintf("from, to: with one end at %s Ma the window holds nothing; give both ends", num(v))}}
		}
	}
	c.MinMa, c.MaxMa = lo, hi
	for _, e := range withAge {
		if e.Answer.Age.Hi95 < lo || e.Answer.Age.Lo95 > hi {
			c.Outside++
			continue
		}
		c.Events = append(c.Events, e)
	}
	slices.SortStableFunc(c.Events, func(a, b compilationEvent) int {
		if x := cmp.Compare(a.Event.Section, b.Event.Section); x != 0 {
			return x
		}
		return cmp.Compare(b.Answer.Age.Median, a.Answer.Age.Median)
	})
	for _, e := range c.Events {
		c.Notes = append(c.Notes, e.Answer.Notes...)
		rows := nearestRows(e, c.Lanes)
		for _, r := range rows {
			if r.Pulse != nil {
				c.ComparedPairs++
			}
			if r.NotComputed {
				c.PairsNotComputed++
			}
		}
		c.Rows = append(c.Rows, rows...)
	}
	c.Notes = uniqueStrings(c.Notes)
	return c, nil
}

// timelinePulsesOf is what the answers read of a timeline's JSON: each pulse's name, mode and edges.
func timelinePulsesOf(res densityResult) *timelinePulses {
	v := &timelinePulses{}
	if res.Band == nil {
		return v
	}
	ids := pulseIDs(res.Pulses)
	for i, p := range oldestFirst(res.Pulses) {
		v.Pulses = append(v.Pulses, struct {
			Pulse   string  `json:"pulse"`
			Name    string  `json:"name"`
			ModeMa  float64 `json:"mode_ma"`
			StartMa float64 `json:"start_ma"`
			EndMa   float64 `json:"end_ma"`
		}{ids[i].Code, ids[i].Label, p.ModeMa, p.StartMa, p.EndMa})
	}
	return v
}

// nearestRows are an event's rows: for every province compared with it (in the order of the
// provinces), its nearest pulse — the one whose span (start to end on the province's timeline) lies
// nearest the event's median age, the one holding it when one does; a tie goes to the larger P(within).
// An event no province was compared with has one row saying so.
func nearestRows(e compilationEvent, lanes []compilationLane) []compilationRow {
	a := e.Answer
	var rows []compilationRow
	for _, l := range lanes {
		if slices.ContainsFunc(a.NotComputed, func(p store.Province) bool { return p.ID == l.Province.ID }) {
			rows = append(rows, compilationRow{Event: e.Event, Age: *a.Age, Province: l.Province, NotComputed: true,
				Note: "not computed yet (reload)"})
			continue
		}
		var best *pulseAnswer
		bestD := math.Inf(1)
		for i := range a.Pulses {
			p := &a.Pulses[i]
			if p.ProvinceID != l.Province.ID {
				continue
			}
			d := math.Inf(1)
			if p.hasPulseAge {
				d = math.Max(0, math.Max(p.EndMa-a.Age.Median, a.Age.Median-p.StartMa))
			}
			if best == nil || d < bestD || (d == bestD && p.Within > best.Within) {
				best, bestD = p, d
			}
		}
		if best != nil {
			rows = append(rows, compilationRow{Event: e.Event, Age: *a.Age, Province: l.Province, Pulse: best})
		}
	}
	if len(rows) == 0 {
		note := a.Sentence
		rows = append(rows, compilationRow{Event: e.Event, Age: *a.Age, Note: note})
	}
	return rows
}

func uniqueStrings(ss []string) []string {
	seen := map[string]bool{}
	var out []string
	for _, s := range ss {
		if !seen[s] {
			seen[s] = true
			out = append(out, s)
		}
	}
	return out
}

func (s *Server) handleCompilation(w http.ResponseWriter, r *http.Request) error {
	p := newParams(r)
	ch := compilationChoiceFrom(p)
	if err := p.err(); err != nil {
		return err
	}
	c, err := s.compilationData(r, ch, scopeOf(ch.Format))
	if err != nil {
		return err
	}
	if c.cutShort() {
		c.Finishing = s.finishCompilation(r)
	}
	switch ch.Format {
	case "csv":
		return writeDownload(w, "compilation-events-pulses.csv", func(wr io.Writer) error { return writeCompilationCSV(wr, c) })
	case "json":
		writeJSON(w, http.StatusOK, compilationJSON(c))
		return nil
	case "xlsx":
		b, err := compilationXLSX(c)
		if err != nil {
			return err
		}
		return writeFile(w, "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet", "compilation-events-pulses.xlsx", b)
	}
	chart, err := icsChart()
	if err != nil {
		return err
	}
	fig := compilationFigure(c, chart)
	switch ch.Format {
	case "svg":
		return writeFile(w, "image/svg+xml", "compilation.svg", fig.SVG())
	case "png":
		b, err := fig.PNG()
		if err != nil {
			return err
		}
		return writeFile(w, "image/png", "compilation.png", b)
	case "pdf":
		b, err := fig.PDF()
		if err != nil {
			return err
		}
		return writeFile(w, "application/pdf", "compilation.pdf", b)
	}
	s.render(w, r, http.StatusOK, views.TimelinePage(s.compilationView(r, c, fig)))
	return nil
}

// windowWords is the window in words.
func (c *compilation) windowWords() string {
	w := fmt.Sprintf("%s–%s Ma", ma3(c.MaxMa), ma3(c.MinMa))
	if c.Auto {
		return w + " (the whole record: every density's window and every event's 95 % interval)"
	}
	return w + " (chosen)"
}

// compilationFigure lays the compilation out for views.
func compilationFigure(c *compilation, chart []chronoUnit) views.CompilationFigure {
	f := views.CompilationFigure{Title: "The compilation — eruptive pulses and events on one age axis", MinMa: c.MinMa, MaxMa: c.MaxMa,
		Stages: stagesIn(chart, "Age", c.MinMa, c.MaxMa), Epochs: stagesIn(chart, "Epoch", c.MinMa, c.MaxMa),
		Credit: "Timescale: " + timescaleCredit, Empty: "No event with an age lies in this window."}
	sections := map[string]bool{}
	for _, e := range c.Events {
		sections[e.Event.Section] = true
	}
	f.Subtitle = []string{fmt.Sprintf("%s and %s from %s; window %s.", count(len(c.Lanes), "province"), count(len(c.Events), "event"), count(len(sections), "section"), c.windowWords())}
	dc := c.Dens
	for _, l := range c.Lanes {
		res := l.Density
		lane := views.FigureProvinceLane{Label: l.Province.Name, URL: idURL("/provinces", l.Province.ID) + "/timeline",
			Title: l.Province.Name + ": open its timeline"}
		if l.NotComputed {
			lane.Message = l.Province.Name + ": density not computed in time for this page (reload)"
		} else if res.Band == nil {
			lane.Message = l.Province.Name + ": " + orText(res.Message, "no density")
		} else {
			b := res.Band
			lane.Density = &views.FigureDensity{AgesMa: b.GridMa, Value: b.Reference.Density, Lower: b.Lower, Upper: b.Upper}
			ids := pulseIDs(res.Pulses)
			for i, p := range oldestFirst(res.Pulses) {
				fp := figurePulse(ids[i], p, res, dc)
				fp.Title = l.Province.Name + " — " + fp.Title
				lane.Pulses = append(lane.Pulses, fp)
			}
			lane.Title = fmt.Sprintf("%s: KDE h = %s Ma (%s), %s; open its timeline", l.Province.Name, fixed(res.Bandwidth.Ma, sigmaDecimals(res.Bandwidth.Ma)+1),
				smoothingWords(res.Bandwidth.Rule), count(len(res.Pulses), "pulse"))
		}
		f.Provinces = append(f.Provinces, lane)
	}
	for _, e := range c.Events {
		a := e.Answer.Age
		d := sigmaDecimals((a.Hi95 - a.Lo95) / 4)
		f.Events = append(f.Events, views.FigureEventMark{Label: e.Event.Name, URL: idURL("/events", e.Event.ID), Group: e.Event.Section,
			MedianMa: a.Median, LoMa: a.Lo95, HiMa: a.Hi95,
			Title: fmt.Sprintf("%s (%s): %s Ma, 95 %% %s – %s, from the %s — open its answer", e.Event.Name, e.Event.Section,
				fixed(a.Median, d), fixed(a.Hi95, d), fixed(a.Lo95, d), a.Model)})
	}
	f.Note = fmt.Sprintf("Lanes: each province's timeline with its default choices — the %s, %s values, %d bootstrap replicates (seed %d), ⁴⁰Ar/³⁹Ar on %s; pulses numbered from the oldest within each province. "+
		"Each lane is scaled to its own highest value, so heights compare shapes, not eruption rates between provinces. "+
		"Events: the median (tick) and 95 %% interval (bar) of the age from each section's Monte Carlo age–height model. Click a province for its timeline, an event for its answer.",
		densityRuleWords(dc), dc.Count, dc.Reps, dc.Seed, dc.Sum.Cal.Cal.Name)
	return f
}

// compilationCautions are said beside the numbers.
func compilationCautions() []string {
	return []string{
		"Every probability depends on the model it was computed with: the smoothing of each province's density (automatic width, unit means), the ⁴⁰Ar/³⁹Ar calibration, and each section's age–height model (Monte Carlo, default draws). The event's page and the full comparison say how each number moves under the alternatives.",
		"Events of one section share its age model, so their ages are not independent: several events near one pulse do not add up to independent evidence.",
	}
}

func (s *Server) compilationView(r *http.Request, c *compilation, fig views.CompilationFigure) views.TimelineView {
	v := views.TimelineView{Page: s.page(r.Context(), "The compilation on one age axis", "Compilation")}
	v.Subtitle = "Every province's pulses and every section's events, " + c.windowWords()
	v.Downloads = []views.Link{
		{Label: "Figure SVG", URL: withQuery(r, "format", "svg")}, {Label: "PNG", URL: withQuery(r, "format", "png")}, {Label: "PDF", URL: withQuery(r, "format", "pdf")},
		{Label: "Table CSV", URL: withQuery(r, "format", "csv")}, {Label: "JSON", URL: withQuery(r, "format", "json")}, {Label: "XLSX", URL: withQuery(r, "format", "xlsx")},
	}
	likely := 0
	for _, row := range c.Rows {
		if row.Pulse != nil && row.Pulse.Within >= 0.5 {
			likely++
		}
	}
	v.Intro = fmt.Sprintf("%s, %s with an age in this window; %d event–province pairs compared, %d of them with the event more likely than not within the nearest pulse. "+
		"Each lane opens the province's timeline; each event opens its answer, where all its pulses are ranked.",
		upperFirst(count(len(c.Lanes), "province")), count(len(c.Events), "event"), c.ComparedPairs, likely)
	if c.cutShort() {
		v.Intro += " Not everything is computed yet: the note under the figure says what is missing"
		if c.Finishing {
			v.Intro += ", and it is being computed now — reload in a minute"
		}
		v.Intro += "."
	}
	q := r.URL.Query()
	v.Form = &views.Form{Action: "/compilation", Reset: "/compilation", Fields: []views.Field{
		{Name: "from", Label: "Window from (Ma)", Kind: "number", Value: q.Get("from"), Step: "any", Placeholder: "whole record"},
		{Name: "to", Label: "to (Ma)", Kind: "number", Value: q.Get("to"), Step: "any", Placeholder: "whole record"},
	}}
	v.Cautions = compilationCautions()
	v.SVG = string(fig.SVG())
	v.Caption = "Older ages to the left. Point at a pulse, an event or a stage for its numbers."
	for _, l := range c.Lanes {
		if l.Density.Band == nil {
			continue
		}
		old, young := fixed(math.Ceil(l.Density.MaxMa*10)/10, 1), fixed(math.Floor(l.Density.MinMa*10)/10, 1)
		v.Links = append(v.Links, views.Link{Label: fmt.Sprintf("Zoom to %s (%s–%s Ma)", l.Province.Name, old, young),
			URL: "/compilation?from=" + old + "&to=" + young})
	}
	if !c.Auto {
		v.Links = append(v.Links, views.Link{Label: "The whole record", URL: "/compilation"})
	}
	if c.Outside > 0 {
		v.Notes = append(v.Notes, fmt.Sprintf("%s with an age lie outside this window and are not shown.", upperFirst(count(c.Outside, "event"))))
	}
	if len(c.NoAge) > 0 {
		var names []string
		for _, e := range c.NoAge {
			names = append(names, e.Name+" ("+e.Section+")")
		}
		v.Notes = append(v.Notes, "Without an age (their section's age–height model does not reach them): "+strings.Join(names, ", ")+".")
	}
	v.Notes = append(v.Notes, c.Notes...)
	if left := c.leftOut(); left != "" {
		v.Notes = append([]string{left}, v.Notes...)
	}
	v.Tables = []views.Table{compilationTable(c)}
	v.Method = []string{
		"Lanes: each province's density is its timeline with the default choices (the same computation as its page), drawn in this window.",
		fmt.Sprintf("Events: every accepted event of a section, at its section's Monte Carlo age–height model with the default choices; its median and 95 %% interval are those its page gives. A province is compared with an event when it has accepted dates within %g Ma of the event's 95 %% interval (at most %d provinces per event, those with most such dates).", answerReachMa, maxAnswerProvinces),
		"Table: for every event and every province compared with it, the nearest pulse — the one whose span (start to end on the province's timeline) lies nearest the event's median age, the one holding it when one does. P(within), its Monte Carlo standard error, the lag from the pulse's onset and its behaviour under the sensitivity set are the comparison page's numbers with its default choices, read as the event's page reads them.",
		"The age shown is the section page's: its age–height model with the whole uncertainty of its tie points. The comparison draws the tie points' shared components (decay constants, tracers, calibrations) once per draw for the events and the provinces together, so its probabilities and lags carry them jointly rather than twice; the comparison page gives the event's age as it uses it.",
	}
	v.Contents = []views.Block{{ID: "timeline", Title: "Figure"}, {ID: "nearest", Title: "Events and nearest pulses"}, {ID: "method", Title: "How this was computed"}}
	return v
}

// leftOut says what the page's budget left out, and why ("" when nothing was).
func (c *compilation) leftOut() string {
	var parts []string
	if c.LanesNotComputed > 0 {
		parts = append(parts, fmt.Sprintf("the densities of %s (their lanes say so)", count(c.LanesNotComputed, "province")))
	}
	if n := len(c.AgeNotComputed); n > 0 {
		var names []string
		for _, e := range c.AgeNotComputed {
			names = append(names, e.Name+" ("+e.Section+")")
		}
		parts = append(parts, fmt.Sprintf("the ages of %s, whose sections' age–height models were not computed: %s", count(n, "event"), strings.Join(names, ", ")))
	}
	if c.PairsNotComputed > 0 {
		parts = append(parts, fmt.Sprintf("the comparisons of %d event–province pairs (the table names them)", c.PairsNotComputed))
	}
	if len(parts) == 0 {
		return ""
	}
	next := "What was computed is kept, so reloading shows more."
	if c.Finishing {
		next = "The rest is being computed now and kept: reload in a minute for the whole compilation."
	}
	return fmt.Sprintf("Not everything is computed yet. This page computes for at most %s s and then shows what is ready; not computed in time: %s. "+
		"Nothing shown here is a guess: what is missing is left out. %s "+
		"The table's downloads (CSV, JSON, XLSX) compute everything before they answer.",
		strconv.FormatFloat(c.Budget.Seconds(), 'f', -1, 64), strings.Join(parts, "; "), next)
}

// compilationTable is the table of events × nearest pulses.
func compilationTable(c *compilation) views.Table {
	t := views.Table{ID: "nearest", Caption: "Each event against the nearest pulse of every province compared with it",
		Columns: []views.Column{{Label: "Event"}, {Label: "Section"}, {Label: "Age", Unit: "Ma, median (95 %)", Num: true},
			{Label: "Province"}, {Label: "Nearest pulse", Unit: "onset–end, Ma"}, {Label: "P(within)", Num: true, Title: "± its Monte Carlo standard error"},
			{Label: "Lag from onset", Unit: "Ma, median (95 %)", Num: true, Title: "the pulse's onset (its older edge) minus the event's age; positive: the event came after the onset"},
			{Label: "Under the sensitivity set"}},
		Empty: "No event with an age lies in this window."}
	for _, row := range c.Rows {
		a := row.Age
		d := sigmaDecimals((a.Hi95 - a.Lo95) / 4)
		ev := []views.Cell{{Text: row.Event.Name, URL: idURL("/events", row.Event.ID)}, {Text: row.Event.Section, URL: idURL("/sections", *row.Event.SectionID)},
			{Text: fmt.Sprintf("%s (%s – %s)", fixed(a.Median, d), fixed(a.Lo95, d), fixed(a.Hi95, d)), Num: true}}
		p := row.Pulse
		if row.NotComputed {
			t.Rows = append(t.Rows, append(ev, views.Cell{Text: row.Province.Name, URL: idURL("/provinces", row.Province.ID) + "/timeline"},
				views.Cell{Text: row.Note, Class: "caution"}, views.Cell{Text: "—", Num: true}, views.Cell{Text: "—", Num: true}, views.Cell{Text: "—"}))
			continue
		}
		if p == nil {
			t.Rows = append(t.Rows, append(ev, views.Cell{Text: "—"}, views.Cell{Text: row.Note}, views.Cell{Text: "—", Num: true}, views.Cell{Text: "—", Num: true}, views.Cell{Text: "—"}))
			continue
		}
		pulse := p.pulseName()
		lag, hold := p.lagText(), p.holdsCell()
		t.Rows = append(t.Rows, append(ev, views.Cell{Text: row.Province.Name, URL: idURL("/provinces", row.Province.ID) + "/timeline"}, views.Cell{Text: pulse},
			views.Cell{Text: p.probWords(p.Within, p.WithinSE), Num: true}, views.Cell{Text: lag, Num: true}, hold))
	}
	t.Notes = []string{
		"Each number is the event's page's and the comparison page's, with its default choices; the event's page ranks every pulse of every province compared with it.",
		"Probabilities are written to the decimals their Monte Carlo standard error supports; 0 and 1 as the bound the number of draws allows.",
	}
	return t
}
