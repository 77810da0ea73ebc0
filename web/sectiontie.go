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
	return "full external (Z = Y ⊕ decay constant; ⁴⁰Ar/³⁹Ar: ⊕ monitor age and λ)"
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
			in.SigmaMa, in.Level = rc.FullSigmaMa, "full external (⊕ monitor age and λ)"
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
func tieIncludeLabel(include string) string {
	switch include {
	case "pending":
		return "accepted and pending tie points"
	case "all":
		return "all tie points, rejected ones too"
	}
	return "accepted tie points only"
}

// tieIncludeOptions are the choices of include= on pages with age models.
func tieIncludeOptions(cur string) []views.Option {
	var out []views.Option
	for _, c := range includeCodes() {
		label := tieIncludeLabel(c)
		if c == "accepted" {
			label += " (default)"
		}
		out = append(out, views.Option{Value: c, Label: label, Selected: c == cur})
	}
	return out
}

// tieReviewCautions say what a reader of an age model must know about the review of its tie points: the
// pending ones include= left out (they wait for a curator, and the model changes once they are accepted),
// and the unreviewed or rejected ones it let in. where names the section ("" for the section's own page).
// Rejected ties left out need no caution: that is what rejecting them is for.
func tieReviewCautions(where string, used, left []store.TiePoint, include string) []string {
	labels := func(ts []store.TiePoint, state string) []string {
		var out []string
		for _, t := range ts {
			if t.ReviewState == state {
				out = append(out, t.Label)
			}
		}
		return out
	}
	prefix := ""
	if where != "" {
		prefix = where + ": "
	}
	var out []string
	if p := labels(left, "pending"); len(p) > 0 {
		out = append(out, fmt.Sprintf("%sLeft out of the age–height model: %s waiting for a curator's review (%s) — include=%s uses %s. The model ages change when %s accepted; include=pending shows the model with %s now.",
			prefix, count(len(p), "tie point"), strings.Join(p, ", "), include, tieIncludeLabel(include), itThey(len(p)), itThem(len(p))))
	}
	if p := labels(used, "pending"); len(p) > 0 {
		out = append(out, fmt.Sprintf("%sThe age–height model uses %s that no curator has reviewed yet (include=%s): %s.",
			prefix, count(len(p), "pending tie point"), include, strings.Join(p, ", ")))
	}
	if rj := labels(used, "rejected"); len(rj) > 0 {
		out = append(out, fmt.Sprintf("%sThe age–height model uses %s (include=%s): %s.",
			prefix, count(len(rj), "rejected tie point"), include, strings.Join(rj, ", ")))
	}
	return out
}

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

func plural(n int) string {
	if n == 1 {
		return " comes"
	}
	return "s come"
}
