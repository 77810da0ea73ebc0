package web

import (
	"fmt"
	"slices"
	"strings"

	"coeval/stats"
	"coeval/views"
	"coeval/web/analysis"
)

// levelNames are the URL values of level= with what they mean.
var levelNames = map[stats.UncertaintyLevel]string{
	stats.Analytical:   "analytical (U–Pb X)",
	stats.WithTracer:   "with tracer (U–Pb Y)",
	stats.FullExternal: "full external (U–Pb Z; ⁴⁰Ar/³⁹Ar with monitor age and λ)",
}

// summaryForm is the GET form of every choice a summary depends on; action is the page's path.
func summaryForm(action string, ch summaryChoice) *views.Form {
	opt := func(v, label, cur string) views.Option {
		return views.Option{Value: v, Label: label, Selected: v == cur}
	}
	level := views.Field{Name: "level", Label: "± level", Kind: "select"}
	for _, l := range []stats.UncertaintyLevel{stats.Analytical, stats.WithTracer, stats.FullExternal} {
		level.Options = append(level.Options, opt(l.String(), levelNames[l], ch.Level.String()))
	}
	sig := views.Field{Name: "sigma", Label: "σ level", Kind: "select", Options: []views.Option{
		opt("1", "1σ", fmt.Sprint(ch.Sigma)), opt("2", "2σ", fmt.Sprint(ch.Sigma))}}
	pol := views.Field{Name: "policy", Label: "Overdispersion", Kind: "select"}
	for _, p := range analysis.Policies() {
		pol.Options = append(pol.Options, opt(p.Code, p.Label, ch.PolicyCode))
	}
	rule := views.Field{Name: "rule", Label: "Outlier flags", Kind: "select", Options: []views.Option{
		opt("none", "none", ch.Rule.String()),
		opt("mswd", "iterative, to the upper limit of the MSWD range", ch.Rule.String()),
		opt("chauvenet", "Chauvenet (unweighted)", ch.Rule.String()),
		opt("gesd", "generalized ESD (unweighted)", ch.Rule.String())}}
	inc := views.Field{Name: "include", Label: "Dates", Kind: "select"}
	for _, i := range analysis.IncludeChoices() {
		inc.Options = append(inc.Options, opt(i.Code, i.Label, ch.Include))
	}
	rng := views.Field{Name: "mswd_range", Label: "MSWD range", Kind: "select"}
	for _, m := range analysis.MSWDRanges() {
		rng.Options = append(rng.Options, opt(m.Rule.String(), m.Label, ch.Range.String()))
	}
	return &views.Form{Action: action, Reset: action, Fields: []views.Field{calibrationField(ch.Cal), level, sig, pol, rule, rng, inc}}
}

// summaryIntro says in one paragraph what the summaries on a page are made of.
func summaryIntro(ch summaryChoice) string {
	return fmt.Sprintf("Weighted means per unit and decay system of %s. ⁴⁰Ar/³⁹Ar dates enter recalculated to %s; "+
		"± at the %s level, %dσ; systematic terms added after averaging. Overdispersion: %s. "+
		"Outlier flags: %s — flagged dates stay in the mean and the mean without them is shown beside it. "+
		"MSWD judged against %s.",
		includeLabel(ch.Include), ch.Cal.label(), levelNames[ch.Level], ch.Sigma,
		policyLabel(ch.PolicyCode), ruleLabel(ch.Rule), mswdRangeText(ch.Range))
}

// mswdRangeText says in a sentence how the acceptable MSWD range is made.
func mswdRangeText(rule stats.MSWDRangeRule) string {
	if rule == stats.RangeWendtCarl {
		return "the Wendt & Carl (1991) range 1 ± 2√(2/f), lower limit floored at 0: a normal approximation, much narrower than the exact range for few dates (f = 1: up to 3.83 instead of 5.02), kept to compare with papers that use it"
	}
	return "the exact 95 % range of the MSWD of dates whose uncertainties are right, the 2.5 % and 97.5 % quantiles of χ²_f/f (f = n − 1); Wendt & Carl's 1 ± 2√(2/f) is available among the choices for comparison with papers"
}

