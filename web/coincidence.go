package web

import (
	"context"
	"fmt"
	"io"
	"math"
	"net/http"
	"net/url"
	"slices"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"

	"github.com/go-chi/chi/v5"

	"coeval/stats"
	"coeval/store"
	"coeval/views"
	"coeval/web/analysis"
)

// The coincidence test across the compilation (/coincidence): are the events of the sedimentary record
// closer to the onsets of the provinces' pulses than chance would place them? The events are the
// comparison's (eventInputs: the sections' age models, direct ages, detected anomalies if asked); the
// onsets are the older edges of the pulses of every province's density (pulseInputs, province by
// province, with the comparison's density choices). analysis.Coincide chooses the window and runs the
// test; this file reads the URL and lays out the page and its downloads.

func (s *Server) registerCoincidenceRoutes(r chi.Router) {
	r.Get("/coincidence", s.handle(s.handleCoincidence))
}

// coincidenceChoice is every choice of the page: the comparison's choices that make the events and
// onsets, and the test's own.
type coincidenceChoice struct {
	Cmp    compareChoice
	Opt    analysis.CoincidenceOptions
	Table  string // table= of the CSV: result, events, onsets
	Format string
}

// coincidenceParams maps the test's options to the URL parameters that carry them.
var coincidenceParams = map[string]string{"Null": "null", "FromMa": "from", "ToMa": "to", "Window": "from", "Replicates": "n"}

// coincidenceTables are the values of table= for the CSV download.
var coincidenceTables = []string{"result", "events", "onsets"}

func (s *Server) coincidenceChoiceFrom(ctx context.Context, p *params) (coincidenceChoice, error) {
	// The densities take their automatic windows: from= and to= are the test's window here. As in the
	// comparison, the unit means are analytical.
	q := url.Values{}
	for k, v := range p.q {
		q[k] = slices.Clone(v)
	}
	for _, k := range []string{"level", "format", "table", "sigma", "from", "to", "n"} {
		q.Del(k)
	}
	pd := &params{q: q}
	dens, err := s.densityChoice(ctx, pd)
	if err != nil {
		return coincidenceChoice{}, err
	}
	p.problems = append(p.problems, pd.problems...)
	dens.Sum.Level = stats.Analytical
	cd := analysis.DefaultCompareOptions()
	ch := coincidenceChoice{Cmp: compareChoice{Dens: dens, N: cd.N, Rows: cd.Rows, DeltaMa: cd.DeltaMa, Level: cd.Level}}
	ch.Format = p.oneOf("format", []string{"html", "csv", "json"}, "html")
	ch.Table = p.oneOf("table", coincidenceTables, "result")
	ch.Cmp.SectionIDs = idList(p, "sections", "section record numbers such as 1,2")
	ch.Cmp.EventIDs = idList(p, "events", "event record numbers such as 3,7")
	ch.Cmp.Anomalies = onOff(p, "anomalies")
	ch.Cmp.Point = p.oneOf("point", analysis.EventPoints, "base")
	ch.Cmp.Model = p.oneOf("model", []string{"mc", "linear"}, "mc")
	ch.Cmp.ModelDraws = p.int("draws", defaultSectionDraws, minSectionDraws, maxSectionDraws)
	if v := p.str("toc_min"); v != "" {
		f := paramFloatIn(p, "toc_min", 0, 0, 100, "a TOC threshold in wt% from 0 to 100")
		ch.Cmp.TocMinWtPct = &f
	}
	def := analysis.DefaultCoincidenceOptions()
	o := def
	o.Null = p.oneOf("null", analysis.CoincidenceNulls(), def.Null)
	o.FromMa = p.optFloat("from", "an age in Ma")
	o.ToMa = p.optFloat("to", "an age in Ma")
	o.Replicates = p.int("n", def.Replicates, analysis.MinCoincidenceReplicates, analysis.MaxCoincidenceReplicates)
	o.Seed = dens.Seed
	o.DrawAges = p.oneOf("ages", []string{"drawn", "median"}, "drawn") == "drawn"
	o.DrawOnsets = p.oneOf("onsets", []string{"reference", "drawn"}, "reference") == "drawn"
	ch.Opt = o
	if len(p.problems) == 0 {
		for _, e := range analysis.AsOptionErrors(o.Validate()) {
			p.problems = append(p.problems, optionProblem(e, coincidenceParams))
		}
	}
	return ch, nil
}

