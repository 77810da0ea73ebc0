package stats

import (
	"slices"
	"testing"
)

// The cases are built by hand so that the answer is known by construction: spans in Ma, older first.
func TestMatchPulsesClosedCases(t *testing.T) {
	sp := func(old, mode, young float64) PulseSpan { return PulseSpan{ModeMa: mode, OldMa: old, YoungMa: young} }
	a := []PulseSpan{sp(156.0, 155.8, 155.5), sp(155.5, 155.3, 155.0)}
	tests := []struct {
		name   string
		a, b   []PulseSpan
		atob   [][]int
		fates  []PulseFate
		newOne []int
	}{
		{"identical", a, a, [][]int{{0}, {1}}, []PulseFate{PulseSame, PulseSame}, nil},
		// Each pulse moves by 0.1 Ma, less than its 0.5 Ma range: the same pulses; the younger one now
		// reaches 0.1 Ma into the older one's range, a sliver (0.1 < half of 0.5) that does not count.
		{"shifted within range", a, []PulseSpan{sp(155.9, 155.7, 155.4), sp(155.4, 155.2, 154.9)}, [][]int{{0}, {1}}, []PulseFate{PulseSame, PulseSame}, nil},
		// The older pulse becomes two, each within its old range; the order numbers would have moved the
		// younger pulse from 2 to 3.
		{"split into two", a, []PulseSpan{sp(156.0, 155.9, 155.75), sp(155.75, 155.6, 155.5), sp(155.5, 155.3, 155.0)},
			[][]int{{0, 1}, {2}}, []PulseFate{PulseSplit, PulseSame}, nil},
		{"merged", a, []PulseSpan{sp(156.0, 155.5, 155.0)}, [][]int{{0}, {0}}, []PulseFate{PulseMerged, PulseMerged}, nil},
		{"vanished", a, []PulseSpan{sp(155.5, 155.3, 155.0)}, [][]int{nil, {0}}, []PulseFate{PulseVanished, PulseSame}, nil},
		// A new pulse before the real ones (an extra, older one): the old ones keep their counterparts.
		{"new", a, []PulseSpan{sp(157.0, 156.6, 156.2), sp(156.0, 155.8, 155.5), sp(155.5, 155.3, 155.0)},
			[][]int{{1}, {2}}, []PulseFate{PulseSame, PulseSame}, []int{0}},
		// Shifted past half its range: no longer the same pulse (vanished, and a new one).
		{"shifted beyond range", a[:1], []PulseSpan{sp(155.7, 155.5, 155.2)}, [][]int{nil}, []PulseFate{PulseVanished}, []int{0}},
		// Ends given the wrong way round are read the right way round.
		{"swapped ends", a[:1], []PulseSpan{sp(155.5, 155.8, 156.0)}, [][]int{{0}}, []PulseFate{PulseSame}, nil},
		{"zero width within", []PulseSpan{sp(155.8, 155.8, 155.8)}, a, [][]int{{0}}, []PulseFate{PulseSame}, []int{1}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			m := MatchPulses(tc.a, tc.b)
			for i := range tc.a {
				if !slices.Equal(m.AtoB[i], tc.atob[i]) {
					t.Errorf("pulse %d of A matches %v of B, want %v", i, m.AtoB[i], tc.atob[i])
				}
				if got := m.Fate(i); got != tc.fates[i] {
					t.Errorf("fate of pulse %d: %d, want %d", i, got, tc.fates[i])
				}
				want := -1
				if len(tc.atob[i]) > 0 {
					want = tc.atob[i][0]
				}
				if got := m.Counterpart(i); got != want {
					t.Errorf("counterpart of %d: %d, want %d", i, got, want)
				}
			}
			if got := m.New(); !slices.Equal(got, tc.newOne) {
				t.Errorf("new pulses %v, want %v", got, tc.newOne)
			}
			// The relation read from B's side is the same relation.
			back := MatchPulses(tc.b, tc.a)
			for j := range tc.b {
				if !slices.Equal(sortedCopy(back.AtoB[j]), sortedCopy(m.BtoA[j])) {
					t.Errorf("B's pulse %d: %v from B's side, %v from A's", j, back.AtoB[j], m.BtoA[j])
				}
			}
		})
	}
}

func sortedCopy(x []int) []int { y := slices.Clone(x); slices.Sort(y); return y }

// On pulses FindPulses finds: one normal at 10 Ma (σ 1.5) against two at 8.5 and 11.5 Ma (σ 0.6) is a split
// (each of the two lies within the one's range), and read the other way a merger. The ranges are the
// densities' own [closed form: a normal's density falls to 5 % of its mode at μ ± σ√(2 ln 20)].
func TestMatchPulsesOnFoundPulses(t *testing.T) {
	g := AgeGrid{MinMa: 0, MaxMa: 20, Points: 2001}
	x1, d1 := twoNormals(g, 1, 10, 1.5, 0, 15, 1)
	x2, d2 := twoNormals(g, 0.5, 8.5, 0.6, 0.5, 11.5, 0.6)
	one, err := FindPulses(x1, d1, PulseOptions{})
	if err != nil || len(one) != 1 {
		t.Fatalf("one normal: %d pulses, %v", len(one), err)
	}
	two, err := FindPulses(x2, d2, PulseOptions{})
	if err != nil || len(two) != 2 {
		t.Fatalf("two normals: %d pulses, %v", len(two), err)
	}
	spans := func(ps []Pulse) []PulseSpan {
		var out []PulseSpan
		for _, p := range ps {
			out = append(out, PulseSpan{ModeMa: p.ModeMa, OldMa: p.StartMa, YoungMa: p.EndMa})
		}
		return out
	}
	m := MatchPulses(spans(one), spans(two))
	if m.Fate(0) != PulseSplit || len(m.AtoB[0]) != 2 {
		t.Errorf("one → two: fate %d, matches %v; want a split into both", m.Fate(0), m.AtoB[0])
	}
	r := MatchPulses(spans(two), spans(one))
	if r.Fate(0) != PulseMerged || r.Fate(1) != PulseMerged {
		t.Errorf("two → one: fates %d, %d; want both merged", r.Fate(0), r.Fate(1))
	}
}
