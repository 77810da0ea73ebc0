package web

import (
	"cmp"
	"fmt"
	"math"
	"net/http"
	"net/url"
	"slices"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"coeval/stats"
	"coeval/store"
	"coeval/views"
)

// comparer serves the comparison pages; it holds the cache of computed comparisons (no package state:
// the cache lives as long as the router that registered it).
type comparer struct {
	*Server
	cache *compareCache
}

func (s *Server) registerCompareRoutes(r chi.Router) {
	c := &comparer{Server: s, cache: newCompareCache(32)}
	r.Get("/compare", s.handle(c.handleCompare))
	r.Get("/compare/saved", s.handle(c.handleSavedList))
	r.Get("/compare/saved/{id}", s.handle(c.handleSavedShow))
	r.With(s.requireRole(store.RoleContributor)).Post("/compare/saved", s.handle(c.handleSave))
}

func (c *comparer) handleCompare(w http.ResponseWriter, r *http.Request) error {
	res, cached, err := c.comparison(r)
	if err != nil {
		return err
	}
	ch := res.Choice
	// Display choices are read from this request, not from the cached result.
	p := newParams(r)
	sortKey := p.oneOf("sort", compareSorts, "pulse")
	dir := p.oneOf("dir", []string{"asc", "desc"}, "asc")
	format := p.oneOf("format", compareFormats, "html")
	base := fmt.Sprintf("comparison-province-%d", res.Province.ID)
	switch format {
	case "csv":
		return writeDownload(w, base+".csv", func(wr ioWriter) error { return writeCompareCSV(wr, res) })
	case "json":
		writeJSON(w, http.StatusOK, compareJSON(res))
		return nil
	case "xlsx":
		b, err := compareXLSX(res)
		if err != nil {
			return err
		}
		return writeFile(w, "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet", base+".xlsx", b)
	case "svg", "png", "pdf":
		fig, err := compareFigure(res)
		if err != nil {
			return err
		}
		switch format {
		case "svg":
			return writeFile(w, "image/svg+xml", base+".svg", fig.SVG())
		case "png":
			b, err := fig.PNG()
			if err != nil {
				return err
			}
			return writeFile(w, "image/png", base+".png", b)
		default:
			b, err := fig.PDF()
			if err != nil {
				return err
			}
			return writeFile(w, "application/pdf", base+".pdf", b)
		}
	}
	v, err := c.compareView(r, res, cached, sortKey, dir)
	if err != nil {
		return err
	}
	_ = ch
	c.render(w, r, http.StatusOK, views.ComparePage(v))
	return nil
}

// levelHelp explains the uncertainty levels of the comparison.
func levelHelp() []views.KV {
	return []views.KV{
		{Label: "as-needed (default)", Value: "Each pair draws the random part of both ages and every systematic component that only one of them carries; a component both carry whole (the same decay constant, tracer or ⁴⁰Ar/³⁹Ar calibration) moves them together and is held fixed; one that an event carries only in part (its age model rests partly on ties without that component, e.g. a biozone) is drawn once for both, so the shared part cancels and the rest counts. Tie points from dates enter the age models with their analytical σ only, never with Y or Z. U–Pb against U–Pb of the same tracer uses X, against another tracer Y, against another system Z; ⁴⁰Ar/³⁹Ar on one calibration uses the analytical σ, against anything else the full external σ."},
		{Label: "analytical", Value: "Only the random part of every age: too narrow unless every pair shares all its systematic components."},
		{Label: "full", Value: "Every component drawn once per draw and applied to every age that carries it (correlated, never added as independent terms); differences equal as-needed up to a second-order remainder. Use it when an absolute age matters."},
	}
}

// seRuleText says how the Monte Carlo SE of every probability of a comparison is made (stats.Probability).
const seRuleText = "± is the Monte Carlo standard error sqrt(P(1 − P)/Neff), Neff the effective number of independent draws: 1/Neff = 1/N + 1/M for each input given by only M draws that are resampled (a pulse's bootstrap replicates, an age model's draws), so an input's own draws count, not N alone. It is an upper bound, close when such an input decides the outcome."

// seHow says, for one row's account, how many effective draws its SEs rest on: after for P(after) and
// P(|lag| < δ), within for P(within) (NaN when it does not apply).
func seHow(n int, after, within float64) string {
	s := fmt.Sprintf("sqrt(P(1 − P)/Neff) with Neff = %.0f effective draws", after)
	if !math.IsNaN(within) && math.Round(within) != math.Round(after) {
		s = fmt.Sprintf("sqrt(P(1 − P)/Neff) with Neff = %.0f effective draws for P(after) and P(|lag| < δ), %.0f for P(within)", after, within)
	}
	if math.Round(after) >= float64(n) {
		return s + fmt.Sprintf(": the N = %d joint draws, no input being resampled from fewer", n)
	}
	return s + fmt.Sprintf(" of the N = %d joint draws: 1/Neff = 1/N + 1/M for each input resampled from only M draws (the pulse's replicates, the event's age-model draws)", n)
}

// probText formats a probability with its Monte Carlo SE; 0 and 1 read as below 3/N and above 1 − 3/N.
func probText(p stats.Probability, n int) string {
	switch {
	case p.P == 0:
		return "< " + fixed(3/float64(n), 4)
	case p.P == 1:
		return "> " + fixed(1-3/float64(n), 4)
	}
	// The SE to one significant figure, the probability to the same decimals (at least 3).
	d := 3
	if p.SE > 0 {
		d = max(3, int(math.Ceil(-math.Log10(p.SE))))
	}
	return fixed(p.P, d) + " ± " + fixed(p.SE, d)
}

func lagText(s stats.DrawSummary) string {
	return fixed(s.Median, 3) + " [" + fixed(s.Lo95, 3) + ", " + fixed(s.Hi95, 3) + "]"
}