// coincidenceInputs builds the events and the onsets with the comparison's own functions: the
// sections are analysed once, and each province's density and pulses are computed in turn.
func (s *Server) coincidenceInputs(ctx context.Context, ch coincidenceChoice) (analysis.CoincidenceInputs, error) {
	var in analysis.CoincidenceInputs
	cc := ch.Cmp
	d, err := s.loadCompareData(ctx, &cc)
	if err != nil {
		return in, err
	}
	evs, notes, err := analysis.ComparisonEvents(ctx, d, cc.options())
	if err != nil {
		return in, err
	}
	in.Notes = append(in.Notes, notes...)
	for _, e := range evs {
		ce := analysis.CoincidenceEvent{Code: e.Code, Name: e.Name, Section: e.Section, SectionID: e.SectionID,
			AgeMa: e.Summary.Median, Lo95Ma: e.Summary.Lo95, Hi95Ma: e.Summary.Hi95, DrawsMa: e.Draws, How: e.How}
		if len(e.Draws) == 0 && e.Q.Kind == stats.QuantityNormal {
			ce.SigmaMa = e.Q.SigmaMa
		}
		in.Events = append(in.Events, ce)
	}
	for _, prov := range d.Provinces {
		if err := ctx.Err(); err != nil {
			return in, err
		}
		units, err := s.store.Units(ctx, prov.ID)
		if err != nil {
			return in, err
		}
		dates, _, err := s.store.Dates(ctx, store.DateFilter{ProvinceID: prov.ID})
		if err != nil {
			return in, err
		}
		pulses, dens, err := analysis.ProvincePulses(ctx, d, prov, units, dates, cc.options())
		if err != nil {
			return in, err
		}
		if dens.Band == nil {
			in.Notes = append(in.Notes, fmt.Sprintf("%s: no density, so no pulse onset: %s", prov.Name, dens.Message))
			continue
		}
		in.SpansMa = append(in.SpansMa, [2]float64{dens.MinMa, dens.MaxMa})
		sets := make([][]float64, len(dens.Band.Replicates))
		for _, p := range pulses {
			for k, b := range p.Edges.Replicates {
				if b >= 0 && b < len(sets) {
					sets[b] = append(sets[b], p.Edges.StartMa[k])
				}
			}
		}
		if in.OnsetSets == nil {
			in.OnsetSets = map[int64][][]float64{}
		}
		if len(pulses) > 0 {
			in.OnsetSets[prov.ID] = sets
		}
		if len(pulses) == 0 {
			in.Notes = append(in.Notes, prov.Name+": its density has no pulse under these choices.")
		}
		for _, p := range pulses {
			in.Onsets = append(in.Onsets, analysis.CoincidenceOnset{ProvinceID: prov.ID, Province: prov.Name, Pulse: p.Name, Name: p.ID.Label,
				OnsetMa: p.Summary.StartMa, Lo95Ma: p.Summary.Start.LowerMa, Hi95Ma: p.Summary.Start.UpperMa,
				ModeMa: p.Summary.ModeMa, Frequency: p.Summary.Frequency})
		}
	}
	dc := cc.Dens
	model := "Monte Carlo age–height models (" + strconv.Itoa(cc.ModelDraws) + " draws)"
	if cc.Model == "linear" {
		model = "naive linear age–height models"
	}
	in.Depends = []string{
		"densities: " + densityRuleWords(dc) + ", " + dc.Count + " values, " + strconv.Itoa(dc.Reps) + " bootstrap replicates (seed " + strconv.FormatUint(dc.Seed, 10) + ")",
		"⁴⁰Ar/³⁹Ar calibration: " + dc.Sum.Cal.label(),
		"event ages: " + model + ", events with an extent read at their " + cc.Point,
		"records: " + includeLabel(dc.Sum.Include),
	}
	return in, nil
}

