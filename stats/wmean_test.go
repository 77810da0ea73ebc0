package stats

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"strings"
	"sync"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// Check A of REFERENCES §1: seven dates, σ tabulated at 2σ.
var (
	checkAAges = []float64{201.512, 201.558, 201.530, 201.601, 201.489, 201.566, 201.545}
	checkA2s   = []float64{0.046, 0.040, 0.060, 0.050, 0.070, 0.036, 0.044}
	checkBAges = append(slices.Clone(checkAAges), 201.700) // Check A plus 201.700 ± 0.040 (2σ)
	checkB2s   = append(slices.Clone(checkA2s), 0.040)
	checkCAges = []float64{201.560, 201.570, 201.555, 201.575}
	checkC2s   = []float64{0.030, 0.040, 0.030, 0.050}
	rosner54   = []float64{-0.25, 0.68, 0.94, 1.15, 1.20, 1.26, 1.26, 1.34, 1.38, 1.43, 1.49, 1.49, 1.55, 1.56, 1.58, 1.65, 1.69, 1.70, 1.76, 1.77, 1.81, 1.91, 1.94, 1.96, 1.99, 2.06, 2.09, 2.10, 2.14, 2.15, 2.23, 2.24, 2.26, 2.35, 2.37, 2.40, 2.47, 2.54, 2.62, 2.64, 2.90, 2.92, 2.92, 2.93, 3.21, 3.26, 3.30, 3.59, 3.68, 4.30, 4.64, 5.34, 5.42, 6.01}
)

// oneSigma halves 2σ values, as REFERENCES says to before weighting.
func oneSigma(twoSigma []float64) []float64 {
	out := make([]float64, len(twoSigma))
	for i, s := range twoSigma {
		out[i] = To1Sigma(s, TwoSigma)
	}
	return out
}

// mustWeightedMean fails the test on an error.
func mustWeightedMean(tb testing.TB, values, sigmas1s []float64, policy Policy) WeightedMeanResult {
	tb.Helper()
	r, err := WeightedMean(values, sigmas1s, WeightedMeanOptions{Policy: policy})
	if err != nil {
		tb.Fatal(err)
	}
	return r
}

// nearDecimals reports whether got rounds to want at the given decimals.
func nearDecimals(got, want float64, decimals int) bool { return roundDecimals(got, decimals) == want }

