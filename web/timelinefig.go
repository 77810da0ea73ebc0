package web

import (
	"cmp"
	"fmt"
	"io"
	"net/http"
	"slices"
	"strconv"
	"strings"

	"coeval/stats"
	"coeval/store"
	"coeval/views"
	"coeval/web/analysis"
)

// dateBars are the extents (age ± σ at the shown level) of every date that enters a summary, so the
// automatic window of the figure holds all of them.
func dateBars(sums []unitSummary, ch densityChoice) [][2]float64 {
	return analysis.DateBars(sums, float64(ch.Sum.Sigma))
}

// figureDateStatus says whether a date entering its unit's system mean (label) is counted in the density,
// and if not, why: its unit has no volume, or (one value per unit) its system's mean is set aside for the
// mean of the system counted.
func figureDateStatus(ch densityChoice, label string, counted, noVolume bool, countedSystem string) string {
	switch {
	case counted && ch.Count == "unit":
		return "in the " + label + " mean counted in the density"
	case counted:
		return "counted in the density"
	case noVolume && ch.Weight == "volume":
		return "not counted: the unit has no volume, and the density is weighted by volume"
	case ch.Count == "unit":
		return "not counted: the unit's " + label + " mean is set aside for its " + countedSystem + " mean"
	}
	return "not counted"
}

// figureRows draws each unit with dates as a row: its dates (counted or not, and why) and, with
// count=unit, the value counted. Units of the lava pile come first, top of the pile first; the others
// (sills, dykes) follow, youngest first.
func figureRows(sums []unitSummary, ch densityChoice, res densityResult) []views.FigureRow {
	counted := map[int64]bool{}
	values := map[int64]densityValue{}
	for _, v := range res.Values {
		for _, id := range v.DateIDs {
			counted[id] = true
		}
		values[v.UnitID] = v
	}
	noVolume := map[string]bool{}
	for _, n := range res.NoVolume {
		noVolume[n] = true
	}
	level := ch.Sum.Sigma
	k := float64(level)
	type sortable struct {
		row   views.FigureRow
		pile  *int
		ageMa float64
	}
	var all []sortable
	for _, us := range sums {
		if len(us.Systems) == 0 {
			continue
		}
		u := us.Unit
		row := views.FigureRow{Label: u.Name, URL: idURL("/units", u.ID)}
		ageSum, n := 0.0, 0
		for _, sys := range us.Systems {
			for _, e := range sys.Entries {
				d := e.D
				status := figureDateStatus(ch, sys.Label, counted[d.ID], noVolume[u.Name], values[u.ID].System)
				age := plusMinus(e.AgeMa, e.Sigma1s, level) + " Ma, analytical"
				if store.IsArAr(d.Method) {
					age += fmt.Sprintf(", recalculated to %s (published %s Ma)", ch.Sum.Cal.Cal.Name, plusMinus(d.AgeMa, d.SigmaMa, level))
				}
				row.Dates = append(row.Dates, views.FigureDate{AgeMa: e.AgeMa, LoMa: e.AgeMa - k*e.Sigma1s, HiMa: e.AgeMa + k*e.Sigma1s,
					Marker: d.Method, Counted: counted[d.ID], URL: idURL("/dates", d.ID),
					Title: fmt.Sprintf("%s · %s, %s · %s · %s", d.SampleCode, methodLabel(d.Method), d.Material, age, status)})
				ageSum += e.AgeMa
				n++
			}
			for _, x := range sys.Excluded {
				d := x.D
				row.Dates = append(row.Dates, views.FigureDate{AgeMa: d.AgeMa, LoMa: d.AgeMa - k*d.SigmaMa, HiMa: d.AgeMa + k*d.SigmaMa,
					Marker: d.Method, URL: idURL("/dates", d.ID),
					Title: fmt.Sprintf("%s · %s, %s · %s Ma as published, analytical · not counted: %s", d.SampleCode, methodLabel(d.Method), d.Material,
						plusMinus(d.AgeMa, d.SigmaMa, level), x.Reason)})
			}
		}
		slices.SortStableFunc(row.Dates, func(a, b views.FigureDate) int { return cmp.Compare(b.AgeMa, a.AgeMa) })
		if len(row.Dates) > figureDatesEach {
			row.Band = dateBand(u, row.Dates, level)
			row.Dates = nil
		}
		if v, ok := values[u.ID]; ok && ch.Count == "unit" {
			row.HasValue, row.ValueMa, row.ValueLoMa, row.ValueHiMa = true, v.AgeMa, v.AgeMa-k*v.Sigma1s, v.AgeMa+k*v.Sigma1s
			var lvl string
			for _, sys := range us.Systems {
				if sys.Label == v.System {
					lvl = shortLevel(sys.LevelLabel)
				}
			}
			row.ValueNote = fmt.Sprintf("%s: %s weighted mean %s Ma (%s), n = %d — the value counted in the density",
				u.Name, v.System, plusMinus(v.AgeMa, v.Sigma1s, level), lvl, v.N)
		}
		s := sortable{row: row, pile: u.PilePosition}
		if n > 0 {
			s.ageMa = ageSum / float64(n)
		}
		all = append(all, s)
	}
	slices.SortStableFunc(all, func(a, b sortable) int {
		switch {
		case a.pile != nil && b.pile != nil:
			return cmp.Compare(*b.pile, *a.pile)
		case a.pile != nil:
			return -1
		case b.pile != nil:
			return 1
		}
		return cmp.Compare(a.ageMa, b.ageMa)
	})
	out := make([]views.FigureRow, len(all))
	for i, s := range all {
		out[i] = s.row
		if s.pile != nil {
			out[i].Group = "Lava pile, top of the pile first"
		} else {
			out[i].Group = "Intrusions and units without a pile position, youngest first"
		}
	}
	return out
}