// compareRow is one cell of the table — a pulse or a unit against an event — with what goes beside it.
// A unit row's Cell holds its comparison in the pulse's terms: AfterOnset is P(event younger than the
// unit's mean), the lag is unit − event, OVL is of the unit's and the event's draws, and Within, which
// does not apply to a point-like age, is NaN.
type compareRow struct {
	Kind       string // "pulse" or "unit"
	Pulse      string // the row's item: the pulse (P1) or the unit's label
	PulseIdx   int    // index of the pulse (pulse rows) or of the unit row (unit rows)
	Item       int    // place in the table: the pulses, then the units
	Unit       *compareUnitRow
	Event      compareEvent
	EventIdx   int
	Cell       stats.IntervalComparison
	Vol        *stats.VolumeFraction
	Sens       []*stats.SensitivityRow // after, within, near (within nil for a unit row)
	SensAbsent []string
	// VolSens follows P(more than half the volume before the event) across the sensitivity sets, and
	// VolMin, VolMax are the range of the median volume fraction over them (nil and 0 without).
	VolSens        *stats.SensitivityRow
	VolMin, VolMax float64
	VolAbsent      []string
}

func (r compareRow) isUnit() bool { return r.Kind == "unit" }

// code is the row item's code: P1 or U7.
func (r compareRow) code() string {
	if r.isUnit() {
		return r.Unit.Code
	}
	return r.Pulse
}

// compareRows lists the cells, in table order (pulses oldest first, then units oldest first, each with
// the events oldest first).
func compareRows(res *compareResult) []compareRow {
	sens := map[string]*stats.SensitivityRow{}
	if res.Sens != nil {
		for i := range res.Sens.Rows {
			sens[res.Sens.Rows[i].Name] = &res.Sens.Rows[i]
		}
	}
	var rows []compareRow
	add := func(row compareRow, e int) {
		ev := res.In.Events[e]
		row.Event, row.EventIdx = ev, e
		if res.Volume != nil {
			row.Vol = res.Volume[e]
		}
		if res.Sens != nil {
			for _, what := range []string{"after", "within", "near"} {
				row.Sens = append(row.Sens, sens[sensRowName(row.code(), ev.Code, what)])
			}
			item := row.Pulse
			if row.isUnit() {
				item = row.Unit.Name
			}
			row.SensAbsent = append(slices.Clone(res.SensMissing[item]), res.SensMissing[ev.Name]...)
			if res.SensVolume != nil {
				row.VolSens = sens[sensVolumeName(ev.Code)]
				row.VolMin, row.VolMax = math.Inf(1), math.Inf(-1)
				for _, med := range res.SensVolume {
					row.VolMin, row.VolMax = math.Min(row.VolMin, med[e]), math.Max(row.VolMax, med[e])
				}
				row.VolAbsent = res.SensMissing[sensVolumeAbsent] // an absent event is named with the row already
			}
		}
		rows = append(rows, row)
	}
	for i, cells := range res.Table.Cells {
		for e, c := range cells {
			add(compareRow{Kind: "pulse", Pulse: res.Table.Intervals[i], PulseIdx: i, Item: i, Cell: c}, e)
		}
	}
	for i, cells := range res.UnitTable.Cells {
		u := &res.In.UnitRows[i]
		for e, c := range cells {
			cell := stats.IntervalComparison{Interval: u.Name, Event: c.B, AfterOnset: c.Older,
				Within: stats.Probability{P: math.NaN(), SE: math.NaN()}, LagMa: c.LagMa, Near: c.Near, DeltaMa: c.DeltaMa,
				OVL: c.OVL, N: c.N, Seed: c.Seed, Level: c.Level}
			add(compareRow{Kind: "unit", Pulse: u.Label(), PulseIdx: i, Item: len(res.Table.Cells) + i, Unit: u, Cell: cell}, e)
		}
	}
	slices.SortStableFunc(rows, func(a, b compareRow) int {
		return cmp.Or(cmp.Compare(a.Item, b.Item), cmp.Compare(b.Event.Summary.Median, a.Event.Summary.Median))
	})
	return rows
}

func sortRows(rows []compareRow, key, dir string) {
	val := func(r compareRow) float64 {
		switch key {
		case "after":
			return r.Cell.AfterOnset.P
		case "within":
			if r.isUnit() {
				return math.Inf(-1)
			}
			return r.Cell.Within.P
		case "lag":
			return r.Cell.LagMa.Median
		case "near":
			return r.Cell.Near.P
		case "ovl":
			return r.Cell.OVL
		case "volume":
			if r.Vol == nil {
				return math.Inf(-1)
			}
			return r.Vol.Fraction.Median
		case "event":
			return -r.Event.Summary.Median
		}
		return float64(r.Item)
	}
	slices.SortStableFunc(rows, func(a, b compareRow) int {
		c := cmp.Compare(val(a), val(b))
		if dir == "desc" {
			c = -c
		}
		return c
	})
}

func howID(pulse, code string) string {
	return "how-" + strings.NewReplacer(":", "-", ".", "-", " ", "-").Replace(pulse+"-"+code)
}