func TestWeightedMeanChecks(t *testing.T) {
	a := mustWeightedMean(t, checkAAges, oneSigma(checkA2s), PolicyNever)
	b := mustWeightedMean(t, checkBAges, oneSigma(checkB2s), PolicyNever)
	c := mustWeightedMean(t, checkCAges, oneSigma(checkC2s), PolicyNever)
	aWC, err := WeightedMean(checkAAges, oneSigma(checkA2s), WeightedMeanOptions{Range: RangeWendtCarl})
	if err != nil {
		t.Fatal(err)
	}
	cWC, err := WeightedMean(checkCAges, oneSigma(checkC2s), WeightedMeanOptions{Range: RangeWendtCarl})
	if err != nil {
		t.Fatal(err)
	}
	aLow, aHigh := WendtCarlRange(a.DoF)
	tests := []struct {
		name     string
		got      float64
		decimals int
		want     float64
	}{
		{"A mean", a.Mean, 9, 201.549755197},                                    // REFERENCES §1 Check A [C]: numpy 1.24
		{"A σ 1σ", a.Sigma, 6, 0.008747},                                        // REFERENCES §1 Check A [C] prints 0.008747193; see TestCheckASigmaDigits
		{"A σ 2σ", From1Sigma(a.Sigma, TwoSigma), 6, 0.017494},                  // REFERENCES §1 Check A [C] prints 0.017494386; see TestCheckASigmaDigits
		{"A S", a.S, 6, 11.374267},                                              // REFERENCES §1 Check A [C]
		{"A f", float64(a.DoF), 0, 6},                                           // REFERENCES §1 Check A [C]
		{"A MSWD", a.MSWD, 6, 1.895711},                                         // REFERENCES §1 Check A [C]
		{"A p", a.P, 6, 0.077475},                                               // REFERENCES §1 Check A [C]: scipy 1.10 chi2.sf
		{"A W&C upper", aWC.MSWDHigh, 6, 2.154701},                              // REFERENCES §1 Check A [C]; Wendt & Carl 1991 [P]
		{"A W&C upper, helper", aHigh, 6, 2.154701},                             // REFERENCES §1 Check A [C]
		{"A W&C lower floored", aLow, 9, 0},                                     // 1 − 2·sqrt(2/6) < 0, floored (Wendt & Carl 1991 [P])
		{"B mean", b.Mean, 6, 201.573879},                                       // REFERENCES §1 Check B [C]
		{"B MSWD", b.MSWD, 6, 8.392417},                                         // REFERENCES §1 Check B [C]
		{"B p ×1e10", b.P * 1e10, 3, 2.684},                                     // REFERENCES §1 Check B [C]: 2.684e-10
		{"C mean", c.Mean, 5, 201.56206},                                        // REFERENCES §1 Check C [C]
		{"C σ 2σ", From1Sigma(c.Sigma, TwoSigma), 5, 0.01755},                   // REFERENCES §1 Check C [C]
		{"C MSWD", c.MSWD, 3, 0.222},                                            // REFERENCES §1 Check C [C]
		{"C W&C lower", cWC.MSWDLow, 9, 0},                                      // f = 3: 1 − 2·sqrt(2/3) < 0, floored
		{"C W&C upper", cWC.MSWDHigh, 9, roundDecimals(1+2*math.Sqrt(2./3), 9)}, // Wendt & Carl 1991 [P]
		{"C χ² lower (default)", c.MSWDLow, 6, 0.071932},                        // REFERENCES §1 [C] scipy chi2.ppf(0.025, 3)/3
		{"C χ² upper (default)", c.MSWDHigh, 6, 3.116135},                       // REFERENCES §1 [C] scipy chi2.ppf(0.975, 3)/3
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got, want := tt.got, tt.want; !nearDecimals(got, want, tt.decimals) {
				t.Errorf("got %.*f, want %.*f", tt.decimals+2, got, tt.decimals, want)
			}
		})
	}
	if !a.InRange || b.InRange || !c.InRange || !aWC.InRange || !cWC.InRange {
		t.Errorf("InRange A, B, C = %v, %v, %v, under W&C A, C = %v, %v; want true, false, true, true, true",
			a.InRange, b.InRange, c.InRange, aWC.InRange, cWC.InRange)
	}
	if a.Range != RangeChi2 || aWC.Range != RangeWendtCarl {
		t.Errorf("recorded range rules %v, %v; want chi2, wendt-carl", a.Range, aWC.Range)
	}
}

