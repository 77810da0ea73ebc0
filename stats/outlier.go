package stats

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/gonum/stat/distuv"
)

// WeightedResiduals returns rᵢ = (xᵢ − x̄)/sqrt(σᵢ² − σ_x̄²) for each value, x̄ and σ_x̄ the weighted mean
// and its σ. Subtracting σ_x̄² accounts for xᵢ's own pull on x̄, so that each rᵢ is N(0, 1) when the σ are
// right. It needs at least two values and returns the errors of WeightedMean otherwise.
func WeightedResiduals(values, sigmas1s []float64) ([]float64, error) {
	m, err := WeightedMean(values, sigmas1s, WeightedMeanOptions{})
	if err != nil {
		return nil, fmt.Errorf("weighted residuals: %w", err)
	}
	if m.N < 2 {
		return nil, errors.New("weighted residuals: need at least 2 values")
	}
	return residualsAgainst(values, sigmas1s, m), nil
}

func residualsAgainst(values, sigmas1s []float64, m WeightedMeanResult) []float64 {
	r := make([]float64, len(values))
	v := m.Sigma * m.Sigma
	for i, x := range values {
		r[i] = (x - m.Mean) / math.Sqrt(sigmas1s[i]*sigmas1s[i]-v)
	}
	return r
}

// RejectionStep is one removal of IterativeRejection: the date removed and the statistics of the set it
// was removed from.
type RejectionStep struct {
	Index    int     // index in the input of the date removed
	Residual float64 // its weighted residual in that set
	MSWD     float64 // MSWD of the set before removal
	MSWDHigh float64 // upper limit of that set's MSWD range (the rule's), which MSWD exceeded
}

// IterativeResult is the outcome of IterativeRejection.
type IterativeResult struct {
	Steps   []RejectionStep    // in order of removal; empty if the full set was acceptable
	Flagged []int              // the removed indices, ascending
	Kept    WeightedMeanResult // weighted mean of the dates kept (no inflation)
}

// IterativeRejection removes, one at a time, the date with the largest |weighted residual| while the MSWD of
// the remaining set exceeds the upper limit of its acceptable range under rule (MSWDRange: the 97.5 %
// quantile of χ²_f/f, or Wendt & Carl's 1 + 2·sqrt(2/f)). It stops when the MSWD is acceptable or when
// two dates remain (two dates that disagree do not say which is wrong). Ties go to the lower index. It
// needs at least two values and returns the errors of WeightedMean otherwise.
func IterativeRejection(values, sigmas1s []float64, rule MSWDRangeRule) (IterativeResult, error) {
	if err := checkDates(values, sigmas1s); err != nil {
		return IterativeResult{}, fmt.Errorf("iterative rejection: %w", err)
	}
	if len(values) < 2 {
		return IterativeResult{}, errors.New("iterative rejection: need at least 2 values")
	}
	kept := make([]int, len(values))
	for i := range kept {
		kept[i] = i
	}
	var res IterativeResult
	xs, ss := make([]float64, 0, len(values)), make([]float64, 0, len(values))
	for {
		xs, ss = xs[:0], ss[:0]
		for _, i := range kept {
			xs, ss = append(xs, values[i]), append(ss, sigmas1s[i])
		}
		m, err := WeightedMean(xs, ss, WeightedMeanOptions{Range: rule})
		if err != nil {
			return IterativeResult{}, fmt.Errorf("iterative rejection: %w", err)
		}
		if m.MSWD <= m.MSWDHigh || len(kept) <= 2 {
			res.Kept = m
			break
		}
		r := residualsAgainst(xs, ss, m)
		worst := 0
		for j := range r {
			if math.Abs(r[j]) > math.Abs(r[worst]) {
				worst = j
			}
		}
		res.Steps = append(res.Steps, RejectionStep{Index: kept[worst], Residual: r[worst], MSWD: m.MSWD, MSWDHigh: m.MSWDHigh})
		res.Flagged = append(res.Flagged, kept[worst])
		kept = slices.Delete(kept, worst, worst+1)
	}
	slices.Sort(res.Flagged)
	return res, nil
}

