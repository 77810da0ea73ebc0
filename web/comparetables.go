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

	"coeval/stats"
	"coeval/store"
	"coeval/views"
	"coeval/web/analysis"
)

// The tables, accounts and settings form of the comparison page.

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
		t.Rows = append(t.Rows, compareCells(res, row, sets))
	}
	t.Notes = append(t.Notes, fmt.Sprintf(seRuleText+" “< %s” reads as below 3/N (rule of three), not zero. Sensitivity: the range of P(after onset) · P(within) over the alternatives, and of the median volume fraction before the event (vol.); ⚠ marks a conclusion (P > 0.95 or P < 0.05; for the volume, P(more than half of it before the event)) that does not survive every alternative, and the numbers concerned are shaded — hover for which alternatives. “Rests on”: the model choices behind the row (hover for the bandwidth, the age model and its draws, the TOC threshold).", fixed(3/float64(ch.N), 4)))
	if ch.unitRows() {
		t.Notes = append(t.Notes, fmt.Sprintf("Unit rows (code U and the unit's number): the unit's weighted mean of the dates let in (%s; ± %s, outlier rule: %s against the %s, flagged dates flagged, not dropped), a point-like age with its decay system's systematic components drawn once per joint draw, as for the volume fraction. P(after unit) is P(event younger than the unit's mean); the lag is mean − event; P(within) does not apply (—): a single unit's mean has no duration here. Hover a unit for its mean.",
			includeLabel(ch.Dens.Sum.Include), policyLabel(ch.Dens.Sum.PolicyCode), ruleShort(ch.Dens.Sum.Rule), mswdRangeName(ch.Dens.Sum.Range)))
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
		t.Rows = append(t.Rows, []views.Cell{{Text: ev.Code}, {Text: ev.Name, URL: eventURL(ev)}, {Text: ev.Section},
			{Text: fixed(ev.Summary.Median, 3), Num: true}, {Text: fixed(ev.Summary.Hi95, 3) + " – " + fixed(ev.Summary.Lo95, 3), Num: true},
			vol, most, vs, {Text: ev.How}})
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
		h := views.How{ID: howID(row.Pulse, row.Event.Code), Title: upperFirst(row.Label) + " × " + row.Event.Name + " (" + orDash(row.Event.Section) + ")"}
		eachBW := ""
		if ch.Dens.BWEach {
			eachBW = ", the width re-estimated in each"
		}
		h.Lines = []views.KV{
			{Label: "Pulse", Value: fmt.Sprintf("the %s of the KDE of %s (%s, h = %s Ma), edges from %d of %d bootstrap replicates (seed %d%s): onset %s Ma (95 %% %s), end %s Ma (95 %% %s)",
				p.ID.Full(), res.Province.Name, res.Density.Bandwidth.Rule.Label(), fixed(res.Density.Bandwidth.Ma, 4), len(p.Edges.StartMa), ch.Dens.Reps, ch.Dens.Seed, eachBW,
				fixed(ps.StartMa, 3), interval(ps.Start, 3), fixed(ps.EndMa, 3), interval(ps.End, 3))},
			{Label: "Pulse systematics", Value: res.In.EdgeNote},
			{Label: "Pulse's name", Value: analysis.PulseNameRule + " Its code in addresses and downloads is " + p.Name + "."},
			{Label: "Event", Value: row.Event.How},
			{Label: "Draws", Value: drawsText(res)},
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
		{Label: "Draws", Value: drawsText(res)},
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
	sel := selectField
	text := func(name, label, ph string) views.Field { return textField(q, name, label, ph) }
	var kinds []string
	kinds = append(kinds, "", "none")
	for _, k := range store.EventKinds() {
		kinds = append(kinds, k.Code, k.Label)
	}
	group := ""
	if len(ch.Groups) > 0 {
		group = ch.Groups[0]
	}
	fields := []views.Field{
		{Name: "province", Label: "Province", Kind: "number", Value: strconv.FormatInt(res.Province.ID, 10), Step: "1"},
		sel("rows", "Table rows", ch.Rows, "pulses", "pulses", "units", "single units", "both", "pulses and units"),
		text("pulses", "Pulses", "all (by age, e.g. P155.4)"),
		text("units", "Units", "all with a mean (ids)"),
		text("sections", "Sections", "those near the province in age (ids, e.g. 1,3)"),
		text("events", "Events", "all (ids)"),
		sel("group", "Correlated group", group, kinds...),
		{Name: "delta", Label: "δ (Ma)", Kind: "number", Value: num(ch.DeltaMa), Step: "any"},
		sel("level", "Level", ch.Level.String(), "as-needed", "as-needed", "analytical", "analytical", "full", "full"),
		{Name: "n", Label: "Draws N", Kind: "number", Value: strconv.Itoa(ch.N), Step: "1000"},
		{Name: "seed", Label: "Seed", Kind: "number", Value: strconv.FormatUint(ch.Dens.Seed, 10), Step: "1"},
		sel("bw", "Smoothing width", ch.Dens.Rule.String(), "isj", smoothingChoice(stats.RuleISJ), "scott", smoothingChoice(stats.RuleScott),
			"silverman", smoothingChoice(stats.RuleSilverman), "silverman-robust", smoothingChoice(stats.RuleSilvermanRobust)),
		sel("model", "Age model", ch.Model, "mc", "Monte Carlo, kept in stratigraphic order", "linear", "naive linear (under-covers)"),
		sel("anomalies", "Detected anomalies", map[bool]string{true: "1", false: "0"}[ch.Anomalies], "0", "not compared", "1", "compared"),
		sel("point", "Events with an extent compared at", ch.Point, "base", "their base (onset)", "peak", "their peak", "top", "their top (end)"),
		sel("sens", "Sensitivity", map[bool]string{true: "1", false: "0"}[ch.Sensitivity], "1", "computed", "0", "off"),
	}
	// The common choices stay in sight; the rest are folded under "More choices" (same form, same address).
	for i := range fields {
		fields[i].More = !compareCommon[fields[i].Name]
	}
	return &views.Form{Action: "/compare", Reset: "/compare", Fields: fields}
}

// compareCommon are the comparison's choices shown in sight; the others are folded.
var compareCommon = map[string]bool{"province": true, "rows": true, "pulses": true, "sections": true, "events": true, "level": true, "bw": true}

// compareCells are the cells of one row of the comparison table.
func compareCells(res *compareResult, row compareRow, sets int) []views.Cell {
	c := row.Cell
	link := "#" + howID(row.code(), row.Event.Code)
	evName := row.Event.Name
	if p := row.Event.Point; p != "" && p != "height" {
		evName += " · " + strings.SplitN(p, " ", 2)[0]
	}
	cells := []views.Cell{{Text: row.Label, URL: link, Title: pulseTitle(res, row)}, {Text: evName, URL: eventURL(row.Event), Title: row.Event.Point}, {Text: row.Event.Section},
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
	return cells
}

// pulseTitle is the hover text of a row's item: a pulse's mode range and code, a unit's mean.
func pulseTitle(res *compareResult, row compareRow) string {
	if row.isUnit() {
		return ""
	}
	p := res.In.Pulses[row.PulseIdx]
	t := "code " + p.Name + " in addresses and downloads"
	if p.ID.Range != "" {
		t = p.ID.Range + "; " + t
	}
	return t
}

// drawsText says how the joint draws were made, in words.
func drawsText(res *compareResult) string {
	ch := res.Choice
	return fmt.Sprintf("joint Monte Carlo draws: N = %d, seed %d, %s; shared terms, each drawn once per draw for every age that carries it: %s",
		ch.N, ch.Dens.Seed, levelWords(ch.Level), keysWords(res.Keys, []store.Calibration{ch.Dens.Sum.Cal.Cal}))
}

// levelWords says a comparison level in words.
func levelWords(l stats.ComparisonLevel) string {
	switch l {
	case stats.LevelAnalytical:
		return "analytical uncertainties only"
	case stats.LevelFull:
		return "full external uncertainties"
	}
	return "the uncertainties each pair needs (shared terms cancel)"
}

// keysWords names the shared systematic terms: a calibration by its name, a tracer as a tracer.
func keysWords(keys []string, cals []store.Calibration) string {
	if len(keys) == 0 {
		return "none"
	}
	var out []string
	for _, k := range keys {
		switch {
		case strings.HasPrefix(k, "ar/ar "):
			code := strings.TrimPrefix(k, "ar/ar ")
			name := code
			for _, c := range cals {
				if c.Code == code {
					name = c.Name
				}
			}
			out = append(out, "the ⁴⁰Ar/³⁹Ar calibration ("+name+")")
		case strings.HasPrefix(k, "tracer "):
			out = append(out, "the "+strings.TrimPrefix(k, "tracer ")+" tracer")
		default:
			out = append(out, k)
		}
	}
	return strings.Join(out, ", ")
}

// selectField is a select of a filter form: opts are value, label pairs; cur is selected.
func selectField(name, label, cur string, opts ...string) views.Field {
	f := views.Field{Name: name, Label: label, Kind: "select"}
	for i := 0; i+1 < len(opts); i += 2 {
		f.Options = append(f.Options, views.Option{Value: opts[i], Label: opts[i+1], Selected: opts[i] == cur})
	}
	return f
}

// textField is a text input of a filter form holding the address's value of name.
func textField(q url.Values, name, label, placeholder string) views.Field {
	return views.Field{Name: name, Label: label, Kind: "text", Value: q.Get(name), Placeholder: placeholder}
}