// sensText sums up the sensitivity of a cell: the range of each probability over the alternatives and
// whether the conclusion survives them. A unit row has no "within".
func sensText(row compareRow, sets int) (string, string, bool) {
	if len(row.Sens) == 0 || row.Sens[0] == nil {
		return "—", "", false
	}
	labels := []string{"after onset", "within"}
	if row.isUnit() {
		labels = []string{"after the unit"}
	}
	var parts, cautions []string
	for k, l := range labels {
		s := row.Sens[k]
		parts = append(parts, fixed(s.MinP, 2)+nbDash+fixed(s.MaxP, 2))
		if s.Caution != "" {
			cautions = append(cautions, l+": "+s.Caution)
		}
	}
	if v := row.VolSens; v != nil {
		parts = append(parts, "vol.\u00a0"+volRangeText(row.VolMin, row.VolMax))
		if v.Caution != "" {
			cautions = append(cautions, "most of the volume before the event: "+v.Caution)
		}
	}
	text := strings.Join(parts, " · ")
	if len(row.SensAbsent) > 0 {
		cautions = append(cautions, "absent under "+strings.Join(row.SensAbsent, ", ")+" (baseline kept there)")
	}
	if len(row.VolAbsent) > 0 && row.VolSens != nil {
		cautions = append(cautions, "volume fraction: a unit's mean absent under "+strings.Join(row.VolAbsent, ", ")+" (baseline kept there)")
	}
	fails := volFlips(row)
	for k := range labels {
		if row.Sens[k].Conclusion != 0 && !row.Sens[k].Survives {
			fails = true
		}
	}
	if fails {
		text += "\u00a0⚠"
	}
	_ = sets
	return text, strings.Join(cautions, " · "), fails
}

// nbDash is an en dash that a line does not break at (word joiners around it): a range stays whole in a
// narrow table cell.
const nbDash = "\u2060–\u2060"

// volRangeText writes the range of the median volume fraction over the sensitivity sets, in %.
func volRangeText(lo, hi float64) string {
	a, b := fixed(100*lo, 0), fixed(100*hi, 0)
	if a == b {
		return a + "\u00a0%"
	}
	return a + nbDash + b + "\u00a0%"
}

// volFlips reports whether the volume fraction's conclusion (P(more than half before) > 0.95 or < 0.05)
// fails under some sensitivity set.
func volFlips(row compareRow) bool {
	return row.VolSens != nil && row.VolSens.Conclusion != 0 && !row.VolSens.Survives
}

// restsOn names the model choices briefly, for the table; dependsText gives them in full.
func restsOn(row compareRow) string {
	ev := row.Event
	parts := []string{"bandwidth"}
	if row.isUnit() {
		parts = []string{"unit mean"}
	}
	for _, d := range ev.Depends {
		switch {
		case strings.HasPrefix(d, "age model"):
			parts = append(parts, strings.TrimPrefix(d, "age model: ")+" model")
		case strings.HasPrefix(d, "Hg/TOC"):
			parts = append(parts, "TOC threshold")
		case strings.HasPrefix(d, "synchroneity"):
			parts = append(parts, "synchroneity")
		}
	}
	return strings.Join(parts, ", ")
}

// dependsText names the model choices a row's probabilities rest on.
func dependsText(res *compareResult, row compareRow) string {
	d := res.Density
	parts := []string{"KDE " + d.Bandwidth.Rule.String() + " h = " + fixed(d.Bandwidth.Ma, sigmaDecimals(d.Bandwidth.Ma)+1) + " Ma"}
	if d.Bandwidth.Note != "" {
		parts[0] += " (fallback)"
	}
	if row.isUnit() {
		s := res.Choice.Dens.Sum
		parts = []string{fmt.Sprintf("%s weighted mean (policy %s, outlier rule %s, %s", row.Unit.System, s.PolicyCode, s.Rule, includeLabel(s.Include))}
		if row.Unit.Q.ArAr != nil {
			parts[0] += ", calibration " + s.Cal.Cal.Code
		}
		parts[0] += ")"
	}
	parts = append(parts, row.Event.Depends...)
	return strings.Join(parts, "; ")
}