// TestMSWDRanges: the exact range (2.5 % and 97.5 % quantiles of χ²_f/f) and Wendt & Carl's normal
// approximation against REFERENCES §1, and the default is the exact one.
func TestMSWDRanges(t *testing.T) {
	tests := []struct {
		dof               int
		low, high, wcHigh float64
	}{
		{1, 0.000982, 5.023886, 3.828427},  // [C] scipy chi2.ppf (REFERENCES §1); W&C 1 + 2·sqrt(2/1) [P]
		{2, 0.025318, 3.688879, 3.0},       // [C] scipy chi2.ppf (REFERENCES §1); W&C [P]
		{3, 0.071932, 3.116135, 2.632993},  // [C] scipy chi2.ppf (REFERENCES §1); W&C [P]
		{5, 0.166242, 2.566500, 2.264911},  // [C] scipy chi2.ppf (REFERENCES §1); W&C [P]
		{10, 0.324697, 2.048318, 1.894427}, // [C] scipy chi2.ppf (REFERENCES §1); W&C [P]
		{30, 0.559692, 1.565975, 1.516398}, // [C] scipy chi2.ppf (REFERENCES §1); W&C [P]
	}
	for _, tt := range tests {
		low, high := Chi2Range(tt.dof)
		if !nearDecimals(low, tt.low, 6) || !nearDecimals(high, tt.high, 6) {
			t.Errorf("f = %d: χ² range %.7f–%.7f, want %.6f–%.6f", tt.dof, low, high, tt.low, tt.high)
		}
		if l, h := MSWDRange(tt.dof, RangeChi2); l != low || h != high {
			t.Errorf("f = %d: MSWDRange(chi2) %g–%g, Chi2Range %g–%g", tt.dof, l, h, low, high)
		}
		wl, wh := MSWDRange(tt.dof, RangeWendtCarl)
		if !nearDecimals(wh, tt.wcHigh, 6) || math.Abs(wl-math.Max(0, 2-wh)) > 1e-12 {
			t.Errorf("f = %d: Wendt & Carl %.7f–%.7f, want upper %.6f", tt.dof, wl, wh, tt.wcHigh)
		}
		// The default of WeightedMean is the exact range: f + 1 values spread so that MSWD = 1.
		xs, ss := make([]float64, tt.dof+1), make([]float64, tt.dof+1)
		for i := range xs {
			xs[i], ss[i] = float64(i%2), 1
		}
		r, err := WeightedMean(xs, ss, WeightedMeanOptions{})
		if err != nil {
			t.Fatal(err)
		}
		if r.MSWDLow != low || r.MSWDHigh != high || r.Range != RangeChi2 {
			t.Errorf("f = %d: WeightedMean's default range %g–%g (%v), want the χ² range", tt.dof, r.MSWDLow, r.MSWDHigh, r.Range)
		}
	}
	for _, f := range []int{0, -1} {
		for _, rule := range []MSWDRangeRule{RangeChi2, RangeWendtCarl, MSWDRangeRule(7)} {
			if l, h := MSWDRange(f, rule); !math.IsNaN(l) || !math.IsNaN(h) {
				t.Errorf("MSWDRange(%d, %v) = %g–%g, want NaN", f, rule, l, h)
			}
		}
	}
	for _, rule := range []MSWDRangeRule{RangeChi2, RangeWendtCarl} {
		if got, err := ParseMSWDRangeRule(" " + strings.ToUpper(rule.String())); err != nil || got != rule {
			t.Errorf("ParseMSWDRangeRule(%q) = %v, %v", rule.String(), got, err)
		}
	}
	if _, err := ParseMSWDRangeRule("normal"); err == nil {
		t.Error(`ParseMSWDRangeRule("normal"): no error`)
	}
	if _, err := WeightedMean([]float64{1, 2}, []float64{1, 1}, WeightedMeanOptions{Range: MSWDRangeRule(5)}); err == nil {
		t.Error("unknown range rule: no error")
	}
}

// TestCheckASigmaDigits documents why Check A's σ is compared to 6 decimals only. REFERENCES §1 prints
// σ_x̄ = 0.008747193 (1σ), but (Σwᵢ)^-½ of the seven listed 2σ values is 0.0087469508 (Σwᵢ = 13070.332,
// not the 13069.609 the printed value implies), and REFERENCES' own inflated 2σ, 0.024086449, equals
// 2·0.0087469508·sqrt(MSWD), not 2·0.008747193·sqrt(MSWD). The printed 9-decimal σ is the odd one out.
func TestCheckASigmaDigits(t *testing.T) {
	w := 0.0
	for _, s := range oneSigma(checkA2s) {
		w += 1 / (s * s)
	}
	if got, want := 1/math.Sqrt(w), 0.0087469508; !nearDecimals(got, want, 10) { // recomputed by hand from Check A's inputs
		t.Errorf("(Σw)^-½ = %.12f, want %.10f", got, want)
	}
	// REFERENCES §1 Check A [C]: inflated 2σ 0.024086449 and MSWD 1.895711 imply σ_x̄ (1σ):
	if got, want := 0.024086449/math.Sqrt(1.895711)/2, 0.0087469508; math.Abs(got-want) > 1e-9 {
		t.Errorf("σ implied by REFERENCES' inflated 2σ = %.12f, want %.10f", got, want)
	}
}