// densityRuleWords names the bandwidth choice (the bandwidth itself differs from province to province).
func densityRuleWords(dc densityChoice) string {
	w := "smoothing width: " + smoothingChoice(dc.Rule)
	if dc.Rule == stats.RuleUser {
		w = "smoothing width h = " + num(dc.UserHMa) + " Ma"
	}
	if dc.Adaptive {
		w += ", adaptive"
	}
	return w
}

func (s *Server) handleCoincidence(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	p := newParams(r)
	ch, err := s.coincidenceChoiceFrom(ctx, p)
	if err != nil {
		return err
	}
	if err := p.err(); err != nil {
		return err
	}
	if err := anonymousComputeLimits(ctx, ch.Cmp); err != nil {
		return err
	}
	in, err := s.coincidenceInputs(ctx, ch)
	if err != nil {
		return err
	}
	res, err := analysis.Coincide(in, ch.Opt)
	if err != nil {
		return err
	}
	switch ch.Format {
	case "csv":
		return writeDownload(w, "coincidence-"+ch.Table+".csv", func(wr io.Writer) error { return writeCoincidenceCSV(wr, res, ch.Table) })
	case "json":
		writeJSON(w, http.StatusOK, coincidenceJSON(res))
		return nil
	}
	s.render(w, r, http.StatusOK, views.CoincidencePage(s.coincidenceView(r, res, ch)))
	return nil
}

// ma3 writes an age or a distance in Ma to the thousandth (1 kyr).
func ma3(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	return strconv.FormatFloat(v, 'f', 3, 64)
}

func (s *Server) coincidenceView(r *http.Request, res analysis.Coincidence, ch coincidenceChoice) views.Coincidence {
	v := views.Coincidence{Page: s.page(r.Context(), "Do events coincide with pulse onsets?", "Compare"), Sentence: res.Sentence}
	v.Subtitle = "Events of every section against the pulse onsets of every province"
	v.Crumbs = []views.Link{{Label: "Compare", URL: "/compare"}}
	v.Downloads = []views.Link{
		{Label: "CSV (result)", URL: withQuery(r, "format", "csv")},
		{Label: "CSV (events)", URL: withQuery(r, "format", "csv", "table", "events")},
		{Label: "CSV (onsets)", URL: withQuery(r, "format", "csv", "table", "onsets")},
		{Label: "Columns explained", URL: "/help/downloads/coincidence"},
		{Label: "JSON", URL: withQuery(r, "format", "json")},
	}
	window := fmt.Sprintf("%s–%s Ma", ma3(res.OldMa), ma3(res.YoungMa))
	if res.AutoWindow {
		window += " (automatic: from the oldest to the youngest of the provinces' density windows, the events' 95 % ranges and the onsets)"
	} else {
		window += " (chosen)"
	}
	ages := "each event's median age"
	if ch.Opt.DrawAges {
		ages = "drawn from each event's age distribution in every replicate (its age-model draws, or its normal 1σ), so p averages over the ages' uncertainty"
	}
	sections, direct := map[string]bool{}, 0
	for _, n := range res.Nearest {
		if n.Event.Section == "" {
			direct++
		} else {
			sections[n.Event.Section] = true
		}
	}
	from := count(len(sections), "section")
	if direct > 0 {
		from += " and " + count(direct, "direct age")
	}
	provs := map[int64]bool{}
	for _, o := range res.Onsets {
		provs[o.ProvinceID] = true
	}
	if r := res.Result; r != nil {
		stat := []views.KV{
			{Label: "Statistic", Value: fmt.Sprintf("%s Ma: the mean, over the events, of the distance from each event's median age to the nearest pulse onset of any province", ma3(r.StatisticMa))},
		}
		if ch.Opt.DrawAges || ch.Opt.DrawOnsets {
			stat = append(stat, views.KV{Label: "With the draws", Value: fmt.Sprintf("%s Ma on average over the replicates (%s drawn)", ma3(r.DrawnMeanMa), drawnWhat(ch.Opt))})
		}
		stat = append(stat,
			views.KV{Label: "By chance", Value: fmt.Sprintf("median %s Ma; 95 %% of the replicates between %s and %s Ma", ma3(r.NullMedianMa), ma3(r.NullLo95Ma), ma3(r.NullHi95Ma))},
			views.KV{Label: "p-value", Value: fmt.Sprintf("%s = (1 + %d) / (1 + %d): %d of %d replicates of the null came at least as close", analysis.FormatMonteCarloP(r.P), r.AtMost, r.Replicates, r.AtMost, r.Replicates), Class: "caution"},
			views.KV{Label: "Null", Value: analysis.CoincidenceNullWords(ch.Opt.Null)},
			views.KV{Label: "Window", Value: window},
			views.KV{Label: "Replicates", Value: fmt.Sprintf("%d (seed %d)", r.Replicates, r.Seed)},
			views.KV{Label: "Event ages", Value: ages},
			views.KV{Label: "Onsets drawn", Value: onsetWords(ch.Opt.DrawOnsets)},
			views.KV{Label: "Events", Value: fmt.Sprintf("%d, from %s", r.Events, from)},
			views.KV{Label: "Onsets", Value: fmt.Sprintf("%d, from %s", r.Onsets, count(len(provs), "province"))},
		)
		v.Result = []views.FieldGroup{{Title: "Result", Fields: stat}}
	} else {
		v.Result = []views.FieldGroup{{Title: "Choices", Fields: []views.KV{
			{Label: "Null", Value: analysis.CoincidenceNullWords(ch.Opt.Null)}, {Label: "Window", Value: window}}}}
	}
	depends := make([]views.KV, 0, len(res.Depends))
	for _, d := range res.Depends {
		label, val, _ := strings.Cut(d, ": ")
		depends = append(depends, views.KV{Label: upperFirst(label), Value: val})
	}
	v.Result = append(v.Result, views.FieldGroup{Title: "The ages rest on", Fields: depends})
	v.Cautions = res.Cautions
	v.Notes = res.Notes
	v.Form = coincidenceForm(r, ch)
	v.Links = []views.Link{{Label: "The comparison of one province with the events", URL: "/compare"}}
	v.Tables = coincidenceTablesView(res)
	return v
}

