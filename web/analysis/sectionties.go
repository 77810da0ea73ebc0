package analysis

import (
	"fmt"
	"math"
	"strings"

	"coeval/stats"
	"coeval/store"
)

// DefaultTieLevel is the level of a tie from a date nobody has chosen: full, so a model's ages are
// absolute ages.
const DefaultTieLevel = "full"

// TieInput is one tie point as the model uses it.
type TieInput struct {
	AgeMa, SigmaMa float64 // 1σ, the random part; used for normal ties
	FromDate       bool    // age and σ come from the linked date
	Level          string  // what the σ holds, for the page
	Note           string  // a fallback or a recalculation, for the page
	// Syst are the date's relative systematic components (U–Pb tracer and λ238) and Cal its ⁴⁰Ar/³⁹Ar
	// calibration, whatever the level; Level decides which an age model shown on its own applies.
	Syst []stats.Systematic
	Cal  *stats.Calibration
}

// TieLevelLabel says what each level holds.
func TieLevelLabel(level string) string {
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
func (in TieInput) componentsAt(level string) ([]stats.Systematic, *stats.Calibration) {
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

// DateTracerRelSigma is the relative 1σ of a U–Pb date's tracer term: sqrt(Y² − X²)/t from its published
// X and Y, or DefaultTracerRelSigma when it publishes no usable Y.
func DateTracerRelSigma(d store.Date) (float64, bool) {
	if y := d.SigmaYMa; y != nil && *y > d.SigmaMa && d.AgeMa > 0 {
		return math.Sqrt(*y**y-d.SigmaMa*d.SigmaMa) / d.AgeMa, true
	}
	return DefaultTracerRelSigma, false
}

// TieFromDate returns the age, random 1σ and components of a date as a tie. ⁴⁰Ar/³⁹Ar dates are
// recalculated to cal (the compilation's target) first. level only matters for systems without stored components, whose σ at the
// level (falling back to the next lower one the date has) is taken as random.
func TieFromDate(d store.Date, level string, cal stats.Calibration) TieInput {
	in := TieInput{AgeMa: d.AgeMa, SigmaMa: d.SigmaMa, FromDate: true, Level: "analytical (X)"}
	key, _, _ := SystemOf(d.Method)
	switch {
	case store.IsArAr(d.Method):
		rc := Recalculate(d, cal)
		if !rc.OK {
			in.Level, in.Note = "analytical (X), as published", rc.Reason+"; the published age and analytical σ are used, with no calibration component"
			if level == "full" && d.SigmaZMa != nil {
				in.SigmaMa, in.Level = *d.SigmaZMa, "full external, as published (taken as independent)"
			}
			return in
		}
		c := cal
		in.AgeMa, in.SigmaMa, in.Cal = rc.AgeMa, rc.AnalyticalSigmaMa, &c
		in.Note = "⁴⁰Ar/³⁹Ar recalculated to " + cal.Name
		if level == "full" {
			in.Level = "analytical (X); the calibration's monitor age and λ drawn once per draw"
			if m := MissingSystematics(cal); m != "" {
				in.Note += "; " + m
			}
		}
		return in
	case key == "upb":
		rel, published := DateTracerRelSigma(d)
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

// TieComponents gathers the components that the ties apply at a level, one per key, with the ties that
// carry it. A key described with different σ by different ties (a tracer term estimated from different
// dates) takes the largest, the conservative choice.
func TieComponents(ins []TieInput, level string) []stats.SharedComponent {
	return stats.GatherShared(len(ins), func(i int) ([]stats.Systematic, *stats.Calibration) { return ins[i].componentsAt(level) })
}

// ComponentsNote says which components an age model drew once per draw, and for how many ties.
func ComponentsNote(comps []stats.SharedComponent, nTies int) string {
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
		parts = append(parts, fmt.Sprintf("%s, on %d of %d ties", ComponentLabel(c), n, nTies))
	}
	return "Drawn once per draw and shared by the ties that carry them: " + strings.Join(parts, "; ") + "."
}

// ComponentLabel names a component for a reader, with its 1σ.
func ComponentLabel(c stats.SharedComponent) string {
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

// ComponentName is a component's short name: λ238, tracer ET535, the ⁴⁰Ar/³⁹Ar calibration.
func ComponentName(c stats.SharedComponent) string {
	switch {
	case c.Cal != nil:
		return "the ⁴⁰Ar/³⁹Ar calibration"
	case strings.HasPrefix(c.Key, "tracer "):
		return "the " + strings.TrimPrefix(c.Key, "tracer ") + " tracer"
	}
	return c.Key
}

// TieInputs resolves every tie of a section: from its linked date (dates, by id) at level, on the
// calibration target, or as entered. A tie linked to a date missing from dates is an error.
func TieInputs(ties []store.TiePoint, dates map[int64]store.Date, level string, target stats.Calibration) ([]TieInput, error) {
	out := make([]TieInput, len(ties))
	for i, t := range ties {
		if t.AgeMa != nil && t.SigmaMa != nil {
			out[i] = TieInput{AgeMa: *t.AgeMa, SigmaMa: *t.SigmaMa, Level: "as entered with the tie point"}
		}
		if t.DateID == nil || t.Distribution != "normal" {
			continue
		}
		d, ok := dates[*t.DateID]
		if !ok {
			return nil, fmt.Errorf("tie %q: its date %d was not read", t.Label, *t.DateID)
		}
		out[i] = TieFromDate(d, level, target)
	}
	return out, nil
}
