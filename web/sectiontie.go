package web

import (
	"context"
	"fmt"
	"strings"

	"coeval/store"
	"coeval/views"
)

// Tie points that come from a date of the compilation enter the age model with that date's age and its
// uncertainty at a chosen level (tie_level): analytical (the date's X σ), tracer (Y: X ⊕ tracer) or full
// (Z: Y ⊕ decay constant; for ⁴⁰Ar/³⁹Ar the date recalculated to the compilation's target calibration,
// with the monitor-age and decay-constant σ). The default is full: the model's ages are absolute ages,
// compared with dates of other systems, laboratories and tracers, and only the full external σ is fair
// there. Ties without a date keep the age and σ entered with them.

// defaultTieLevel is the level of a tie from a date when the URL does not choose one.
const defaultTieLevel = "full"

// tieInput is one tie point as the model uses it.
type tieInput struct {
	AgeMa, SigmaMa float64 // 1σ; used for normal ties
	FromDate       bool    // age and σ come from the linked date at the chosen level
	Level          string  // what the σ holds, for the page
	Note           string  // a fallback or a recalculation, for the page
}

// tieLevelLabel says what each level holds.
func tieLevelLabel(level string) string {
	switch level {
	case "analytical":
		return "analytical (X)"
	case "tracer":
		return "with tracer (Y = X ⊕ tracer)"
	}
	return "full external (Z = Y ⊕ decay constant; ⁴⁰Ar/³⁹Ar: ⊕ monitor age and λ, with their covariance where the calibration's source gives one)"
}

// tieFromDate returns the age and 1σ of a date at level (analytical|tracer|full). ⁴⁰Ar/³⁹Ar dates are
// recalculated to cal first. A level the date lacks falls back to the next lower one it has, and the
// note says so.
func tieFromDate(d store.Date, level string, cal calChoice) tieInput {
	in := tieInput{AgeMa: d.AgeMa, SigmaMa: d.SigmaMa, FromDate: true}
	if store.IsArAr(d.Method) {
		rc := recalculate(d, cal.Stats)
		if !rc.OK {
			in.Level, in.Note = "analytical (X), as published", rc.Reason+"; the published age and analytical σ are used"
			if level == "full" && d.SigmaZMa != nil {
				in.SigmaMa, in.Level = *d.SigmaZMa, "full external, as published"
			}
			return in
		}
		in.AgeMa, in.SigmaMa, in.Level = rc.AgeMa, rc.AnalyticalSigmaMa, "analytical (X)"
		in.Note = "⁴⁰Ar/³⁹Ar recalculated to " + cal.Cal.Name
		switch level {
		case "tracer":
			in.Level, in.Note = "analytical (X)", in.Note+"; ⁴⁰Ar/³⁹Ar has no tracer term, so the analytical σ is used"
		case "full":
			in.SigmaMa, in.Level = rc.FullSigmaMa, "full external (⊕ "+calTerms(cal.Stats)+")"
			if m := missingSystematics(cal.Stats); m != "" {
				in.Note += "; " + m
			}
		}
		return in
	}
	in.Level = "analytical (X)"
	y, z := d.SigmaYMa, d.SigmaZMa
	switch level {
	case "tracer":
		if y != nil {
			in.SigmaMa, in.Level = *y, "with tracer (Y)"
		} else {
			in.Note = "the date has no Y σ: its analytical σ is used"
		}
	case "full":
		switch {
		case z != nil:
			in.SigmaMa, in.Level = *z, "full external (Z)"
		case y != nil:
			in.SigmaMa, in.Level, in.Note = *y, "with tracer (Y)", "the date has no Z σ: its Y σ is used"
		default:
			in.Note = "the date has no Y or Z σ: its analytical σ is used"
		}
	}
	return in
}

// tieInputs resolves every tie of a section: from its linked date at the options' level, or as entered.
func (s *Server) tieInputs(ctx context.Context, ties []store.TiePoint, level string) ([]tieInput, error) {
	out := make([]tieInput, len(ties))
	var cal *calChoice
	for i, t := range ties {
		if t.AgeMa != nil && t.SigmaMa != nil {
			out[i] = tieInput{AgeMa: *t.AgeMa, SigmaMa: *t.SigmaMa, Level: "as entered with the tie point"}
		}
		if t.DateID == nil || t.Distribution != "normal" {
			continue
		}
		d, err := s.store.Date(ctx, *t.DateID)
		if err != nil {
			return nil, fmt.Errorf("tie %q: %w", t.Label, err)
		}
		if cal == nil {
			c, err := s.calibration(ctx, &params{})
			if err != nil {
				return nil, err
			}
			cal = &c
		}
		out[i] = tieFromDate(d, level, *cal)
	}
	return out, nil
}