// ChauvenetResult is the outcome of Chauvenet.
type ChauvenetResult struct {
	Mean, SD float64   // arithmetic mean and sample standard deviation (n − 1)
	Z        []float64 // |xᵢ − Mean|/SD
	Expected []float64 // n·P(|Z| > zᵢ), the expected number of values at least as far out
	Flagged  []int     // indices with Expected < 0.5, ascending
}

// Chauvenet applies Chauvenet's criterion once (Taylor 1997, An Introduction to Error Analysis): a value
// is flagged when the number of values expected at least as far from the mean, n·P(|Z| > zᵢ) with
// zᵢ = |xᵢ − x̄|/s, is below 0.5. It is unweighted (the σ of the values play no part) and is not iterated.
// It needs at least three values and returns an error for fewer or for a NaN or infinite value. Identical
// values flag nothing (every zᵢ is 0).
func Chauvenet(values []float64) (ChauvenetResult, error) {
	mean, sd, err := unweightedMeanSD(values, 3)
	if err != nil {
		return ChauvenetResult{}, fmt.Errorf("chauvenet: %w", err)
	}
	n := float64(len(values))
	res := ChauvenetResult{Mean: mean, SD: sd, Z: make([]float64, len(values)), Expected: make([]float64, len(values))}
	for i, x := range values {
		z := 0.0
		if sd > 0 {
			z = math.Abs(x-mean) / sd
		}
		res.Z[i] = z
		res.Expected[i] = n * math.Erfc(z/math.Sqrt2)
		if res.Expected[i] < 0.5 {
			res.Flagged = append(res.Flagged, i)
		}
	}
	return res, nil
}

// unweightedMeanSD returns the mean and sample standard deviation (n − 1) of at least min finite values.
func unweightedMeanSD(values []float64, min int) (mean, sd float64, err error) {
	if len(values) == 0 {
		return 0, 0, ErrNoValues
	}
	if len(values) < min {
		return 0, 0, fmt.Errorf("need at least %d values, have %d", min, len(values))
	}
	for i, x := range values {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return 0, 0, fmt.Errorf("value %d is %g", i, x)
		}
		mean += x
	}
	mean /= float64(len(values))
	for _, x := range values {
		sd += (x - mean) * (x - mean)
	}
	return mean, math.Sqrt(sd / float64(len(values)-1)), nil
}

// GESDResult is the outcome of GeneralizedESD. R, Lambda and Candidates have one entry per step
// i = 1..len(R) (index i−1); len(R) is K unless the values left became identical earlier.
type GESDResult struct {
	K     int
	Alpha float64
	// R[i−1] = max|x − x̄|/s over the n − i + 1 values left at step i, the value reaching it being
	// Candidates[i−1] (an index into the input), which is then set aside.
	R          []float64
	Candidates []int
	// Lambda[i−1] = (n − i)·t_{p, n−i−1}/sqrt((n − i − 1 + t²)(n − i + 1)), p = 1 − α/(2(n − i + 1)).
	Lambda    []float64
	NOutliers int   // the largest i with R_i > λ_i, or 0
	Flagged   []int // Candidates[:NOutliers], ascending
}