// TestWeightedMeanPolicy checks Check A's inflated 2σ (REFERENCES §1 [C]) under each policy.
func TestWeightedMeanPolicy(t *testing.T) {
	tests := []struct {
		policy      Policy
		wantInflate bool
		want2s      float64 // reported 2σ, 9 decimals
	}{
		{PolicyNever, false, 0.017493902},         // (Σwᵢ)^-½ of Check A; REFERENCES prints 0.017494386, see TestCheckASigmaDigits
		{PolicyWhenMSWDAbove1, true, 0.024086449}, // REFERENCES §1 Check A [C]: inflated 2σ
		{PolicyWhenPBelow005, false, 0.017493902}, // p = 0.077 ≥ 0.05: not inflated [T]
	}
	for _, tt := range tests {
		t.Run(tt.policy.String(), func(t *testing.T) {
			r := mustWeightedMean(t, checkAAges, oneSigma(checkA2s), tt.policy)
			if got, want := r.Inflated, tt.wantInflate; got != want {
				t.Errorf("Inflated = %v, want %v", got, want)
			}
			if got, want := From1Sigma(r.SigmaReported, TwoSigma), tt.want2s; !nearDecimals(got, want, 9) {
				t.Errorf("reported 2σ = %.11f, want %.9f", got, want)
			}
			if got, want := r.Policy, tt.policy; got != want {
				t.Errorf("Policy = %v, want %v", got, want)
			}
		})
	}
	// Check B has p ≪ 0.05: both inflating policies inflate by sqrt(MSWD).
	b := mustWeightedMean(t, checkBAges, oneSigma(checkB2s), PolicyWhenPBelow005)
	if got, want := b.SigmaReported, b.Sigma*math.Sqrt(b.MSWD); !b.Inflated || math.Abs(got-want) > 1e-15 {
		t.Errorf("B under p<0.05: Inflated %v, SigmaReported %g, want %g", b.Inflated, got, want)
	}
	// Check C has MSWD < 1: never inflated (never deflated either).
	c := mustWeightedMean(t, checkCAges, oneSigma(checkC2s), PolicyWhenMSWDAbove1)
	if c.Inflated || c.SigmaReported != c.Sigma || c.Factor != 1 {
		t.Errorf("C under mswd>1: Inflated %v, SigmaReported %g, Sigma %g", c.Inflated, c.SigmaReported, c.Sigma)
	}
}

func TestParsePolicy(t *testing.T) {
	for _, p := range []Policy{PolicyNever, PolicyWhenMSWDAbove1, PolicyWhenPBelow005} {
		if got, err := ParsePolicy(p.String()); err != nil || got != p {
			t.Errorf("ParsePolicy(%q) = %v, %v; want %v", p.String(), got, err, p)
		}
	}
	if _, err := ParsePolicy("sometimes"); err == nil {
		t.Error("ParsePolicy(\"sometimes\"): no error")
	}
}

func TestWeightedMeanSingle(t *testing.T) {
	r := mustWeightedMean(t, []float64{201.5}, []float64{0.02}, PolicyWhenMSWDAbove1)
	if got, want := r.Mean, 201.5; got != want {
		t.Errorf("Mean = %v, want %v", got, want)
	}
	if got, want := r.Sigma, 0.02; math.Abs(got-want) > 1e-15 {
		t.Errorf("Sigma = %v, want %v", got, want)
	}
	if r.N != 1 || r.DoF != 0 || r.MSWDDefined || !math.IsNaN(r.MSWD) || !math.IsNaN(r.P) || r.InRange || r.Inflated {
		t.Errorf("single value: %+v", r)
	}
}