func (c *comparer) compareView(r *http.Request, res *compareResult, cached bool, sortKey, dir string) (views.CompareView, error) {
	ctx := r.Context()
	ch := res.Choice
	v := views.CompareView{Page: c.page(ctx, "Compare: "+res.Province.Name, "Compare")}
	v.Subtitle = "Eruptive pulses against events of the sedimentary record, as probabilities from joint Monte Carlo draws"
	v.Crumbs = []views.Link{{Label: "Compare", URL: "/compare"}, {Label: "Saved comparisons", URL: "/compare/saved"}}
	for _, f := range []string{"csv", "json", "xlsx", "svg", "png", "pdf"} {
		v.Downloads = append(v.Downloads, views.Link{Label: strings.ToUpper(f), URL: withQuery(r, "format", f)})
	}
	v.Intro = "Each row compares one pulse of the province's density (onset = older edge, end = younger edge, from the bootstrap of the density) with one event's age (from its section's age–height model or a direct age). Ages in Ma, older = larger; the lag is onset − event (positive: the event came after the onset). Every probability is given ± its Monte Carlo standard error; numbers link to how they were computed."
	switch ch.Rows {
	case "units":
		v.Subtitle = "Single eruptive units against events of the sedimentary record, as probabilities from joint Monte Carlo draws"
		v.Intro = "Each row compares one eruptive unit's weighted mean (a point-like age, with its decay system's systematic components) with one event's age (from its section's age–height model or a direct age). Ages in Ma, older = larger; the lag is unit mean − event (positive: the event came after the unit). Every probability is given ± its Monte Carlo standard error; numbers link to how they were computed."
	case "both":
		v.Subtitle = "Eruptive pulses and single units against events of the sedimentary record, as probabilities from joint Monte Carlo draws"
		v.Intro = "Each row compares one pulse of the province's density (onset = older edge, end = younger edge, from the bootstrap of the density), or one eruptive unit's weighted mean (a point-like age), with one event's age (from its section's age–height model or a direct age). Ages in Ma, older = larger; the lag is onset − event, or unit mean − event (positive: the event came after). Every probability is given ± its Monte Carlo standard error; numbers link to how they were computed."
	}
	v.Form = compareForm(r, res)
	v.LevelHelp = levelHelp()
	v.Status = []views.KV{{Label: "seed", Value: strconv.FormatUint(ch.Dens.Seed, 10)}, {Label: "N", Value: strconv.Itoa(ch.N) + " joint draws"},
		{Label: "level", Value: ch.Level.String()}, {Label: "δ", Value: num(ch.DeltaMa) + " Ma"},
		{Label: "calibration", Value: ch.Dens.Sum.Cal.Cal.Code}, {Label: "data stamp", Value: strconv.FormatInt(res.Stamp, 10)}}
	took := strconv.FormatInt(res.Computed.Milliseconds(), 10) + " ms"
	if cached {
		v.Status = append(v.Status, views.KV{Label: "computed", Value: took + ", served from the cache"})
	} else {
		v.Status = append(v.Status, views.KV{Label: "computed", Value: took})
	}
	if id := newParams(r).id("saved"); id > 0 {
		sc, err := c.store.Comparison(ctx, id)
		if err == nil {
			if sc.DataStamp != res.Stamp {
				v.Changed = fmt.Sprintf("Saved comparison “%s” was computed on data stamp %d (%s); the compilation has changed since (now %d): the numbers below are recomputed on the current data and may differ from those saved.",
					sc.Name, sc.DataStamp, when(sc.CreatedAt), res.Stamp)
			} else {
				v.Status = append(v.Status, views.KV{Label: "saved as", Value: fmt.Sprintf("“%s”, data unchanged since", sc.Name)})
			}
		}
	}
	v.Cautions = append(v.Cautions, res.Cautions...)
	if res.MinSamples > 0 && res.MinSamples < ch.N {
		v.Cautions = append(v.Cautions, fmt.Sprintf("Some inputs are given by only %d draws (bootstrap replicates or age-model draws) and are resampled to %d: a probability cannot be known better than about ±sqrt(P(1 − P)/%d), whatever N. Every ± on this page and in the downloads counts those draws.", res.MinSamples, ch.N, res.MinSamples))
	}
	if res.Density.Bandwidth.Note != "" {
		v.Cautions = append(v.Cautions, "Bandwidth: "+res.Density.Bandwidth.Note)
	}
	fig, err := compareFigure(res)
	if err != nil {
		return v, err
	}
	if len(res.Table.Cells) > 0 || res.Density.Band != nil {
		v.SVG = string(fig.SVG())
		v.Caption = "The province's density with its pulses and each event's age distribution (its draws, 95 % interval whiskered), by section, on one age axis with the ICS timescale."
		if ch.unitRows() && len(res.In.UnitRows) > 0 {
			v.Caption = "The province's density with its pulses, each unit's weighted mean compared (its analytical spread, 95 % interval whiskered) and each event's age distribution (its draws, 95 % interval whiskered), by section, on one age axis with the ICS timescale."
		}
	}
	rows := compareRows(res)
	sortRows(rows, sortKey, dir)
	v.Table = compareTable(r, res, rows, sortKey, dir)
	v.Events = eventsTable(res)
	v.Order = orderTable(res)
	v.How = howList(res, rows)
	v.Notes = append(v.Notes, res.In.EdgeNote+".")
	if res.VolumeNote != "" {
		v.Notes = append(v.Notes, res.VolumeNote)
	}
	v.Notes = append(v.Notes, res.In.Notes...)
	v.Notes = append(v.Notes, "Results are cached by the full set of choices in the address and the compilation's data stamp (the number of its latest change): any import, edit, review or undo gives a new stamp and so a fresh computation.")
	if u, ok := currentUser(ctx); ok && store.RoleAtLeast(u.Role, store.RoleContributor) {
		v.Save = &views.SaveForm{Action: "/compare/saved", Query: saveQuery(r)}
	}
	return v, nil
}

// saveQuery is the request's query without the display-only and bookkeeping parameters.
func saveQuery(r *http.Request) string {
	q := r.URL.Query()
	for _, k := range []string{"format", "saved"} {
		q.Del(k)
	}
	return q.Encode()
}