func policyLabel(code string) string {
	for _, p := range analysis.Policies() {
		if p.Code == code {
			return p.Label
		}
	}
	return code
}

func ruleLabel(r stats.OutlierRule) string {
	switch r {
	case stats.RuleNone:
		return "none"
	case stats.RuleMSWD:
		return "iterative rejection while the MSWD exceeds the upper limit of its range"
	case stats.RuleChauvenet:
		return "Chauvenet's criterion (unweighted)"
	case stats.RuleGESD:
		return "generalized ESD, Rosner 1983 (unweighted)"
	}
	return r.String()
}

// ruleShort names an outlier rule in a few words (ruleLabel says how it works).
func ruleShort(r stats.OutlierRule) string { return analysis.RuleWords(r) }

// meanText writes "mean ± σ" at the chosen σ level (decimals from σ).
func meanText(l levelled, sigma int) (string, string) { return ageSigma(l.MeanMa, l.Sigma1s, sigma) }

func flaggedCodes(s systemSummary) []string { return analysis.FlaggedCodes(s) }

// flagsText says what the rule flagged.
func flagsText(s systemSummary, ch summaryChoice) string {
	switch {
	case ch.Rule == stats.RuleNone:
		return "no rule"
	case s.Report.Skipped != "":
		return "not applied: " + s.Report.Skipped
	}
	f := flaggedCodes(s)
	if len(f) == 0 {
		return "none flagged"
	}
	return strings.Join(f, ", ")
}

// keptText is the mean without the flagged dates, or "—" when nothing was flagged.
func keptText(s systemSummary, ch summaryChoice) string {
	if len(s.Report.Flagged) == 0 {
		return "—"
	}
	m, sg := meanText(s.Kept, ch.Sigma)
	return fmt.Sprintf("%s ± %s (n = %d)", m, sg, s.Kept.N)
}

// remarks joins a system's cautions (marked ⚠) and notes.
func remarks(s systemSummary) (string, bool) {
	var parts []string
	for _, c := range s.Cautions {
		parts = append(parts, "⚠ "+c)
	}
	parts = append(parts, s.Notes...)
	return strings.Join(parts, "; "), len(s.Cautions) > 0
}

// summaryTable is the province page's table: one row per unit and decay system (a unit whose dates are
// of one system, as most are, has one row), one row saying so for a unit without dates.
func summaryTable(sums []unitSummary, ch summaryChoice) views.Table {
	t := views.Table{ID: "summaries", Caption: "Unit summaries, lowest in the pile first",
		Columns: []views.Column{{Label: "Unit"}, {Label: "System", Title: "decay system; ⁴⁰Ar/³⁹Ar and K–Ar are kept apart"},
			{Label: "n", Num: true, Title: "dates in the mean"},
			{Label: "Weighted mean", Unit: "Ma", Num: true},
			{Label: fmt.Sprintf("± %dσ", ch.Sigma), Unit: "Ma", Num: true},
			{Label: "± level", Title: "which uncertainty the ± holds, for this row"},
			{Label: "MSWD", Num: true}, {Label: "MSWD range", Num: true, Title: mswdRangeName(ch.Range)},
			{Label: "p", Num: true},
			{Label: "Cautions and notes", Title: "next to the numbers they qualify"},
			{Label: "Dates span", Unit: "Ma", Num: true},
			{Label: "Flagged", Unit: "by the outlier rule", Title: ruleLabel(ch.Rule)},
			{Label: "Mean without flagged", Unit: fmt.Sprintf("Ma ± %dσ, same level", ch.Sigma), Num: true}},
		Empty: "No units yet."}
	for _, us := range sums {
		unit := views.Cell{Text: us.Unit.Name, URL: idURL("/units", us.Unit.ID)}
		if len(us.Systems) == 0 {
			t.Rows = append(t.Rows, []views.Cell{unit, {Text: "—"}, {Text: "0", Num: true}, {Text: "—", Num: true},
				{Text: "—", Num: true}, {Text: "—"}, {Text: "—", Num: true}, {Text: "—", Num: true}, {Text: "—", Num: true},
				{Text: "no dates"}, {Text: "—", Num: true}, {Text: "—"}, {Text: "—", Num: true}})
			continue
		}
		for _, s := range us.Systems {
			t.Rows = append(t.Rows, summaryCells(unit, s, ch))
		}
	}
	t.Notes = []string{summaryIntro(ch),
		"U–Pb Y and Z: the tracer term of each unit is the one its dates' published X and Y imply (0.03 % at 2σ assumed where they publish no Y); the λ238 term is 0.107 % (2σ, Jaffey et al. 1971). ⁴⁰Ar/³⁹Ar full external: the monitor-age and λ σ of the calibration, with their covariance where its source fits them jointly, added to the mean.",
		"MSWD outside its range, a unit mixing decay systems, ⁴⁰Ar/³⁹Ar dates not recalculable and a single date are marked ⚠ in the row."}
	return t
}