// tieIncludeLabel says which tie points include= lets into an age model.
func tieIncludeLabel(include string) string { return modelIncludeLabel(include, "tie points") }

// modelIncludeLabel says which records (nouns, plural) include= lets into an age model.
func modelIncludeLabel(include, nouns string) string {
	switch include {
	case "pending":
		return "accepted and pending " + nouns
	case "all":
		return "all " + nouns + ", rejected ones too"
	}
	return "accepted " + nouns + " only"
}

// modelIncludeOptions are the choices of include= on pages with age models: it chooses the tie points
// and the hiatuses the models use.
func modelIncludeOptions(cur string) []views.Option {
	var out []views.Option
	for _, c := range includeCodes() {
		label := modelIncludeLabel(c, "tie points and hiatuses")
		if c == "accepted" {
			label += " (default)"
		}
		out = append(out, views.Option{Value: c, Label: label, Selected: c == cur})
	}
	return out
}

// reviewed is a record an age model uses or leaves out by its review state, as the cautions name it.
type reviewed struct{ name, state string }

// reviewScope is the computation a review caution speaks of, and how it says so.
type reviewScope struct {
	subject string                                    // "age–height model", "comparison"
	verb    string                                    // how the subject takes a record in: "uses", "includes"
	then    func(include, nouns string, n int) string // what follows "— " after the records left out
}

// modelScope is the age–height model's: its ages change once the records left out are accepted.
var modelScope = reviewScope{subject: "age–height model", verb: "uses", then: func(include, nouns string, n int) string {
	return fmt.Sprintf("include=%s uses %s. The model ages change when %s accepted; include=pending shows the model with %s now.",
		include, modelIncludeLabel(include, nouns), itThey(n), itThem(n))
}}

// compareScope is the comparison's.
var compareScope = reviewScope{subject: "comparison", verb: "includes", then: func(include, _ string, n int) string {
	return fmt.Sprintf("include=%s; include=pending compares %s now.", include, itThem(n))
}}

// reviewCautions say what a reader of a computation (scope) must know about the review of its records of
// one kind (noun, nouns: "tie point", "tie points"): the pending ones include= left out (they wait for a
// curator, and the result changes once they are accepted), and the unreviewed or rejected ones it let in.
// where names the section ("" for the section's own page). Rejected records left out need no caution:
// that is what rejecting them is for.
func reviewCautions(scope reviewScope, where, noun, nouns string, used, left []reviewed, include string) []string {
	names := func(rs []reviewed, state string) []string {
		var out []string
		for _, r := range rs {
			if r.state == state {
				out = append(out, r.name)
			}
		}
		return out
	}
	counted := func(n int, adj string) string {
		if n == 1 {
			return "1 " + adj + noun
		}
		return fmt.Sprintf("%d %s%s", n, adj, nouns)
	}
	prefix := ""
	if where != "" {
		prefix = where + ": "
	}
	var out []string
	if p := names(left, "pending"); len(p) > 0 {
		out = append(out, fmt.Sprintf("%sLeft out of the %s: %s waiting for a curator's review (%s) — %s",
			prefix, scope.subject, counted(len(p), ""), strings.Join(p, ", "), scope.then(include, nouns, len(p))))
	}
	if p := names(used, "pending"); len(p) > 0 {
		out = append(out, fmt.Sprintf("%sThe %s %s %s that no curator has reviewed yet (include=%s): %s.",
			prefix, scope.subject, scope.verb, counted(len(p), "pending "), include, strings.Join(p, ", ")))
	}
	if rj := names(used, "rejected"); len(rj) > 0 {
		out = append(out, fmt.Sprintf("%sThe %s %s %s (include=%s): %s.",
			prefix, scope.subject, scope.verb, counted(len(rj), "rejected "), include, strings.Join(rj, ", ")))
	}
	return out
}

// tieReviewCautions are reviewCautions of tie points, named by their labels.
func tieReviewCautions(where string, used, left []store.TiePoint, include string) []string {
	r := func(ts []store.TiePoint) []reviewed {
		out := make([]reviewed, len(ts))
		for i, t := range ts {
			out[i] = reviewed{t.Label, t.ReviewState}
		}
		return out
	}
	return reviewCautions(modelScope, where, "tie point", "tie points", r(used), r(left), include)
}

// hiatusReviewCautions are reviewCautions of hiatuses, named by their heights.
func hiatusReviewCautions(where string, used, left []store.Hiatus, include string) []string {
	r := func(hs []store.Hiatus) []reviewed {
		out := make([]reviewed, len(hs))
		for i, h := range hs {
			out[i] = reviewed{hiatusName(h), h.ReviewState}
		}
		return out
	}
	return reviewCautions(modelScope, where, "hiatus", "hiatuses", r(used), r(left), include)
}

