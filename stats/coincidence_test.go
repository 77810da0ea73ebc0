package stats

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// binomialBand returns the central band of a Binomial(n, p) count holding conf of its probability:
// the smallest k with CDF(k) ≥ (1 − conf)/2 and the smallest k with CDF(k) ≥ 1 − (1 − conf)/2, found by
// walking gonum's distuv.Binomial CDF (gonum has no binomial quantile).
func binomialBand(n int, p, conf float64) (lo, hi int) {
	b := distuv.Binomial{N: float64(n), P: p}
	a := (1 - conf) / 2
	lo, hi = -1, -1
	for k := 0; k <= n; k++ {
		c := b.CDF(float64(k))
		if lo < 0 && c >= a {
			lo = k
		}
		if hi < 0 && c >= 1-a {
			hi = k
			break
		}
	}
	return lo, hi
}

func TestBinomialBandAgainstNormalApproximation(t *testing.T) {
	// The 99.9 % band of Binomial(400, 0.5) is close to 200 ± 3.29·√100 = [167, 233] (normal
	// approximation, common practice); the exact one may differ by a count at each end.
	lo, hi := binomialBand(400, 0.5, 0.999)
	if lo < 165 || lo > 169 || hi < 231 || hi > 235 {
		t.Errorf("band [%d, %d], want about [167, 233]", lo, hi)
	}
}