func compareTable(r *http.Request, res *compareResult, rows []compareRow, sortKey, dir string) views.Table {
	ch := res.Choice
	col := func(label, unit, key, title string) views.Column {
		c := views.Column{Label: label, Unit: unit, Num: key != "pulse" && key != "event", Title: title}
		if key != "" {
			d := "asc"
			if key == sortKey {
				c.Sorted = dir
				if dir == "asc" {
					d = "desc"
				}
			}
			c.SortURL = withQuery(r, "sort", key, "dir", d)
		}
		return c
	}
	// The words of the columns follow the rows: a pulse's onset, a unit's mean, or either.
	caption, item, from, empty := "Pulses × events", "Pulse", "onset", "Nothing to compare: the table needs at least one pulse and one event with an age."
	switch ch.Rows {
	case "units":
		caption, item, from, empty = "Units × events", "Unit", "unit", "Nothing to compare: the table needs at least one unit with a weighted mean and one event with an age."
	case "both":
		caption, item, from, empty = "Pulses and units × events", "Pulse / unit", "onset / unit", "Nothing to compare: the table needs at least one pulse or unit and one event with an age."
	}
	afterLabel, afterUnit := "P(after "+from+")", "± MC SE"
	if ch.Rows == "both" {
		// Short header, the reference on the line under it: the table is wide.
		afterLabel, afterUnit = "P(after)", "onset / unit, ±\u00a0MC\u00a0SE"
	}
	ovlUnit := from + " vs event"
	if ch.Rows == "both" {
		ovlUnit = "vs event"
	}
	after, lagTitle := "P(event younger than the pulse's onset)", "onset − event; positive: the event came after the onset"
	if ch.unitRows() {
		after = "P(event younger than the pulse's onset, or than the unit's weighted mean)"
		lagTitle = "onset − event, or unit mean − event; positive: the event came after"
	}
	at := map[string]string{"base": "events with an extent at their base (onset)", "peak": "events with an extent at their peak", "top": "events with an extent at their top (end)"}[ch.Point]
	t := views.Table{ID: "comparison", Caption: fmt.Sprintf("%s (%d joint draws, seed %d, level %s; %s)", caption, ch.N, ch.Dens.Seed, ch.Level, at),
		Columns: []views.Column{col(item, "", "pulse", ""), col("Event", "at", "event", "sorted by age; the point of the event compared"), {Label: "Section"},
			col(afterLabel, afterUnit, "after", after),
			col("P(within)", "± MC SE", "within", "P(end ≤ event ≤ onset); does not apply to a unit (—)"),
			col("Lag", from+" → event, Ma [95 %]", "lag", lagTitle),
			col("P(|lag| < δ)", fmt.Sprintf("δ = %s Ma", num(ch.DeltaMa)), "near", "chance that "+strings.ReplaceAll(from, " / ", " or ")+" and event lie within δ of each other"),
			col("OVL", ovlUnit, "ovl", "overlapping coefficient of the two distributions (histogram estimate): how alike they are, not a probability of synchroneity"),
			col("Vol. before", "% [95 %]", "volume", "fraction of the province's volume with unit means older than the event"),
			{Label: "Sensitivity", Unit: "after · within · vol.", Title: "P(after) and P(within) recomputed under the other calibrations, bandwidth rules, age models (and TOC thresholds with anomalies); vol.: the range of the median volume fraction before the event"},
			{Label: "Rests on", Title: "the model choices these probabilities rest on (hover for details)"}},
		Empty: empty}
	sets := 0
	if res.Sens != nil {
		sets = len(res.Sens.Sets)
	}
	for _, row := range rows {
		c := row.Cell
		link := "#" + howID(row.code(), row.Event.Code)
		evName := row.Event.Name
		if p := row.Event.Point; p != "" && p != "height" {
			evName += " · " + strings.SplitN(p, " ", 2)[0]
		}
		cells := []views.Cell{{Text: row.Pulse, URL: link}, {Text: evName, URL: row.Event.URL, Title: row.Event.Point}, {Text: row.Event.Section},
			{Text: probText(c.AfterOnset, c.N), URL: link, Num: true}, {Text: probText(c.Within, c.N), URL: link, Num: true},
			{Text: lagText(c.LagMa), URL: link, Num: true}, {Text: probText(c.Near, c.N), URL: link, Num: true},
			{Text: fixed(c.OVL, 3), URL: link, Num: true}}
		if row.isUnit() {
			u := row.Unit
			cells[0].Title = fmt.Sprintf("unit: %s weighted mean %s ± %s Ma (1σ analytical), n = %d", u.System, fixed(u.MeanMa, 3), fixed(u.Sigma1s, 3), u.N)
			cells[4] = views.Cell{Text: "—", Num: true, Title: "does not apply: a unit's weighted mean is a point-like age, not an interval"}
		}
		if row.Vol != nil {
			f := row.Vol.Fraction
			cells = append(cells, views.Cell{Text: fixed(100*f.Median, 0) + " [" + fixed(100*f.Lo95, 0) + ", " + fixed(100*f.Hi95, 0) + "]", URL: link, Num: true})
		} else {
			cells = append(cells, views.Cell{Text: "—", Num: true, Title: res.VolumeNote})
		}
		st, caution, fails := sensText(row, sets)
		sc := views.Cell{Text: st, Title: caution}
		if fails || caution != "" {
			sc.Class = "caution"
		}
		if volFlips(row) {
			cells[8].Class, cells[8].Title = "caution", "most of the volume before the event: "+row.VolSens.Caution
		}
		if fails {
			// The conclusion does not survive: mark the probabilities it concerns too.
			for k, idx := range []int{3, 4} {
				if s := row.Sens[k]; s != nil && s.Conclusion != 0 && !s.Survives && !(row.isUnit() && k == 1) {
					cells[idx].Class, cells[idx].Title = "caution", s.Caution
				}
			}
		}
		cells = append(cells, sc, views.Cell{Text: restsOn(row), Title: dependsText(res, row)})
		t.Rows = append(t.Rows, cells)
	}
	t.Notes = append(t.Notes, fmt.Sprintf(seRuleText+" “< %s” reads as below 3/N (rule of three), not zero. Sensitivity: the range of P(after onset) · P(within) over the alternatives, and of the median volume fraction before the event (vol.); ⚠ marks a conclusion (P > 0.95 or P < 0.05; for the volume, P(more than half of it before the event)) that does not survive every alternative, and the numbers concerned are shaded — hover for which alternatives. “Rests on”: the model choices behind the row (hover for the bandwidth, the age model and its draws, the TOC threshold).", fixed(3/float64(ch.N), 4)))
	if ch.unitRows() {
		t.Notes = append(t.Notes, fmt.Sprintf("Unit rows (code U and the unit's number): the unit's weighted mean of the dates include= lets in (%s; policy %s, outlier rule %s against the %s, flagged dates flagged, not dropped), a point-like age with its decay system's systematic components drawn once per joint draw, as for the volume fraction. P(after unit) is P(event younger than the unit's mean); the lag is mean − event; P(within) does not apply (—): a single unit's mean has no duration here. Hover a unit for its mean.",
			includeLabel(ch.Dens.Sum.Include), ch.Dens.Sum.PolicyCode, ch.Dens.Sum.Rule, mswdRangeName(ch.Dens.Sum.Range)))
	}
	if res.Sens != nil {
		t.Notes = append(t.Notes, "Sensitivity sets: "+strings.Join(res.Sens.Sets, ", ")+". Same seed and draws in every set, so the differences come from the inputs.")
	}
	return t
}

