package stats

import (
	"cmp"
	"math"
	"slices"
)

// PulseSpan is a pulse as identified across settings and data: the age of its mode and the age range it
// covers (OldMa ≥ ModeMa ≥ YoungMa), all in Ma.
type PulseSpan struct {
	ModeMa, OldMa, YoungMa float64
}

// PulseMatching says which pulses of one list (A: a saved comparison, the chosen settings) are which pulses
// of another (B: today's data, an alternative setting). Two pulses are the same pulse, or parts of one,
// when their age ranges overlap by at least half the narrower of the two (a pulse of zero width must lie
// within the other's range). Ranges of one density never overlap, so the rule reads:
//   - identical, or shifted within its range: one B for the A, and that A only for the B;
//   - split: two or more B for one A (each B lies mostly within the A);
//   - merged: two or more A for one B;
//   - vanished: an A with no B; new: a B with no A.
//
// Neighbouring pulses that only share an edge, or overlap by a sliver, are not matched.
type PulseMatching struct {
	// AtoB lists, for each pulse of A, the pulses of B it matches, largest overlap first; BtoA the reverse.
	AtoB, BtoA [][]int
}

// MatchPulses matches the pulses of a with those of b by the overlap of their age ranges (see
// PulseMatching). Spans with the old and young ends swapped are read the right way round.
func MatchPulses(a, b []PulseSpan) PulseMatching {
	m := PulseMatching{AtoB: make([][]int, len(a)), BtoA: make([][]int, len(b))}
	ov := make([][]float64, len(a))
	for i, p := range a {
		ov[i] = make([]float64, len(b))
		for j, q := range b {
			o, ok := spansMatch(p, q)
			ov[i][j] = o
			if ok {
				m.AtoB[i] = append(m.AtoB[i], j)
				m.BtoA[j] = append(m.BtoA[j], i)
			}
		}
	}
	// Largest overlap first; between equal overlaps, the nearer mode.
	for i := range m.AtoB {
		slices.SortStableFunc(m.AtoB[i], func(x, y int) int {
			return cmp.Or(cmp.Compare(ov[i][y], ov[i][x]), cmp.Compare(math.Abs(b[x].ModeMa-a[i].ModeMa), math.Abs(b[y].ModeMa-a[i].ModeMa)))
		})
	}
	for j := range m.BtoA {
		slices.SortStableFunc(m.BtoA[j], func(x, y int) int {
			return cmp.Or(cmp.Compare(ov[y][j], ov[x][j]), cmp.Compare(math.Abs(a[x].ModeMa-b[j].ModeMa), math.Abs(a[y].ModeMa-b[j].ModeMa)))
		})
	}
	return m
}

// spansMatch returns the overlap of two spans (Ma) and whether it makes them one pulse.
func spansMatch(p, q PulseSpan) (float64, bool) {
	pOld, pYoung := max(p.OldMa, p.YoungMa), min(p.OldMa, p.YoungMa)
	qOld, qYoung := max(q.OldMa, q.YoungMa), min(q.OldMa, q.YoungMa)
	o := min(pOld, qOld) - max(pYoung, qYoung)
	if o < 0 || math.IsNaN(o) {
		return 0, false
	}
	narrow := min(pOld-pYoung, qOld-qYoung)
	return o, o >= 0.5*narrow && (o > 0 || narrow == 0)
}

// Counterpart is the pulse of B that A's pulse i is (the largest overlap), or −1 when it has none.
func (m PulseMatching) Counterpart(i int) int {
	if len(m.AtoB[i]) == 0 {
		return -1
	}
	return m.AtoB[i][0]
}

// PulseFate is what became of a pulse of A in B.
type PulseFate int

const (
	PulseSame     PulseFate = iota // one pulse of B, which is no other A's
	PulseSplit                     // two or more pulses of B
	PulseMerged                    // one pulse of B, which other pulses of A also became
	PulseVanished                  // no pulse of B
)

// Fate says what became of A's pulse i in B.
func (m PulseMatching) Fate(i int) PulseFate {
	switch bs := m.AtoB[i]; {
	case len(bs) == 0:
		return PulseVanished
	case len(bs) > 1:
		return PulseSplit
	case len(m.BtoA[bs[0]]) > 1:
		return PulseMerged
	}
	return PulseSame
}

// New lists the pulses of B that match no pulse of A.
func (m PulseMatching) New() []int {
	var out []int
	for j, as := range m.BtoA {
		if len(as) == 0 {
			out = append(out, j)
		}
	}
	return out
}
