package analysis

import (
	"math"
	"slices"
	"strconv"
	"strings"

	"coeval/stats"
)

// Pulses are named by their age, never by their place in the list: after an edit or another calibration
// the second pulse may be another pulse, but the pulse at ~155.4 Ma is still recognisable (and matched by
// stats.MatchPulses).

// PulseID is how a pulse is named: its words on pages and in figures, and a code for addresses and
// downloads, both made from its age.
type PulseID struct {
	Code  string          // P155.4: the mode to the label's decimals; unique within one density
	Label string          // pulse at ~155.4 Ma
	Range string          // mode 155.5–155.3 Ma (95 %), or "" when no replicate has the pulse
	Span  stats.PulseSpan // the age range it covers, for matching
}

// Full is the label with the mode's range: "pulse at ~155.4 Ma (mode 155.5–155.3 Ma, 95 %)".
func (p PulseID) Full() string {
	if p.Range == "" {
		return p.Label
	}
	return p.Label + " (" + p.Range + ")"
}

// PulseNameRule says in words how a pulse's name is written, for the "how" texts.
const PulseNameRule = "A pulse is named by the age of its mode, written to the decimal place of the first significant digit of half its mode's 95 % range over the bootstrap replicates (of a tenth of its width when no replicate has it; between 0 and 3 decimals, more only where two pulses would read alike); pulses are matched across settings and data by their age ranges (from the median end to the median onset), two being the same pulse when they overlap by at least half the narrower."

// PulseDecimals is the number of decimals of a pulse's name: the place of the first significant digit of
// half the mode's 95 % range, or of a tenth of the pulse's width when no replicate has it; 0 to 3.
func PulseDecimals(s stats.PulseSummary) int {
	u := (s.Mode.UpperMa - s.Mode.LowerMa) / 2
	if s.Present == 0 || !(u > 0) {
		u = math.Abs(s.StartMa-s.EndMa) / 10
	}
	if !(u > 0) || math.IsInf(u, 0) {
		return 3
	}
	return min(max(-int(math.Floor(math.Log10(u))), 0), 3)
}

// PulseSpanOf is the age range a pulse covers, for matching: from the median of its end to the median of
// its onset over the replicates, or the reference density's edges when no replicate has it.
func PulseSpanOf(s stats.PulseSummary) stats.PulseSpan {
	if s.Present > 0 {
		return stats.PulseSpan{ModeMa: s.ModeMa, OldMa: s.Start.MedianMa, YoungMa: s.End.MedianMa}
	}
	return stats.PulseSpan{ModeMa: s.ModeMa, OldMa: s.StartMa, YoungMa: s.EndMa}
}

// PulseNames names pulses (oldest first, as the pages list them) by their age. Two pulses whose names
// would read alike get more decimals, both of them, until they differ.
func PulseNames(ps []stats.PulseSummary) []PulseID {
	dec := make([]int, len(ps))
	for i, p := range ps {
		dec[i] = PulseDecimals(p)
	}
	text := func(i int) string { return strconv.FormatFloat(ps[i].ModeMa, 'f', dec[i], 64) }
	for range 6 {
		clash := false
		for i := range ps {
			for j := i + 1; j < len(ps); j++ {
				if text(i) == text(j) {
					dec[i], dec[j], clash = dec[i]+1, dec[j]+1, true
				}
			}
		}
		if !clash {
			break
		}
	}
	out := make([]PulseID, len(ps))
	for i, p := range ps {
		t := text(i)
		id := PulseID{Code: "P" + t, Label: "pulse at ~" + t + " Ma", Span: PulseSpanOf(p)}
		if p.Present > 0 {
			f := func(x float64) string { return strconv.FormatFloat(x, 'f', dec[i], 64) }
			id.Range = "mode " + f(p.Mode.UpperMa) + "–" + f(p.Mode.LowerMa) + " Ma, 95 %"
		}
		out[i] = id
	}
	return out
}

// PulseByCode finds the pulse a code of an address names: its own code, or "P" and an age within its
// range (P155 names the pulse covering 155 Ma; with several, the nearest mode). It returns −1 for none.
func PulseByCode(ids []PulseID, code string) int {
	if i := slices.IndexFunc(ids, func(p PulseID) bool { return p.Code == code }); i >= 0 {
		return i
	}
	age, err := strconv.ParseFloat(strings.TrimPrefix(code, "P"), 64)
	if !strings.HasPrefix(code, "P") || err != nil || math.IsNaN(age) {
		return -1
	}
	best, bd := -1, math.Inf(1)
	for i, p := range ids {
		old, young := max(p.Span.OldMa, p.Span.YoungMa), min(p.Span.OldMa, p.Span.YoungMa)
		if age <= old && age >= young {
			if d := math.Abs(age - p.Span.ModeMa); d < bd {
				best, bd = i, d
			}
		}
	}
	return best
}
