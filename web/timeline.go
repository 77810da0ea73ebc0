package web

import (
	"context"
	"fmt"
	"math"
	"net/http"
	"net/url"
	"slices"
	"strings"

	"github.com/go-chi/chi/v5"

	"coeval/stats"
	"coeval/store"
	"coeval/views"
	"coeval/web/analysis"
)

// The eruptive history of a province as a density through time: what is counted (one value per unit,
// its weighted mean from the unit summaries, or every date), the KDE with its bandwidth rule, its
// bootstrap band, the pulses with their uncertain edges, and an optional PDP. Every choice is in the
// URL (densityChoice); the pipeline is analysis.ProvinceDensity, the numerics are stats'.

func (s *Server) registerTimelineRoutes(r chi.Router) {
	r.Get("/provinces/{id}/timeline", s.handle(s.handleTimeline))
	r.With(s.requireRole(store.RoleContributor)).Post("/provinces/{id}/pulses", s.handle(s.handlePulsesSave))
	r.Get("/timescale", s.handle(s.handleTimescale))
}

// timelineURL is the province's timeline with the summary choices of the current view kept.
func timelineURL(r *http.Request, id int64) string {
	q := url.Values{}
	for _, k := range []string{"cal", "level", "sigma", "policy", "rule", "mswd_range", "include"} {
		if v := r.URL.Query().Get(k); v != "" {
			q.Set(k, v)
		}
	}
	u := idURL("/provinces", id) + "/timeline"
	if len(q) > 0 {
		u += "?" + q.Encode()
	}
	return u
}

// densityChoice is every choice of the density and its figure, read from the URL; options() is what the
// analysis gets.
type densityChoice struct {
	stop     func() error        // asked between replicates: the request's context's Err (nil: never stops)
	Sum      summaryChoice       // cal, level, sigma, policy, rule, include: how unit means are made
	Count    string              // count=unit|date
	Weight   string              // weight=none|volume
	Rule     stats.BandwidthRule // bw=isj|scott|silverman|silverman-robust|user
	UserHMa  float64             // h= (Ma), with bw=user
	Adaptive bool                // adaptive=1: Abramson's per-value bandwidths, the rule's h as pilot
	PDP      bool                // pdp=1: draw the PDP too
	FromMa   *float64            // from=, to=: the age window in Ma (either order; either may be left out)
	ToMa     *float64
	Seed     uint64 // seed=
	Reps     int    // reps= bootstrap replicates
	BWEach   bool   // bw_each=1: the rule applied afresh in every replicate (closed-form rules only)
	Format   string // format=html|svg|png|pdf|csv|json
	Table    string // table=pulses|density|values, for format=csv
}

// The density's results, as the pages and downloads name them.
type (
	densityResult = analysis.Density
	densityValue  = analysis.DensityValue
)

// densityParams names the URL parameter of each density option, for the 400 page of an unusable one.
var densityParams = map[string]string{"Count": "count", "Weight": "weight", "Rule": "bw", "UserHMa": "h",
	"FromMa": "from", "ToMa": "to", "Window": "from, to", "BWEach": "bw_each", "Reps": "reps", "Seed": "seed",
	"Level": "level", "Policy": "policy", "Include": "include", "Range": "mswd_range"}

// densityParamOrder is the order the timeline's parameters are read in, and their problems listed in.
var densityParamOrder = []string{"cal", "sigma", "level", "rule", "policy", "include", "mswd_range", "format", "table",
	"count", "weight", "bw", "h", "adaptive", "pdp", "from", "to", "from, to", "bw_each", "seed", "reps"}

// The bootstrap's replicates by default and at most (the limits of visitors' computations use them).
const (
	defaultReps = analysis.DefaultReps
	maxReps     = analysis.MaxReps
)

var bandwidthRules = []string{"isj", "scott", "silverman", "silverman-robust", "user"}

func onOff(p *params, name string) bool { return p.oneOf(name, []string{"0", "1"}, "0") == "1" }

