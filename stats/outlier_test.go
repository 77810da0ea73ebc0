package stats

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

func TestWeightedResidualsCheckB(t *testing.T) {
	got, err := WeightedResiduals(checkBAges, oneSigma(checkB2s))
	if err != nil {
		t.Fatal(err)
	}
	want := []float64{-2.8703, -0.8665, -1.5178, 1.1453, -2.4913, -0.4888, -1.4095, 6.8828} // REFERENCES §1 outlier flags, residuals for B [C]
	for i := range want {
		if got, want := roundDecimals(got[i], 4), want[i]; got != want {
			t.Errorf("r[%d] = %.4f, want %.4f", i, got, want)
		}
	}
	if _, err := WeightedResiduals([]float64{1}, []float64{1}); err == nil {
		t.Error("WeightedResiduals of one value: no error")
	}
}

// TestIterativeRejectionCheckB: on Check B the rule removes 201.700 and returns Check A
// (REFERENCES §1 outlier flags [C]).
func TestIterativeRejectionCheckB(t *testing.T) {
	for _, rule := range []MSWDRangeRule{RangeChi2, RangeWendtCarl} {
		t.Run(rule.String(), func(t *testing.T) { iterativeCheckB(t, rule) })
	}
}

// iterativeCheckB: under either range rule, Check B loses 201.700 (MSWD 8.39 is above both upper limits
// for f = 7) and Check A is then accepted (1.896 is below both for f = 6).
func iterativeCheckB(t *testing.T, rule MSWDRangeRule) {
	got, err := IterativeRejection(checkBAges, oneSigma(checkB2s), rule)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := got.Flagged, []int{7}; !slices.Equal(got, want) { // REFERENCES §1 [C]: removes 201.700
		t.Fatalf("Flagged = %v, want %v", got, want)
	}
	step := got.Steps[0]
	if !nearDecimals(step.Residual, 6.8828, 4) || !nearDecimals(step.MSWD, 8.392417, 6) { // REFERENCES §1 Check B [C]
		t.Errorf("step = %+v, want residual 6.8828, MSWD 8.392417", step)
	}
	a, err := WeightedMean(checkAAges, oneSigma(checkA2s), WeightedMeanOptions{Range: rule})
	if err != nil {
		t.Fatal(err)
	}
	if got, want := got.Kept, a; got != want { // REFERENCES §1 [C]: returns A
		t.Errorf("Kept = %+v, want Check A %+v", got, want)
	}
	// An acceptable set loses nothing; two discordant dates are both kept.
	c, _ := IterativeRejection(checkCAges, oneSigma(checkC2s), rule)
	two, _ := IterativeRejection([]float64{200, 210}, []float64{0.1, 0.1}, rule)
	if len(c.Flagged) != 0 || len(two.Flagged) != 0 || two.Kept.N != 2 {
		t.Errorf("Check C flagged %v; two dates flagged %v", c.Flagged, two.Flagged)
	}
}

