package stats

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"sync"

	"gonum.org/v1/gonum/stat/distuv"
)

// Policy says when the σ of a weighted mean is inflated by sqrt(MSWD) for overdispersion [T]. The result
// records which policy produced the reported σ.
type Policy int

// Policies. The zero value, PolicyNever, reports the plain σ of the mean.
const (
	PolicyNever          Policy = iota // never inflate
	PolicyWhenMSWDAbove1               // inflate by sqrt(MSWD) whenever MSWD > 1
	PolicyWhenPBelow005                // inflate by sqrt(MSWD) only when MSWD > 1 and p < 0.05
)

// String returns "never", "mswd>1" or "p<0.05", the spellings ParsePolicy reads (meant for URL queries).
func (p Policy) String() string {
	switch p {
	case PolicyNever:
		return "never"
	case PolicyWhenMSWDAbove1:
		return "mswd>1"
	case PolicyWhenPBelow005:
		return "p<0.05"
	}
	return fmt.Sprintf("Policy(%d)", int(p))
}

// ParsePolicy reads a Policy from its String form, case-insensitively; it also accepts "mswd" and "p".
func ParsePolicy(s string) (Policy, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "never":
		return PolicyNever, nil
	case "mswd>1", "mswd":
		return PolicyWhenMSWDAbove1, nil
	case "p<0.05", "p":
		return PolicyWhenPBelow005, nil
	}
	return 0, fmt.Errorf("parse policy %q: want never, mswd>1 or p<0.05", s)
}

// MSWDRangeRule says how the acceptable MSWD range of a weighted mean is made. The zero value,
// RangeChi2, is the exact rule.
type MSWDRangeRule int

// Range rules.
const (
	// RangeChi2 takes the 2.5 % and 97.5 % quantiles of χ²_f/f, the distribution of the MSWD of f + 1
	// values whose σ are right: a two-sided 95 % range, exact for any f.
	RangeChi2 MSWDRangeRule = iota
	// RangeWendtCarl is the published normal approximation 1 ± 2·sqrt(2/f), lower limit floored at 0
	// (Wendt & Carl 1991, Chem. Geol. 86:275). It is close to RangeChi2 for large f only: for f = 1 its
	// upper limit is 3.83 against the exact 5.02. Kept to compare with papers that used it.
	RangeWendtCarl
)

// String returns "chi2" or "wendt-carl", the spellings ParseMSWDRangeRule reads (meant for URL queries).
func (r MSWDRangeRule) String() string {
	switch r {
	case RangeChi2:
		return "chi2"
	case RangeWendtCarl:
		return "wendt-carl"
	}
	return fmt.Sprintf("MSWDRangeRule(%d)", int(r))
}

// ParseMSWDRangeRule reads a rule from its String form, case-insensitively.
func ParseMSWDRangeRule(s string) (MSWDRangeRule, error) {
	t := strings.ToLower(strings.TrimSpace(s))
	for _, r := range []MSWDRangeRule{RangeChi2, RangeWendtCarl} {
		if t == r.String() {
			return r, nil
		}
	}
	return 0, fmt.Errorf("parse MSWD range rule %q: want chi2 or wendt-carl", s)
}

// WeightedMeanOptions are the choices of WeightedMean. The zero value never inflates and judges the MSWD
// by the exact χ² range.
type WeightedMeanOptions struct {
	Policy Policy
	Range  MSWDRangeRule
}

// WeightedMeanResult is an inverse-variance weighted mean with its dispersion statistics. Mean and the σ
// are in the units of the input (Ma for ages); every σ is 1σ.
type WeightedMeanResult struct {
	Mean  float64 // Σwᵢxᵢ/Σwᵢ, wᵢ = 1/σᵢ²
	Sigma float64 // (Σwᵢ)^-½, the σ of the mean from the input σ alone
	N     int     // number of values
	DoF   int     // degrees of freedom f = N − 1
	S     float64 // Σwᵢ(xᵢ − Mean)², χ² with f degrees of freedom if the σ are right
	// MSWDDefined is false when N = 1: then MSWD, P, MSWDLow and MSWDHigh are NaN and InRange is false.
	MSWDDefined bool
	MSWD        float64 // S/f
	P           float64 // P(χ²_f > S)
	// MSWDLow and MSWDHigh bound the acceptable MSWD under Range (MSWDRange); InRange reports
	// MSWDLow ≤ MSWD ≤ MSWDHigh.
	MSWDLow, MSWDHigh float64
	InRange           bool
	Range             MSWDRangeRule // the rule of the range
	Policy            Policy        // the policy applied
	Inflated          bool          // whether the policy inflated the σ
	Factor            float64       // sqrt(MSWD) if Inflated, else 1
	SigmaReported     float64       // Sigma·Factor, the σ to report under Policy
}

// ErrNoValues is returned by WeightedMean and the outlier rules when given no values.
var ErrNoValues = errors.New("no values")

// WeightedMean returns the inverse-variance weighted mean of values with 1σ uncertainties sigmas1s
// (convert tabulated 2σ with To1Sigma first), its χ² statistics, and the σ to report under
// opts.Policy (Wendt & Carl 1991, Chem. Geol. 86:275). Systematic uncertainties shared by all the values
// (tracer, decay constant, monitor age) must not be in sigmas1s: add them to the result with UPbXYZ.
//
// It returns ErrNoValues for no values and an error if the slices differ in length, a value or σ is NaN
// or infinite, a σ is ≤ 0, or the policy is unknown. One value is allowed: its mean is itself, DoF is
// 0 and MSWD is undefined (see MSWDDefined). The inputs are not modified.
func WeightedMean(values, sigmas1s []float64, opts WeightedMeanOptions) (WeightedMeanResult, error) {
	if err := checkDates(values, sigmas1s); err != nil {
		return WeightedMeanResult{}, fmt.Errorf("weighted mean: %w", err)
	}
	if opts.Policy < PolicyNever || opts.Policy > PolicyWhenPBelow005 {
		return WeightedMeanResult{}, fmt.Errorf("weighted mean: unknown policy %d", int(opts.Policy))
	}
	if opts.Range < RangeChi2 || opts.Range > RangeWendtCarl {
		return WeightedMeanResult{}, fmt.Errorf("weighted mean: unknown MSWD range rule %d", int(opts.Range))
	}
	n := len(values)
	// Centre on the first value so that S does not lose digits to a large common offset (ages ~ 200 Ma
	// with σ ~ 0.01 Ma).
	x0 := values[0]
	var sw, swx float64
	for i, x := range values {
		w := 1 / (sigmas1s[i] * sigmas1s[i])
		sw += w
		swx += w * (x - x0)
	}
	dm := swx / sw
	var s float64
	for i, x := range values {
		d := (x - x0 - dm) / sigmas1s[i]
		s += d * d
	}
	r := WeightedMeanResult{
		Mean:   x0 + dm,
		Sigma:  1 / math.Sqrt(sw),
		N:      n,
		DoF:    n - 1,
		S:      s,
		Policy: opts.Policy,
		Range:  opts.Range,
		Factor: 1,
	}
	if n == 1 {
		r.MSWD, r.P, r.MSWDLow, r.MSWDHigh = math.NaN(), math.NaN(), math.NaN(), math.NaN()
	} else {
		f := float64(r.DoF)
		r.MSWDDefined = true
		r.MSWD = s / f
		r.P = distuv.ChiSquared{K: f}.Survival(s)
		r.MSWDLow, r.MSWDHigh = MSWDRange(r.DoF, opts.Range)
		r.InRange = r.MSWD >= r.MSWDLow && r.MSWD <= r.MSWDHigh
		switch opts.Policy {
		case PolicyWhenMSWDAbove1:
			r.Inflated = r.MSWD > 1
		case PolicyWhenPBelow005:
			r.Inflated = r.MSWD > 1 && r.P < 0.05
		}
	}
	if r.Inflated {
		r.Factor = math.Sqrt(r.MSWD)
	}
	r.SigmaReported = r.Sigma * r.Factor
	return r, nil
}

// MSWDRange returns the acceptable MSWD range for f degrees of freedom under rule (Chi2Range or
// WendtCarlRange). For f < 1 or an unknown rule both are NaN.
func MSWDRange(dof int, rule MSWDRangeRule) (low, high float64) {
	switch rule {
	case RangeChi2:
		return Chi2Range(dof)
	case RangeWendtCarl:
		return WendtCarlRange(dof)
	}
	return math.NaN(), math.NaN()
}

// Chi2Range returns the 2.5 % and 97.5 % quantiles of χ²_f/f for f degrees of freedom: the range that
// holds the MSWD of f + 1 values with right σ 95 % of the time. For f < 1 both are NaN.
// The quantiles depend on f alone and each costs a root search, while a unit's summary asks for them at
// every rejection step: they are kept once computed (chi2Ranges), for f up to maxKeptChi2DoF.
func Chi2Range(dof int) (low, high float64) {
	if dof < 1 {
		return math.NaN(), math.NaN()
	}
	if v, ok := chi2Ranges.Load(dof); ok {
		r := v.([2]float64)
		return r[0], r[1]
	}
	low, high = chi2RangeOf(dof)
	if dof <= maxKeptChi2DoF {
		chi2Ranges.Store(dof, [2]float64{low, high})
	}
	return low, high
}

// chi2Ranges holds Chi2Range's results by degrees of freedom (int → [2]float64); maxKeptChi2DoF bounds
// it (at most 100,000 entries of a few dozen bytes).
var chi2Ranges sync.Map

const maxKeptChi2DoF = 100_000

// chi2RangeOf computes Chi2Range for dof ≥ 1.
func chi2RangeOf(dof int) (low, high float64) {
	f := float64(dof)
	c := distuv.ChiSquared{K: f}
	return c.Quantile(0.025) / f, c.Quantile(0.975) / f
}

// WendtCarlRange returns the acceptable MSWD range 1 ± 2·sqrt(2/f) for f degrees of freedom, the lower
// limit floored at 0 (Wendt & Carl 1991). For f < 1 both are NaN.
func WendtCarlRange(dof int) (low, high float64) {
	if dof < 1 {
		return math.NaN(), math.NaN()
	}
	h := 2 * math.Sqrt(2/float64(dof))
	return math.Max(0, 1-h), 1 + h
}

// checkDates validates paired values and 1σ uncertainties.
func checkDates(values, sigmas1s []float64) error {
	if len(values) == 0 {
		return ErrNoValues
	}
	if len(values) != len(sigmas1s) {
		return fmt.Errorf("%d values but %d uncertainties", len(values), len(sigmas1s))
	}
	for i, x := range values {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return fmt.Errorf("value %d is %g", i, x)
		}
		if s := sigmas1s[i]; !(s > 0) || math.IsInf(s, 0) {
			return fmt.Errorf("uncertainty %d is %g, want finite and > 0", i, s)
		} else if math.IsInf(1/(s*s), 0) {
			return fmt.Errorf("uncertainty %d is %g: too small to weigh (1/σ² is not finite)", i, s)
		}
	}
	return nil
}