// densityChoice reads the density's choices: what the URL leaves out is analysis' DefaultDensityOptions,
// and the options that cannot be used are analysis' Validate's, under their parameters' names.
func (s *Server) densityChoice(ctx context.Context, p *params) (densityChoice, error) {
	sum, err := s.summaryChoice(ctx, p)
	if err != nil {
		return densityChoice{}, err
	}
	def := analysis.DefaultDensityOptions(sum.Cal.Stats)
	ch := densityChoice{Sum: sum}
	ch.Format = p.oneOf("format", []string{"html", "svg", "png", "pdf", "csv", "json"}, "html")
	ch.Table = p.oneOf("table", []string{"pulses", "density", "values"}, "pulses")
	ch.Count = p.oneOf("count", []string{analysis.CountUnit, analysis.CountDate}, def.Count)
	ch.Weight = p.oneOf("weight", []string{analysis.WeightNone, analysis.WeightVolume}, def.Weight)
	ch.Rule, _ = stats.ParseBandwidthRule(p.oneOf("bw", bandwidthRules, def.Rule.String()))
	h := p.optFloat("h", "a bandwidth in Ma")
	if ch.Rule == stats.RuleUser {
		if h == nil {
			p.problems = append(p.problems, "h: bw=user needs a bandwidth h in Ma (a number > 0)")
			ch.UserHMa = math.NaN() // not a bandwidth: Validate must not add its own problem of h
		} else {
			ch.UserHMa = *h
		}
	}
	ch.Adaptive = onOff(p, "adaptive")
	ch.PDP = onOff(p, "pdp")
	ch.FromMa = p.optFloat("from", "an age in Ma")
	ch.ToMa = p.optFloat("to", "an age in Ma")
	ch.BWEach = onOff(p, "bw_each")
	ch.Seed = uint64(p.int("seed", int(def.Seed), 0, math.MaxInt32))
	ch.Reps = p.int("reps", def.Reps, analysis.MinReps, analysis.MaxReps)
	for _, e := range analysis.AsOptionErrors(ch.options().Validate()) {
		if e.Option == "UserHMa" && math.IsNaN(ch.UserHMa) {
			continue // said above, in the URL's terms
		}
		p.problems = append(p.problems, optionProblem(e, densityParams))
	}
	sortProblems(p.problems, densityParamOrder)
	return ch, nil
}

// options are the analysis options the choice stands for.
func (ch densityChoice) options() analysis.DensityOptions {
	return analysis.DensityOptions{Summary: ch.Sum.options(), Count: ch.Count, Weight: ch.Weight, Rule: ch.Rule, UserHMa: ch.UserHMa,
		Adaptive: ch.Adaptive, PDP: ch.PDP, FromMa: ch.FromMa, ToMa: ch.ToMa, Seed: ch.Seed, Reps: ch.Reps, BWEach: ch.BWEach,
		WindowSigmas: float64(ch.Sum.Sigma), Stop: ch.stop}
}

// optionProblem is an analysis option's problem under its URL parameter's name.
func optionProblem(e *analysis.OptionError, names map[string]string) string {
	name, ok := names[e.Option]
	if !ok {
		name = e.Option
	}
	return name + ": " + e.Problem
}

// optionBadRequest turns the option problems of an analysis into the 400 of the address's parameters;
// other errors pass unchanged.
func optionBadRequest(err error, names map[string]string) error {
	es := analysis.AsOptionErrors(err)
	if es == nil {
		return err
	}
	var problems []string
	for _, e := range es {
		problems = append(problems, optionProblem(e, names))
	}
	return badRequest{message: "This address has parameters that cannot be used. Fix them and reload:", problems: problems}
}

// sortProblems orders problems ("name: …") by their parameter's place in order, keeping the order of
// those of one parameter and putting unnamed ones last.
func sortProblems(problems []string, order []string) {
	rank := func(s string) int {
		for i, name := range order {
			if strings.HasPrefix(s, name+": ") {
				return i
			}
		}
		return len(order)
	}
	slices.SortStableFunc(problems, func(a, b string) int { return rank(a) - rank(b) })
}

// computeDensity computes the density of the summaries with the URL's choices (analysis.ComputeDensity);
// an empty window is a 400 of from and to.
func computeDensity(sums []unitSummary, ch densityChoice, dateBars [][2]float64) (densityResult, error) {
	res, err := analysis.ComputeDensity(sums, ch.options(), dateBars)
	return res, optionBadRequest(err, densityParams)
}

// pulseIDs names a density's pulses (oldest first, as pages list them) by their age.
func pulseIDs(ps []stats.PulseSummary) []analysis.PulseID {
	return analysis.PulseNames(oldestFirst(ps))
}