// figureDatesEach is the most dates a unit's row draws one by one; a unit with more is drawn as one band
// (views.FigureBand), its dates listed by the band's link. At 10,000 dates a row per date made the page
// 7 MB of HTML and rows hundreds of bars tall.
const figureDatesEach = 20

// dateBand draws a unit's many dates as one band: the span of their error bars, a profile of their ages,
// and in its hover text how many there are and how many the density counts.
func dateBand(u store.Unit, ds []views.FigureDate, level int) *views.FigureBand {
	b := &views.FigureBand{LoMa: ds[0].LoMa, HiMa: ds[0].HiMa, URL: fmt.Sprintf("/dates?unit=%d", u.ID)}
	counted := 0
	for _, d := range ds {
		b.LoMa, b.HiMa = min(b.LoMa, d.LoMa), max(b.HiMa, d.HiMa)
		b.AgesMa = append(b.AgesMa, d.AgeMa)
		if d.Counted {
			counted++
		}
	}
	dec := 3
	b.Title = fmt.Sprintf("%s: %d dates from %s to %s Ma (their ages ± %dσ, analytical), %d of them counted in the density; click for the list of its dates",
		u.Name, len(ds), fixed(b.HiMa, dec), fixed(b.LoMa, dec), level, counted)
	return b
}

// countedText says in words what the density counts.
func countedText(res densityResult, ch densityChoice) string {
	var s string
	if ch.Count == "unit" {
		s = fmt.Sprintf("Counted: one value per unit — %s, each the unit's weighted mean at the %s level with ⁴⁰Ar/³⁹Ar on %s",
			count(len(res.Values), "unit mean"), ch.Sum.Level, ch.Sum.Cal.Cal.Name)
	} else {
		s = fmt.Sprintf("Counted: every date — %s, analytical σ, ⁴⁰Ar/³⁹Ar recalculated to %s", count(len(res.Values), "date"), ch.Sum.Cal.Cal.Name)
	}
	if ch.Weight == "volume" {
		s += "; weighted by unit volume"
		if ch.Count == "date" {
			s += ", a unit's volume shared equally among its dates"
		}
		if len(res.NoVolume) > 0 {
			s += "; left out for want of a volume: " + strings.Join(res.NoVolume, ", ")
		}
	} else {
		s += "; equal weights"
	}
	return s + "."
}

// bandText says how the band and the pulse intervals were made.
func bandText(res densityResult, ch densityChoice) string {
	what := "units"
	if ch.Count == "date" {
		what = "dates"
	}
	bw := "bandwidth held at the reference h."
	if ch.BWEach {
		bw = fmt.Sprintf("width re-estimated in every replicate (%s), so the band includes the bandwidth's own uncertainty", smoothingWords(ch.Rule))
		if res.Band != nil && res.Band.Fallbacks > 0 {
			bw += fmt.Sprintf("; the rule fell back in %d replicates", res.Band.Fallbacks)
		}
		bw += "."
	}
	own := "each moved by a normal draw of its own 1σ"
	if len(res.Shared) > 0 {
		var names []string
		for _, c := range res.Shared {
			names = append(names, componentName(c))
		}
		own = "each moved by a normal draw of its own random 1σ, with " + strings.Join(names, ", ") + " drawn once per replicate for all the values that share them"
	}
	return fmt.Sprintf("95 %% bootstrap band and pulse intervals from %d replicates (seed %d): %s resampled with replacement and %s; %s",
		ch.Reps, ch.Seed, what, own, bw)
}

// timelineFigure assembles the figure's view model.
func timelineFigure(prov store.Province, rows []views.FigureRow, res densityResult, ch densityChoice, chart []chronoUnit) views.TimelineFigure {
	level := ch.Sum.Sigma
	f := views.TimelineFigure{Title: prov.Name + " — eruptive history", MinMa: res.MinMa, MaxMa: res.MaxMa, Rows: rows,
		Stages: stagesIn(chart, "Age", res.MinMa, res.MaxMa), Epochs: stagesIn(chart, "Epoch", res.MinMa, res.MaxMa),
		Credit: "Timescale: " + timescaleCredit}
	f.Subtitle = append(f.Subtitle, countedText(res, ch))
	if res.Band == nil {
		f.Subtitle = append(f.Subtitle, res.Message)
	} else {
		f.Subtitle = append(f.Subtitle, ruleText(res, ch)+". "+bandText(res, ch))
		if res.Bandwidth.Note != "" {
			f.Subtitle = append(f.Subtitle, "Smoothing width: "+bandwidthNoteWords(res.Bandwidth.Note))
		}
		b := res.Band
		d := &views.FigureDensity{AgesMa: b.GridMa, Value: b.Reference.Density, Lower: b.Lower, Upper: b.Upper,
			Label:     fmt.Sprintf("KDE, h = %s Ma (%s)", fixed(res.Bandwidth.Ma, sigmaDecimals(res.Bandwidth.Ma)+1), smoothingWords(res.Bandwidth.Rule)),
			BandLabel: fmt.Sprintf("95 %% bootstrap band (%d replicates, seed %d)", ch.Reps, ch.Seed),
			YLabel:    "Density (per Ma)"}
		if ch.Adaptive {
			d.Label = "KDE with a width that adapts to the data (Abramson), starting from h = " + fixed(res.Bandwidth.Ma, sigmaDecimals(res.Bandwidth.Ma)+1) + " Ma (" + smoothingWords(res.Bandwidth.Rule) + ")"
		}
		if ch.Weight == "volume" {
			d.YLabel = "Volume-weighted density (per Ma)"
		}
		if res.PDP != nil {
			d.PDP = res.PDP.Density
			d.PDPLabel = "PDP: each value spread by its own 1σ — not a KDE (see the caution)"
		}
		f.Density = d
		ids := pulseIDs(res.Pulses)
		for i, p := range oldestFirst(res.Pulses) {
			f.Pulses = append(f.Pulses, figurePulse(ids[i], p, res, ch))
		}
	}
	seen := map[string]bool{}
	for _, r := range rows {
		for _, d := range r.Dates {
			seen[d.Marker] = true
		}
	}
	for _, m := range store.Methods() {
		if seen[m.Code] {
			f.Markers = append(f.Markers, views.MarkerSpec{Key: m.Code, Label: m.Label})
		}
	}
	f.SigmaNote = fmt.Sprintf("Error bars: each date ± %dσ, analytical (⁴⁰Ar/³⁹Ar recalculated to %s). ", level, ch.Sum.Cal.Cal.Name)
	if ch.Count == "unit" {
		f.SigmaNote += fmt.Sprintf("Grey boxes: each unit's weighted mean ± %dσ at the %s level — the value counted. ", level, ch.Sum.Level)
	}
	f.SigmaNote += "Density per Ma; pulses named by the age of their mode; hover over a date for its record."
	if slices.ContainsFunc(rows, func(r views.FigureRow) bool { return r.Band != nil }) {
		f.SigmaNote += fmt.Sprintf(" A unit with more than %d dates is drawn as one band: the span of its dates' error bars, and a profile of how many dates fall at each age; click the band for the list of its dates.", figureDatesEach)
	}
	return f
}