// TestWeightedMeanIdentical: identical values give that value, S = 0, p = 1, σ = σ/√n for equal σ.
func TestWeightedMeanIdentical(t *testing.T) {
	for _, n := range []int{2, 3, 10, 1000} {
		values, sigmas := make([]float64, n), make([]float64, n)
		for i := range values {
			values[i], sigmas[i] = 252.168, 0.03
		}
		r := mustWeightedMean(t, values, sigmas, PolicyWhenMSWDAbove1)
		if got, want := r.Mean, 252.168; got != want {
			t.Errorf("n=%d: Mean = %v, want %v", n, got, want)
		}
		if got, want := r.Sigma, 0.03/math.Sqrt(float64(n)); math.Abs(got-want) > 1e-15 {
			t.Errorf("n=%d: Sigma = %v, want %v", n, got, want)
		}
		if r.S != 0 || r.MSWD != 0 || r.P != 1 || r.Inflated {
			t.Errorf("n=%d: S %v MSWD %v P %v Inflated %v; want 0 0 1 false", n, r.S, r.MSWD, r.P, r.Inflated)
		}
	}
}

func TestWeightedMeanErrors(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	tests := []struct {
		name           string
		values, sigmas []float64
		policy         Policy
	}{
		{"empty", nil, nil, PolicyNever},
		{"length", []float64{1, 2}, []float64{1}, PolicyNever},
		{"zero σ", []float64{1, 2}, []float64{1, 0}, PolicyNever},
		{"negative σ", []float64{1, 2}, []float64{1, -1}, PolicyNever},
		{"NaN σ", []float64{1, 2}, []float64{1, nan}, PolicyNever},
		{"Inf σ", []float64{1, 2}, []float64{1, inf}, PolicyNever},
		{"NaN value", []float64{1, nan}, []float64{1, 1}, PolicyNever},
		{"Inf value", []float64{inf, 1}, []float64{1, 1}, PolicyNever},
		{"policy", []float64{1, 2}, []float64{1, 1}, Policy(7)},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if _, err := WeightedMean(tt.values, tt.sigmas, WeightedMeanOptions{Policy: tt.policy}); err == nil {
				t.Error("no error")
			}
		})
	}
	if _, err := WeightedMean(nil, nil, WeightedMeanOptions{}); !errors.Is(err, ErrNoValues) {
		t.Errorf("empty input error = %v, want ErrNoValues", err)
	}
}

// TestWeightedMeanCalibration draws 2,000 datasets of 10 dates from their stated errors and checks that
// the MSWD averages 1 (within 3 standard errors of the mean MSWD) and that the p-values are uniform by a
// one-sample Kolmogorov–Smirnov test at α = 0.01. The critical value 1.628/sqrt(n) is the large-n
// approximation sqrt(−ln(α/2)/2)/sqrt(n) from Kolmogorov's limiting distribution, as tabulated in the
// usual KS tables [T, common practice]; at n = 2,000 it is accurate to well under 1 %.
func TestWeightedMeanCalibration(t *testing.T) {
	const datasets, n, seed = 2000, 10, 42
	rng := rand.New(rand.NewPCG(seed, 0))
	mswds, ps := make([]float64, datasets), make([]float64, datasets)
	values, sigmas := make([]float64, n), make([]float64, n)
	for d := range datasets {
		for i := range n {
			sigmas[i] = 0.01 + 0.09*rng.Float64() // σ from 0.01 to 0.1 Ma, 1σ
			values[i] = 201.5 + sigmas[i]*rng.NormFloat64()
		}
		r := mustWeightedMean(t, values, sigmas, PolicyNever)
		mswds[d], ps[d] = r.MSWD, r.P
	}
	mean, sd := sampleMeanSD(mswds)
	se := sd / math.Sqrt(datasets)
	if got, want := mean, 1.0; math.Abs(got-want) > 3*se {
		t.Errorf("mean MSWD = %.4f, want 1 within 3 SE = %.4f", got, 3*se)
	}
	d := ksStatUniform(ps)
	if crit := 1.628 / math.Sqrt(datasets); d > crit {
		t.Errorf("KS statistic of p-values = %.4f > %.4f (α = 0.01)", d, crit)
	}
	t.Logf("seed %d: mean MSWD %.4f ± %.4f (SE), KS D = %.4f (critical %.4f)", seed, mean, se, d, 1.628/math.Sqrt(datasets))
}

