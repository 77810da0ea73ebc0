package stats

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// within3SE reports whether an estimate p of a probability is within 3 Monte Carlo standard errors
// sqrt(want(1 − want)/N) of want, plus an allowance for the rounding of a tabulated value.
func within3SE(p, want float64, n int, rounding float64) bool {
	return math.Abs(p-want) <= 3*math.Sqrt(want*(1-want)/float64(n))+rounding
}

// TestComparePairClosedForms: precedence, lag and closeness of two independent normal ages against
// their closed forms (D = A − B ~ N(μA − μB, σA² + σB²)).
func TestComparePairClosedForms(t *testing.T) {
	const n = 200_000
	for _, tc := range []struct {
		name                string
		muA, sA, muB, sB    float64
		wantOlder, rounding float64
	}{
		// REFERENCES §5 [C]: scipy.stats.norm.cdf, 201.51±0.05 vs 201.45±0.08 (1σ) → 0.737611374450
		{"201.51±0.05 vs 201.45±0.08", 201.51, 0.05, 201.45, 0.08, 0.737611374450, 0},
		// REFERENCES §5 [C]: 201.51±0.03 vs 201.56±0.03 (2σ), P(first younger) = 0.9908, i.e. P(second
		// older than first); 4 decimals, so ±5e-5 for rounding.
		{"201.56±0.03 vs 201.51±0.03 (2σ)", 201.56, 0.015, 201.51, 0.015, 0.9908, 5e-5},
	} {
		t.Run(tc.name, func(t *testing.T) {
			j := mustDrawJoint(t, []Quantity{NormalAge("A", tc.muA, tc.sA), NormalAge("B", tc.muB, tc.sB)}, DrawOptions{N: n, Seed: 11})
			const delta = 0.05
			c, err := j.ComparePair(0, 1, PairOptions{DeltaMa: delta})
			if err != nil {
				t.Fatal(err)
			}
			if !within3SE(c.Older.P, tc.wantOlder, n, tc.rounding) {
				t.Errorf("P(A older) got %.6f ± %.6f, want %.6f", c.Older.P, c.Older.SE, tc.wantOlder)
			}
			mu, sd := tc.muA-tc.muB, math.Hypot(tc.sA, tc.sB)
			if closed, _ := POlderNormal(tc.muA, tc.sA, tc.muB, tc.sB, 0); !within3SE(c.Older.P, closed, n, 0) {
				t.Errorf("P(A older) got %.6f, closed form %.6f", c.Older.P, closed)
			}
			// Closeness: P(|D| < δ) = Φ((δ − μ)/σ) − Φ((−δ − μ)/σ) [derived from the normal D].
			wantNear := stdNormalCDF((delta-mu)/sd) - stdNormalCDF((-delta-mu)/sd)
			if !within3SE(c.Near.P, wantNear, n, 0) {
				t.Errorf("P(|Δ| < δ) got %.6f, want %.6f", c.Near.P, wantNear)
			}
			// Lag quantiles: μ and μ ± 1.959964σ; the SE of a sample quantile is sqrt(p(1−p)/N)/f(x_p),
			// at most 0.0093σ here, so 0.03σ is above 3 SE.
			for _, q := range []struct{ got, want float64 }{
				{c.LagMa.Median, mu}, {c.LagMa.Lo95, mu - 1.959964*sd}, {c.LagMa.Hi95, mu + 1.959964*sd},
			} {
				if math.Abs(q.got-q.want) > 0.03*sd {
					t.Errorf("lag quantile got %.5f, want %.5f", q.got, q.want)
				}
			}
			if c.N != n || c.Seed != 11 || c.Level != LevelAsNeeded || !math.IsNaN(c.OVL) {
				t.Errorf("recorded N %d, seed %d, level %v, OVL %g", c.N, c.Seed, c.Level, c.OVL)
			}
		})
	}
}