func coincidenceForm(r *http.Request, ch coincidenceChoice) *views.Form {
	q := r.URL.Query()
	sel := selectField
	text := func(name, label, ph string) views.Field { return textField(q, name, label, ph) }
	ages := map[bool]string{true: "drawn", false: "median"}[ch.Opt.DrawAges]
	return &views.Form{Action: "/coincidence", Reset: "/coincidence", Fields: []views.Field{
		sel("null", "Null", ch.Opt.Null, "events", "events placed at random", "pulses", "onsets shifted at random"),
		{Name: "from", Label: "Window from (Ma)", Kind: "number", Value: q.Get("from"), Step: "any", Placeholder: "automatic"},
		{Name: "to", Label: "to (Ma)", Kind: "number", Value: q.Get("to"), Step: "any", Placeholder: "automatic"},
		{Name: "n", Label: "Replicates", Kind: "number", Value: strconv.Itoa(ch.Opt.Replicates), Step: "1"},
		sel("ages", "Event ages", ages, "drawn", "drawn per replicate", "median", "medians"),
		sel("onsets", "Pulse onsets", map[bool]string{true: "drawn", false: "reference"}[ch.Opt.DrawOnsets], "reference", "as in the reference density", "drawn", "drawn from the bootstrap"),
		{Name: "seed", Label: "Seed", Kind: "number", Value: strconv.FormatUint(ch.Opt.Seed, 10), Step: "1"},
		text("sections", "Sections", "all (ids, e.g. 1,3)"),
		text("events", "Events", "all (ids)"),
		sel("anomalies", "Detected anomalies", map[bool]string{true: "1", false: "0"}[ch.Cmp.Anomalies], "0", "left out", "1", "tested too"),
		sel("point", "Events with an extent read at", ch.Cmp.Point, "base", "their base (onset)", "peak", "their peak", "top", "their top (end)"),
		sel("model", "Age model", ch.Cmp.Model, "mc", "Monte Carlo", "linear", "naive linear"),
		sel("bw", "Smoothing width", ch.Cmp.Dens.Rule.String(), "isj", smoothingChoice(stats.RuleISJ), "scott", smoothingChoice(stats.RuleScott),
			"silverman", smoothingChoice(stats.RuleSilverman), "silverman-robust", smoothingChoice(stats.RuleSilvermanRobust)),
	}}
}