// sampleMeanSD returns the sample mean and standard deviation (n − 1 denominator).
func sampleMeanSD(x []float64) (mean, sd float64) {
	for _, v := range x {
		mean += v
	}
	mean /= float64(len(x))
	for _, v := range x {
		sd += (v - mean) * (v - mean)
	}
	return mean, math.Sqrt(sd / float64(len(x)-1))
}

// ksStatUniform returns the one-sample Kolmogorov–Smirnov statistic D = sup|F_n(u) − u| of x against U(0, 1).
func ksStatUniform(x []float64) float64 {
	u := slices.Clone(x)
	sort.Float64s(u)
	n := float64(len(u))
	var d float64
	for i, v := range u {
		d = math.Max(d, math.Max(float64(i+1)/n-v, v-float64(i)/n))
	}
	return d
}

// FuzzWeightedMean checks invariants on arbitrary input: the mean lies within the values, its σ is no larger
// than the smallest σ, S ≥ 0, p in [0, 1], and the reported σ is never below the plain σ.
func FuzzWeightedMean(f *testing.F) {
	f.Add(201.5, 0.02, 201.6, 0.05, 201.55, 0.01)
	f.Add(1e6, 1e-3, -1e6, 1e3, 0.0, 1.0)
	f.Add(66.0, 1e-9, 66.0, 1e-9, 66.0, 1e9)
	f.Fuzz(func(t *testing.T, x1, s1, x2, s2, x3, s3 float64) {
		values, sigmas := []float64{x1, x2, x3}, []float64{s1, s2, s3}
		r, err := WeightedMean(values, sigmas, WeightedMeanOptions{Policy: PolicyWhenMSWDAbove1})
		if err != nil {
			return
		}
		if math.IsInf(r.S, 0) || math.IsNaN(r.S) || math.IsNaN(r.Mean) || r.Sigma == 0 {
			return // overflow or underflow at extreme magnitudes is not the property under test
		}
		lo, hi := slices.Min(values), slices.Max(values)
		slack := 1e-12 * math.Max(math.Abs(lo), math.Abs(hi))
		if r.Mean < lo-slack || r.Mean > hi+slack {
			t.Fatalf("mean %v outside [%v, %v]", r.Mean, lo, hi)
		}
		if r.Sigma > slices.Min(sigmas)*(1+1e-12) {
			t.Fatalf("σ of mean %v > smallest σ %v", r.Sigma, slices.Min(sigmas))
		}
		if r.S < 0 || r.P < 0 || r.P > 1 || r.SigmaReported < r.Sigma {
			t.Fatalf("S %v, P %v, SigmaReported %v < Sigma %v", r.S, r.P, r.SigmaReported, r.Sigma)
		}
	})
}

// TestChi2RangeKeptIsComputed: the range kept by degrees of freedom is bit for bit gonum's quantiles of
// χ²_f (distuv.ChiSquared) over f, whether asked first, again, or from many goroutines at once, and above
// the bound of what is kept.
func TestChi2RangeKeptIsComputed(t *testing.T) {
	dofs := []int{1, 2, 7, 64, 999, 5000, maxKeptChi2DoF, maxKeptChi2DoF + 1}
	want := func(dof int) (float64, float64) {
		f := float64(dof)
		c := distuv.ChiSquared{K: f}
		return c.Quantile(0.025) / f, c.Quantile(0.975) / f
	}
	var wg sync.WaitGroup
	errs := make(chan string, 4*len(dofs)*3)
	for range 4 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for _, dof := range dofs {
				wl, wh := want(dof)
				for range 3 {
					if l, h := Chi2Range(dof); l != wl || h != wh {
						errs <- fmt.Sprintf("f = %d: %v–%v, want %v–%v", dof, l, h, wl, wh)
					}
				}
			}
		}()
	}
	wg.Wait()
	close(errs)
	for e := range errs {
		t.Error(e)
	}
	if _, ok := chi2Ranges.Load(maxKeptChi2DoF + 1); ok {
		t.Errorf("f = %d is kept: above the bound %d", maxKeptChi2DoF+1, maxKeptChi2DoF)
	}
}