// TestIterativeRejectionUsesTheChosenRange: three dates 0, 0, x (σ 1) have MSWD x²/3 for f = 2 (mean x/3,
// S = 2(x/3)² + (2x/3)² = 2x²/3). At MSWD 3.3 the set is above Wendt & Carl's 1 + 2·sqrt(2/2) = 3 but
// below the exact 97.5 % quantile of χ²₂/2, 3.688879 (REFERENCES §1 [C] scipy chi2.ppf): the rule flags x
// under the approximation and nothing under the exact range, in the rule and in FlagOutliers.
func TestIterativeRejectionUsesTheChosenRange(t *testing.T) {
	x := math.Sqrt(3 * 3.3)
	xs, ss := []float64{0, 0, x}, []float64{1, 1, 1}
	for _, tt := range []struct {
		rule MSWDRangeRule
		want []int
		high float64
	}{
		{RangeChi2, nil, 3.688879},    // REFERENCES §1 [C] scipy chi2.ppf(0.975, 2)/2
		{RangeWendtCarl, []int{2}, 3}, // Wendt & Carl 1991 [P]: 1 + 2·sqrt(2/2)
	} {
		it, err := IterativeRejection(xs, ss, tt.rule)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(it.Flagged, tt.want) {
			t.Errorf("%v: flagged %v, want %v", tt.rule, it.Flagged, tt.want)
		}
		if len(it.Steps) > 0 && !nearDecimals(it.Steps[0].MSWDHigh, tt.high, 6) {
			t.Errorf("%v: step's upper limit %g, want %g", tt.rule, it.Steps[0].MSWDHigh, tt.high)
		}
		rep, err := FlagOutliers(xs, ss, OutlierOptions{Rule: RuleMSWD, Range: tt.rule})
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(rep.Flagged, tt.want) || !nearDecimals(rep.All.MSWD, 3.3, 9) || !nearDecimals(rep.All.MSWDHigh, tt.high, 6) ||
			rep.All.InRange != (tt.want == nil) {
			t.Errorf("%v: FlagOutliers flagged %v, MSWD %g, upper %g, in range %v", tt.rule, rep.Flagged, rep.All.MSWD, rep.All.MSWDHigh, rep.All.InRange)
		}
	}
}

// TestChauvenetCheckB: Chauvenet on Check B rejects only 201.700, z = 2.1077 (REFERENCES §1 [C];
// criterion of Taylor 1997 [P]).
func TestChauvenetCheckB(t *testing.T) {
	got, err := Chauvenet(checkBAges)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := got.Flagged, []int{7}; !slices.Equal(got, want) { // REFERENCES §1 [C]
		t.Errorf("Flagged = %v, want %v", got, want)
	}
	if got, want := roundDecimals(got.Z[7], 4), 2.1077; got != want { // REFERENCES §1 [C]
		t.Errorf("z of 201.700 = %.4f, want %.4f", got, want)
	}
	if got.Expected[7] >= 0.5 {
		t.Errorf("n·P of 201.700 = %v, want < 0.5", got.Expected[7])
	}
	same, err := Chauvenet([]float64{5, 5, 5})
	if err != nil || len(same.Flagged) != 0 {
		t.Errorf("identical values: %v, %v", same.Flagged, err)
	}
	if _, err := Chauvenet([]float64{1, 2}); err == nil {
		t.Error("Chauvenet of two values: no error")
	}
}