// hiatusName names a hiatus by its height (it has no name of its own).
func hiatusName(h store.Hiatus) string { return "hiatus at " + num(h.HeightM) + " m" }

func itThem(n int) string {
	if n == 1 {
		return "it"
	}
	return "them"
}

func itThey(n int) string {
	if n == 1 {
		return "it is"
	}
	return "they are"
}

// tieModelTable says, for every tie point, what enters the model: the age and ± at the level used.
func (a *sectionAnalysis) tieModelTable() views.Table {
	t := views.Table{ID: "tie-inputs", Caption: "Tie points as the model uses them", Columns: []views.Column{{Label: "Tie point"},
		{Label: "Height", Unit: "m", Num: true}, {Label: "Age", Unit: "Ma ± 2σ, or range", Num: true}, {Label: "Uncertainty level"},
		{Label: "From"}, {Label: "Note"}}}
	for i, tp := range a.Ties {
		in := a.TieInputs[i]
		age, level, from := "—", "—", views.Cell{Text: "entered with the tie point"}
		switch {
		case tp.Distribution == "normal" && tp.AgeMa != nil && tp.SigmaMa != nil:
			ag, sg := ageSigma(in.AgeMa, in.SigmaMa, 2)
			age, level = ag+" ± "+sg, in.Level
		case tp.AgeMinMa != nil && tp.AgeMaxMa != nil:
			age, level = num(*tp.AgeMaxMa)+" – "+num(*tp.AgeMinMa)+" (uniform)", "range (uniform)"
		}
		if in.FromDate && tp.DateID != nil {
			from = views.Cell{Text: "date " + tp.DateSampleCode + " (" + methodLabel(tp.DateMethod) + ")", URL: idURL("/dates", *tp.DateID)}
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: tp.Label}, {Text: num(tp.HeightM), Num: true}, {Text: age, Num: true},
			{Text: level}, from, {Text: orDash(in.Note)}})
	}
	note := fmt.Sprintf("Ties from a date use that date's age and σ at tie_level=%s: %s.", a.Opt.TieLevel, tieLevelLabel(a.Opt.TieLevel))
	if a.Opt.TieLevel == defaultTieLevel {
		note += " This is the default: the model gives absolute ages, which are compared with dates of other systems, laboratories and tracers, where only the full external σ is fair. Choose analytical or tracer only to compare with dates from the same laboratory or tracer."
	}
	t.Notes = []string{note, "Ties without a date keep the age and σ entered with them (their level is what the source gave)."}
	return t
}

// tieLevelSentence is the model statement's account of the tie uncertainty level.
func (a *sectionAnalysis) tieLevelSentence() string {
	n := 0
	for _, in := range a.TieInputs {
		if in.FromDate {
			n++
		}
	}
	if n == 0 {
		return "No tie point comes from a date of the compilation: each keeps the age and σ entered with it."
	}
	def := ""
	if a.Opt.TieLevel == defaultTieLevel {
		def = " (the default, as absolute ages need)"
	}
	return fmt.Sprintf("%d tie point%s from dates of the compilation, at the %s level%s (tie_level=%s).", n, plural(n), strings.SplitN(tieLevelLabel(a.Opt.TieLevel), " (", 2)[0], def, a.Opt.TieLevel)
}

// tieReviewSentence is the model statement's account of which tie points it uses by review state.
func (a *sectionAnalysis) tieReviewSentence() string {
	s := fmt.Sprintf("Tie points in use: %s (include=%s)", tieIncludeLabel(a.Opt.Include), a.Opt.Include)
	if len(a.TiesLeftOut) == 0 {
		return s + "."
	}
	var left []string
	for _, t := range a.TiesLeftOut {
		left = append(left, t.Label+" ("+t.ReviewState+")")
	}
	return s + "; left out: " + strings.Join(left, ", ") + "."
}

// hiatusReviewSentence is the model statement's account of which hiatuses it honours by review state;
// "" for a section without hiatuses.
func (a *sectionAnalysis) hiatusReviewSentence() string {
	if len(a.AllHiatuses) == 0 {
		return ""
	}
	s := fmt.Sprintf("Hiatuses honoured: %s (include=%s)", modelIncludeLabel(a.Opt.Include, "hiatuses"), a.Opt.Include)
	if len(a.HiatusesOut) == 0 {
		return s + "."
	}
	var left []string
	for _, h := range a.HiatusesOut {
		left = append(left, hiatusName(h)+" ("+h.ReviewState+")")
	}
	return s + "; left out: " + strings.Join(left, ", ") + "."
}

func plural(n int) string {
	if n == 1 {
		return " comes"
	}
	return "s come"
}