func summaryCells(unit views.Cell, s systemSummary, ch summaryChoice) []views.Cell {
	rem, caution := remarks(s)
	remCell := views.Cell{Text: rem, Class: "notes"}
	if caution {
		remCell.Class = "notes caution"
	}
	lvl := views.Cell{Text: shortLevel(s.LevelLabel), Title: s.LevelLabel, Class: "level"}
	if s.LevelShort {
		lvl.Class = "level caution"
	}
	if !s.Computed {
		return []views.Cell{unit, {Text: s.Label}, {Text: "0", Num: true}, {Text: "—", Num: true}, {Text: "—", Num: true},
			lvl, {Text: "—", Num: true}, {Text: "—", Num: true}, {Text: "—", Num: true}, remCell, {Text: "—", Num: true},
			{Text: "—"}, {Text: "—", Num: true}}
	}
	a := s.Report.All
	mean, sg := meanText(s.All, ch.Sigma)
	mswd, wc, p := views.Cell{Text: "— (single date)", Num: true}, views.Cell{Text: "—", Num: true}, views.Cell{Text: "—", Num: true}
	if a.MSWDDefined {
		mswd.Text = fmtMSWD(a.MSWD)
		wc.Text = fmtMSWD(a.MSWDLow) + "–" + fmtMSWD(a.MSWDHigh)
		p.Text = fmtP(a.P)
		if !a.InRange {
			mswd.Class, mswd.Text = "caution", "⚠ "+mswd.Text
			mswd.Title = "outside the " + mswdRangeName(a.Range)
		}
	} else {
		mswd.Class = "caution"
	}
	span := fixed(s.MaxMa, 3) + " – " + fixed(s.MinMa, 3)
	if s.MinMa == s.MaxMa {
		span = fixed(s.MinMa, 3)
	}
	return []views.Cell{unit, {Text: s.Label}, {Text: itoa(a.N), Num: true}, {Text: mean, Num: true}, {Text: sg, Num: true},
		lvl, mswd, wc, p, remCell, {Text: span, Num: true}, {Text: flagsText(s, ch)}, {Text: keptText(s, ch), Num: true}}
}

// shortLevel is the part of a level label before any explanation in parentheses or after a semicolon.
func shortLevel(l string) string {
	if i := strings.Index(l, ";"); i >= 0 {
		l = l[:i]
	}
	return l
}