// GeneralizedESD runs Rosner's generalized extreme Studentized deviate test (Rosner 1983, Technometrics
// 25:165) for up to k outliers at significance alpha, on the values alone (unweighted). It returns an
// error unless 1 ≤ k ≤ n − 2 and 0 < alpha < 1, or for a NaN or infinite value. If the values left at
// some step are all equal, no further outlier can be told apart and the steps stop there. Ties for the
// most extreme value go to the lower index.
func GeneralizedESD(values []float64, k int, alpha float64) (GESDResult, error) {
	n := len(values)
	if k < 1 || k > n-2 {
		return GESDResult{}, fmt.Errorf("generalized ESD: k = %d, want 1 ≤ k ≤ n − 2 = %d", k, n-2)
	}
	if !(alpha > 0 && alpha < 1) {
		return GESDResult{}, fmt.Errorf("generalized ESD: α = %g, want 0 < α < 1", alpha)
	}
	left := make([]int, n)
	for i := range left {
		left[i] = i
	}
	res := GESDResult{K: k, Alpha: alpha}
	xs := make([]float64, 0, n)
	for i := 1; i <= k; i++ {
		xs = xs[:0]
		for _, j := range left {
			xs = append(xs, values[j])
		}
		mean, sd, err := unweightedMeanSD(xs, 2)
		if err != nil {
			return GESDResult{}, fmt.Errorf("generalized ESD step %d: %w", i, err)
		}
		if sd == 0 {
			break
		}
		worst := 0
		for j, x := range xs {
			if math.Abs(x-mean) > math.Abs(xs[worst]-mean) {
				worst = j
			}
		}
		nf := float64(n - i)
		p := 1 - alpha/(2*(nf+1))
		t := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: nf - 1}.Quantile(p)
		res.R = append(res.R, math.Abs(xs[worst]-mean)/sd)
		res.Lambda = append(res.Lambda, nf*t/math.Sqrt((nf-1+t*t)*(nf+1)))
		res.Candidates = append(res.Candidates, left[worst])
		left = slices.Delete(left, worst, worst+1)
	}
	for i := len(res.R); i >= 1; i-- {
		if res.R[i-1] > res.Lambda[i-1] {
			res.NOutliers = i
			break
		}
	}
	res.Flagged = slices.Clone(res.Candidates[:res.NOutliers])
	slices.Sort(res.Flagged)
	return res, nil
}

// OutlierRule names an outlier rule for FlagOutliers.
type OutlierRule int

// Rules. The zero value, RuleNone, flags nothing.
const (
	RuleNone      OutlierRule = iota // flag nothing
	RuleMSWD                         // IterativeRejection: weighted, against the upper limit of the MSWD range
	RuleChauvenet                    // Chauvenet: unweighted, one pass
	RuleGESD                         // GeneralizedESD: unweighted, Rosner 1983
)

// String returns "none", "mswd", "chauvenet" or "gesd", the spellings ParseOutlierRule reads.
func (r OutlierRule) String() string {
	switch r {
	case RuleNone:
		return "none"
	case RuleMSWD:
		return "mswd"
	case RuleChauvenet:
		return "chauvenet"
	case RuleGESD:
		return "gesd"
	}
	return fmt.Sprintf("OutlierRule(%d)", int(r))
}

// ParseOutlierRule reads a rule from its String form, case-insensitively.
func ParseOutlierRule(s string) (OutlierRule, error) {
	t := strings.ToLower(strings.TrimSpace(s))
	for _, r := range []OutlierRule{RuleNone, RuleMSWD, RuleChauvenet, RuleGESD} {
		if t == r.String() {
			return r, nil
		}
	}
	return 0, fmt.Errorf("parse outlier rule %q: want none, mswd, chauvenet or gesd", s)
}

// Defaults of OutlierOptions for the generalized ESD.
const (
	DefaultGESDMaxOutliers = 10
	DefaultGESDAlpha       = 0.05
)

// OutlierOptions are the choices of FlagOutliers. The zero value flags nothing and never inflates.
type OutlierOptions struct {
	Rule OutlierRule
	// MaxOutliers is k of the generalized ESD; 0 means DefaultGESDMaxOutliers, lowered to n − 2 for
	// small sets. An explicit k above n − 2 is an error. Ignored by other rules.
	MaxOutliers int
	// Alpha is α of the generalized ESD; 0 means DefaultGESDAlpha. Ignored by other rules.
	Alpha float64
	// Policy is the overdispersion policy of both weighted means in the report.
	Policy Policy
	// Range is the rule of the acceptable MSWD range of both weighted means and of RuleMSWD's limit.
	Range MSWDRangeRule
}