func figurePulse(id analysis.PulseID, p stats.PulseSummary, res densityResult, ch densityChoice) views.FigurePulse {
	fp := views.FigurePulse{Label: figurePulseLabel(id), ModeMa: p.ModeMa, StartMa: p.StartMa, EndMa: p.EndMa,
		ModeLoMa: p.Mode.LowerMa, ModeHiMa: p.Mode.UpperMa, StartLoMa: p.Start.LowerMa, StartHiMa: p.Start.UpperMa,
		EndLoMa: p.End.LowerMa, EndHiMa: p.End.UpperMa, Detail: fmt.Sprintf("%.0f %%", 100*p.Frequency)}
	if p.Present == 0 {
		fp.ModeLoMa, fp.ModeHiMa = p.ModeMa, p.ModeMa
		fp.StartLoMa, fp.StartHiMa, fp.EndLoMa, fp.EndHiMa = p.StartMa, p.StartMa, p.EndMa, p.EndMa
	}
	dec := pulseDecimals(res)
	fp.Title = fmt.Sprintf("%s: mode %s Ma (95 %%: %s); start %s Ma (95 %%: %s); end %s Ma (95 %%: %s); in %.0f %% of %d replicates",
		upperFirst(id.Label), fixed(p.ModeMa, dec), interval(p.Mode, dec), fixed(p.StartMa, dec), interval(p.Start, dec), fixed(p.EndMa, dec), interval(p.End, dec),
		100*p.Frequency, ch.Reps)
	return fp
}

// pulseDecimals is the number of decimals for pulse ages: one more than the bandwidth's two figures need.
func pulseDecimals(res densityResult) int { return min(sigmaDecimals(res.Bandwidth.Ma), 4) }

func interval(q stats.AgeQuantiles, dec int) string {
	if q.LowerMa == 0 && q.UpperMa == 0 {
		return "—"
	}
	return fixed(q.UpperMa, dec) + " – " + fixed(q.LowerMa, dec)
}

// pulseTable lists the pulses, oldest first, with their bootstrap intervals.
func pulseTable(res densityResult, ch densityChoice) views.Table {
	t := views.Table{ID: "pulses", Caption: "Pulses, oldest first (modes of the density)",
		Columns: []views.Column{{Label: "Pulse"}, {Label: "In replicates", Unit: "%", Num: true, Title: "share of bootstrap replicates in which the pulse exists"},
			{Label: "Mode", Unit: "Ma", Num: true}, {Label: "Mode 95 %", Unit: "Ma", Num: true},
			{Label: "Start (older edge)", Unit: "Ma", Num: true}, {Label: "Start 95 %", Unit: "Ma", Num: true},
			{Label: "End (younger edge)", Unit: "Ma", Num: true}, {Label: "End 95 %", Unit: "Ma", Num: true},
			{Label: "Duration", Unit: "Myr", Num: true}, {Label: "Share of the density", Unit: "%", Num: true}},
		Empty: "No pulse: the density has no interior mode in this window."}
	if res.Band == nil {
		t.Empty = res.Message
		return t
	}
	dec := pulseDecimals(res)
	ids := pulseIDs(res.Pulses)
	for i, p := range oldestFirst(res.Pulses) {
		t.Rows = append(t.Rows, []views.Cell{{Text: upperFirst(ids[i].Label), Title: ids[i].Range}, {Text: fmt.Sprintf("%.1f", 100*p.Frequency), Num: true},
			{Text: fixed(p.ModeMa, dec), Num: true}, {Text: interval(p.Mode, dec), Num: true},
			{Text: fixed(p.StartMa, dec), Num: true}, {Text: interval(p.Start, dec), Num: true},
			{Text: fixed(p.EndMa, dec), Num: true}, {Text: interval(p.End, dec), Num: true},
			{Text: fixed(p.StartMa-p.EndMa, dec), Num: true}, {Text: fmt.Sprintf("%.1f", 100*p.Mass), Num: true}})
	}
	t.Notes = []string{
		"Mode, start and end are those of the density of the values as given; the 95 % intervals are bootstrap percentile intervals (2.5–97.5 %) over the replicates in which the pulse exists. " +
			"A pulse's edges lie at the lowest density between it and its neighbour, and on the outer sides where the density falls to 5 % of its highest value.",
		"In calibration, nominal 95 % edge intervals held the truth about 85–88 % of the time for a pulse of ~24 dates and 91–95 % from ~40 on: treat the edges of small pulses as optimistic.",
		"Contributors can save these pulses as records of the province (button below the figure); saved pulses are listed at the end of the page.",
	}
	return t
}