// figurePulseLabel is a pulse's label in a figure, beside its lane or over its mode: "~155.4 Ma".
func figurePulseLabel(id analysis.PulseID) string {
	return "~" + strings.TrimPrefix(id.Label, "pulse at ~")
}

// oldestFirst returns the pulses oldest first (stats gives them youngest first).
func oldestFirst(ps []stats.PulseSummary) []stats.PulseSummary { return analysis.OldestFirst(ps) }

// ruleText describes the bandwidth as chosen: rule, h, and the fallback if one happened.
func ruleText(res densityResult, ch densityChoice) string {
	h := res.Bandwidth
	dec := sigmaDecimals(h.Ma) + 1
	kind := "KDE"
	if ch.Adaptive {
		kind = "adaptive KDE (Abramson 1982), pilot"
	}
	// A fallback is explained by the bandwidth's own note, shown beside this.
	return fmt.Sprintf("%s h = %s Ma, %s", kind, fixed(h.Ma, dec), h.Rule.Label())
}

func (s *Server) handleTimeline(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	p := newParams(r)
	ch, err := s.densityChoice(ctx, p)
	if err != nil {
		return err
	}
	if err := p.err(); err != nil {
		return err
	}
	tl, err := s.timeline(ctx, id, ch)
	if err != nil {
		return err
	}
	prov, sums, res := tl.Data.Province, tl.Summaries, tl.Density
	rows := figureRows(sums, ch, res)
	chart, err := icsChart()
	if err != nil {
		return err
	}
	fig := timelineFigure(prov, rows, res, ch, chart)
	base := fmt.Sprintf("province-%d-timeline", id)
	switch ch.Format {
	case "svg":
		return writeFile(w, "image/svg+xml", base+".svg", fig.SVG())
	case "png":
		b, err := fig.PNG()
		if err != nil {
			return err
		}
		return writeFile(w, "image/png", base+".png", b)
	case "pdf":
		b, err := fig.PDF()
		if err != nil {
			return err
		}
		return writeFile(w, "application/pdf", base+".pdf", b)
	case "csv":
		return writeTimelineCSV(w, fmt.Sprintf("province-%d-%s.csv", id, ch.Table), ch.Table, res, ch)
	case "json":
		writeJSON(w, http.StatusOK, timelineJSON(r, prov, res, ch))
		return nil
	}
	v := s.timelinePage(r, prov, fig, res, ch)
	v.Cautions = append(v.Cautions, unusableSigmaCautions(sums)...)
	saved, err := s.store.Pulses(ctx, id)
	if err != nil {
		return err
	}
	v.Tables = append(v.Tables, savedPulseTable(saved))
	v.Contents = timelineContents(v) // again, with the saved pulses
	if u, ok := currentUser(ctx); ok && store.RoleAtLeast(u.Role, store.RoleContributor) && len(res.Pulses) > 0 {
		v.Actions = []views.Action{{Label: fmt.Sprintf("Save these %d pulses as records of the province", len(res.Pulses)),
			URL: fmt.Sprintf("/provinces/%d/pulses?%s", id, r.URL.RawQuery)}}
	}
	s.render(w, r, http.StatusOK, views.TimelinePage(v))
	return nil
}

// writeFile sends a rendered figure as an attachment.
func writeFile(w http.ResponseWriter, contentType, name string, b []byte) error {
	w.Header().Set("Content-Type", contentType)
	w.Header().Set("Content-Disposition", fmt.Sprintf("attachment; filename=%q", name))
	w.Write(b)
	return nil
}

// savedPulseNames are the record names of pulses about to be saved (oldest first): the name of the saved
// record that is the same pulse (stats.MatchPulses, one to one), so that saving again makes a new
// version of it, else the pulse's own code made from its age (P155.34). Never a number by place: after an
// edit the second pulse may be another one.
func savedPulseNames(ids []analysis.PulseID, saved []store.Pulse) []string {
	var old []stats.PulseSpan
	var oldNames []string
	for _, p := range saved {
		if p.StartMa != nil && p.EndMa != nil {
			old = append(old, stats.PulseSpan{ModeMa: (*p.StartMa + *p.EndMa) / 2, OldMa: *p.StartMa, YoungMa: *p.EndMa})
			oldNames = append(oldNames, p.Name)
		}
	}
	spans := make([]stats.PulseSpan, len(ids))
	for i, id := range ids {
		spans[i] = id.Span
	}
	m := stats.MatchPulses(spans, old)
	names := make([]string, len(ids))
	used := map[string]bool{}
	for i, id := range ids {
		names[i] = id.Code
		if len(m.AtoB[i]) == 1 && len(m.BtoA[m.AtoB[i][0]]) == 1 {
			names[i] = oldNames[m.AtoB[i][0]]
		}
		if used[names[i]] { // two pulses cannot share a record
			names[i] = id.Code
		}
		used[names[i]] = true
	}
	return names
}