func eventsTable(res *compareResult) views.Table {
	t := views.Table{ID: "events", Caption: "Events compared",
		Columns: []views.Column{{Label: "Code"}, {Label: "Event"}, {Label: "Section"}, {Label: "Age", Unit: "Ma, median", Num: true},
			{Label: "95 %", Unit: "Ma", Num: true}, {Label: "Volume erupted before", Unit: "%, median [95 %]", Num: true},
			{Label: "P(most before)", Unit: "± MC SE", Num: true, Title: "P(more than half of the volume erupted before the event)"},
			{Label: "Vol. sensitivity", Unit: "median, %", Num: true, Title: "the range of the median volume fraction over the sensitivity sets; ⚠ when P(most before) > 0.95 or < 0.05 does not survive every set"},
			{Label: "Age from"}}}
	sens := map[string]*stats.SensitivityRow{}
	if res.Sens != nil {
		for i := range res.Sens.Rows {
			sens[res.Sens.Rows[i].Name] = &res.Sens.Rows[i]
		}
	}
	for e, ev := range res.In.Events {
		vol, most, vs := views.Cell{Text: "—", Num: true}, views.Cell{Text: "—", Num: true}, views.Cell{Text: "—", Num: true}
		if res.Volume != nil && res.Volume[e] != nil {
			f := res.Volume[e].Fraction
			vol.Text = fixed(100*f.Median, 0) + " [" + fixed(100*f.Lo95, 0) + ", " + fixed(100*f.Hi95, 0) + "]"
			most.Text = probText(res.Volume[e].Majority, res.Volume[e].N)
		}
		if r := sens[sensVolumeName(ev.Code)]; r != nil && res.SensVolume != nil {
			row := compareRow{VolSens: r, VolMin: math.Inf(1), VolMax: math.Inf(-1)}
			for _, med := range res.SensVolume {
				row.VolMin, row.VolMax = math.Min(row.VolMin, med[e]), math.Max(row.VolMax, med[e])
			}
			vs.Text = volRangeText(row.VolMin, row.VolMax)
			if volFlips(row) {
				vs.Text += " ⚠"
				vs.Class, vs.Title = "caution", "most of the volume before the event: "+r.Caution
				most.Class, most.Title = "caution", r.Caution
			}
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: ev.Code}, {Text: ev.Name, URL: ev.URL}, {Text: ev.Section},
			{Text: fixed(ev.Summary.Median, 3), Num: true}, {Text: fixed(ev.Summary.Hi95, 3) + " – " + fixed(ev.Summary.Lo95, 3), Num: true},
			vol, most, vs, {Text: ev.How}})
	}
	return t
}

func orderTable(res *compareResult) views.Table {
	o := res.Order
	t := views.Table{ID: "order", Caption: "Order matrix: P(row older than column) ± MC SE"}
	t.Columns = []views.Column{{Label: "Item"}}
	for k := range o.Names {
		t.Columns = append(t.Columns, views.Column{Label: res.OrderCodes[k], Num: true, Title: o.Names[k]})
	}
	for i := range o.Names {
		row := []views.Cell{{Text: res.OrderCodes[i] + " · " + o.Names[i]}}
		for k := range o.Names {
			if i == k {
				row = append(row, views.Cell{Text: "—", Num: true})
				continue
			}
			cell := views.Cell{Text: fixed(o.P[i][k], 3), Num: true, Title: fmt.Sprintf("P(%s older than %s) = %s ± %s", o.Names[i], o.Names[k], fixed(o.P[i][k], 4), fixed(o.SE[i][k], 4))}
			if o.P[i][k] > 0.95 {
				cell.Class = "strong"
			}
			row = append(row, cell)
		}
		t.Rows = append(t.Rows, row)
	}
	if len(o.Names) > 0 {
		t.Notes = append(t.Notes, "Choose the items with order= (codes: P1 = onset of pulse 1, P1.end its end, U7 a unit's weighted mean, E12 an event, G:kind a group, A3.1 an anomaly); by default the pulse edges and, with rows=units|both, the units, then the events. Each pair is drawn at the chosen level, so shared components cancel.")
	}
	return t
}

func howList(res *compareResult, rows []compareRow) []views.How {
	ch := res.Choice
	var out []views.How
	sorted := slices.Clone(rows)
	slices.SortStableFunc(sorted, func(a, b compareRow) int {
		return cmp.Or(cmp.Compare(a.Item, b.Item), cmp.Compare(a.EventIdx, b.EventIdx))
	})
	for _, row := range sorted {
		if row.isUnit() {
			out = append(out, howUnit(res, row))
			continue
		}
		p := res.In.Pulses[row.PulseIdx]
		ps := p.Summary
		h := views.How{ID: howID(row.Pulse, row.Event.Code), Title: row.Pulse + " × " + row.Event.Name + " (" + orDash(row.Event.Section) + ")"}
		eachBW := ""
		if ch.Dens.BWEach {
			eachBW = ", the bandwidth re-estimated in each (bw_each=1)"
		}
		h.Lines = []views.KV{
			{Label: "Pulse", Value: fmt.Sprintf("%s of the KDE of %s (%s, h = %s Ma), edges from %d of %d bootstrap replicates (seed %d%s): onset %s Ma (95 %% %s), end %s Ma (95 %% %s)",
				row.Pulse, res.Province.Name, res.Density.Bandwidth.Rule.Label(), fixed(res.Density.Bandwidth.Ma, 4), len(p.Edges.StartMa), ch.Dens.Reps, ch.Dens.Seed, eachBW,
				fixed(ps.StartMa, 3), interval(ps.Start, 3), fixed(ps.EndMa, 3), interval(ps.End, 3))},
			{Label: "Pulse systematics", Value: res.In.EdgeNote},
			{Label: "Event", Value: row.Event.How},
			{Label: "Draws", Value: fmt.Sprintf("stats.DrawJoint: N = %d, seed %d, level %s; shared keys %s", ch.N, ch.Dens.Seed, ch.Level, strings.Join(res.Keys, ", "))},
			{Label: "P(event after onset)", Value: fmt.Sprintf("share of draws with onset > event: %s (SE %s)", fixed(row.Cell.AfterOnset.P, 4), fixed(row.Cell.AfterOnset.SE, 4))},
			{Label: "P(event within pulse)", Value: fmt.Sprintf("share of draws with end ≤ event ≤ onset: %s (SE %s)", fixed(row.Cell.Within.P, 4), fixed(row.Cell.Within.SE, 4))},
			{Label: "Lag", Value: "onset − event over the draws: median and 2.5/97.5 % " + lagText(row.Cell.LagMa) + " Ma"},
			{Label: "P(|lag| < δ)", Value: fmt.Sprintf("δ = %s Ma: %s (SE %s)", num(ch.DeltaMa), fixed(row.Cell.Near.P, 4), fixed(row.Cell.Near.SE, 4))},
			{Label: "OVL", Value: "overlap of the onset's and the event's draws, histogram of 100 bins: " + fixed(row.Cell.OVL, 3)},
			{Label: "Monte Carlo SE", Value: seHow(ch.N, row.Cell.AfterOnset.NEff, row.Cell.Within.NEff)},
			{Label: "Depends on", Value: dependsText(res, row)},
		}
		h.Lines = append(h.Lines, volumeHow(res, row)...)
		if len(row.Sens) > 0 && row.Sens[0] != nil {
			var parts []string
			for k, set := range res.Sens.Sets {
				parts = append(parts, fmt.Sprintf("%s: after %s, within %s%s", set, fixed(row.Sens[0].P[k], 3), fixed(row.Sens[1].P[k], 3), volSensPart(res, row, k)))
			}
			h.Lines = append(h.Lines, views.KV{Label: "Sensitivity", Value: strings.Join(parts, "; ")})
		}
		out = append(out, h)
	}
	return out
}

