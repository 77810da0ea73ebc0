package stats

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// seRepeats runs a comparison repeats times, each with its own seed and with the sampled inputs redrawn
// from their true distributions by make(r), and returns the estimates of P and their reported SE.
func seRepeats(t *testing.T, repeats, n int, make func(r *rand.Rand) []Quantity, read func(*JointDraws) Probability) (ps, ses []float64) {
	t.Helper()
	for k := range repeats {
		r := rand.New(rand.NewPCG(uint64(k), 0x5e))
		j, err := DrawJoint(make(r), DrawOptions{N: n, Seed: uint64(1000 + k)})
		if err != nil {
			t.Fatal(err)
		}
		p := read(j)
		ps, ses = append(ps, p.P), append(ses, p.SE)
	}
	return ps, ses
}

func meanSD(xs []float64) (mean, sd float64) {
	for _, x := range xs {
		mean += x
	}
	mean /= float64(len(xs))
	for _, x := range xs {
		sd += (x - mean) * (x - mean)
	}
	return mean, math.Sqrt(sd / float64(len(xs)-1))
}

func normalRows(r *rand.Rand, m int, mu, sigma float64) []float64 {
	out := make([]float64, m)
	for i := range out {
		out[i] = mu + sigma*r.NormFloat64()
	}
	return out
}

// TestProbabilitySECalibrated checks the reported SE against the spread of P over repeats in which the
// sampled input itself is redrawn (M = 200 rows from a known normal), resampled to N = 10,000 joint
// draws.
//
// Sampled input that decides the outcome (compared with a fixed age): the SE is exact in expectation,
// so the observed SD of P over 400 repeats must match the mean reported SE within ±15 % (the SD of 400
// normal values has relative SE 1/sqrt(2·399) = 3.5 %; ±15 % is about 4 of them [T: common practice]),
// and the intervals P ± 1.96·SE must cover the true P (1 − Φ(0.5) = 0.308538 [C: closed form]) in the
// binomial band 0.95 ± 3·sqrt(0.95·0.05/400) = [0.917, 0.983]. The old SE, sqrt(P(1 − P)/N), was about
// 7 times too small here and fails both.
//
// Two sampled inputs, and a sampled input against a blurred one: the rule is an upper bound (see
// effectiveN), so the SE must be at least the observed SD (less 15 % for the noise of the SD) and at
// most twice it, and the coverage at least the band's lower end.
func TestProbabilitySECalibrated(t *testing.T) {
	const repeats, n, m = 400, 10_000, 200
	truth := distuv.UnitNormal.Survival(0.5) // P(X > 0.5), X ~ N(0, 1)
	for _, tc := range []struct {
		name     string
		make     func(r *rand.Rand) []Quantity
		read     func(*JointDraws) Probability
		truth    float64
		tight    bool
		wantNEff float64
	}{
		{"sampled vs fixed age", func(r *rand.Rand) []Quantity {
			return []Quantity{SampledAge("A", normalRows(r, m, 0, 1), ""), NormalAge("B", 0.5, 0)}
		}, func(j *JointDraws) Probability { c, _ := j.ComparePair(0, 1, PairOptions{}); return c.Older }, truth, true, 1 / (1./n + 1./m)},
		{"pulse edges of one group vs fixed age (P(after onset))", func(r *rand.Rand) []Quantity {
			on := normalRows(r, m, 0, 1)
			end := make([]float64, m)
			for i := range end {
				end[i] = on[i] - 1
			}
			return []Quantity{SampledAge("onset", on, "p"), SampledAge("end", end, "p"), NormalAge("E", 0.5, 0)}
		}, func(j *JointDraws) Probability {
			c, _ := j.CompareInterval(0, 1, 2, PairOptions{})
			return c.AfterOnset
		}, truth, true, 1 / (1./n + 1./m)},
		{"two sampled inputs", func(r *rand.Rand) []Quantity {
			return []Quantity{SampledAge("A", normalRows(r, m, 0, 1), ""), SampledAge("B", normalRows(r, 2*m, 0.5, 1), "")}
		}, func(j *JointDraws) Probability { c, _ := j.ComparePair(0, 1, PairOptions{}); return c.Older },
			distuv.UnitNormal.Survival(0.5 / math.Sqrt2), false, 1 / (1./n + 1./m + 1./(2*m))},
		{"sampled vs normal age", func(r *rand.Rand) []Quantity {
			return []Quantity{SampledAge("A", normalRows(r, m, 0, 1), ""), NormalAge("B", 0.5, 0.5)}
		}, func(j *JointDraws) Probability { c, _ := j.ComparePair(0, 1, PairOptions{}); return c.Older },
			distuv.UnitNormal.Survival(0.5 / math.Sqrt(1.25)), false, 1 / (1./n + 1./m)},
	} {
		t.Run(tc.name, func(t *testing.T) {
			ps, ses := seRepeats(t, repeats, n, tc.make, tc.read)
			_, sd := meanSD(ps)
			meanSE, _ := meanSD(ses)
			covered := 0
			for k, p := range ps {
				if math.Abs(p-tc.truth) <= 1.959964*ses[k] {
					covered++
				}
			}
			cov := float64(covered) / repeats
			band := 3 * math.Sqrt(0.95*0.05/repeats)
			ratio := meanSE / sd
			t.Logf("observed SD %.5f, mean reported SE %.5f (ratio %.3f), coverage %.3f", sd, meanSE, ratio, cov)
			if tc.tight {
				if ratio < 0.85 || ratio > 1.15 || math.Abs(cov-0.95) > band {
					t.Errorf("SE %.5f against observed SD %.5f (ratio %.3f, want 0.85–1.15), coverage %.3f (want 0.95 ± %.3f)",
						meanSE, sd, ratio, cov, band)
				}
			} else if ratio < 0.85 || ratio > 2 || cov < 0.95-band {
				t.Errorf("SE %.5f against observed SD %.5f (ratio %.3f, want 0.85–2: an upper bound), coverage %.3f (want ≥ %.3f)",
					meanSE, sd, ratio, cov, 0.95-band)
			}
			// The SE is the one of the rule, P(1 − P)(1/N + Σ 1/M).
			if p, se := ps[0], ses[0]; math.Abs(se-math.Sqrt(p*(1-p)/tc.wantNEff)) > 1e-15 {
				t.Errorf("SE %g, want sqrt(P(1 − P)/%g) = %g", se, tc.wantNEff, math.Sqrt(p*(1-p)/tc.wantNEff))
			}
		})
	}
}

// TestProbabilitySEWithoutSampledInputs: with no sampled input every SE is the binomial sqrt(P(1 − P)/N),
// as before: pair, interval, order matrix and volume majority.
func TestProbabilitySEWithoutSampledInputs(t *testing.T) {
	const n = 5000
	qs := []Quantity{NormalAge("onset", 201.6, 0.05), NormalAge("end", 201.4, 0.05), NormalAge("E", 201.5, 0.08),
		UPbDate("U1", 201.55, 0.03, "ET2535", 0.00015), UniformAge("U2", 201.3, 201.7)}
	j, err := DrawJoint(qs, DrawOptions{N: n, Seed: 9})
	if err != nil {
		t.Fatal(err)
	}
	binom := func(p float64) float64 { return math.Sqrt(p * (1 - p) / n) }
	check := func(what string, p Probability) {
		t.Helper()
		if p.SE != binom(p.P) || p.NEff != n {
			t.Errorf("%s: SE %g from %g effective draws, want sqrt(P(1 − P)/N) = %g from N", what, p.SE, p.NEff, binom(p.P))
		}
	}
	c, _ := j.ComparePair(3, 2, PairOptions{DeltaMa: 0.05})
	check("pair older", c.Older)
	check("pair near", c.Near)
	iv, _ := j.CompareInterval(0, 1, 2, PairOptions{DeltaMa: 0.05})
	check("after onset", iv.AfterOnset)
	check("within", iv.Within)
	check("interval near", iv.Near)
	vf, err := j.VolumeFractionBefore([]int{3, 4}, []Volume{{100, 10}, {50, 5}}, 2)
	if err != nil {
		t.Fatal(err)
	}
	check("volume majority", vf.Majority)
	o, _ := j.Order([]int{2, 3, 4})
	for i := range o.P {
		for k := range o.P {
			if i != k {
				check("order", Probability{P: o.P[i][k], SE: o.SE[i][k], NEff: n})
			}
		}
	}
}

// TestEffectiveNCountsEachSampleOnce: quantities of one group share their rows and count once; an
// ungrouped sampled quantity counts on its own; unsampled quantities do not count.
func TestEffectiveNCountsEachSampleOnce(t *testing.T) {
	rows := func(m int) []float64 { return normalRows(rand.New(rand.NewPCG(1, 2)), m, 0, 1) }
	qs := []Quantity{SampledAge("on", rows(100), "g"), SampledAge("end", rows(100), "g"), SampledAge("E", rows(400), ""),
		NormalAge("U", 0, 1), SampledAge("F", rows(400), "")}
	j, err := DrawJoint(qs, DrawOptions{N: 2000, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		qs   []int
		want float64 // 1/(1/N + Σ 1/M), by hand
	}{
		{[]int{3}, 2000},
		{[]int{0, 3}, 1 / (1./2000 + 1./100)},
		{[]int{0, 1}, 1 / (1./2000 + 1./100)},
		{[]int{0, 1, 2}, 1 / (1./2000 + 1./100 + 1./400)},
		{[]int{2, 4}, 1 / (1./2000 + 2./400)},
		{[]int{0, 1, 2, 3, 4}, 1 / (1./2000 + 1./100 + 2./400)},
	} {
		if got := j.effectiveN(tc.qs...); math.Abs(got-tc.want) > 1e-9*tc.want {
			t.Errorf("effectiveN(%v) = %g, want %g", tc.qs, got, tc.want)
		}
	}
	o, _ := j.Order([]int{0, 2, 3})
	if p := o.P[0][1]; math.Abs(o.SE[0][1]-math.Sqrt(p*(1-p)*(1./2000+1./100+1./400))) > 1e-15 {
		t.Errorf("order SE %g for P %g", o.SE[0][1], p)
	}
	if c, _ := j.ComparePair(0, 2, PairOptions{}); math.Abs(c.Older.NEff-1/(1./2000+1./100+1./400)) > 1e-9 {
		t.Errorf("pair NEff %g", c.Older.NEff)
	}
	vf, _ := j.VolumeFractionBefore([]int{0, 3}, []Volume{{1, 0}, {1, 0}}, 2)
	if p := vf.Majority.P; math.Abs(vf.Majority.SE-math.Sqrt(p*(1-p)*(1./2000+1./100+1./400))) > 1e-15 {
		t.Errorf("volume majority SE %g for P %g", vf.Majority.SE, p)
	}
}
