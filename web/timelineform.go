package web

import (
	"regexp"
	"strconv"
	"strings"

	"coeval/stats"
	"coeval/views"
	"coeval/web/analysis"
)

// timelineForm is every choice of the timeline, the summary choices included.
func timelineForm(action string, ch densityChoice) *views.Form {
	opt := func(v, label, cur string) views.Option {
		return views.Option{Value: v, Label: label, Selected: v == cur}
	}
	onoff := func(b bool) string {
		if b {
			return "1"
		}
		return "0"
	}
	bw := views.Field{Name: "bw", Label: "Smoothing width", Kind: "select"}
	for _, name := range bandwidthRules {
		r, _ := stats.ParseBandwidthRule(name)
		bw.Options = append(bw.Options, opt(name, smoothingChoice(r), ch.Rule.String()))
	}
	h := ""
	if ch.Rule == stats.RuleUser {
		h = num(ch.UserHMa)
	}
	from, to := optNumEmpty(ch.FromMa), optNumEmpty(ch.ToMa)
	fields := []views.Field{
		{Name: "count", Label: "Count", Kind: "select", Options: []views.Option{
			opt("unit", "one value per unit (its weighted mean)", ch.Count), opt("date", "every date", ch.Count)}},
		{Name: "weight", Label: "Weight", Kind: "select", Options: []views.Option{
			opt("none", "equal", ch.Weight), opt("volume", "by unit volume", ch.Weight)}},
		bw,
		{Name: "h", Label: "Width I set (Ma)", Kind: "number", Value: h, Step: "any"},
		{Name: "adaptive", Label: "Width adapts to the data", Kind: "select", Options: []views.Option{
			opt("0", "no: one width everywhere", onoff(ch.Adaptive)), opt("1", "yes: narrower where dates crowd", onoff(ch.Adaptive))}},
		{Name: "pdp", Label: "Also draw the sum of the dates' curves", Kind: "select", Options: []views.Option{
			opt("0", "no", onoff(ch.PDP)), opt("1", "yes (not a density estimate)", onoff(ch.PDP))}},
		{Name: "from", Label: "Window from (Ma)", Kind: "number", Value: from, Step: "any", Placeholder: "auto"},
		{Name: "to", Label: "to (Ma)", Kind: "number", Value: to, Step: "any", Placeholder: "auto"},
		{Name: "seed", Label: "Seed", Kind: "number", Value: strconv.FormatUint(ch.Seed, 10), Step: "1"},
		{Name: "reps", Label: "Replicates", Kind: "number", Value: itoa(ch.Reps), Step: "1"},
		{Name: "bw_each", Label: "Smoothing width in the replicates", Kind: "select", Options: []views.Option{
			opt("0", "held at the width of the figure's curve", onoff(ch.BWEach)), opt("1", "re-estimated in each replicate (rules of thumb only)", onoff(ch.BWEach))}},
	}
	fields = append(fields, summaryForm(action, ch.Sum).Fields...)
	// The common choices stay in sight; the rest are folded under "More choices" (same form, same address).
	for i := range fields {
		fields[i].More = !timelineCommon[fields[i].Name]
	}
	return &views.Form{Action: action, Reset: action, Fields: fields}
}

// smoothingWords names a smoothing-width rule in the words of the pages (analysis.SmoothingWords).
func smoothingWords(r stats.BandwidthRule) string { return analysis.SmoothingWords(r) }

// bandwidthNoteWords writes the density's note on its smoothing width in the words of the forms: the
// automatic width's failure to exist for few or clustered dates, and the rule used instead (the JSON keeps
// the note as computed).
func bandwidthNoteWords(note string) string {
	noRoot := regexp.MustCompile(`ISJ: ζ\(t\) has no root on \[0, 0\.1\] for these (\d+) dates \(usual for few or clustered dates\)`)
	note = noRoot.ReplaceAllString(note, "no automatic width exists for these $1 dates (usual for few or clustered dates)")
	return strings.NewReplacer("ISJ could not be computed", "the automatic width could not be found",
		"used the Silverman robust rule instead", "used the robust rule of thumb (Silverman 1986) instead").Replace(note)
}

// smoothingChoice is a smoothing-width rule as a choice of the forms.
func smoothingChoice(r stats.BandwidthRule) string {
	switch r {
	case stats.RuleISJ:
		return "automatic: from the shape of the data (Botev et al. 2010)"
	case stats.RuleScott:
		return "rule of thumb (Scott 1992)"
	case stats.RuleSilverman:
		return "rule of thumb (Silverman 1986, 1.06)"
	case stats.RuleSilvermanRobust:
		return "rule of thumb, robust to outliers (Silverman 1986, 0.9)"
	case stats.RuleUser:
		return "a width I set"
	}
	return r.Label()
}