// TestGeneralizedESDRosner checks Rosner's 54-value example (Rosner 1983, Technometrics 25:165;
// REFERENCES §1 [C], matching the paper).
func TestGeneralizedESDRosner(t *testing.T) {
	got, err := GeneralizedESD(rosner54, 10, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := got.NOutliers, 3; got != want { // Rosner 1983: 3 outliers
		t.Errorf("NOutliers = %d, want %d", got, want)
	}
	checks := []struct {
		name string
		got  float64
		want float64
	}{
		{"R1", got.R[0], 3.1189},      // Rosner 1983; REFERENCES §1 [C]
		{"λ1", got.Lambda[0], 3.1588}, // Rosner 1983; REFERENCES §1 [C]
		{"R3", got.R[2], 3.1794},      // Rosner 1983; REFERENCES §1 [C]
		{"λ3", got.Lambda[2], 3.1439}, // Rosner 1983; REFERENCES §1 [C]
	}
	for _, c := range checks {
		if got, want := roundDecimals(c.got, 4), c.want; got != want {
			t.Errorf("%s = %.4f, want %.4f", c.name, got, want)
		}
	}
	// The three largest values, 6.01, 5.42 and 5.34, are the outliers.
	if got, want := got.Flagged, []int{51, 52, 53}; !slices.Equal(got, want) {
		t.Errorf("Flagged = %v, want %v", got, want)
	}
	if len(got.R) != 10 || len(got.Lambda) != 10 || len(got.Candidates) != 10 || got.K != 10 || got.Alpha != 0.05 {
		t.Errorf("lengths %d %d %d, K %d, α %g", len(got.R), len(got.Lambda), len(got.Candidates), got.K, got.Alpha)
	}
	for _, bad := range []struct {
		k     int
		alpha float64
	}{{0, 0.05}, {53, 0.05}, {10, 0}, {10, 1}} {
		if _, err := GeneralizedESD(rosner54, bad.k, bad.alpha); err == nil {
			t.Errorf("GeneralizedESD(k=%d, α=%g): no error", bad.k, bad.alpha)
		}
	}
	// On Check B the first step's R is Chauvenet's z of 201.700 (REFERENCES §1 [C]: 2.1077), below
	// λ₁ = 2.1266 for n = 8 (computed here; the usual two-sided Grubbs table value 2.126, from memory).
	onB, err := GeneralizedESD(checkBAges, 6, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	if !nearDecimals(onB.R[0], 2.1077, 4) || !nearDecimals(onB.Lambda[0], 2.1266, 4) || onB.NOutliers != 0 {
		t.Errorf("Check B: R₁ %.4f, λ₁ %.4f, %d outliers; want 2.1077, 2.1266, 0", onB.R[0], onB.Lambda[0], onB.NOutliers)
	}
	// Identical values after the first removal stop the steps without error.
	g, err := GeneralizedESD([]float64{1, 1, 1, 1, 5}, 3, 0.05)
	if err != nil || len(g.R) != 1 {
		t.Errorf("GeneralizedESD on 1,1,1,1,5: %d steps, %v", len(g.R), err)
	}
}

// TestFlagOutliersCheckB: each rule's flags on Check B; All always holds every date of B, and Kept is
// Check A when 201.700 is flagged.
func TestFlagOutliersCheckB(t *testing.T) {
	a := mustWeightedMean(t, checkAAges, oneSigma(checkA2s), PolicyWhenMSWDAbove1)
	b := mustWeightedMean(t, checkBAges, oneSigma(checkB2s), PolicyWhenMSWDAbove1)
	tests := []struct {
		opts        OutlierOptions
		wantFlagged []int
		wantParams  string
	}{
		{OutlierOptions{Rule: RuleNone, Policy: PolicyWhenMSWDAbove1}, nil, ""},
		{OutlierOptions{Rule: RuleMSWD, Policy: PolicyWhenMSWDAbove1}, []int{7}, ""},                   // REFERENCES §1 [C]
		{OutlierOptions{Rule: RuleChauvenet, Policy: PolicyWhenMSWDAbove1}, []int{7}, "criterion=0.5"}, // REFERENCES §1 [C]
		// Unweighted, the generalized ESD does not flag 201.700: R₁ = 2.1077 (the Chauvenet z) is below
		// λ₁ = 2.1266 for n = 8, α = 0.05 (computed here, not a REFERENCES value); k defaults to n − 2 = 6.
		{OutlierOptions{Rule: RuleGESD, Policy: PolicyWhenMSWDAbove1}, nil, "k=6 α=0.05"},
		{OutlierOptions{Rule: RuleGESD, MaxOutliers: 2, Alpha: 0.2, Policy: PolicyWhenMSWDAbove1}, []int{7}, "k=2 α=0.2"},
	}
	for _, tt := range tests {
		t.Run(tt.opts.Rule.String()+" "+tt.wantParams, func(t *testing.T) {
			got, err := FlagOutliers(checkBAges, oneSigma(checkB2s), tt.opts)
			if err != nil {
				t.Fatal(err)
			}
			if got, want := got.Flagged, tt.wantFlagged; !slices.Equal(got, want) {
				t.Errorf("Flagged = %v, want %v", got, want)
			}
			if got, want := got.Params, tt.wantParams; got != want {
				t.Errorf("Params = %q, want %q", got, want)
			}
			if got, want := got.Rule, tt.opts.Rule; got != want {
				t.Errorf("Rule = %v, want %v", got, want)
			}
			if got, want := got.All, b; got != want { // never removed silently: All is all of B
				t.Errorf("All = %+v, want %+v", got, want)
			}
			wantKept := b
			if len(tt.wantFlagged) > 0 {
				wantKept = a
			}
			if got, want := got.Kept, wantKept; got != want {
				t.Errorf("Kept = %+v, want %+v", got, want)
			}
			if got, want := len(got.Residuals), len(checkBAges); got != want {
				t.Errorf("len(Residuals) = %d, want %d", got, want)
			}
		})
	}
}

func TestFlagOutliersSmallAndBad(t *testing.T) {
	for _, rule := range []OutlierRule{RuleNone, RuleMSWD, RuleChauvenet, RuleGESD} {
		one, err := FlagOutliers([]float64{201.5}, []float64{0.02}, OutlierOptions{Rule: rule})
		if err != nil || len(one.Flagged) != 0 || one.All.N != 1 || (rule != RuleNone && one.Skipped == "") {
			t.Errorf("%v on one date: %+v, %v", rule, one, err)
		}
		same, err := FlagOutliers([]float64{3, 3, 3, 3}, []float64{1, 1, 1, 1}, OutlierOptions{Rule: rule})
		if err != nil || len(same.Flagged) != 0 {
			t.Errorf("%v on identical dates: %v, %v", rule, same.Flagged, err)
		}
		if got, err := ParseOutlierRule(rule.String()); err != nil || got != rule {
			t.Errorf("ParseOutlierRule(%q) = %v, %v", rule.String(), got, err)
		}
	}
	if _, err := FlagOutliers(checkBAges, oneSigma(checkB2s), OutlierOptions{Rule: OutlierRule(9)}); err == nil {
		t.Error("unknown rule: no error")
	}
	if _, err := FlagOutliers(checkBAges, oneSigma(checkB2s), OutlierOptions{Rule: RuleGESD, MaxOutliers: 7}); err == nil {
		t.Error("GESD with k > n − 2: no error")
	}
	if _, err := FlagOutliers(nil, nil, OutlierOptions{}); err == nil {
		t.Error("no dates: no error")
	}
	if _, err := ParseOutlierRule("grubbs"); err == nil {
		t.Error("ParseOutlierRule(\"grubbs\"): no error")
	}
}

// BenchmarkUnitSummaries summarises 10,000 dates in 1,000 units of 10: per unit, the weighted mean and
// the iterative MSWD flags, with the mean with and without flagged dates.
func BenchmarkUnitSummaries(b *testing.B) {
	const units, perUnit = 1000, 10
	rng := rand.New(rand.NewPCG(1, 2))
	ages, sigmas := make([][]float64, units), make([][]float64, units)
	for u := range units {
		ages[u], sigmas[u] = make([]float64, perUnit), make([]float64, perUnit)
		centre := 60 + 200*rng.Float64()
		for i := range perUnit {
			s := 0.01 + 0.05*rng.Float64()
			ages[u][i], sigmas[u][i] = centre+s*rng.NormFloat64(), s
		}
		ages[u][0] += 0.3 * rng.Float64() // some units with an outlier
	}
	opts := OutlierOptions{Rule: RuleMSWD, Policy: PolicyWhenPBelow005}
	for b.Loop() {
		for u := range units {
			if _, err := FlagOutliers(ages[u], sigmas[u], opts); err != nil {
				b.Fatal(err)
			}
		}
	}
}

// BenchmarkUnitSummariesGESD is BenchmarkUnitSummaries with the generalized ESD (k = 8), whose Student t
// quantiles dominate.
func BenchmarkUnitSummariesGESD(b *testing.B) {
	const units, perUnit = 1000, 10
	rng := rand.New(rand.NewPCG(1, 2))
	ages, sigmas := make([][]float64, units), make([][]float64, units)
	for u := range units {
		ages[u], sigmas[u] = make([]float64, perUnit), make([]float64, perUnit)
		for i := range perUnit {
			s := 0.01 + 0.05*rng.Float64()
			ages[u][i], sigmas[u][i] = 201+s*rng.NormFloat64(), s
		}
	}
	opts := OutlierOptions{Rule: RuleGESD, Policy: PolicyWhenPBelow005}
	for b.Loop() {
		for u := range units {
			if _, err := FlagOutliers(ages[u], sigmas[u], opts); err != nil {
				b.Fatal(err)
			}
		}
	}
}