// TestSharedSystematic: REFERENCES §5 [C], 201.60 and 201.55, X = 0.02 (2σ) each, a shared 0.1 % (2σ)
// λ term: analytical only 0.9998; full uncertainties wrongly taken as independent 0.64; with the shared
// part correlated 0.9998. Also each against its closed form (POlderNormal with the right ρ).
func TestSharedSystematic(t *testing.T) {
	const n = 400_000
	lam := Systematic{Key: KeyLambda238, Kind: SystematicDecayConstant, RelSigma: 0.0005}
	shared := []Quantity{NormalAge("A", 201.60, 0.01).With(lam), NormalAge("B", 201.55, 0.01).With(lam)}
	// The mistake: the λ term of each date as its own, independent key.
	lamA, lamB := lam, lam
	lamA.Key, lamB.Key = "λ238 of A", "λ238 of B"
	independent := []Quantity{NormalAge("A", 201.60, 0.01).With(lamA), NormalAge("B", 201.55, 0.01).With(lamB)}

	sA, sB := 201.60*0.0005, 201.55*0.0005
	fA, fB := math.Hypot(0.01, sA), math.Hypot(0.01, sB)
	closedAnalytical, _ := POlderNormal(201.60, 0.01, 201.55, 0.01, 0)
	closedCorrelated, _ := POlderNormal(201.60, fA, 201.55, fB, sA*sB/(fA*fB))
	closedIndependent, _ := POlderNormal(201.60, fA, 201.55, fB, 0)
	for _, tc := range []struct {
		name          string
		qs            []Quantity
		level         ComparisonLevel
		ref, rounding float64
		closed        float64
	}{
		{"analytical", shared, LevelAnalytical, 0.9998, 5e-5, closedAnalytical},
		{"as needed", shared, LevelAsNeeded, 0.9998, 5e-5, closedAnalytical},
		{"full, shared part correlated", shared, LevelFull, 0.9998, 5e-5, closedCorrelated},
		{"full, wrongly independent", independent, LevelFull, 0.64, 5e-3, closedIndependent},
	} {
		t.Run(tc.name, func(t *testing.T) {
			j := mustDrawJoint(t, tc.qs, DrawOptions{N: n, Seed: 5, Level: tc.level})
			c, err := j.ComparePair(0, 1, PairOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if !within3SE(c.Older.P, tc.ref, n, tc.rounding) {
				t.Errorf("got %.5f ± %.5f, want %.4g (REFERENCES §5)", c.Older.P, c.Older.SE, tc.ref)
			}
			if !within3SE(c.Older.P, tc.closed, n, 0) {
				t.Errorf("got %.5f ± %.5f, closed form %.5f", c.Older.P, c.Older.SE, tc.closed)
			}
		})
	}
}

// TestLevelsFollowReferences8: the as-needed level picks the components REFERENCES §8 [T] names for each
// pairing, checked against P = Φ(Δ/σ_D) with σ_D from UPbXYZ and Recalculate (first order).
func TestLevelsFollowReferences8(t *testing.T) {
	const n = 200_000
	kuiper := mustCalibration(t, "kuiper08")
	xyz := func(age, x, tracer float64) XYZ {
		v, err := UPbXYZ(age, x, tracer, Lambda238RelSigma)
		if err != nil {
			t.Fatal(err)
		}
		return v
	}
	// REFERENCES §3 [C]: 199.0 ± 0.10 on FCs 28.02/SJ77 → 200.359518 on Kuiper et al. (2008), analytical
	// 0.100725, full external 0.205997 (1σ).
	ar1 := ArArDate("Ar/Ar 1", 200.359518, 0.100725, kuiper)
	ar2 := ArArDate("Ar/Ar 2", 200.10, 0.08, kuiper)
	for _, tc := range []struct {
		name   string
		a, b   Quantity
		sigmaD float64
		tol    float64 // allowance for first-order propagation
	}{
		{"U–Pb, same tracer: X", UPbDate("a", 201.60, 0.02, "ET535", 0.0003), UPbDate("b", 201.55, 0.02, "ET535", 0.0003),
			math.Hypot(0.02, 0.02), 0},
		{"U–Pb, other tracer: Y", UPbDate("a", 201.60, 0.02, "ET535", 0.0003), UPbDate("b", 201.55, 0.02, "ET2535", 0.0003),
			math.Hypot(xyz(201.60, 0.02, 0.0003).YMa, xyz(201.55, 0.02, 0.0003).YMa), 0},
		{"Ar/Ar, same calibration: analytical", ar1, ar2, math.Hypot(0.100725, 0.08), 0},
		{"Ar/Ar vs U–Pb: full external and Z", ar1, UPbDate("u", 200.20, 0.05, "ET535", 0.00015),
			math.Hypot(0.205997, xyz(200.20, 0.05, 0.00015).ZMa), 2e-3},
	} {
		t.Run(tc.name, func(t *testing.T) {
			j := mustDrawJoint(t, []Quantity{tc.a, tc.b}, DrawOptions{N: n, Seed: 8})
			c, err := j.ComparePair(0, 1, PairOptions{})
			if err != nil {
				t.Fatal(err)
			}
			want := stdNormalCDF((tc.a.AgeMa - tc.b.AgeMa) / tc.sigmaD)
			if !within3SE(c.Older.P, want, n, tc.tol) {
				t.Errorf("got %.5f ± %.5f, want %.5f", c.Older.P, c.Older.SE, want)
			}
			// Full differs from as-needed only by second-order remainders of shared components.
			jf := mustDrawJoint(t, []Quantity{tc.a, tc.b}, DrawOptions{N: n, Seed: 8, Level: LevelFull})
			f, _ := jf.ComparePair(0, 1, PairOptions{})
			if math.Abs(f.Older.P-c.Older.P) > 5e-3 {
				t.Errorf("full %.5f, as needed %.5f", f.Older.P, c.Older.P)
			}
		})
	}
}

// TestCompareIntervalClosedForm: an event against an interval of independent normal edges. P(X < S) =
// Φ((μS − μX)/sqrt(σS² + σX²)) and P(E ≤ X ≤ S) = ∫ φ_X(x)·Φ((x − μE)/σE)·Φ((μS − x)/σS) dx, the
// integral by Simpson's rule here [derived in this test].
func TestCompareIntervalClosedForm(t *testing.T) {
	const n = 200_000
	muS, sS, muE, sE, muX, sX := 201.60, 0.05, 201.30, 0.05, 201.45, 0.10
	qs := []Quantity{NormalAge("onset", muS, sS), NormalAge("end", muE, sE), NormalAge("event", muX, sX)}
	j := mustDrawJoint(t, qs, DrawOptions{N: n, Seed: 21})
	c, err := j.CompareInterval(0, 1, 2, PairOptions{DeltaMa: 0.1, Overlap: true})
	if err != nil {
		t.Fatal(err)
	}
	wantAfter := stdNormalCDF((muS - muX) / math.Hypot(sS, sX))
	const m = 4000
	lo, hi := muX-10*sX, muX+10*sX
	h := (hi - lo) / m
	var wantWithin float64
	for i := 0; i <= m; i++ {
		x := lo + float64(i)*h
		w := 2.0
		switch {
		case i == 0 || i == m:
			w = 1
		case i%2 == 1:
			w = 4
		}
		z := (x - muX) / sX
		wantWithin += w * math.Exp(-z*z/2) * invSqrt2Pi / sX * stdNormalCDF((x-muE)/sE) * stdNormalCDF((muS-x)/sS)
	}
	wantWithin *= h / 3
	if !within3SE(c.AfterOnset.P, wantAfter, n, 0) {
		t.Errorf("P(after onset) got %.5f, want %.5f", c.AfterOnset.P, wantAfter)
	}
	if !within3SE(c.Within.P, wantWithin, n, 0) {
		t.Errorf("P(within) got %.5f, want %.5f", c.Within.P, wantWithin)
	}
	sd := math.Hypot(sS, sX)
	if math.Abs(c.LagMa.Median-(muS-muX)) > 0.03*sd {
		t.Errorf("lag median got %.5f, want %.5f", c.LagMa.Median, muS-muX)
	}
	wantOVL, _ := OverlapNormal(muS, sS, muX, sX)
	if math.Abs(c.OVL-wantOVL) > 0.03 {
		t.Errorf("OVL got %.4f, want %.4f (histogram estimate)", c.OVL, wantOVL)
	}

	// The same interval as a sample group with onset − end = 0.3 Ma in every row: P(within) =
	// P(0 ≤ S − X ≤ 0.3), S − X ~ N(0.15, σS² + σX²). Rows are 20,000, so the tolerance is 3 SE of that.
	r := rand.New(rand.NewPCG(1, 2))
	on, end := make([]float64, 20_000), make([]float64, 20_000)
	for i := range on {
		on[i] = muS + sS*r.NormFloat64()
		end[i] = on[i] - 0.3
	}
	qs = []Quantity{SampledAge("onset", on, "p"), SampledAge("end", end, "p"), NormalAge("event", muX, sX)}
	j = mustDrawJoint(t, qs, DrawOptions{N: n, Seed: 22})
	c, err = j.CompareInterval(0, 1, 2, PairOptions{})
	if err != nil {
		t.Fatal(err)
	}
	want := stdNormalCDF((0.3-0.15)/sd) - stdNormalCDF(-0.15/sd)
	if !within3SE(c.Within.P, want, j.MinSamples, 0) {
		t.Errorf("sampled P(within) got %.5f, want %.5f", c.Within.P, want)
	}
}

func TestVolumeFraction(t *testing.T) {
	const n = 100_000
	t.Run("exact ages and volumes", func(t *testing.T) {
		qs := []Quantity{NormalAge("u1", 202.0, 0), NormalAge("u2", 201.8, 0), NormalAge("u3", 201.0, 0), NormalAge("event", 201.5, 0)}
		j := mustDrawJoint(t, qs, DrawOptions{N: 1000})
		f, err := j.VolumeFractionBefore([]int{0, 1, 2}, []Volume{{1, 0}, {2, 0}, {3, 0}}, 3)
		if err != nil {
			t.Fatal(err)
		}
		if got := f.Fraction; got != (DrawSummary{0.5, 0.5, 0.5}) || f.Mean != 0.5 {
			t.Errorf("got %+v (mean %g), want 0.5 everywhere", got, f.Mean)
		}
	})
	t.Run("one unit of the event's age", func(t *testing.T) {
		// u2 is older than the event half of the time: fraction 0.5 or 1, mean 0.75, sd 0.25.
		qs := []Quantity{NormalAge("u1", 202.0, 0), NormalAge("u2", 201.5, 0.1), NormalAge("event", 201.5, 0)}
		j := mustDrawJoint(t, qs, DrawOptions{N: n, Seed: 4})
		f, err := j.VolumeFractionBefore([]int{0, 1}, []Volume{{1, 0}, {1, 0}}, 2)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(f.Mean-0.75) > 3*0.25/math.Sqrt(n) {
			t.Errorf("mean got %.5f, want 0.75", f.Mean)
		}
		if f.Fraction.Lo95 != 0.5 || f.Fraction.Hi95 != 1 {
			t.Errorf("interval got %+v, want [0.5, 1]", f.Fraction)
		}
		// More than half the volume before the event exactly when u2 is older: P = ½.
		if !within3SE(f.Majority.P, 0.5, n, 0) {
			t.Errorf("P(fraction > ½) got %.5f, want 0.5", f.Majority.P)
		}
	})
	t.Run("truncated volume", func(t *testing.T) {
		// u1 (older) has V ~ N(1, 2²) truncated at 0, u2 (younger) V = 1: fraction V₁/(V₁ + 1), whose median
		// is m/(m + 1) with m the truncated normal's median 1 + 2Φ⁻¹(½ + ½Φ(−½)) [derived in this test].
		qs := []Quantity{NormalAge("u1", 202.0, 0), NormalAge("u2", 201.0, 0), NormalAge("event", 201.5, 0)}
		j := mustDrawJoint(t, qs, DrawOptions{N: n, Seed: 4})
		f, err := j.VolumeFractionBefore([]int{0, 1}, []Volume{{1, 2}, {1, 0}}, 2)
		if err != nil {
			t.Fatal(err)
		}
		med := 1 + 2*distuv.UnitNormal.Quantile(0.5+0.5*stdNormalCDF(-0.5))
		if want := med / (med + 1); math.Abs(f.Fraction.Median-want) > 0.005 {
			t.Errorf("median got %.5f, want %.5f", f.Fraction.Median, want)
		}
		if f.Fraction.Lo95 < 0 || f.Fraction.Hi95 > 1 {
			t.Errorf("interval %+v outside [0, 1]", f.Fraction)
		}
	})
}

// TestPairTableClosedForms: rows of point-like ages (unit means) against events, cell by cell, against
// the closed forms of REFERENCES §5 for two normal ages with a shared systematic component: D = A − B ~
// N(μA − μB, fA² + fB² − 2ρ·fA·fB), fA and fB the full 1σ, ρ·fA·fB the covariance of the shared part.
func TestPairTableClosedForms(t *testing.T) {
	const n = 200_000
	lam := Systematic{Key: KeyLambda238, Kind: SystematicDecayConstant, RelSigma: 0.0005}
	t.Run("REFERENCES §5 shared systematics cancel", func(t *testing.T) {
		// REFERENCES §5 [C]: 201.60 and 201.55, X = 0.02 (2σ) each, a shared 0.1 % (2σ) λ term: with the
		// shared part correlated P = 0.9998 (taken as independent it would be 0.64).
		qs := []Quantity{NormalAge("unit", 201.60, 0.01).With(lam), NormalAge("event", 201.55, 0.01).With(lam)}
		for _, level := range []ComparisonLevel{LevelAsNeeded, LevelFull} {
			j := mustDrawJoint(t, qs, DrawOptions{N: n, Seed: 31, Level: level})
			tab, err := j.PairTable([]int{0}, []int{1}, PairOptions{DeltaMa: 0.05, Overlap: true})
			if err != nil {
				t.Fatal(err)
			}
			c := tab.Cells[0][0]
			if !within3SE(c.Older.P, 0.9998, n, 5e-5) {
				t.Errorf("%v: P(event younger than unit) got %.5f ± %.5f, want 0.9998", level, c.Older.P, c.Older.SE)
			}
		}
	})
	t.Run("own tracers, shared λ238", func(t *testing.T) {
		// Each age carries its own tracer (0.03 % 1σ) and both λ238 (0.05 % 1σ): the tracers count, λ238
		// nearly cancels (REFERENCES §8: U–Pb against another tracer uses Y).
		const muA, xA, muB, xB, tr = 201.56, 0.02, 201.50, 0.03, 0.0003
		trA := Systematic{Key: TracerKey("T1"), Kind: SystematicRelative, RelSigma: tr}
		trB := Systematic{Key: TracerKey("T2"), Kind: SystematicRelative, RelSigma: tr}
		qs := []Quantity{NormalAge("unit", muA, xA).With(trA, lam), NormalAge("event", muB, xB).With(trB, lam)}
		lA, lB := muA*lam.RelSigma, muB*lam.RelSigma
		fA := math.Sqrt(xA*xA + muA*tr*muA*tr + lA*lA)
		fB := math.Sqrt(xB*xB + muB*tr*muB*tr + lB*lB)
		rho := lA * lB / (fA * fB)
		want, _ := POlderNormal(muA, fA, muB, fB, rho)
		wrong, _ := POlderNormal(muA, fA, muB, fB, 0)
		if math.Abs(want-wrong) < 20*math.Sqrt(want*(1-want)/n) {
			t.Fatalf("the shared part does not matter here (%.4f vs %.4f): the test has no power", want, wrong)
		}
		sd := math.Sqrt(fA*fA + fB*fB - 2*rho*fA*fB)
		const delta = 0.05
		mu := muA - muB
		wantNear := stdNormalCDF((delta-mu)/sd) - stdNormalCDF((-delta-mu)/sd)
		for _, level := range []ComparisonLevel{LevelFull, LevelAsNeeded} {
			j := mustDrawJoint(t, qs, DrawOptions{N: n, Seed: 32, Level: level})
			tab, err := j.PairTable([]int{0}, []int{1}, PairOptions{DeltaMa: delta})
			if err != nil {
				t.Fatal(err)
			}
			c := tab.Cells[0][0]
			t.Logf("%v: P %.5f ± %.5f (closed %.5f, independent %.5f); P(|lag| < δ) %.5f (closed %.5f); lag %.4f [%.4f, %.4f] (closed %.4f [%.4f, %.4f])",
				level, c.Older.P, c.Older.SE, want, wrong, c.Near.P, wantNear, c.LagMa.Median, c.LagMa.Lo95, c.LagMa.Hi95, mu, mu-1.959964*sd, mu+1.959964*sd)
			// Full: the second-order remainder of the shared λ term, (A − B)·ε ≈ 3e-5 Ma, is far below
			// the SE; as-needed sets it to zero.
			if !within3SE(c.Older.P, want, n, 0) {
				t.Errorf("%v: P(event younger than unit) got %.5f ± %.5f, closed form %.5f (independent would be %.5f)",
					level, c.Older.P, c.Older.SE, want, wrong)
			}
			if !within3SE(c.Near.P, wantNear, n, 0) {
				t.Errorf("%v: P(|lag| < δ) got %.5f, closed form %.5f", level, c.Near.P, wantNear)
			}
			// The lag unit − event: median μ, 95 % μ ± 1.959964σ_D; 0.03σ_D is above 3 SE of each sample
			// quantile (sqrt(p(1 − p)/N)/f(x_p) ≤ 0.0093σ_D at N = 200,000).
			for _, q := range []struct {
				name      string
				got, want float64
			}{{"median", c.LagMa.Median, mu}, {"2.5 %", c.LagMa.Lo95, mu - 1.959964*sd}, {"97.5 %", c.LagMa.Hi95, mu + 1.959964*sd}} {
				if math.Abs(q.got-q.want) > 0.03*sd {
					t.Errorf("%v: lag %s got %.5f, closed form %.5f", level, q.name, q.got, q.want)
				}
			}
			if tab.Items[0] != "unit" || tab.Events[0] != "event" || c.N != n || c.Level != level {
				t.Errorf("table %v × %v, N %d, level %v", tab.Items, tab.Events, c.N, c.Level)
			}
		}
	})
	t.Run("cells equal ComparePair", func(t *testing.T) {
		qs, _, evs := compareWorld(t, 2, 6, 300, 3)
		j := mustDrawJoint(t, qs, DrawOptions{N: 3000, Seed: 9})
		tab, err := j.PairTable([]int{0, 2}, evs, PairOptions{DeltaMa: 0.05, Overlap: true})
		if err != nil {
			t.Fatal(err)
		}
		for i, a := range []int{0, 2} {
			for e, b := range evs {
				c, _ := j.ComparePair(a, b, PairOptions{DeltaMa: 0.05, Overlap: true})
				if c != tab.Cells[i][e] {
					t.Errorf("cell %d,%d: %+v, ComparePair %+v", i, e, tab.Cells[i][e], c)
				}
			}
		}
		if _, err := j.PairTable([]int{99}, evs, PairOptions{}); err == nil {
			t.Error("PairTable accepted item 99")
		}
		if _, err := j.PairTable([]int{0}, []int{-1}, PairOptions{}); err == nil {
			t.Error("PairTable accepted event −1")
		}
		if _, err := j.PairTable([]int{0}, evs, PairOptions{DeltaMa: math.NaN()}); err == nil {
			t.Error("PairTable accepted δ = NaN")
		}
	})
}

func TestOrderMatrix(t *testing.T) {
	const n = 100_000
	ages := []struct{ mu, s float64 }{{201.60, 0.05}, {201.55, 0.03}, {201.40, 0.10}}
	var qs []Quantity
	for i, a := range ages {
		qs = append(qs, NormalAge(fmt.Sprint("q", i), a.mu, a.s))
	}
	j := mustDrawJoint(t, qs, DrawOptions{N: n, Seed: 12})
	o, err := j.Order([]int{0, 1, 2})
	if err != nil {
		t.Fatal(err)
	}
	for i := range ages {
		if !math.IsNaN(o.P[i][i]) {
			t.Errorf("diagonal %d: %g, want NaN", i, o.P[i][i])
		}
		for k := range ages {
			if i == k {
				continue
			}
			// REFERENCES §5: Φ((μi − μk)/sqrt(σi² + σk²)).
			want, _ := POlderNormal(ages[i].mu, ages[i].s, ages[k].mu, ages[k].s, 0)
			if !within3SE(o.P[i][k], want, n, 0) {
				t.Errorf("P[%d][%d] got %.5f, want %.5f", i, k, o.P[i][k], want)
			}
			if s := o.P[i][k] + o.P[k][i]; math.Abs(s-1) > 1e-12 {
				t.Errorf("P[%d][%d] + P[%d][%d] = %g", i, k, k, i, s)
			}
		}
	}
}

func TestCompareErrors(t *testing.T) {
	j := mustDrawJoint(t, []Quantity{NormalAge("a", 1, 1), NormalAge("b", 1, 1)}, DrawOptions{N: 10})
	if _, err := j.ComparePair(0, 2, PairOptions{}); err == nil {
		t.Error("ComparePair accepted index 2 of 2")
	}
	if _, err := j.ComparePair(0, 1, PairOptions{DeltaMa: -1}); err == nil {
		t.Error("ComparePair accepted δ < 0")
	}
	if _, err := j.CompareInterval(0, 1, -1, PairOptions{}); err == nil {
		t.Error("CompareInterval accepted index −1")
	}
	if _, err := j.VolumeFractionBefore([]int{0}, []Volume{{1, 0}, {1, 0}}, 1); err == nil {
		t.Error("VolumeFractionBefore accepted 2 volumes for 1 unit")
	}
	if _, err := j.VolumeFractionBefore([]int{0}, []Volume{{0, 0}}, 1); err == nil {
		t.Error("VolumeFractionBefore accepted zero volume")
	}
	if _, err := j.VolumeFractionBefore([]int{0}, []Volume{{-1, 0}}, 1); err == nil {
		t.Error("VolumeFractionBefore accepted a negative volume")
	}
	if _, err := j.Order([]int{0, 5}); err == nil {
		t.Error("Order accepted index 5")
	}
	if _, err := j.Table([]IntervalRef{{"p", 0, 1}}, []int{3}, PairOptions{}); err == nil {
		t.Error("Table accepted event index 3")
	}
	if _, err := j.Draws(9); err == nil {
		t.Error("Draws accepted index 9")
	}
}

// compareWorld builds a small comparison: pulses as bootstrap-like edge samples of U–Pb dates, events
// from one age model's draws and direct dates, on one seed.
func compareWorld(tb testing.TB, pulses, events, rows int, seed uint64) ([]Quantity, []IntervalRef, []int) {
	tb.Helper()
	r := rand.New(rand.NewPCG(seed, 99))
	kuiper := mustCalibration(tb, "kuiper08")
	var qs []Quantity
	var ivs []IntervalRef
	for p := range pulses {
		mode := 201.0 + 0.1*float64(p)
		on, end := make([]float64, rows), make([]float64, rows)
		for i := range on {
			on[i] = mode + 0.05 + 0.02*math.Abs(r.NormFloat64())
			end[i] = mode - 0.05 - 0.02*math.Abs(r.NormFloat64())
		}
		name := fmt.Sprintf("pulse %d", p+1)
		s, e := PulseEdgeSamples{StartMa: on, EndMa: end}.Quantities(name, name)
		if p%2 == 0 {
			s, e = s.With(UPbSystematics("ET535", 0.00015)...), e.With(UPbSystematics("ET535", 0.00015)...)
		} else {
			s.ArAr, e.ArAr = &kuiper, &kuiper
		}
		ivs = append(ivs, IntervalRef{Name: name, Onset: len(qs), End: len(qs) + 1})
		qs = append(qs, s, e)
	}
	var evs []int
	for e := range events {
		age := 201.0 + 0.1*float64(pulses)*float64(e)/float64(max(1, events))
		name := fmt.Sprintf("event %d", e+1)
		var q Quantity
		switch e % 5 {
		case 0, 1, 2: // age-model draws, five events per section
			d := make([]float64, 2*rows)
			for i := range d {
				d[i] = age + 0.04*r.NormFloat64()
			}
			q = SampledAge(name, d, fmt.Sprint("section ", e/5)).With(UPbSystematics("ET2535", 0.00015)...)
		case 3:
			q = UPbDate(name, age, 0.03, "ET535", 0.00015)
		default:
			q = UniformAge(name, age-0.05, age+0.05)
		}
		evs = append(evs, len(qs))
		qs = append(qs, q)
	}
	return qs, ivs, evs
}

// TestTableReproducible: the same seed gives the same table byte for byte; another seed does not.
func TestTableReproducible(t *testing.T) {
	table := func(seed uint64) string {
		qs, ivs, evs := compareWorld(t, 3, 6, 300, 1)
		j := mustDrawJoint(t, qs, DrawOptions{N: 2000, Seed: seed})
		tab, err := j.Table(ivs, evs, PairOptions{DeltaMa: 0.05, Overlap: true})
		if err != nil {
			t.Fatal(err)
		}
		return tab.Text()
	}
	a, b, c := table(7), table(7), table(8)
	if a != b {
		t.Errorf("same seed, different tables:\n%s\n%s", a, b)
	}
	if a == c {
		t.Error("seeds 7 and 8 gave the same table")
	}
	if !strings.HasPrefix(a, "# N=2000 seed=7 level=as-needed delta_ma=0.05\n") {
		t.Errorf("header: %q", strings.SplitN(a, "\n", 2)[0])
	}
	if got := strings.Count(a, "\n"); got != 2+3*6 {
		t.Errorf("%d lines, want %d", got, 2+3*6)
	}
}

// TestSensitivity: an ⁴⁰Ar/³⁹Ar onset of 199.0 ± 0.05 Ma (analytical, on FCs 28.02/SJ77) recalculated to
// each calibration of the app (RecalculateAgeMa, REFERENCES §3 Check R) against a U–Pb event at 200.0 Ma.
// "Onset older than the event" holds on Renne et al. (2010) but not on SJ77 (199.0 Ma): the conclusion
// must not survive. "Onset older than 190 Ma" survives everything.
func TestSensitivity(t *testing.T) {
	sj77 := mustCalibration(t, "sj77")
	var sets []InputSet
	for _, code := range []string{"renne10", "renne11", "kuiper08", "sj77"} {
		to := mustCalibration(t, code)
		rc, err := Recalculate(199.0, 0.05, sj77, to)
		if err != nil {
			t.Fatal(err)
		}
		sets = append(sets, InputSet{Name: code, Quantities: []Quantity{
			ArArDate("onset", rc.AgeMa, rc.AnalyticalSigmaMa, to),
			UPbDate("event", 200.0, 0.03, "ET535", 0.00015),
			NormalAge("190 Ma", 190, 0),
		}})
	}
	compare := func(j *JointDraws) ([]NamedProbability, error) {
		a, err := j.ComparePair(0, 1, PairOptions{})
		if err != nil {
			return nil, err
		}
		b, err := j.ComparePair(0, 2, PairOptions{})
		if err != nil {
			return nil, err
		}
		return []NamedProbability{{"onset older than event", a.Older}, {"onset older than 190 Ma", b.Older}}, nil
	}
	opt := SensitivityOptions{Draws: DrawOptions{N: 20_000, Seed: 3}}
	res, err := Sensitivity(sets, opt, compare)
	if err != nil {
		t.Fatal(err)
	}
	if res.Threshold != 0.95 || res.N != 20_000 || res.Seed != 3 || len(res.Rows) != 2 {
		t.Fatalf("result %+v", res)
	}
	r := res.Rows[0]
	if r.Conclusion != 1 || r.Survives || !strings.Contains(r.Caution, "sj77") {
		t.Errorf("row 0: P %v, conclusion %d, survives %v, caution %q", r.P, r.Conclusion, r.Survives, r.Caution)
	}
	if r.MinP != r.P[3] || r.MaxP < r.P[0] {
		t.Errorf("row 0 range [%g, %g] for %v", r.MinP, r.MaxP, r.P)
	}
	if r := res.Rows[1]; r.Conclusion != 1 || !r.Survives || r.Caution != "" || r.MinP != 1 {
		t.Errorf("row 1: %+v", r)
	}
	// Each set's value is the one a direct comparison with the same options gives.
	j := mustDrawJoint(t, sets[1].Quantities, opt.Draws)
	c, _ := j.ComparePair(0, 1, PairOptions{})
	if c.Older.P != r.P[1] {
		t.Errorf("set 1: %g, direct %g", r.P[1], c.Older.P)
	}

	// The volume fraction in the sensitivity: Sensitivity shares the volume draws between its sets (one
	// seed and N), which must give exactly what each set drawn on its own gives.
	vsets := []InputSet{
		{Name: "a", Quantities: []Quantity{NormalAge("u1", 201.6, 0.05), NormalAge("u2", 201.4, 0.05), NormalAge("event", 201.5, 0.05)}},
		{Name: "b", Quantities: []Quantity{NormalAge("u1", 201.45, 0.05), NormalAge("u2", 201.4, 0.05), NormalAge("event", 201.5, 0.05)}},
	}
	vols := []Volume{{1000, 300}, {900, 200}}
	var medians []float64
	volume := func(j *JointDraws) ([]NamedProbability, error) {
		f, err := j.VolumeFractionBefore([]int{0, 1}, vols, 2)
		medians = append(medians, f.Fraction.Median)
		return []NamedProbability{{"most before", f.Majority}}, err
	}
	vr, err := Sensitivity(vsets, opt, volume)
	if err != nil {
		t.Fatal(err)
	}
	for s, set := range vsets {
		j := mustDrawJoint(t, set.Quantities, opt.Draws)
		f, _ := j.VolumeFractionBefore([]int{0, 1}, vols, 2)
		if f.Majority.P != vr.Rows[0].P[s] || f.Fraction.Median != medians[s] {
			t.Errorf("set %s: P(most before) %g and median %g in the sensitivity, %g and %g alone", set.Name, vr.Rows[0].P[s], medians[s], f.Majority.P, f.Fraction.Median)
		}
	}
	if r := vr.Rows[0]; r.Conclusion != 0 && r.Survives {
		t.Errorf("u1 moved from older to younger than the event, yet the volume conclusion survives: %+v", r)
	}

	bad := func(j *JointDraws) ([]NamedProbability, error) {
		return []NamedProbability{{Name: fmt.Sprint(j.Names[0], j.N, len(j.Keys), j.Keys)}}, nil
	}
	if _, err := Sensitivity(sets, opt, bad); err == nil {
		t.Error("names that differ between sets gave no error")
	}
	if _, err := Sensitivity(sets, SensitivityOptions{Threshold: 0.4}, compare); err == nil {
		t.Error("threshold 0.4 gave no error")
	}
	if _, err := Sensitivity(nil, opt, compare); err == nil {
		t.Error("no sets gave no error")
	}
}

// TestLagCoverage checks calibration in a seeded synthetic world where the truth is known: a pulse onset
// T_S ~ U(200.5, 202.5) Ma and an event T_X = T_S − L, L ~ U(−0.3, 0.6) Ma. The onset is "measured"
// through a U–Pb lab with tracer A, the event through another lab with tracer B: each measured age is
// T·(1 + ε_λ)(1 + ε_tracer) plus analytical noise, ε_λ shared by both (one true λ238 per world, 1σ
// Lambda238RelSigma), ε_A and ε_B independent (1σ 0.03 %), analytical 1σ 0.03 Ma (onset, given as 2,000
// bootstrap-like samples) and 0.04 Ma (event). Across 500 worlds the 95 % lag interval must cover the
// true L within the binomial band 0.95 ± 3·sqrt(0.95·0.05/500) = [0.9208, 0.9792] [T: coverage within a
// binomial band] at the as-needed and full levels; the analytical level, which drops the tracer terms,
// must fall below the band.
func TestLagCoverage(t *testing.T) {
	const worlds, draws, rows, tracerRel = 500, 4000, 2000, 0.0003
	band := 3 * math.Sqrt(0.95*0.05/worlds)
	covered := map[ComparisonLevel]int{}
	r := rand.New(rand.NewPCG(2024, 6))
	samples := make([]float64, rows)
	for w := range worlds {
		ts := 200.5 + 2*r.Float64()
		lag := -0.3 + 0.9*r.Float64()
		tx := ts - lag
		eLam := Lambda238RelSigma * r.NormFloat64()
		eA, eB := tracerRel*r.NormFloat64(), tracerRel*r.NormFloat64()
		mS := ts*(1+eLam)*(1+eA) + 0.03*r.NormFloat64()
		mX := tx*(1+eLam)*(1+eB) + 0.04*r.NormFloat64()
		for i := range samples {
			samples[i] = mS + 0.03*r.NormFloat64()
		}
		qs := []Quantity{
			SampledAge("onset", samples, "pulse").With(UPbSystematics("A", tracerRel)...),
			UPbDate("event", mX, 0.04, "B", tracerRel),
		}
		for _, level := range []ComparisonLevel{LevelAsNeeded, LevelFull, LevelAnalytical} {
			j := mustDrawJoint(t, qs, DrawOptions{N: draws, Seed: uint64(w), Level: level})
			c, err := j.ComparePair(0, 1, PairOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if c.LagMa.Lo95 <= lag && lag <= c.LagMa.Hi95 {
				covered[level]++
			}
		}
	}
	for _, level := range []ComparisonLevel{LevelAsNeeded, LevelFull, LevelAnalytical} {
		cov := float64(covered[level]) / worlds
		t.Logf("%v: coverage %.3f (band %.4f–%.4f)", level, cov, 0.95-band, 0.95+band)
		inBand := math.Abs(cov-0.95) <= band
		if level == LevelAnalytical {
			if cov >= 0.95-band {
				t.Errorf("analytical coverage %.3f: dropping the tracer terms should undercover", cov)
			}
			continue
		}
		if !inBand {
			t.Errorf("%v: coverage %.3f outside %.4f–%.4f", level, cov, 0.95-band, 0.95+band)
		}
	}
}

// BenchmarkCompareTable: 20 pulses × 50 events, 10,000 joint draws, from the draws to the finished
// table with OVL (BENCH_compare.md).
func BenchmarkCompareTable(b *testing.B) {
	qs, ivs, evs := compareWorld(b, 20, 50, 1000, 1)
	b.ResetTimer()
	for b.Loop() {
		j, err := DrawJoint(qs, DrawOptions{N: 10_000, Seed: 1})
		if err != nil {
			b.Fatal(err)
		}
		if _, err := j.Table(ivs, evs, PairOptions{DeltaMa: 0.05, Overlap: true}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkCompareTableNoOVL is BenchmarkCompareTable without the overlap estimates.
func BenchmarkCompareTableNoOVL(b *testing.B) {
	qs, ivs, evs := compareWorld(b, 20, 50, 1000, 1)
	b.ResetTimer()
	for b.Loop() {
		j, err := DrawJoint(qs, DrawOptions{N: 10_000, Seed: 1})
		if err != nil {
			b.Fatal(err)
		}
		if _, err := j.Table(ivs, evs, PairOptions{DeltaMa: 0.05}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkComparePairTable: 20 unit means (half U–Pb with tracer and λ238, half ⁴⁰Ar/³⁹Ar on one
// calibration) × the 50 events of BenchmarkCompareTable, 10,000 joint draws, from the draws to the
// finished table with OVL.
func BenchmarkComparePairTable(b *testing.B) {
	qs, _, evs := compareWorld(b, 0, 50, 1000, 1)
	kuiper := mustCalibration(b, "kuiper08")
	var items []int
	for u := range 20 {
		age := 201.0 + 0.1*float64(u)
		q := UPbDate(fmt.Sprintf("unit %d", u+1), age, 0.02, "ET535", 0.00015)
		if u%2 == 1 {
			q = ArArDate(fmt.Sprintf("unit %d", u+1), age, 0.05, kuiper)
		}
		items = append(items, len(qs))
		qs = append(qs, q)
	}
	b.ResetTimer()
	for b.Loop() {
		j, err := DrawJoint(qs, DrawOptions{N: 10_000, Seed: 1})
		if err != nil {
			b.Fatal(err)
		}
		if _, err := j.PairTable(items, evs, PairOptions{DeltaMa: 0.05, Overlap: true}); err != nil {
			b.Fatal(err)
		}
	}
}