// valuesShown is the most values the timeline page lists; the CSV (values) download holds them all.
const valuesShown = 200

// valueTable lists the values counted in the density, the first valuesShown of them.
func valueTable(res densityResult, ch densityChoice) views.Table {
	level := ch.Sum.Sigma
	t := views.Table{ID: "values", Caption: fmt.Sprintf("Values counted (%d)", len(res.Values)),
		Columns: []views.Column{{Label: "Unit"}, {Label: "Sample"}, {Label: "System"}, {Label: "Age", Unit: "Ma", Num: true},
			{Label: fmt.Sprintf("± %dσ", level), Unit: "Ma", Num: true}, {Label: "Weight", Num: true, Title: "relative weight in the density"},
			{Label: "Dates", Num: true}}, Empty: "Nothing to count."}
	shown := res.Values
	if len(shown) > valuesShown {
		shown = shown[:valuesShown]
		t.Caption = fmt.Sprintf("Values counted (%d; the first %d listed)", len(res.Values), valuesShown)
		t.Notes = append(t.Notes, fmt.Sprintf("The first %d of the %d values counted are listed here; the CSV (values) and JSON downloads above hold every one.", valuesShown, len(res.Values)))
	}
	for _, v := range shown {
		a, sg := ageSigma(v.AgeMa, v.Sigma1s, level)
		sample := "— (unit mean)"
		if v.Sample != "" {
			sample = v.Sample
		}
		w := "1"
		if ch.Weight == "volume" {
			w = strconv.FormatFloat(v.Weight, 'g', 4, 64) + " km³"
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: v.Unit, URL: idURL("/units", v.UnitID)}, {Text: sample}, {Text: v.System},
			{Text: a, Num: true}, {Text: sg, Num: true}, {Text: w, Num: true}, {Text: itoa(v.N), Num: true}})
	}
	return t
}

// timelineCommon are the timeline's choices shown in sight; the others are folded.
var timelineCommon = map[string]bool{"count": true, "bw": true, "h": true, "cal": true, "level": true, "sigma": true}

func (s *Server) timelinePage(r *http.Request, prov store.Province, fig views.TimelineFigure, res densityResult, ch densityChoice) views.TimelineView {
	v := views.TimelineView{Page: s.page(r.Context(), prov.Name+": eruptive history", "Provinces"),
		Intro: "The province's eruptive history as a density through time, with its pulses, over each unit's dates and the reference timescale. " +
			"The figure, the tables and the downloads follow the choices below; more are folded under “More choices”.",
		Form: timelineForm(r.URL.Path, ch), SVG: string(fig.SVG()), Method: timelineMethod()}
	v.Page.Crumbs = []views.Link{{Label: "Provinces", URL: "/provinces"}, {Label: prov.Name, URL: idURL("/provinces", prov.ID)}}
	v.Page.Downloads = []views.Link{{Label: "SVG", URL: withQuery(r, "format", "svg")}, {Label: "PNG", URL: withQuery(r, "format", "png")},
		{Label: "PDF", URL: withQuery(r, "format", "pdf")}, {Label: "CSV (pulses)", URL: withQuery(r, "format", "csv", "table", "pulses")},
		{Label: "CSV (density)", URL: withQuery(r, "format", "csv", "table", "density")}, {Label: "CSV (values)", URL: withQuery(r, "format", "csv", "table", "values")},
		{Label: "JSON", URL: withQuery(r, "format", "json")}, {Label: "Columns explained (pulses CSV)", URL: "/help/downloads/timeline-pulses"}}
	if len(fig.Rows) == 0 {
		v.SVG = ""
		v.Cautions = append(v.Cautions, "No unit of this province has a date to draw.")
	}
	v.Caption = "Hover over a date, a unit value, a pulse or a stage for its details; click a date or a unit name to open its record. " +
		"The downloads above give this figure as SVG, PNG or PDF, and its tables as CSV or JSON."
	if res.Band != nil && res.Bandwidth.Fallback() {
		v.Cautions = append(v.Cautions, "Smoothing width: "+bandwidthNoteWords(res.Bandwidth.Note))
	}
	if ch.PDP {
		v.Cautions = append(v.Cautions, "PDP: "+stats.PDPCaution)
	}
	if len(res.NoVolume) > 0 {
		if ch.Weight == "volume" {
			v.Cautions = append(v.Cautions, "No volume is known for "+strings.Join(res.NoVolume, ", ")+": left out of the volume-weighted density.")
		} else {
			v.Notes = append(v.Notes, "No volume is known for "+strings.Join(res.NoVolume, ", ")+": weighting by volume would leave them out.")
		}
	}
	v.Notes = append(v.Notes, res.Left...)
	v.Tables = []views.Table{pulseTable(res, ch), valueTable(res, ch)}
	v.Contents = timelineContents(v)
	return v
}