// summaryGroups are the unit page's summaries, one group per decay system.
func summaryGroups(us unitSummary, ch summaryChoice) []views.FieldGroup {
	var out []views.FieldGroup
	for _, s := range us.Systems {
		g := views.FieldGroup{Title: "Summary · " + s.Label}
		decay := orDash(s.DecaySystem)
		if s.Key == "arar" {
			decay += ", recalculated to " + ch.Cal.Cal.Name
		}
		g.Fields = append(g.Fields, views.KV{Label: "Decay system", Value: decay},
			views.KV{Label: "Dates in the mean", Value: fmt.Sprintf("%d of %d", len(s.Entries), len(s.Entries)+len(s.Excluded))})
		if s.Computed {
			a := s.Report.All
			mean, sg := meanText(s.All, ch.Sigma)
			g.Fields = append(g.Fields, views.KV{Label: "Weighted mean",
				Value: fmt.Sprintf("%s ± %s Ma (%dσ, %s)", mean, sg, ch.Sigma, s.LevelLabel)})
			if a.MSWDDefined {
				kv := views.KV{Label: "MSWD", Value: fmt.Sprintf("%s (f = %d)", fmtMSWD(a.MSWD), a.DoF)}
				if !a.InRange {
					kv.Class = "caution"
				}
				g.Fields = append(g.Fields, kv,
					views.KV{Label: "MSWD range", Value: fmtMSWD(a.MSWDLow) + "–" + fmtMSWD(a.MSWDHigh) + " (" + mswdRangeName(a.Range) + ")"},
					views.KV{Label: "p", Value: fmtP(a.P)})
			} else {
				g.Fields = append(g.Fields, views.KV{Label: "MSWD", Value: "none: a single date", Class: "caution"})
			}
			span := fixed(s.MaxMa, 3) + " – " + fixed(s.MinMa, 3) + " Ma"
			g.Fields = append(g.Fields, views.KV{Label: "Dates span", Value: span},
				views.KV{Label: "Outlier flags (" + ch.Rule.String() + ")", Value: flagsText(s, ch)},
				views.KV{Label: "Mean without flagged", Value: keptText(s, ch)})
			pol := policyLabel(ch.PolicyCode) + " (" + ch.PolicyCode + ")"
			if a.Inflated {
				pol += fmt.Sprintf(": applied, × %.2f", a.Factor)
			} else {
				pol += ": not applied"
			}
			g.Fields = append(g.Fields, views.KV{Label: "Overdispersion policy", Value: pol})
		}
		for _, c := range s.Cautions {
			g.Fields = append(g.Fields, views.KV{Label: "Caution", Value: c, Class: "caution"})
		}
		for _, n := range s.Notes {
			g.Fields = append(g.Fields, views.KV{Label: "Note", Value: n})
		}
		if s.TracerNote != "" && !slices.Contains(s.Notes, s.TracerNote) {
			g.Fields = append(g.Fields, views.KV{Label: "Systematic terms", Value: s.TracerNote})
		}
		out = append(out, g)
	}
	return out
}

// entryTable lists the dates of one system as they enter its mean, with residuals and flags, and the
// dates left out with their reasons.
func entryTable(s systemSummary, ch summaryChoice) views.Table {
	ageUnit := "Ma"
	if s.Key == "arar" {
		ageUnit = "Ma, on " + ch.Cal.Cal.Name
	}
	t := views.Table{ID: "entries-" + s.Key, Caption: s.Label + " dates as they enter the mean",
		Columns: []views.Column{{Label: "Sample"}, {Label: "Method"}, {Label: "Age", Unit: ageUnit, Num: true},
			{Label: fmt.Sprintf("± %dσ", ch.Sigma), Unit: "Ma, analytical (the weight)", Num: true},
			{Label: "Weighted residual", Num: true, Title: "(xᵢ − x̄)/√(σᵢ² − σ_x̄²) against the mean of all dates"},
			{Label: "In the mean"}}}
	for _, e := range s.Entries {
		a, sg := ageSigma(e.AgeMa, e.Sigma1s, ch.Sigma)
		res := "—"
		if e.HasResidual {
			res = fmt.Sprintf("%.2f", e.Residual)
		}
		in := views.Cell{Text: "yes"}
		if e.Flagged {
			in = views.Cell{Text: "yes, flagged by " + ch.Rule.String() + " (left out of the mean without flagged)", Class: "caution"}
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: e.D.SampleCode, URL: idURL("/dates", e.D.ID)}, {Text: methodLabel(e.D.Method)},
			{Text: a, Num: true}, {Text: sg, Num: true}, {Text: res, Num: true}, in})
	}
	for _, x := range s.Excluded {
		cls := "caution"
		if x.Review {
			cls = "pending"
		}
		a, sg := ageSigma(x.D.AgeMa, x.D.SigmaMa, ch.Sigma)
		t.Rows = append(t.Rows, []views.Cell{{Text: x.D.SampleCode, URL: idURL("/dates", x.D.ID)}, {Text: methodLabel(x.D.Method)},
			{Text: a + " (as published)", Num: true}, {Text: sg, Num: true}, {Text: "—", Num: true}, {Text: "no: " + x.Reason, Class: cls}})
	}
	return t
}