// OutlierReport says which dates a rule flagged and gives the weighted mean with and without them. Dates
// are flagged, never removed: All always uses every date, and Flagged says which ones Kept leaves out.
type OutlierReport struct {
	Rule OutlierRule
	// Params records the parameters the rule ran with, as applied (e.g. "k=6 α=0.05"), for display
	// beside the result; empty for rules without parameters.
	Params string
	// Skipped says why the rule was not applied (too few dates for it); empty when it was applied.
	Skipped   string
	Flagged   []int              // indices into the input, ascending; empty when nothing was flagged
	Residuals []float64          // weighted residuals of every date against All (nil for a single date)
	All       WeightedMeanResult // every date
	Kept      WeightedMeanResult // the dates not flagged; equal to All when nothing was flagged
	// Details of the rule that ran, for display; at most one is non-nil.
	Iterative *IterativeResult
	Chauvenet *ChauvenetResult
	GESD      *GESDResult
}

// FlagOutliers applies opts.Rule to dates with 1σ uncertainties sigmas1s and reports what it flagged
// with the weighted mean of all dates and of the dates not flagged, both under opts.Policy. A set too
// small for the rule (fewer than 2 dates for RuleMSWD, 3 for Chauvenet, 3 for the generalized ESD) is not
// an error: nothing is flagged and Skipped says why. It returns the errors of WeightedMean for bad
// input, and an error for an unknown rule or invalid ESD parameters. Unweighted rules ignore sigmas1s
// when flagging.
func FlagOutliers(values, sigmas1s []float64, opts OutlierOptions) (OutlierReport, error) {
	wopts := WeightedMeanOptions{Policy: opts.Policy, Range: opts.Range}
	all, err := WeightedMean(values, sigmas1s, wopts)
	if err != nil {
		return OutlierReport{}, fmt.Errorf("flag outliers: %w", err)
	}
	rep := OutlierReport{Rule: opts.Rule, All: all, Kept: all}
	if all.N >= 2 {
		rep.Residuals = residualsAgainst(values, sigmas1s, all)
	}
	n := len(values)
	switch opts.Rule {
	case RuleNone:
	case RuleMSWD:
		if n < 2 {
			rep.Skipped = "needs at least 2 dates"
			break
		}
		it, err := IterativeRejection(values, sigmas1s, opts.Range)
		if err != nil {
			return OutlierReport{}, fmt.Errorf("flag outliers: %w", err)
		}
		rep.Iterative, rep.Flagged = &it, it.Flagged
	case RuleChauvenet:
		if n < 3 {
			rep.Skipped = "needs at least 3 dates"
			break
		}
		ch, err := Chauvenet(values)
		if err != nil {
			return OutlierReport{}, fmt.Errorf("flag outliers: %w", err)
		}
		rep.Chauvenet, rep.Flagged = &ch, ch.Flagged
		rep.Params = "criterion=0.5"
	case RuleGESD:
		k, alpha := opts.MaxOutliers, opts.Alpha
		if k == 0 {
			k = min(DefaultGESDMaxOutliers, n-2)
		}
		if alpha == 0 {
			alpha = DefaultGESDAlpha
		}
		rep.Params = fmt.Sprintf("k=%d α=%g", k, alpha)
		if n < 3 {
			rep.Skipped = "needs at least 3 dates"
			break
		}
		g, err := GeneralizedESD(values, k, alpha)
		if err != nil {
			return OutlierReport{}, fmt.Errorf("flag outliers: %w", err)
		}
		rep.GESD, rep.Flagged = &g, g.Flagged
	default:
		return OutlierReport{}, fmt.Errorf("flag outliers: unknown rule %d", int(opts.Rule))
	}
	if len(rep.Flagged) > 0 {
		xs, ss := make([]float64, 0, n), make([]float64, 0, n)
		for i := range values {
			if _, found := slices.BinarySearch(rep.Flagged, i); !found {
				xs, ss = append(xs, values[i]), append(ss, sigmas1s[i])
			}
		}
		if rep.Kept, err = WeightedMean(xs, ss, wopts); err != nil {
			return OutlierReport{}, fmt.Errorf("flag outliers: %w", err)
		}
	}
	return rep, nil
}