// timelineContents lists the timeline page's figure and tables, for its in-page contents.
func timelineContents(v views.TimelineView) []views.Block {
	var bs []views.Block
	for _, t := range v.Tables {
		title := t.Caption
		if i := strings.IndexAny(title, ",("); i > 0 {
			title = strings.TrimSpace(title[:i])
		}
		bs = append(bs, views.Block{ID: t.ID, Title: title})
	}
	if len(v.Method) > 0 {
		bs = append(bs, views.Block{ID: "method", Title: "How this was computed"})
	}
	return bs
}

// timelineMethod says how the density and its pulses are made, citing each method by its published name.
func timelineMethod() []string {
	return []string{
		"The density is a kernel density estimate (KDE) of the values counted: one per unit (its weighted mean) or every date, each a normal kernel, equally weighted or weighted by the unit's volume.",
		"Smoothing width: automatic, from the shape of the data, is the diffusion estimator of Botev, Grotowski & Kroese 2010 (Annals of Statistics 38:2916), which falls back to Silverman's robust rule, and says so, when it finds no width; the rules of thumb are Scott 1992 and Silverman 1986; “width adapts to the data” is Abramson's 1982 variable width (Annals of Statistics 10:1217), narrower where dates crowd.",
		"The band and the pulses' 95 % intervals come from a bootstrap: the values resampled with replacement and each moved by a random draw of its own uncertainty, at the ± level chosen, with shared systematic terms drawn once per replicate. A pulse is a mode of the density; its edges lie at the lowest density between it and its neighbour, and on the outer sides where the density falls to 5 % of its highest value.",
		"“Also draw the sum of the dates' curves” adds a probability density plot (PDP), each date a normal curve of its own 1σ, summed: it is not a density estimate (Vermeesch 2012, Chemical Geology 312–313:190).",
	}
}

