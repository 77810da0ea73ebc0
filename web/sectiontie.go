package web

import (
	"context"
	"fmt"
	"math"
	"strings"

	"coeval/stats"
	"coeval/store"
	"coeval/views"
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
const defaultTieLevel = "full"

// tieInput is one tie point as the model uses it.
type tieInput struct {
	AgeMa, SigmaMa float64 // 1σ, the random part; used for normal ties
	FromDate       bool    // age and σ come from the linked date
	Level          string  // what the σ holds, for the page
	Note           string  // a fallback or a recalculation, for the page
	// Syst are the date's relative systematic components (U–Pb tracer and λ238) and Cal its ⁴⁰Ar/³⁹Ar
	// calibration, whatever the level; Level decides which an age model shown on its own applies.
	Syst []stats.Systematic
	Cal  *stats.Calibration
}

// tieLevelLabel says what each level holds.
func tieLevelLabel(level string) string {
	switch level {
	case "analytical":
		return "analytical (X)"
	case "tracer":
		return "with tracer (X, and the tracer drawn once per draw for every tie on it)"
	}
	return "full external (X, and the tracer, λ238 and ⁴⁰Ar/³⁹Ar calibration — monitor age and λ with their covariance — each drawn once per draw for every tie that carries it)"
}

// tieComponentsAt returns the components a tie applies at a level: none at analytical, its tracer at
// tracer, all at full.
func (in tieInput) componentsAt(level string) ([]stats.Systematic, *stats.Calibration) {
	switch level {
	case "analytical":
		return nil, nil
	case "tracer":
		var out []stats.Systematic
		for _, s := range in.Syst {
			if s.Key != stats.KeyLambda238 {
				out = append(out, s)
			}
		}
		return out, nil
	}
	return in.Syst, in.Cal
}

// dateTracerRelSigma is the relative 1σ of a U–Pb date's tracer term: sqrt(Y² − X²)/t from its published
// X and Y, or defaultTracerRelSigma when it publishes no usable Y.
func dateTracerRelSigma(d store.Date) (float64, bool) {
	if y := d.SigmaYMa; y != nil && *y > d.SigmaMa && d.AgeMa > 0 {
		return math.Sqrt(*y**y-d.SigmaMa*d.SigmaMa) / d.AgeMa, true
	}
	return defaultTracerRelSigma, false
}

// tieFromDate returns the age, random 1σ and components of a date as a tie. ⁴⁰Ar/³⁹Ar dates are
// recalculated to cal first. level only matters for systems without stored components, whose σ at the
// level (falling back to the next lower one the date has) is taken as random.
func tieFromDate(d store.Date, level string, cal calChoice) tieInput {
	in := tieInput{AgeMa: d.AgeMa, SigmaMa: d.SigmaMa, FromDate: true, Level: "analytical (X)"}
	key, _, _ := systemOf(d.Method)
	switch {
	case store.IsArAr(d.Method):
		rc := recalculate(d, cal.Stats)
		if !rc.OK {
			in.Level, in.Note = "analytical (X), as published", rc.Reason+"; the published age and analytical σ are used, with no calibration component"
			if level == "full" && d.SigmaZMa != nil {
				in.SigmaMa, in.Level = *d.SigmaZMa, "full external, as published (taken as independent)"
			}
			return in
		}
		c := cal.Stats
		in.AgeMa, in.SigmaMa, in.Cal = rc.AgeMa, rc.AnalyticalSigmaMa, &c
		in.Note = "⁴⁰Ar/³⁹Ar recalculated to " + cal.Cal.Name
		if level == "full" {
			in.Level = "analytical (X); the calibration's monitor age and λ drawn once per draw"
			if m := missingSystematics(cal.Stats); m != "" {
				in.Note += "; " + m
			}
		}
		return in
	case key == "upb":
		rel, published := dateTracerRelSigma(d)
		in.Syst = stats.UPbSystematics(d.Tracer, rel)
		switch {
		case d.Tracer == "" && level != "analytical":
			// No tracer named: its term cannot be shared with other dates, so it stays with this tie.
			if d.SigmaYMa != nil && *d.SigmaYMa >= d.SigmaMa {
				in.SigmaMa = *d.SigmaYMa
			}
			in.Note = "no tracer is named: the tracer term (Y) is taken as this tie's own"
		case !published && level != "analytical":
			in.Note = "the date publishes no Y: tracer term 0.030 % (2σ) assumed (Condon et al. 2015)"
		}
		switch level {
		case "tracer":
			in.Level = "analytical (X); the tracer drawn once per draw"
		case "full":
			in.Level = "analytical (X); the tracer and λ238 drawn once per draw"
		}
		return in
	}
	y, z := d.SigmaYMa, d.SigmaZMa
	switch level {
	case "tracer":
		if y != nil {
			in.SigmaMa, in.Level = *y, "with tracer (Y), taken as independent"
		} else {
			in.Note = "the date has no Y σ: its analytical σ is used"
		}
	case "full":
		switch {
		case z != nil:
			in.SigmaMa, in.Level = *z, "full external (Z), taken as independent (no shared components are stored for this system)"
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
	return fmt.Sprintf("the model uses %s. Its ages change when %s accepted; choosing to include pending records shows the model with %s now.",
		modelIncludeLabel(include, nouns), itThey(n), itThem(n))
}}

// compareScope is the comparison's.
var compareScope = reviewScope{subject: "comparison", verb: "includes", then: func(include, _ string, n int) string {
	return fmt.Sprintf("it takes %s; choosing to include pending records compares %s now.", includeLabel(include), itThem(n))
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
		out = append(out, fmt.Sprintf("%sThe %s %s %s that no curator has reviewed yet (as chosen: %s): %s.",
			prefix, scope.subject, scope.verb, counted(len(p), "pending "), modelIncludeLabel(include, nouns), strings.Join(p, ", ")))
	}
	if rj := names(used, "rejected"); len(rj) > 0 {
		out = append(out, fmt.Sprintf("%sThe %s %s %s (as chosen: %s): %s.",
			prefix, scope.subject, scope.verb, counted(len(rj), "rejected "), modelIncludeLabel(include, nouns), strings.Join(rj, ", ")))
	}
	return out
}

// tieReviewCautions are reviewCautions of tie points, named by their labels.
func tieReviewCautions(where string, used, left []store.TiePoint, include string) []string {
	r := func(ts []store.TiePoint) []reviewed {
		out := make([]reviewed, len(ts))
		for i, t := range ts {
			out[i] = reviewed{t.Label, string(t.ReviewState)}
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
			out[i] = reviewed{hiatusName(h), string(h.ReviewState)}
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

// tieComponents gathers the components that the ties apply at a level, one per key, with the ties that
// carry it. A key described with different σ by different ties (a tracer term estimated from different
// dates) takes the largest, the conservative choice.
func tieComponents(ins []tieInput, level string) []stats.SharedComponent {
	return stats.GatherShared(len(ins), func(i int) ([]stats.Systematic, *stats.Calibration) { return ins[i].componentsAt(level) })
}

// componentsNote says which components an age model drew once per draw, and for how many ties.
func componentsNote(comps []stats.SharedComponent, nTies int) string {
	if len(comps) == 0 {
		return ""
	}
	var parts []string
	for _, c := range comps {
		n := 0
		for _, on := range c.Carries {
			if on {
				n++
			}
		}
		parts = append(parts, fmt.Sprintf("%s, on %d of %d ties", componentLabel(c), n, nTies))
	}
	return "Drawn once per draw and shared by the ties that carry them: " + strings.Join(parts, "; ") + "."
}

// componentLabel names a component for a reader, with its 1σ.
func componentLabel(c stats.SharedComponent) string {
	switch {
	case c.Cal != nil:
		return "the ⁴⁰Ar/³⁹Ar calibration " + c.Cal.Name + " (monitor age and λ)"
	case c.Key == stats.KeyLambda238:
		return fmt.Sprintf("λ238, %.3f %% (2σ)", 200*c.RelSigma)
	case strings.HasPrefix(c.Key, "tracer "):
		return fmt.Sprintf("the %s tracer, %.3f %% (2σ)", strings.TrimPrefix(c.Key, "tracer "), 200*c.RelSigma)
	}
	return c.Key
}

// componentName is a component's short name: λ238, tracer ET535, the ⁴⁰Ar/³⁹Ar calibration.
func componentName(c stats.SharedComponent) string {
	switch {
	case c.Cal != nil:
		return "the ⁴⁰Ar/³⁹Ar calibration"
	case strings.HasPrefix(c.Key, "tracer "):
		return "the " + strings.TrimPrefix(c.Key, "tracer ") + " tracer"
	}
	return c.Key
}