// handlePulsesSave saves the pulses found with the choices in the address as records of the province:
// each pulse's interval runs from its median start to its median end, its notes keep the 95 % intervals,
// the share of replicates in which it exists and the address it was found with, and its units are those
// whose counted value lies in the interval. A pulse is named by its age (P155.34), or by the name of the
// saved record that is the same pulse (savedPulseNames), which it replaces as a new version.
func (s *Server) handlePulsesSave(w http.ResponseWriter, r *http.Request) error {
	r = actingCtx(r)
	ctx := r.Context()
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	p := newParams(r)
	ch, err := s.densityChoice(ctx, p)
	if err != nil {
		return err
	}
	if err := p.err(); err != nil {
		return err
	}
	tl, err := s.timeline(ctx, id, ch)
	if err != nil {
		return err
	}
	res := tl.Density
	if len(res.Pulses) == 0 {
		return badRequest{message: "No pulse was found with these choices, so there is nothing to save."}
	}
	source := idURL("/provinces", id) + "/timeline?" + r.URL.RawQuery
	saved, err := s.store.Pulses(ctx, id)
	if err != nil {
		return err
	}
	names := savedPulseNames(pulseIDs(res.Pulses), saved)
	var ps []store.Pulse
	for i, pu := range oldestFirst(res.Pulses) {
		start, end := pu.Start.MedianMa, pu.End.MedianMa
		sp := store.Pulse{Name: names[i], StartMa: &start, EndMa: &end,
			Notes: fmt.Sprintf("Found from the density (%s): mode %s Ma [95 %%: %s–%s], start %s [%s–%s], end %s [%s–%s] Ma; present in %.0f %% of %d replicates (seed %d).",
				ch.Rule.String(), fixed(pu.Mode.MedianMa, 3), fixed(pu.Mode.UpperMa, 3), fixed(pu.Mode.LowerMa, 3),
				fixed(start, 3), fixed(pu.Start.UpperMa, 3), fixed(pu.Start.LowerMa, 3),
				fixed(end, 3), fixed(pu.End.UpperMa, 3), fixed(pu.End.LowerMa, 3), 100*pu.Frequency, ch.Reps, ch.Seed)}
		seen := map[int64]bool{}
		for _, v := range res.Values {
			if v.AgeMa <= start && v.AgeMa >= end && !seen[v.UnitID] {
				seen[v.UnitID] = true
				sp.UnitIDs = append(sp.UnitIDs, v.UnitID)
			}
		}
		ps = append(ps, sp)
	}
	if _, err := s.store.SavePulses(ctx, id, source, ps); err != nil {
		if ve, ok := store.AsValidation(err); ok {
			return badRequest{message: "The pulses were not saved:", problems: problemTexts(ve.Problems)}
		}
		return err
	}
	http.Redirect(w, r, idURL("/provinces", id)+"/timeline?"+r.URL.RawQuery, http.StatusSeeOther)
	return nil
}

// savedPulseTable lists the pulses saved as records of the province.
func savedPulseTable(ps []store.Pulse) views.Table {
	t := views.Table{ID: "saved-pulses", Caption: "Pulses saved as records of the province",
		Columns: []views.Column{{Label: "Pulse"}, {Label: "Start", Unit: "Ma (older edge)", Num: true}, {Label: "End", Unit: "Ma", Num: true},
			{Label: "Units", Num: true}, {Label: "Version", Num: true}, {Label: "Notes"}},
		Empty: "No pulse saved yet. Contributors can save the pulses found above with the button."}
	for _, p := range ps {
		t.Rows = append(t.Rows, []views.Cell{{Text: p.Name}, {Text: optFixed(p.StartMa, 3), Num: true}, {Text: optFixed(p.EndMa, 3), Num: true},
			{Text: itoa(len(p.UnitIDs)), Num: true}, {Text: itoa(p.Version), Num: true}, {Text: p.Notes}})
	}
	return t
}
