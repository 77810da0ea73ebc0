package stats

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
)

// The coincidence test asks whether events lie closer to pulse onsets than chance would place them.
// The statistic is the mean, over the events, of the distance (Ma) from an event's age to the onset
// nearest to it. A Monte Carlo null distribution of that statistic is made under one of two nulls,
// both confined to a window of ages:
//
//   - NullEventsUniform: the events fall anywhere in the window, each uniformly and independently,
//     whatever the onsets; the onsets stay where they are.
//   - NullPulsesShifted: the onsets keep their spacing but the whole set slides by one offset drawn
//     uniformly over the window's length, wrapping around from the young end to the old end (so an
//     onset pushed past the window comes back in at the other side); the events stay where they are.
//
// The p-value is (1 + #{T* ≤ T}) / (1 + N) over N replicates: the share of replicates at least as close
// as the data, counting the data themselves, so it is never zero and is exactly uniform on its grid
// under the null (Davison & Hinkley 1997, §4.2.1: the Monte Carlo test).
//
// With DrawAges, every replicate also draws each event's age from its own distribution (its age-model
// draws, or a normal of its 1σ) and compares that replicate's statistic of the data with the replicate
// of the null: the p-value then averages over the uncertainty of the event ages. A blurred age lies on
// average farther from an onset than its median, so this is conservative when the events really sit at
// onsets; under the null it keeps the rate of small p-values at or below nominal (tested).

// CoincidenceNull names the null hypothesis of the coincidence test.
type CoincidenceNull string

// The nulls of the coincidence test.
const (
	NullEventsUniform CoincidenceNull = "events" // events uniform in the window, onsets fixed
	NullPulsesShifted CoincidenceNull = "pulses" // onsets shifted together, circularly within the window, events fixed
)

// CoincidenceEvent is one event of the test: its age (the median of its distribution), and, to draw it
// per replicate, either draws of its age or a normal 1σ.
type CoincidenceEvent struct {
	AgeMa   float64
	DrawsMa []float64 // draws of the age (e.g. of an age model); one is taken at random per replicate
	SigmaMa float64   // 1σ of a normal age, used when DrawsMa is empty
}

// CoincidenceOptions are the choices of the test.
type CoincidenceOptions struct {
	Null       CoincidenceNull
	YoungMa    float64 // the window's young end
	OldMa      float64 // the window's old end
	Replicates int     // N, at least 1
	Seed       uint64
	DrawAges   bool // draw each event's age per replicate
}

// CoincidenceResult is the outcome of the test, with every choice it was made with.
type CoincidenceResult struct {
	CoincidenceOptions
	Events, Onsets int
	// StatisticMa is T: the mean over the events of the distance from the event's age (AgeMa) to its
	// nearest onset, Ma.
	StatisticMa float64
	// DrawnMeanMa is the mean over replicates of T with the ages or onsets drawn (NaN unless either is).
	DrawnMeanMa float64
	// NullMedianMa, NullLo95Ma, NullHi95Ma summarise the null distribution of the statistic.
	NullMedianMa, NullLo95Ma, NullHi95Ma float64
	DrawOnsets                           bool    // the onsets were drawn per replicate from their groups
	AtMost                               int     // replicates in which the null's statistic is at most the data's
	P                                    float64 // (1 + AtMost) / (1 + Replicates)
}

// NearestOnset returns the distance (Ma) from ageMa to the nearest of onsetsMa and that onset's index;
// (+Inf, -1) when there is none.
func NearestOnset(ageMa float64, onsetsMa []float64) (float64, int) {
	best, at := math.Inf(1), -1
	for j, o := range onsetsMa {
		if d := math.Abs(ageMa - o); d < best {
			best, at = d, j
		}
	}
	return best, at
}

func meanNearest(agesMa, onsetsMa []float64) float64 {
	s := 0.0
	for _, a := range agesMa {
		d, _ := NearestOnset(a, onsetsMa)
		s += d
	}
	return s / float64(len(agesMa))
}

// CoincidenceTest runs the test. It returns an error for an unknown null, a window that is not finite
// with OldMa > YoungMa, fewer than one replicate, no event or no onset, and an event age or onset
// outside the window or not finite (the caller chooses what lies in the window and says so).
func CoincidenceTest(events []CoincidenceEvent, onsetsMa []float64, o CoincidenceOptions) (CoincidenceResult, error) {
	return CoincidenceTestDrawnOnsets(events, onsetsMa, nil, o)
}