func coincidenceTablesView(res analysis.Coincidence) []views.Table {
	ev := views.Table{ID: "events", Caption: "Events tested, oldest first, with the pulse onset nearest to each", Columns: []views.Column{
		{Label: "Event"}, {Label: "Section"}, {Label: "Age", Unit: "Ma", Num: true, Title: "median of its age distribution"},
		{Label: "95 %", Unit: "Ma", Num: true}, {Label: "Nearest onset"}, {Label: "Onset", Unit: "Ma", Num: true},
		{Label: "Distance", Unit: "Ma", Num: true},
	}, Empty: "No event with an age lies in the window."}
	for _, n := range res.Nearest {
		e := n.Event
		url := ""
		if e.SectionID != 0 {
			url = idURL("/sections", e.SectionID)
		}
		onset := views.Cell{Text: "–"}
		if n.Onset.Province != "" {
			onset = views.Cell{Text: n.Onset.Label(), URL: idURL("/provinces", n.Onset.ProvinceID) + "/timeline"}
		}
		ev.Rows = append(ev.Rows, []views.Cell{{Text: e.Name, Title: e.How}, {Text: orDash(e.Section), URL: url},
			{Text: ma3(e.AgeMa), Num: true}, {Text: ma3(e.Hi95Ma) + "–" + ma3(e.Lo95Ma), Num: true}, onset,
			{Text: ma3(n.Onset.OnsetMa), Num: true}, {Text: ma3(n.DistanceMa), Num: true}})
	}
	ev.Notes = []string{"Ages are the medians of the comparison's event ages (hover an event for how its age is made); the 95 % range is its 2.5–97.5 % quantiles."}
	on := views.Table{ID: "onsets", Caption: "Pulse onsets in the window, oldest first", Columns: []views.Column{
		{Label: "Province"}, {Label: "Pulse"}, {Label: "Onset", Unit: "Ma", Num: true, Title: "older edge of the pulse in the reference density"},
		{Label: "Onset 95 %", Unit: "Ma", Num: true, Title: "2.5–97.5 % of the older edge over the bootstrap replicates in which the pulse exists"},
		{Label: "Mode", Unit: "Ma", Num: true}, {Label: "Present in", Num: true, Title: "share of bootstrap replicates in which the pulse exists"},
	}, Empty: "No pulse onset lies in the window."}
	for _, o := range res.Onsets {
		on.Rows = append(on.Rows, []views.Cell{{Text: o.Province, URL: idURL("/provinces", o.ProvinceID) + "/timeline"}, {Text: upperFirst(o.PulseWords())},
			{Text: ma3(o.OnsetMa), Num: true}, {Text: ma3(o.Hi95Ma) + "–" + ma3(o.Lo95Ma), Num: true}, {Text: ma3(o.ModeMa), Num: true},
			{Text: fmt.Sprintf("%.0f %%", 100*o.Frequency), Num: true}})
	}
	on.Notes = []string{"The onset is the older edge of a pulse: where the density, going back in time, falls to the minimum before it. The test takes it as known; its 95 % range shows how far it moves between bootstrap replicates."}
	tables := []views.Table{ev, on}
	if len(res.EventsOutside)+len(res.OnsetsOutside) > 0 {
		out := views.Table{ID: "outside", Caption: "Left out: outside the window", Columns: []views.Column{{Label: "What"}, {Label: "Age", Unit: "Ma", Num: true}}}
		for _, e := range res.EventsOutside {
			out.Rows = append(out.Rows, []views.Cell{{Text: e.Name + " (" + orDash(e.Section) + ")"}, {Text: ma3(e.AgeMa), Num: true}})
		}
		for _, o := range res.OnsetsOutside {
			out.Rows = append(out.Rows, []views.Cell{{Text: "onset of " + o.Label()}, {Text: ma3(o.OnsetMa), Num: true}})
		}
		tables = append(tables, out)
	}
	return tables
}