// timelineJSON is the density, its pulses and the values counted, with every choice that made them.
func timelineJSON(r *http.Request, prov store.Province, res densityResult, ch densityChoice) map[string]any {
	choices := map[string]string{}
	for _, k := range []string{"count", "weight", "bw", "h", "adaptive", "pdp", "from", "to", "seed", "reps", "bw_each", "cal", "level", "sigma", "policy", "rule", "mswd_range", "include"} {
		if v := r.URL.Query().Get(k); v != "" {
			choices[k] = v
		}
	}
	out := map[string]any{
		"province":      map[string]any{"id": prov.ID, "name": prov.Name},
		"choices":       choices,
		"count":         ch.Count,
		"weight":        ch.Weight,
		"seed":          ch.Seed,
		"replicates":    ch.Reps,
		"window_ma":     []float64{res.MinMa, res.MaxMa},
		"values":        res.Values,
		"left_out":      res.Left,
		"no_volume":     res.NoVolume,
		"uncertainties": jsonSigmaNote + "; density and band per Ma; pulse intervals are 2.5 and 97.5 % bootstrap quantiles",
		"timescale":     timescaleVersion,
	}
	if res.Band == nil {
		out["message"] = res.Message
		return out
	}
	b := res.Band.Reference
	out["density_kind"] = b.Kind.String()
	bw := map[string]any{"h_ma": res.Bandwidth.Ma, "rule": res.Bandwidth.Rule.String(), "requested": res.Bandwidth.Requested.String(),
		"fallback": res.Bandwidth.Fallback(), "note": res.Bandwidth.Note}
	if ch.BWEach {
		bw["reestimated_in_each_replicate"] = true
		bw["replicate_fallbacks"] = res.Band.Fallbacks
	}
	out["bandwidth"] = bw
	type pulseJSON struct {
		Pulse     string             `json:"pulse"`
		Name      string             `json:"name"`
		Frequency float64            `json:"frequency"`
		Present   int                `json:"present"`
		ModeMa    float64            `json:"mode_ma"`
		StartMa   float64            `json:"start_ma"`
		EndMa     float64            `json:"end_ma"`
		Mass      float64            `json:"mass"`
		Mode      stats.AgeQuantiles `json:"mode_quantiles"`
		Start     stats.AgeQuantiles `json:"start_quantiles"`
		End       stats.AgeQuantiles `json:"end_quantiles"`
	}
	var ps []pulseJSON
	ids := pulseIDs(res.Pulses)
	for i, p := range oldestFirst(res.Pulses) {
		ps = append(ps, pulseJSON{Pulse: ids[i].Code, Name: ids[i].Label, Frequency: p.Frequency, Present: p.Present, ModeMa: p.ModeMa, StartMa: p.StartMa,
			EndMa: p.EndMa, Mass: p.Mass, Mode: p.Mode, Start: p.Start, End: p.End})
	}
	out["pulses"] = ps
	rows := make([]map[string]float64, len(res.Band.GridMa))
	for i, a := range res.Band.GridMa {
		row := map[string]float64{"age_ma": a, "kde_per_ma": b.Density[i], "band_lower_per_ma": res.Band.Lower[i],
			"band_median_per_ma": res.Band.Median[i], "band_upper_per_ma": res.Band.Upper[i]}
		if res.PDP != nil {
			row["pdp_per_ma"] = res.PDP.Density[i]
		}
		rows[i] = row
	}
	out["density"] = rows
	if res.PDP != nil {
		out["pdp_caution"] = stats.PDPCaution
	}
	return out
}

func g(v float64) string { return strconv.FormatFloat(v, 'g', 10, 64) }

// timelinePulseColumns are the columns of the timeline's pulses CSV (table=pulses), in file order: first
// the choices the pulses depend on, repeated on every row (as the unit summary's CSV does), so a row
// copied out of the file still says how it was made; then the pulse.
var timelinePulseColumns = []downloadColumn{
	{"calibration", "", "The ⁴⁰Ar/³⁹Ar calibration (monitor age and decay constant) the unit means are on."},
	{"level", "", "The uncertainty level of the unit means counted in the density: analytical, tracer or full."},
	{"sigma_level", "σ", "The σ level the page shows uncertainties at (1 or 2). The pulse intervals below are 95 % bootstrap intervals whatever it is."},
	{"count", "", "What the density counts: one value per unit (unit) or per date (date)."},
	{"weight", "", "How the values are weighted: none, or by the unit's erupted volume (volume)."},
	{"bandwidth_rule", "", "The rule that chose the smoothing width (kernel bandwidth), as used (a fallback when the chosen rule could not be applied is named here)."},
	{"bandwidth_ma", "Ma", "The smoothing width (kernel bandwidth) used."},
	{"adaptive", "", "true when each value has its own width (adapting to the data, the rule's width as the pilot)."},
	{"replicates", "", "The number of bootstrap replicates of the density (resampling the values with their uncertainties)."},
	{"seed", "", "The seed of the bootstrap: the same address and seed give the same file."},
	{"pulse", "", "The pulse, by its age: P and the age of its mode in Ma (P155.4 is the pulse at ~155.4 Ma), to the decimal of the first significant digit of half its mode's 95 % range; the comparison's downloads and its pulses= choice use the same code."},
	{"frequency", "fraction 0–1", "The share of the bootstrap replicates in which the pulse exists (present / replicates)."},
	{"present", "replicates", "The number of bootstrap replicates in which the pulse exists."},
	{"mode_ma", "Ma", "The age of the pulse's peak in the density of the data (the reference density)."},
	{"mode_lower_ma", "Ma", "2.5 % quantile of the peak's age over the replicates in which the pulse exists (lower end of its 95 % interval)."},
	{"mode_median_ma", "Ma", "Median of the peak's age over the replicates in which the pulse exists."},
	{"mode_upper_ma", "Ma", "97.5 % quantile of the peak's age over the replicates (upper end of its 95 % interval)."},
	{"start_ma", "Ma", "The pulse's onset (older edge) in the reference density."},
	{"start_lower_ma", "Ma", "2.5 % quantile of the onset over the replicates in which the pulse exists."},
	{"start_median_ma", "Ma", "Median of the onset over the replicates in which the pulse exists (the onset the comparison lists)."},
	{"start_upper_ma", "Ma", "97.5 % quantile of the onset over the replicates."},
	{"end_ma", "Ma", "The pulse's end (younger edge) in the reference density."},
	{"end_lower_ma", "Ma", "2.5 % quantile of the end over the replicates in which the pulse exists."},
	{"end_median_ma", "Ma", "Median of the end over the replicates in which the pulse exists."},
	{"end_upper_ma", "Ma", "97.5 % quantile of the end over the replicates."},
	{"mass", "fraction 0–1", "The share of the density's area between the pulse's end and onset (of the reference density)."},
}