// CoincidenceTestDrawnOnsets is CoincidenceTest with the onsets drawn per replicate: onsetGroups[g] are
// the alternative onset sets of group g (e.g. one per bootstrap replicate of a province's density); each
// replicate takes one set of every group, uniformly, and keeps its onsets in the window (a replicate
// whose drawn onsets all lie outside is drawn again, up to 1000 times). onsetsMa (the reference onsets)
// still give the statistic T of the result. No groups: the onsets are fixed. It returns an error also
// for a group without a set or an onset that is not a number.
func CoincidenceTestDrawnOnsets(events []CoincidenceEvent, onsetsMa []float64, onsetGroups [][][]float64, o CoincidenceOptions) (CoincidenceResult, error) {
	res := CoincidenceResult{CoincidenceOptions: o, Events: len(events), Onsets: len(onsetsMa), DrawnMeanMa: math.NaN(), DrawOnsets: len(onsetGroups) > 0}
	if o.Null != NullEventsUniform && o.Null != NullPulsesShifted {
		return res, fmt.Errorf("coincidence: unknown null %q (want %q or %q)", o.Null, NullEventsUniform, NullPulsesShifted)
	}
	if !finite(o.YoungMa) || !finite(o.OldMa) || !(o.OldMa > o.YoungMa) {
		return res, fmt.Errorf("coincidence: window %g–%g Ma: want finite ends with the old end older", o.OldMa, o.YoungMa)
	}
	if o.Replicates < 1 {
		return res, fmt.Errorf("coincidence: %d replicates, want at least 1", o.Replicates)
	}
	if len(events) == 0 || len(onsetsMa) == 0 {
		return res, errors.New("coincidence: needs at least one event and one onset")
	}
	in := func(x float64) bool { return finite(x) && x >= o.YoungMa && x <= o.OldMa }
	for i, e := range events {
		if !in(e.AgeMa) {
			return res, fmt.Errorf("coincidence: event %d at %g Ma lies outside the window %g–%g Ma", i, e.AgeMa, o.OldMa, o.YoungMa)
		}
		if !(e.SigmaMa >= 0) || math.IsInf(e.SigmaMa, 0) {
			return res, fmt.Errorf("coincidence: event %d has 1σ %g, want a finite value ≥ 0", i, e.SigmaMa)
		}
		for _, d := range e.DrawsMa {
			if !finite(d) {
				return res, fmt.Errorf("coincidence: event %d has a draw that is not a number", i)
			}
		}
	}
	for j, on := range onsetsMa {
		if !in(on) {
			return res, fmt.Errorf("coincidence: onset %d at %g Ma lies outside the window %g–%g Ma", j, on, o.OldMa, o.YoungMa)
		}
	}

	for g, sets := range onsetGroups {
		if len(sets) == 0 {
			return res, fmt.Errorf("coincidence: onset group %d has no set to draw from", g)
		}
		for _, set := range sets {
			for _, on := range set {
				if !finite(on) {
					return res, fmt.Errorf("coincidence: onset group %d has an onset that is not a number", g)
				}
			}
		}
	}
	drawOnsets := len(onsetGroups) > 0
	ages := make([]float64, len(events))
	for i, e := range events {
		ages[i] = e.AgeMa
	}
	res.StatisticMa = meanNearest(ages, onsetsMa)
	width := o.OldMa - o.YoungMa
	rng := rand.New(rand.NewPCG(o.Seed, 0x636f696e63696465)) // "coincide"
	drawn := make([]float64, len(events))
	nullAges := make([]float64, len(events))
	shifted := make([]float64, len(onsetsMa))
	nullT := make([]float64, o.Replicates)
	drawnSum := 0.0
	var drawnOnsets []float64
	for r := range o.Replicates {
		obs := res.StatisticMa
		ons := onsetsMa
		if drawOnsets {
			for try := 0; ; try++ {
				drawnOnsets = drawnOnsets[:0]
				for _, sets := range onsetGroups {
					for _, on := range sets[rng.IntN(len(sets))] {
						if in(on) {
							drawnOnsets = append(drawnOnsets, on)
						}
					}
				}
				if len(drawnOnsets) > 0 {
					break
				}
				if try == 1000 {
					return res, errors.New("coincidence: the drawn onsets lie outside the window in 1000 draws in a row")
				}
			}
			ons = drawnOnsets
			if !o.DrawAges {
				obs = meanNearest(ages, ons)
			}
		}
		if o.DrawAges {
			for i, e := range events {
				switch {
				case len(e.DrawsMa) > 0:
					drawn[i] = e.DrawsMa[rng.IntN(len(e.DrawsMa))]
				case e.SigmaMa > 0:
					drawn[i] = e.AgeMa + e.SigmaMa*rng.NormFloat64()
				default:
					drawn[i] = e.AgeMa
				}
			}
			obs = meanNearest(drawn, ons)
		}
		drawnSum += obs
		var t float64
		switch o.Null {
		case NullEventsUniform:
			for i := range nullAges {
				nullAges[i] = o.YoungMa + width*rng.Float64()
			}
			t = meanNearest(nullAges, ons)
		case NullPulsesShifted:
			off := width * rng.Float64()
			shifted = shifted[:0]
			for _, on := range ons {
				shifted = append(shifted, o.YoungMa+math.Mod(on-o.YoungMa+off, width))
			}
			evAges := ages
			if o.DrawAges {
				evAges = drawn
			}
			t = meanNearest(evAges, shifted)
		}
		nullT[r] = t
		if t <= obs {
			res.AtMost++
		}
	}
	if o.DrawAges || drawOnsets {
		res.DrawnMeanMa = drawnSum / float64(o.Replicates)
	}
	slices.Sort(nullT)
	res.NullMedianMa = sortedQuantile7(nullT, 0.5)
	res.NullLo95Ma = sortedQuantile7(nullT, 0.025)
	res.NullHi95Ma = sortedQuantile7(nullT, 0.975)
	res.P = float64(1+res.AtMost) / float64(1+o.Replicates)
	return res, nil
}

func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }
