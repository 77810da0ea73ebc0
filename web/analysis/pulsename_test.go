package analysis

import (
	"math/rand/v2"
	"slices"
	"testing"

	"coeval/stats"
)

func summary(mode, modeLo, modeHi, start, end float64, present int) stats.PulseSummary {
	return stats.PulseSummary{Pulse: stats.Pulse{ModeMa: mode, StartMa: start, EndMa: end}, Present: present,
		Mode:  stats.AgeQuantiles{LowerMa: modeLo, MedianMa: mode, UpperMa: modeHi},
		Start: stats.AgeQuantiles{MedianMa: start}, End: stats.AgeQuantiles{MedianMa: end}}
}

// The digits follow the rule PulseNameRule states (by construction: half the mode's 95 % range).
func TestPulseNamesByAge(t *testing.T) {
	tests := []struct {
		name      string
		s         stats.PulseSummary
		code, rng string
	}{
		{"half range 0.12: one decimal", summary(155.437, 155.317, 155.557, 155.7, 155.1, 90), "P155.4", "mode 155.6–155.3 Ma, 95 %"},
		{"half range 0.04: two decimals", summary(155.437, 155.397, 155.477, 155.7, 155.1, 90), "P155.44", "mode 155.48–155.40 Ma, 95 %"},
		{"half range 1.5: none", summary(201.6, 200.1, 203.1, 205, 198, 90), "P202", "mode 203–200 Ma, 95 %"},
		{"no replicate: a tenth of the width (0.06)", summary(155.437, 0, 0, 155.7, 155.1, 0), "P155.44", ""},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			id := PulseNames([]stats.PulseSummary{tc.s})[0]
			if id.Code != tc.code || id.Range != tc.rng || id.Label != "pulse at ~"+tc.code[1:]+" Ma" {
				t.Errorf("got %q, %q, %q; want %q, %q", id.Code, id.Label, id.Range, tc.code, tc.rng)
			}
		})
	}
	// Two pulses that would read alike get more decimals, both.
	ids := PulseNames([]stats.PulseSummary{summary(155.44, 155.3, 155.6, 155.7, 155.43, 90), summary(155.41, 155.26, 155.56, 155.43, 155.1, 90)})
	if ids[0].Code != "P155.44" || ids[1].Code != "P155.41" {
		t.Errorf("alike names: %q and %q, want P155.44 and P155.41", ids[0].Code, ids[1].Code)
	}
	// An address names a pulse by its code or by an age within its range; nothing else.
	for code, want := range map[string]int{"P155.44": 0, "P155.41": 1, "P155.2": 1, "P155.6": 0, "P1": -1, "P2": -1, "155.4": -1, "Pabc": -1} {
		if got := PulseByCode(ids, code); got != want {
			t.Errorf("PulseByCode(%q) = %d, want %d", code, got, want)
		}
	}
}

// edgePulse is a pulse with normal edge draws (onset ~ N(onset, sd), end ~ N(end, sd)) named as the
// comparison names it.
func edgePulses(t *testing.T, seed uint64, spans [][2]float64) []ComparePulse {
	t.Helper()
	r := rand.New(rand.NewPCG(seed, 1))
	var sums []stats.PulseSummary
	for _, sp := range spans {
		sums = append(sums, summary((sp[0]+sp[1])/2, (sp[0]+sp[1])/2-0.05, (sp[0]+sp[1])/2+0.05, sp[0], sp[1], 400))
	}
	ids := PulseNames(sums)
	var out []ComparePulse
	for i, sp := range spans {
		var e stats.PulseEdgeSamples
		for range 400 {
			e.StartMa = append(e.StartMa, sp[0]+0.02*r.NormFloat64())
			e.EndMa = append(e.EndMa, sp[1]+0.02*r.NormFloat64())
		}
		on, end := e.Quantities(ids[i].Code, "pulse "+PulseName(i))
		out = append(out, ComparePulse{Name: ids[i].Code, ID: ids[i], Summary: sums[i], Edges: e, Onset: on, End: end})
	}
	return out
}

// An alternative setting that finds an extra pulse before the real one: "holds under every alternative"
// must compare the same pulse. The event lies 0.25 Ma inside the real pulse (its edges 0.02 Ma sd, the
// event 0.05 Ma sd), so P(within) is 1 − O(1e-6) under both sets [closed form: Φ(0.25/√(0.02²+0.05²)) =
// Φ(4.6)]; the extra pulse (157.0–156.4 Ma) lies 1 Ma and more from the event, P(within) = 0 to all
// digits. Matching by place would set the event against the extra pulse and the conclusion would fail.
func TestSensitivityFollowsThePulseNotItsPlace(t *testing.T) {
	base := edgePulses(t, 1, [][2]float64{{155.6, 155.1}})
	alt := edgePulses(t, 2, [][2]float64{{157.0, 156.4}, {155.62, 155.12}})
	in := CompareInputs{Pulses: base, Events: []CompareEvent{{Code: "E1", Q: stats.NormalAge("E1", 155.35, 0.05)}}}
	qs, iv, evIdx, _, _ := assemble(in)

	run := func(altQs []stats.Quantity) stats.SensitivityRow {
		t.Helper()
		sets := []stats.InputSet{{Name: "as chosen", Quantities: qs}, {Name: "alternative", Quantities: altQs}}
		sr, err := stats.Sensitivity(sets, stats.SensitivityOptions{Draws: stats.DrawOptions{N: 4000, Seed: 7}},
			func(j *stats.JointDraws) ([]stats.NamedProbability, error) {
				tab, err := j.Table(iv, evIdx, stats.PairOptions{DeltaMa: 0.1})
				if err != nil {
					return nil, err
				}
				return []stats.NamedProbability{{Name: "within", Probability: tab.Cells[0][0].Within}}, nil
			})
		if err != nil {
			t.Fatal(err)
		}
		return sr.Rows[0]
	}

	altQs := slices.Clone(qs)
	if absent := pulsesUnder(base, alt, altQs, iv); len(absent) != 0 {
		t.Fatalf("absent %v, want none", absent)
	}
	if altQs[iv[0].Onset].SamplesMa[0] != alt[1].Onset.SamplesMa[0] || altQs[iv[0].Onset].Group != base[0].Onset.Group {
		t.Fatalf("the chosen pulse took the edges of %q (stream %q), want the real pulse's under its own stream", altQs[iv[0].Onset].Name, altQs[iv[0].Onset].Group)
	}
	row := run(altQs)
	if !row.Survives || row.P[1] < 0.999 {
		t.Errorf("same pulse: P(within) %v, survives %v; want > 0.999 in both and the conclusion held", row.P, row.Survives)
	}

	// The test can fail: by place, the extra pulse stands in and the conclusion does not hold.
	byPlace := slices.Clone(qs)
	byPlace[iv[0].Onset], byPlace[iv[0].End] = alt[0].Onset, alt[0].End
	if wrong := run(byPlace); wrong.Survives || wrong.P[1] != 0 {
		t.Errorf("by place: P(within) %v, survives %v; want 0 and not held", wrong.P, wrong.Survives)
	}

	// The real pulse gone under the alternative: named absent, its own edges kept there.
	gone := slices.Clone(qs)
	if absent := pulsesUnder(base, alt[:1], gone, iv); !slices.Equal(absent, []string{base[0].Name}) || gone[iv[0].Onset].SamplesMa[0] != qs[iv[0].Onset].SamplesMa[0] {
		t.Errorf("vanished: absent %v, want [%s] with the chosen edges kept", absent, base[0].Name)
	}
}