// howUnit is the account of a unit row: the unit's mean and components, the event, and each number.
func howUnit(res *compareResult, row compareRow) views.How {
	ch := res.Choice
	u := row.Unit
	c := row.Cell
	h := views.How{ID: howID(u.Code, row.Event.Code), Title: u.Label() + " × " + row.Event.Name + " (" + orDash(row.Event.Section) + ")"}
	h.Lines = []views.KV{
		{Label: "Unit", Value: u.Name + " (" + u.Code + "): " + u.How},
		{Label: "Unit systematics", Value: u.Syst},
		{Label: "Event", Value: row.Event.How},
		{Label: "Draws", Value: fmt.Sprintf("stats.DrawJoint: N = %d, seed %d, level %s; shared keys %s", ch.N, ch.Dens.Seed, ch.Level, strings.Join(res.Keys, ", "))},
		{Label: "P(event after the unit)", Value: fmt.Sprintf("share of draws with unit mean > event: %s (SE %s)", fixed(c.AfterOnset.P, 4), fixed(c.AfterOnset.SE, 4))},
		{Label: "P(event within pulse)", Value: "does not apply: the unit's weighted mean is a point-like age, not an interval"},
		{Label: "Lag", Value: "unit mean − event over the draws: median and 2.5/97.5 % " + lagText(c.LagMa) + " Ma"},
		{Label: "P(|lag| < δ)", Value: fmt.Sprintf("δ = %s Ma: %s (SE %s)", num(ch.DeltaMa), fixed(c.Near.P, 4), fixed(c.Near.SE, 4))},
		{Label: "OVL", Value: "overlap of the unit's and the event's draws, histogram of 100 bins: " + fixed(c.OVL, 3)},
		{Label: "Monte Carlo SE", Value: seHow(ch.N, c.AfterOnset.NEff, math.NaN())},
		{Label: "Depends on", Value: dependsText(res, row)},
	}
	h.Lines = append(h.Lines, volumeHow(res, row)...)
	if len(row.Sens) > 0 && row.Sens[0] != nil {
		var parts []string
		for k, set := range res.Sens.Sets {
			parts = append(parts, fmt.Sprintf("%s: after %s%s", set, fixed(row.Sens[0].P[k], 3), volSensPart(res, row, k)))
		}
		h.Lines = append(h.Lines, views.KV{Label: "Sensitivity", Value: strings.Join(parts, "; ")})
	}
	return h
}

// volumeHow is the account of the volume fraction before a row's event.
func volumeHow(res *compareResult, row compareRow) []views.KV {
	if row.Vol == nil {
		return nil
	}
	f := row.Vol.Fraction
	return []views.KV{{Label: "Volume before", Value: fmt.Sprintf("Σ V·1[unit older than event] / Σ V per draw: median %s, 95 %% [%s, %s], mean %s; P(more than half of it before the event) %s (SE %s, from %.0f effective draws). %s",
		fixed(f.Median, 3), fixed(f.Lo95, 3), fixed(f.Hi95, 3), fixed(row.Vol.Mean, 3), fixed(row.Vol.Majority.P, 4), fixed(row.Vol.Majority.SE, 4), row.Vol.Majority.NEff, res.VolumeNote)}}
}

// volSensPart is the volume fraction under sensitivity set k, for the how-computed line.
func volSensPart(res *compareResult, row compareRow, k int) string {
	if row.VolSens == nil || k >= len(res.SensVolume) {
		return ""
	}
	return fmt.Sprintf(", volume before %s %% (P(more than half) %s)", fixed(100*res.SensVolume[k][row.EventIdx], 0), fixed(row.VolSens.P[k], 3))
}