// writeTimelineCSV writes one of the timeline's tables as CSV.
func writeTimelineCSV(w http.ResponseWriter, name, table string, res densityResult, ch densityChoice) error {
	return writeDownload(w, name, func(w io.Writer) error {
		cw := store.NewCSVWriter(w)
		switch table {
		case "values":
			cw.Write([]string{"unit_id", "unit", "sample_code", "system", "age_ma", "sigma_ma_1s", "weight", "n_dates", "date_ids"})
			for _, v := range res.Values {
				ids := make([]string, len(v.DateIDs))
				for i, id := range v.DateIDs {
					ids[i] = strconv.FormatInt(id, 10)
				}
				cw.Write([]string{strconv.FormatInt(v.UnitID, 10), v.Unit, v.Sample, v.System, g(v.AgeMa), g(v.Sigma1s), g(v.Weight), itoa(v.N), strings.Join(ids, " ")})
			}
		case "density":
			head := []string{"age_ma", "kde_per_ma", "band_lower_per_ma", "band_median_per_ma", "band_upper_per_ma"}
			if res.PDP != nil {
				head = append(head, "pdp_per_ma")
			}
			cw.Write(head)
			if res.Band != nil {
				for i, a := range res.Band.GridMa {
					row := []string{g(a), g(res.Band.Reference.Density[i]), g(res.Band.Lower[i]), g(res.Band.Median[i]), g(res.Band.Upper[i])}
					if res.PDP != nil {
						row = append(row, g(res.PDP.Density[i]))
					}
					cw.Write(row)
				}
			}
		default:
			cw.Write(columnNames(timelinePulseColumns))
			settings := []string{ch.Sum.Cal.Cal.Code, ch.Sum.Level.String(), strconv.Itoa(ch.Sum.Sigma), ch.Count, ch.Weight,
				res.Bandwidth.Rule.String(), g(res.Bandwidth.Ma), strconv.FormatBool(ch.Adaptive), itoa(ch.Reps), strconv.FormatUint(ch.Seed, 10)}
			ids := pulseIDs(res.Pulses)
			for i, p := range oldestFirst(res.Pulses) {
				cw.Write(append(slices.Clone(settings), ids[i].Code, g(p.Frequency), itoa(p.Present), g(p.ModeMa), g(p.Mode.LowerMa), g(p.Mode.MedianMa), g(p.Mode.UpperMa),
					g(p.StartMa), g(p.Start.LowerMa), g(p.Start.MedianMa), g(p.Start.UpperMa), g(p.EndMa), g(p.End.LowerMa), g(p.End.MedianMa), g(p.End.UpperMa),
					g(p.Mass)))
			}
		}
		cw.Flush()
		return cw.Error()
	})
}
