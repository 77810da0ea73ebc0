package web

import (
	"fmt"
	"strings"

	"coeval/stats"
	"coeval/store"
	"coeval/views"
	"coeval/web/analysis"
)

// Tie points that come from a date of the compilation enter the age model with that date's age and its
// random part only — the analytical σ (X; ⁴⁰Ar/³⁹Ar: recalculated to the compilation's target calibration)
// — and carry the date's systematic components by name: U–Pb its tracer and λ238, ⁴⁰Ar/³⁹Ar its
// calibration (monitor age and λ). tie_level chooses which components an age model shown on its own draws:
// analytical none, tracer the tracer, full all of them (the default: the model's ages are absolute ages).
// Each component is drawn once per draw and moves every tie that carries it together
// (stats.AgeModel.ApplyShared), so a shared decay constant never moves two ash beds apart. The comparison
// fits the model without them and lets its joint draws apply them, once, to every quantity that carries
// them. Systems without stored components (K–Ar, Re–Os, …) use the published σ of the level as their
// random part. Ties without a date keep the age and σ entered with them and carry nothing.

// defaultTieLevel is the level of a tie from a date when the URL does not choose one.
const defaultTieLevel = analysis.DefaultTieLevel

func tieLevelLabel(level string) string { return analysis.TieLevelLabel(level) }

func tieFromDate(d store.Date, level string, cal calChoice) tieInput {
	return analysis.TieFromDate(d, level, cal.Stats)
}

func componentName(c stats.SharedComponent) string { return analysis.ComponentName(c) }

// tieIncludeLabel says which tie points include= lets into an age model.
func tieIncludeLabel(include string) string { return modelIncludeLabel(include, "tie points") }

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

func modelIncludeLabel(include, nouns string) string {
	return analysis.ModelIncludeLabel(include, nouns)
}

func tieReviewCautions(where string, used, left []store.TiePoint, include string) []string {
	return analysis.TieReviewCautions(where, used, left, include)
}

func hiatusReviewCautions(where string, used, left []store.Hiatus, include string) []string {
	return analysis.HiatusReviewCautions(where, used, left, include)
}

func hiatusName(h store.Hiatus) string { return analysis.HiatusName(h) }

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
	note := fmt.Sprintf("Ties from a date use that date's age and σ at the %s level.", tieLevelLabel(a.Opt.TieLevel))
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
	s := fmt.Sprintf("%d tie point%s from dates of the compilation, at the %s level%s: each enters with its random part (X).", n, plural(n), strings.SplitN(tieLevelLabel(a.Opt.TieLevel), " (", 2)[0], def)
	if a.Model != nil && a.Model.SharedNote != "" {
		s += " " + a.Model.SharedNote + " A shared term moves those ties together, so it widens each age but not the time between them."
	}
	return s
}

// tieReviewSentence is the model statement's account of which tie points it uses by review state.
func (a *sectionAnalysis) tieReviewSentence() string {
	s := fmt.Sprintf("Tie points in use: %s", tieIncludeLabel(a.Opt.Include))
	if len(a.TiesLeftOut) == 0 {
		return s + "."
	}
	var left []string
	for _, t := range a.TiesLeftOut {
		left = append(left, t.Label+" ("+string(t.ReviewState)+")")
	}
	return s + "; left out: " + strings.Join(left, ", ") + "."
}

// hiatusReviewSentence is the model statement's account of which hiatuses it honours by review state;
// "" for a section without hiatuses.
func (a *sectionAnalysis) hiatusReviewSentence() string {
	if len(a.AllHiatuses) == 0 {
		return ""
	}
	s := fmt.Sprintf("Hiatuses honoured: %s", modelIncludeLabel(a.Opt.Include, "hiatuses"))
	if len(a.HiatusesOut) == 0 {
		return s + "."
	}
	var left []string
	for _, h := range a.HiatusesOut {
		left = append(left, hiatusName(h)+" ("+string(h.ReviewState)+")")
	}
	return s + "; left out: " + strings.Join(left, ", ") + "."
}

func plural(n int) string {
	if n == 1 {
		return " comes"
	}
	return "s come"
}