// The statistic by hand: events 10.3 and 12.0 Ma, onsets 10.0 and 11.5 Ma: nearest distances 0.3 and
// 0.5, mean 0.4 Ma (arithmetic).
func TestCoincidenceStatisticByHand(t *testing.T) {
	res, err := CoincidenceTest([]CoincidenceEvent{{AgeMa: 10.3}, {AgeMa: 12.0}}, []float64{10.0, 11.5},
		CoincidenceOptions{Null: NullEventsUniform, YoungMa: 10, OldMa: 14, Replicates: 9, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(res.StatisticMa-0.4) > 1e-12 {
		t.Errorf("T = %v, want 0.4", res.StatisticMa)
	}
	if got, want := res.P, float64(1+res.AtMost)/10; got != want {
		t.Errorf("p = %v, want (1 + %d)/10 = %v", got, res.AtMost, want)
	}
	if !math.IsNaN(res.DrawnMeanMa) {
		t.Errorf("DrawnMeanMa = %v without drawn ages, want NaN", res.DrawnMeanMa)
	}
}

// One event, one onset, window [a, b] = [10, 12]: the count of null replicates at least as close as the
// data is Binomial(N, F(d)) with, by hand,
//   - events uniform (onset o = 10.0 fixed, event at 10.3, d = 0.3):
//     F = P(|U − o| ≤ d) = (min(b, o + d) − max(a, o − d)) / (b − a) = (10.3 − 10) / 2 = 0.15;
//   - onsets shifted circularly (event e = 10.3 fixed): the shifted onset is uniform on [a, b], so
//     F = P(|e − O| ≤ d) = (min(b, e + d) − max(a, e − d)) / (b − a) = (10.6 − 10) / 2 = 0.3.
//
// The count must lie in the binomial 99.9 % band (gonum distuv.Binomial CDF).
func TestCoincidenceOneEventOneOnsetClosedForm(t *testing.T) {
	const n = 4000
	for _, c := range []struct {
		null CoincidenceNull
		f    float64
	}{{NullEventsUniform, 0.15}, {NullPulsesShifted, 0.3}} {
		res, err := CoincidenceTest([]CoincidenceEvent{{AgeMa: 10.3}}, []float64{10.0},
			CoincidenceOptions{Null: c.null, YoungMa: 10, OldMa: 12, Replicates: n, Seed: 7})
		if err != nil {
			t.Fatal(err)
		}
		lo, hi := binomialBand(n, c.f, 0.999)
		if res.AtMost < lo || res.AtMost > hi {
			t.Errorf("%s: %d of %d replicates at least as close, want within [%d, %d] (F = %v)", c.null, res.AtMost, n, lo, hi, c.f)
		}
		if got, want := res.P, float64(1+res.AtMost)/float64(1+n); got != want {
			t.Errorf("%s: p = %v, want %v", c.null, got, want)
		}
	}
}

// pValuesUnderNull simulates sets data sets under the null and returns how many have p ≤ 0.05 and
// p ≤ 0.5.
func pValuesUnderNull(t *testing.T, sets int, null CoincidenceNull, drawAges bool) (le05, le50 int) {
	t.Helper()
	const young, old = 10.0, 14.0
	pattern := []float64{10.5, 11.2, 13.0}
	fixedEvents := []float64{10.2, 10.9, 11.9, 12.4, 13.7}
	rng := rand.New(rand.NewPCG(2026, 15))
	for s := range sets {
		var evs []CoincidenceEvent
		onsets := pattern
		switch null {
		case NullEventsUniform:
			for range 6 {
				truth := young + (old-young)*rng.Float64()
				if !drawAges {
					evs = append(evs, CoincidenceEvent{AgeMa: truth})
					continue
				}
				// The age is measured with a 1σ of 0.1 Ma (kept inside the window) and its
				// distribution is given as draws around the measurement.
				obs := truth + 0.1*rng.NormFloat64()
				for obs < young || obs > old {
					obs = truth + 0.1*rng.NormFloat64()
				}
				draws := make([]float64, 200)
				for i := range draws {
					draws[i] = obs + 0.1*rng.NormFloat64()
				}
				evs = append(evs, CoincidenceEvent{AgeMa: obs, DrawsMa: draws})
			}
		case NullPulsesShifted:
			for _, e := range fixedEvents {
				evs = append(evs, CoincidenceEvent{AgeMa: e, SigmaMa: 0.1})
			}
			off := (old - young) * rng.Float64()
			onsets = make([]float64, len(pattern))
			for j, o := range pattern {
				onsets[j] = young + math.Mod(o-young+off, old-young)
			}
		}
		res, err := CoincidenceTest(evs, onsets, CoincidenceOptions{Null: null, YoungMa: young, OldMa: old,
			Replicates: 199, Seed: uint64(1000 + s), DrawAges: drawAges})
		if err != nil {
			t.Fatal(err)
		}
		if res.P <= 0.05 {
			le05++
		}
		if res.P <= 0.5 {
			le50++
		}
	}
	return le05, le50
}

// Calibration: under either null the p-value is uniform on its grid (1/200, …, 1), so of 400 data sets
// simulated under the null the number with p ≤ 0.05 is Binomial(400, 0.05) and with p ≤ 0.5
// Binomial(400, 0.5); each must lie in its 99.9 % band (gonum distuv.Binomial CDF). With 199
// replicates P(p ≤ 0.05) = 10/200 and P(p ≤ 0.5) = 100/200 exactly (Davison & Hinkley 1997, §4.2.1).
func TestCoincidencePValuesUniformUnderNull(t *testing.T) {
	const sets = 400
	lo05, hi05 := binomialBand(sets, 0.05, 0.999)
	lo50, hi50 := binomialBand(sets, 0.5, 0.999)
	for _, null := range []CoincidenceNull{NullEventsUniform, NullPulsesShifted} {
		le05, le50 := pValuesUnderNull(t, sets, null, false)
		if le05 < lo05 || le05 > hi05 {
			t.Errorf("%s: %d of %d with p ≤ 0.05, want within [%d, %d]", null, le05, sets, lo05, hi05)
		}
		if le50 < lo50 || le50 > hi50 {
			t.Errorf("%s: %d of %d with p ≤ 0.5, want within [%d, %d]", null, le50, sets, lo50, hi50)
		}
	}
}

// With the event ages drawn per replicate, the p-value averages over their uncertainty. Under the null it
// must not give small p-values more often than nominal: the counts with p ≤ 0.05 and p ≤ 0.5 stay at or
// below the upper end of the binomial 99.9 % bands (the test may be conservative, never liberal).
func TestCoincidenceDrawnAgesNotLiberalUnderNull(t *testing.T) {
	const sets = 400
	_, hi05 := binomialBand(sets, 0.05, 0.999)
	_, hi50 := binomialBand(sets, 0.5, 0.999)
	for _, null := range []CoincidenceNull{NullEventsUniform, NullPulsesShifted} {
		le05, le50 := pValuesUnderNull(t, sets, null, true)
		if le05 > hi05 {
			t.Errorf("%s, drawn ages: %d of %d with p ≤ 0.05, want at most %d", null, le05, sets, hi05)
		}
		if le50 > hi50 {
			t.Errorf("%s, drawn ages: %d of %d with p ≤ 0.5, want at most %d", null, le50, sets, hi50)
		}
	}
}

// Power on a planted case: 8 events placed at three onsets ± N(0, 0.02 Ma) in a 10 Ma window, so the
// mean distance T is about 0.016 Ma. Events placed at random lie ~1 Ma from the nearest onset, so no
// null replicate of 999 comes as close and p is about its smallest value, 1/1000. Shifting the onsets
// can only come as close for offsets within a few T of zero (or of another alignment), a share of about
// 4T/10 Ma ≈ 0.007 of the window (arithmetic): p ≤ 0.01 under both nulls, with or without drawn ages.
func TestCoincidencePowerOnPlantedCase(t *testing.T) {
	onsets := []float64{10.5, 11.2, 13.0}
	rng := rand.New(rand.NewPCG(3, 3))
	var evs []CoincidenceEvent
	for i := range 8 {
		evs = append(evs, CoincidenceEvent{AgeMa: onsets[i%3] + 0.02*rng.NormFloat64(), SigmaMa: 0.02})
	}
	for _, null := range []CoincidenceNull{NullEventsUniform, NullPulsesShifted} {
		for _, draw := range []bool{false, true} {
			res, err := CoincidenceTest(evs, onsets, CoincidenceOptions{Null: null, YoungMa: 10, OldMa: 20, Replicates: 999, Seed: 5, DrawAges: draw})
			if err != nil {
				t.Fatal(err)
			}
			if res.P > 0.01 {
				t.Errorf("%s (drawn ages %v): p = %v, want ≤ 0.01 (T = %v, null median %v)", null, draw, res.P, res.StatisticMa, res.NullMedianMa)
			}
			if !(res.NullMedianMa > 10*res.StatisticMa) {
				t.Errorf("%s: null median %v not far above T = %v", null, res.NullMedianMa, res.StatisticMa)
			}
		}
	}
}

func TestCoincidenceSeedReproduces(t *testing.T) {
	evs := []CoincidenceEvent{{AgeMa: 11, SigmaMa: 0.2}, {AgeMa: 12.5, DrawsMa: []float64{12.4, 12.5, 12.7}}}
	o := CoincidenceOptions{Null: NullPulsesShifted, YoungMa: 10, OldMa: 14, Replicates: 500, Seed: 42, DrawAges: true}
	a, err := CoincidenceTest(evs, []float64{10.5, 13}, o)
	if err != nil {
		t.Fatal(err)
	}
	b, _ := CoincidenceTest(evs, []float64{10.5, 13}, o)
	if a != b {
		t.Errorf("same seed, different results: %+v vs %+v", a, b)
	}
	if a.Seed != 42 || a.Replicates != 500 || a.Null != NullPulsesShifted {
		t.Errorf("result does not record its choices: %+v", a.CoincidenceOptions)
	}
}

func TestCoincidenceBadInput(t *testing.T) {
	ok := CoincidenceOptions{Null: NullEventsUniform, YoungMa: 10, OldMa: 14, Replicates: 10}
	ev := []CoincidenceEvent{{AgeMa: 11}}
	on := []float64{12}
	for name, c := range map[string]struct {
		evs []CoincidenceEvent
		on  []float64
		mod func(*CoincidenceOptions)
	}{
		"unknown null":         {ev, on, func(o *CoincidenceOptions) { o.Null = "other" }},
		"window reversed":      {ev, on, func(o *CoincidenceOptions) { o.YoungMa, o.OldMa = 14, 10 }},
		"window not finite":    {ev, on, func(o *CoincidenceOptions) { o.OldMa = math.Inf(1) }},
		"no replicates":        {ev, on, func(o *CoincidenceOptions) { o.Replicates = 0 }},
		"no event":             {nil, on, func(*CoincidenceOptions) {}},
		"no onset":             {ev, nil, func(*CoincidenceOptions) {}},
		"event outside window": {[]CoincidenceEvent{{AgeMa: 15}}, on, func(*CoincidenceOptions) {}},
		"onset outside window": {ev, []float64{9}, func(*CoincidenceOptions) {}},
		"negative sigma":       {[]CoincidenceEvent{{AgeMa: 11, SigmaMa: -1}}, on, func(*CoincidenceOptions) {}},
		"draw not a number":    {[]CoincidenceEvent{{AgeMa: 11, DrawsMa: []float64{math.NaN()}}}, on, func(*CoincidenceOptions) {}},
		"event age not finite": {[]CoincidenceEvent{{AgeMa: math.NaN()}}, on, func(*CoincidenceOptions) {}},
	} {
		o := ok
		c.mod(&o)
		if _, err := CoincidenceTest(c.evs, c.on, o); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
}

func BenchmarkCoincidenceTest(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 1))
	var evs []CoincidenceEvent
	for range 30 {
		d := make([]float64, 2000)
		a := 150 + 10*rng.Float64()
		for i := range d {
			d[i] = a + 0.1*rng.NormFloat64()
		}
		evs = append(evs, CoincidenceEvent{AgeMa: a, DrawsMa: d})
	}
	onsets := []float64{151, 153.5, 156, 158.2, 159.9}
	o := CoincidenceOptions{Null: NullEventsUniform, YoungMa: 150, OldMa: 160, Replicates: 9999, Seed: 1, DrawAges: true}
	for b.Loop() {
		if _, err := CoincidenceTest(evs, onsets, o); err != nil {
			b.Fatal(err)
		}
	}
}

// Drawn onsets, one event and one group of two equally likely sets in [a, b] = [10, 12]: event 10.3, the
// onset at 10.0 (d = 0.3, F = 0.3/2 = 0.15) or at 11.0 (d = 0.7, F = (11.7 − 10.3)/2 = 0.7), by hand as in
// the fixed case; so the count at least as close is Binomial(N, (0.15 + 0.7)/2 = 0.425), within its 99.9 %
// band (gonum distuv.Binomial CDF). The statistic T still uses the reference onset.
func TestCoincidenceDrawnOnsetsClosedForm(t *testing.T) {
	const n = 4000
	res, err := CoincidenceTestDrawnOnsets([]CoincidenceEvent{{AgeMa: 10.3}}, []float64{10.0}, [][][]float64{{{10.0}, {11.0}}},
		CoincidenceOptions{Null: NullEventsUniform, YoungMa: 10, OldMa: 12, Replicates: n, Seed: 11})
	if err != nil {
		t.Fatal(err)
	}
	lo, hi := binomialBand(n, 0.425, 0.999)
	if res.AtMost < lo || res.AtMost > hi {
		t.Errorf("%d of %d at least as close, want within [%d, %d]", res.AtMost, n, lo, hi)
	}
	if math.Abs(res.StatisticMa-0.3) > 1e-12 || !res.DrawOnsets {
		t.Errorf("T = %v (drawn onsets %v), want 0.3 from the reference onset", res.StatisticMa, res.DrawOnsets)
	}
	// The mean of the data's statistic over the replicates is about (0.3 + 0.7)/2 = 0.5 (its SE 0.2/√N).
	if math.Abs(res.DrawnMeanMa-0.5) > 4*0.2/math.Sqrt(n) {
		t.Errorf("mean drawn T = %v, want 0.5 within 4 SE", res.DrawnMeanMa)
	}
}

// Calibration with drawn onsets: two groups (provinces) of 50 alternative sets each (the pattern jittered
// by N(0, 0.1), the second pulse absent from a fifth of the sets). Averaging the p-value over the drawn
// onsets pulls it towards the middle, so under either null small p-values must come no more often than
// nominal: of 400 simulated data sets, the count with p ≤ 0.05 stays at or below the upper end of its
// binomial 99.9 % band (gonum distuv.Binomial CDF). The test may be conservative, never liberal.
func TestCoincidenceDrawnOnsetsNotLiberalUnderNull(t *testing.T) {
	const sets, young, old = 400, 10.0, 14.0
	_, hi05 := binomialBand(sets, 0.05, 0.999)
	rng := rand.New(rand.NewPCG(77, 15))
	wrap := func(x float64) float64 { return young + math.Mod(x-young+10*(old-young), old-young) }
	for _, null := range []CoincidenceNull{NullEventsUniform, NullPulsesShifted} {
		le05 := 0
		for s := range sets {
			off := 0.0
			if null == NullPulsesShifted {
				off = (old - young) * rng.Float64()
			}
			var groups [][][]float64
			for _, pattern := range [][]float64{{10.5, 11.2}, {13.0}} {
				var g [][]float64
				for k := range 50 {
					var set []float64
					for j, o := range pattern {
						if j == 1 && k%5 == 0 {
							continue
						}
						set = append(set, wrap(o+off+0.1*rng.NormFloat64()))
					}
					g = append(g, set)
				}
				groups = append(groups, g)
			}
			ref := []float64{wrap(10.5 + off), wrap(11.2 + off), wrap(13.0 + off)}
			var evs []CoincidenceEvent
			for i := range 5 {
				a := young + (old-young)*rng.Float64()
				if null == NullPulsesShifted {
					a = []float64{10.2, 10.9, 11.9, 12.4, 13.7}[i]
				}
				evs = append(evs, CoincidenceEvent{AgeMa: a})
			}
			res, err := CoincidenceTestDrawnOnsets(evs, ref, groups, CoincidenceOptions{Null: null, YoungMa: young, OldMa: old, Replicates: 199, Seed: uint64(5000 + s)})
			if err != nil {
				t.Fatal(err)
			}
			if res.P <= 0.05 {
				le05++
			}
		}
		if le05 > hi05 {
			t.Errorf("%s, drawn onsets: %d of %d with p ≤ 0.05, want at most %d", null, le05, sets, hi05)
		}
	}
}

func TestCoincidenceDrawnOnsetsBadGroups(t *testing.T) {
	o := CoincidenceOptions{Null: NullEventsUniform, YoungMa: 10, OldMa: 14, Replicates: 10}
	ev := []CoincidenceEvent{{AgeMa: 11}}
	for name, g := range map[string][][][]float64{
		"group without a set":      {{}},
		"onset not a number":       {{{math.NaN()}}},
		"every set outside window": {{{20}, {21}}},
	} {
		if _, err := CoincidenceTestDrawnOnsets(ev, []float64{12}, g, o); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
}
