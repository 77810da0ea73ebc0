package web

import (
	"fmt"
	"strings"

	"coeval/stats"
	"coeval/store"
	"coeval/web/analysis"
)

// What became of a comparison's pulses between two computations of it (saved and today, as released and
// today), matched by their age ranges (stats.MatchPulses), said in words.

// namedSpan is a pulse for matching: its code, its words and its age range.
type namedSpan struct {
	Code, Label string
	Span        stats.PulseSpan
}

// codeWords names a pulse from its code when nothing else is known: P155.4 → "pulse at ~155.4 Ma".
func codeWords(code string) string { return "pulse at ~" + strings.TrimPrefix(code, "P") + " Ma" }

func spansOfPulses(ps []analysis.ComparePulse) []namedSpan {
	out := make([]namedSpan, len(ps))
	for i, p := range ps {
		out[i] = namedSpan{Code: p.Name, Label: p.ID.Label, Span: p.ID.Span}
	}
	return out
}

func spansOfSaved(ps []store.SavedPulse) []namedSpan {
	out := make([]namedSpan, len(ps))
	for i, p := range ps {
		out[i] = namedSpan{Code: p.Code, Label: codeWords(p.Code), Span: stats.PulseSpan{ModeMa: p.ModeMa, OldMa: p.OldMa, YoungMa: p.YoungMa}}
	}
	return out
}

func savedPulses(ps []analysis.ComparePulse) []store.SavedPulse {
	var out []store.SavedPulse
	for _, p := range ps {
		out = append(out, store.SavedPulse{Code: p.Name, ModeMa: p.ID.Span.ModeMa, OldMa: p.ID.Span.OldMa, YoungMa: p.ID.Span.YoungMa})
	}
	return out
}

func matchSpans(then, now []namedSpan) stats.PulseMatching {
	a, b := make([]stats.PulseSpan, len(then)), make([]stats.PulseSpan, len(now))
	for i, p := range then {
		a[i] = p.Span
	}
	for j, p := range now {
		b[j] = p.Span
	}
	return stats.MatchPulses(a, b)
}

// pulseChanges says what became of the pulses of then in now, one sentence per change: a pulse that
// is still there under its name is not mentioned. of names then's side ("of the saved comparison").
func pulseChanges(then, now []namedSpan, of string) []string {
	m := matchSpans(then, now)
	var out []string
	labels := func(idx []int, ps []namedSpan) string {
		var ls []string
		for _, j := range idx {
			ls = append(ls, "the "+ps[j].Label)
		}
		return joinAnd(ls)
	}
	merged := map[int]bool{}
	for i, p := range then {
		switch m.Fate(i) {
		case stats.PulseVanished:
			out = append(out, fmt.Sprintf("The %s %s has no counterpart in today's data.", p.Label, of))
		case stats.PulseSplit:
			out = append(out, fmt.Sprintf("The %s %s is today %d pulses: %s (compared with the first, which overlaps it most).", p.Label, of, len(m.AtoB[i]), labels(m.AtoB[i], now)))
		case stats.PulseMerged:
			j := m.AtoB[i][0]
			if !merged[j] {
				merged[j] = true
				var ls []string
				for _, k := range m.BtoA[j] {
					ls = append(ls, strings.TrimPrefix(then[k].Label, "pulse "))
				}
				out = append(out, fmt.Sprintf("The pulses %s %s are today one pulse, the %s.", joinAnd(ls), of, now[j].Label))
			}
		case stats.PulseSame:
			if q := now[m.AtoB[i][0]]; q.Code != p.Code {
				out = append(out, fmt.Sprintf("The %s %s is today's %s (the same pulse, its age moved within its range).", p.Label, of, q.Label))
			}
		}
	}
	for _, j := range m.New() {
		out = append(out, fmt.Sprintf("Today's %s has no counterpart in %s.", now[j].Label, strings.TrimPrefix(of, "of ")))
	}
	return out
}

// joinAnd joins words as a sentence lists them: "a", "a and b", "a, b and c".
func joinAnd(s []string) string {
	switch len(s) {
	case 0:
		return ""
	case 1:
		return s[0]
	}
	return strings.Join(s[:len(s)-1], ", ") + " and " + s[len(s)-1]
}