// coincidenceResultColumnDefs are the CSV columns of the result (one row), units in the names; the
// writer's header and the dictionary (/help/downloads/coincidence) both come from these lists.
var coincidenceResultColumnDefs = []downloadColumn{
	{"statistic_ma", "Ma", "T, the test's statistic: the mean over the events of the distance from each event's age (its median) to the nearest pulse onset."},
	{"drawn_mean_ma", "Ma", "The mean of T over the replicates with the event ages (and onsets, if drawn) drawn from their uncertainties; empty when nothing is drawn."},
	{"p", "probability", "The p-value: (1 + at_most) / (1 + replicates), the chance of a T this small or smaller if events and onsets were unrelated."},
	{"at_most", "replicates", "In how many replicates of the unrelated case T was at most the data's."},
	{"replicates", "", "The number of replicates of the unrelated case."},
	{"seed", "", "The seed of the random draws."},
	{"null", "", "What the unrelated case moves: events (each event placed anywhere in the window, onsets fixed) or pulses (the onsets slid together by one offset, keeping their spacing, events fixed)."},
	{"window_old_ma", "Ma", "The older end of the window the events or onsets are placed in."},
	{"window_young_ma", "Ma", "The younger end of the window."},
	{"window_automatic", "", "true when the window was found from the events and onsets, false when it was chosen."},
	{"ages", "", "drawn: every replicate draws each event's age from its distribution; median: the events are placed at their medians."},
	{"events", "", "How many events entered."},
	{"onsets", "", "How many pulse onsets entered."},
	{"null_median_ma", "Ma", "The median of T over the replicates of the unrelated case."},
	{"null_lo95_ma", "Ma", "The 2.5 % quantile of T over those replicates."},
	{"null_hi95_ma", "Ma", "The 97.5 % quantile of T over those replicates."},
	{"message", "", "Why no test was made, when none was (for example too few events); empty otherwise."},
	{"onset_draws", "", "drawn: every replicate takes each province's onsets from one bootstrap replicate of its density; reference: the onsets of the reference density are taken as known."},
}

var coincidenceResultColumns = columnNames(coincidenceResultColumnDefs)

// coincidenceEventColumnDefs are the columns of the events CSV: each event with its nearest onset.
var coincidenceEventColumnDefs = []downloadColumn{
	{"event_code", "", "The event's code, as on the comparison page."},
	{"event", "", "The event's name."},
	{"section", "", "The section it was recorded in (empty for an event dated directly)."},
	{"age_ma", "Ma", "The event's age: the median of its age distribution."},
	{"lo95_ma", "Ma", "Lower (younger) end of its 95 % interval."},
	{"hi95_ma", "Ma", "Upper (older) end of its 95 % interval."},
	{"nearest_province", "", "The province of the pulse onset nearest to the event's age."},
	{"nearest_pulse", "", "That pulse (P1 the oldest of its province)."},
	{"onset_ma", "Ma", "That pulse's onset (its older edge) in the province's reference density."},
	{"distance_ma", "Ma", "|age_ma − onset_ma|: the event's share of T."},
}

// coincidenceOnsetColumnDefs are the columns of the onsets CSV: each pulse onset that entered.
var coincidenceOnsetColumnDefs = []downloadColumn{
	{"province", "", "The large igneous province."},
	{"pulse", "", "The pulse of its density (P1 the oldest), as on its timeline."},
	{"onset_ma", "Ma", "The pulse's onset (older edge) in the reference density."},
	{"onset_lo95_ma", "Ma", "2.5 % quantile of the onset over the bootstrap replicates in which the pulse exists."},
	{"onset_hi95_ma", "Ma", "97.5 % quantile of the onset over those replicates."},
	{"mode_ma", "Ma", "The pulse's peak (mode) in the reference density."},
	{"frequency", "fraction 0–1", "The share of bootstrap replicates in which the pulse exists."},
}

// writeCoincidenceCSV writes one table of the result: the test (one row), the events or the onsets.
func writeCoincidenceCSV(w io.Writer, res analysis.Coincidence, table string) error {
	cw := store.NewCSVWriter(w)
	switch table {
	case "events":
		if err := cw.Write(columnNames(coincidenceEventColumnDefs)); err != nil {
			return err
		}
		for _, n := range res.Nearest {
			e := n.Event
			if err := cw.Write([]string{e.Code, e.Name, e.Section, gs(e.AgeMa), gs(e.Lo95Ma), gs(e.Hi95Ma), n.Onset.Province, n.Onset.Pulse, gs(n.Onset.OnsetMa), gs(n.DistanceMa)}); err != nil {
				return err
			}
		}
	case "onsets":
		if err := cw.Write(columnNames(coincidenceOnsetColumnDefs)); err != nil {
			return err
		}
		for _, o := range res.Onsets {
			if err := cw.Write([]string{o.Province, o.Pulse, gs(o.OnsetMa), gs(o.Lo95Ma), gs(o.Hi95Ma), gs(o.ModeMa), gs(o.Frequency)}); err != nil {
				return err
			}
		}
	default:
		if err := cw.Write(coincidenceResultColumns); err != nil {
			return err
		}
		if err := cw.Write(coincidenceResultRecord(res)); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

func coincidenceResultRecord(res analysis.Coincidence) []string {
	o := res.Options
	ages := map[bool]string{true: "drawn", false: "median"}[o.DrawAges]
	rec := []string{"", "", "", "", strconv.Itoa(o.Replicates), strconv.FormatUint(o.Seed, 10), o.Null,
		gs(res.OldMa), gs(res.YoungMa), strconv.FormatBool(res.AutoWindow), ages, strconv.Itoa(len(res.Nearest)), strconv.Itoa(len(res.Onsets)),
		"", "", "", res.Message, map[bool]string{true: "drawn", false: "reference"}[o.DrawOnsets]}
	if r := res.Result; r != nil {
		rec[0], rec[1], rec[2], rec[3] = gs(r.StatisticMa), gs(r.DrawnMeanMa), gs(r.P), strconv.Itoa(r.AtMost)
		rec[13], rec[14], rec[15] = gs(r.NullMedianMa), gs(r.NullLo95Ma), gs(r.NullHi95Ma)
	}
	return rec
}

// coincidenceJSON is the JSON download: the result with its choices, the events and the onsets.
func coincidenceJSON(res analysis.Coincidence) any {
	type event struct {
		Code       string   `json:"code"`
		Name       string   `json:"name"`
		Section    string   `json:"section,omitempty"`
		AgeMa      float64  `json:"age_ma"`
		Lo95Ma     float64  `json:"lo95_ma"`
		Hi95Ma     float64  `json:"hi95_ma"`
		Province   string   `json:"nearest_province,omitempty"`
		Pulse      string   `json:"nearest_pulse,omitempty"`
		OnsetMa    *float64 `json:"onset_ma,omitempty"`
		DistanceMa *float64 `json:"distance_ma,omitempty"`
		How        string   `json:"how"`
	}
	type onset struct {
		Province  string  `json:"province"`
		Pulse     string  `json:"pulse"`
		OnsetMa   float64 `json:"onset_ma"`
		Lo95Ma    float64 `json:"onset_lo95_ma"`
		Hi95Ma    float64 `json:"onset_hi95_ma"`
		ModeMa    float64 `json:"mode_ma"`
		Frequency float64 `json:"frequency"`
	}
	var result coincidenceResultJSON
	o := res.Options
	result = coincidenceResultJSON{Replicates: o.Replicates, Seed: o.Seed, Null: o.Null, WindowOldMa: res.OldMa, WindowYoungMa: res.YoungMa,
		WindowAutomatic: res.AutoWindow, Ages: map[bool]string{true: "drawn", false: "median"}[o.DrawAges], Events: len(res.Nearest),
		Onsets: len(res.Onsets), Message: res.Message, OnsetDraws: map[bool]string{true: "drawn", false: "reference"}[o.DrawOnsets]}
	if r := res.Result; r != nil {
		result.StatisticMa, result.P, result.AtMost = &r.StatisticMa, &r.P, &r.AtMost
		result.NullMedianMa, result.NullLo95Ma, result.NullHi95Ma = &r.NullMedianMa, &r.NullLo95Ma, &r.NullHi95Ma
		if !math.IsNaN(r.DrawnMeanMa) {
			result.DrawnMeanMa = &r.DrawnMeanMa
		}
	}
	out := struct {
		Answer   string                `json:"answer"`
		Result   coincidenceResultJSON `json:"result"`
		Null     string                `json:"null_in_words"`
		Cautions []string              `json:"cautions"`
		Depends  []string              `json:"depends_on"`
		Notes    []string              `json:"notes"`
		Events   []event               `json:"events"`
		Outside  []event               `json:"events_outside_window"`
		Onsets   []onset               `json:"onsets"`
	}{Answer: res.Sentence, Result: result, Null: analysis.CoincidenceNullWords(res.Options.Null), Cautions: res.Cautions,
		Depends: res.Depends, Notes: res.Notes, Events: []event{}, Outside: []event{}, Onsets: []onset{}}
	for _, n := range res.Nearest {
		e := event{Code: n.Event.Code, Name: n.Event.Name, Section: n.Event.Section, AgeMa: n.Event.AgeMa, Lo95Ma: n.Event.Lo95Ma,
			Hi95Ma: n.Event.Hi95Ma, How: n.Event.How}
		if n.Onset.Province != "" {
			on, d := n.Onset.OnsetMa, n.DistanceMa
			e.Province, e.Pulse, e.OnsetMa, e.DistanceMa = n.Onset.Province, n.Onset.Pulse, &on, &d
		}
		out.Events = append(out.Events, e)
	}
	for _, x := range res.EventsOutside {
		out.Outside = append(out.Outside, event{Code: x.Code, Name: x.Name, Section: x.Section, AgeMa: x.AgeMa, Lo95Ma: x.Lo95Ma, Hi95Ma: x.Hi95Ma, How: x.How})
	}
	for _, o := range res.Onsets {
		out.Onsets = append(out.Onsets, onset{o.Province, o.Pulse, o.OnsetMa, o.Lo95Ma, o.Hi95Ma, o.ModeMa, o.Frequency})
	}
	return out
}

// coincidenceResultJSON is the result in the JSON download: the CSV's columns, null where there is no value.
type coincidenceResultJSON struct {
	StatisticMa     *float64 `json:"statistic_ma"`
	DrawnMeanMa     *float64 `json:"drawn_mean_ma"`
	P               *float64 `json:"p"`
	AtMost          *int     `json:"at_most"`
	Replicates      int      `json:"replicates"`
	Seed            uint64   `json:"seed"`
	Null            string   `json:"null"`
	WindowOldMa     float64  `json:"window_old_ma"`
	WindowYoungMa   float64  `json:"window_young_ma"`
	WindowAutomatic bool     `json:"window_automatic"`
	Ages            string   `json:"ages"`
	Events          int      `json:"events"`
	Onsets          int      `json:"onsets"`
	NullMedianMa    *float64 `json:"null_median_ma"`
	NullLo95Ma      *float64 `json:"null_lo95_ma"`
	NullHi95Ma      *float64 `json:"null_hi95_ma"`
	Message         string   `json:"message"`
	OnsetDraws      string   `json:"onset_draws"`
}

// upperFirst capitalises the first letter of s (a label that may start with a superscript).
func upperFirst(s string) string {
	r, n := utf8.DecodeRuneInString(s)
	return string(unicode.ToUpper(r)) + s[n:]
}

// onsetWords says how the onsets enter the replicates.
func onsetWords(drawn bool) string {
	if drawn {
		return "yes: in every replicate each province's onsets are those of one of its density's bootstrap replicates (a pulse absent there is absent), so p averages over their uncertainty"
	}
	return "no: the onsets of the reference density, taken as known"
}

// drawnWhat names what the replicates draw.
func drawnWhat(o analysis.CoincidenceOptions) string {
	switch {
	case o.DrawAges && o.DrawOnsets:
		return "event ages and onsets"
	case o.DrawOnsets:
		return "onsets"
	}
	return "event ages"
}