func compareForm(r *http.Request, res *compareResult) *views.Form {
	ch := res.Choice
	q := r.URL.Query()
	sel := func(name, label, cur string, opts ...string) views.Field {
		f := views.Field{Name: name, Label: label, Kind: "select"}
		for i := 0; i+1 < len(opts); i += 2 {
			f.Options = append(f.Options, views.Option{Value: opts[i], Label: opts[i+1], Selected: opts[i] == cur})
		}
		return f
	}
	text := func(name, label, ph string) views.Field {
		return views.Field{Name: name, Label: label, Kind: "text", Value: q.Get(name), Placeholder: ph}
	}
	var kinds []string
	kinds = append(kinds, "", "none")
	for _, k := range store.EventKinds() {
		kinds = append(kinds, k.Code, k.Label)
	}
	group := ""
	if len(ch.Groups) > 0 {
		group = ch.Groups[0]
	}
	return &views.Form{Action: "/compare", Reset: "/compare", Fields: []views.Field{
		{Name: "province", Label: "Province", Kind: "number", Value: strconv.FormatInt(res.Province.ID, 10), Step: "1"},
		sel("rows", "Table rows", ch.Rows, "pulses", "pulses", "units", "single units", "both", "pulses and units"),
		text("pulses", "Pulses", "all (e.g. P1,P2)"),
		text("units", "Units", "all with a mean (ids)"),
		text("sections", "Sections", "all (ids, e.g. 1,3)"),
		text("events", "Events", "all (ids)"),
		sel("group", "Correlated group", group, kinds...),
		{Name: "delta", Label: "δ (Ma)", Kind: "number", Value: num(ch.DeltaMa), Step: "any"},
		sel("level", "Level", ch.Level.String(), "as-needed", "as-needed", "analytical", "analytical", "full", "full"),
		{Name: "n", Label: "Draws N", Kind: "number", Value: strconv.Itoa(ch.N), Step: "1000"},
		{Name: "seed", Label: "Seed", Kind: "number", Value: strconv.FormatUint(ch.Dens.Seed, 10), Step: "1"},
		sel("bw", "Bandwidth", ch.Dens.Rule.String(), "isj", "ISJ", "scott", "Scott", "silverman", "Silverman", "silverman-robust", "Silverman (robust)"),
		sel("model", "Age model", ch.Model, "mc", "Monte Carlo", "linear", "naive linear"),
		sel("anomalies", "Detected anomalies", map[bool]string{true: "1", false: "0"}[ch.Anomalies], "0", "not compared", "1", "compared"),
		sel("point", "Events with an extent compared at", ch.Point, "base", "their base (onset)", "peak", "their peak", "top", "their top (end)"),
		sel("sens", "Sensitivity", map[bool]string{true: "1", false: "0"}[ch.Sens], "1", "computed", "0", "off"),
	}}
}

// handleSave saves the settings of a comparison page (contributors and up).
func (c *comparer) handleSave(w http.ResponseWriter, r *http.Request) error {
	if err := r.ParseForm(); err != nil {
		return badRequest{message: "The form could not be read."}
	}
	query := r.PostForm.Get("query")
	vals, err := url.ParseQuery(query)
	if err != nil {
		return badRequest{message: "The saved settings could not be read.", problems: []string{"query: not a query string"}}
	}
	vals.Del("format")
	vals.Del("saved")
	// Check the settings before saving them: a saved comparison must open.
	req := r.Clone(r.Context())
	req.URL = &url.URL{Path: "/compare", RawQuery: vals.Encode()}
	p := newParams(req)
	if _, err := c.compareChoiceFrom(r.Context(), p); err != nil {
		return err
	}
	if err := p.err(); err != nil {
		return err
	}
	stamp, err := c.store.DataStamp(r.Context())
	if err != nil {
		return err
	}
	id, err := c.store.SaveComparison(actingCtx(r).Context(), store.Comparison{Name: r.PostForm.Get("name"), Query: vals.Encode(), DataStamp: stamp})
	if ve, ok := store.AsValidation(err); ok {
		var probs []string
		for _, pr := range ve.Problems {
			probs = append(probs, pr.Column+": "+pr.Message)
		}
		return badRequest{message: "The comparison could not be saved:", problems: probs}
	}
	if err != nil {
		return err
	}
	http.Redirect(w, r, idURL("/compare/saved", id), http.StatusSeeOther)
	return nil
}

// handleSavedShow opens a saved comparison: the comparison page with its settings, saying whether the
// data have changed since it was saved.
func (c *comparer) handleSavedShow(w http.ResponseWriter, r *http.Request) error {
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	sc, err := c.store.Comparison(r.Context(), id)
	if err != nil {
		return err
	}
	q, _ := url.ParseQuery(sc.Query)
	q.Set("saved", strconv.FormatInt(sc.ID, 10))
	http.Redirect(w, r, "/compare?"+q.Encode(), http.StatusSeeOther)
	return nil
}

func (c *comparer) handleSavedList(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	list, err := c.store.Comparisons(ctx)
	if err != nil {
		return err
	}
	stamp, err := c.store.DataStamp(ctx)
	if err != nil {
		return err
	}
	if wantsJSON(r) {
		writeJSON(w, http.StatusOK, map[string]any{"data_stamp": stamp, "comparisons": list})
		return nil
	}
	v := views.SavedView{Page: c.page(ctx, "Saved comparisons", "Compare"),
		Intro: "Comparisons saved with their settings. Each records the state of the compilation it was computed on; opening it recomputes on the current data and says when they have changed."}
	v.Crumbs = []views.Link{{Label: "Compare", URL: "/compare"}}
	v.Table = views.Table{ID: "saved", Columns: []views.Column{{Label: "Name"}, {Label: "Saved"}, {Label: "By"}, {Label: "Data"}, {Label: "Settings"}},
		Empty: "No comparison saved yet: contributors can save one from the comparison page."}
	for _, sc := range list {
		state := "unchanged since"
		cls := ""
		if sc.DataStamp != stamp {
			state, cls = fmt.Sprintf("changed since (stamp %d → %d)", sc.DataStamp, stamp), "caution"
		}
		v.Table.Rows = append(v.Table.Rows, []views.Cell{{Text: sc.Name, URL: idURL("/compare/saved", sc.ID)}, {Text: when(sc.CreatedAt)},
			{Text: orDash(sc.User)}, {Text: state, Class: cls}, {Text: orDash(sc.Query)}})
	}
	c.render(w, r, http.StatusOK, views.SavedPage(v))
	return nil
}
