package stats

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"
)

// BandwidthRule names a way to choose the bandwidth (kernel standard deviation) of a KDE.
// The zero value means "not set"; options that hold a BandwidthRule use DefaultBandwidthRule then.
type BandwidthRule int

const (
	// RuleScott is h = σ̂·n^(−1/5) (Scott 1992; scipy's bw_method='scott').
	RuleScott BandwidthRule = iota + 1
	// RuleSilverman is the normal-reference rule h = (4/3)^(1/5)·σ̂·n^(−1/5) ≈ 1.06·σ̂·n^(−1/5)
	// (Silverman 1986; scipy's bw_method='silverman').
	RuleSilverman
	// RuleSilvermanRobust is h = 0.9·min(σ̂, IQR/1.34)·n^(−1/5) with the IQR by Hyndman & Fan
	// type 7 (Silverman 1986).
	RuleSilvermanRobust
	// RuleISJ is the diffusion ("improved Sheather–Jones") bandwidth of Botev, Grotowski &
	// Kroese (2010); see ISJBandwidth.
	RuleISJ
	// RuleUser is a bandwidth set by the user.
	RuleUser
)

// DefaultBandwidthRule is the rule used when an option's Rule is zero.
const DefaultBandwidthRule = RuleISJ

// String returns the rule's URL name: "scott", "silverman", "silverman-robust", "isj" or "user".
// ParseBandwidthRule(r.String()) returns r for every valid rule.
func (r BandwidthRule) String() string {
	switch r {
	case RuleScott:
		return "scott"
	case RuleSilverman:
		return "silverman"
	case RuleSilvermanRobust:
		return "silverman-robust"
	case RuleISJ:
		return "isj"
	case RuleUser:
		return "user"
	}
	return fmt.Sprintf("BandwidthRule(%d)", int(r))
}

// Label returns a short human-readable name of the rule with its source, for display.
func (r BandwidthRule) Label() string {
	switch r {
	case RuleScott:
		return "Scott (1992)"
	case RuleSilverman:
		return "normal reference 1.06 (Silverman 1986)"
	case RuleSilvermanRobust:
		return "Silverman robust 0.9·min(σ, IQR/1.34)"
	case RuleISJ:
		return "ISJ diffusion (Botev et al. 2010)"
	case RuleUser:
		return "user-set"
	}
	return r.String()
}

func (r BandwidthRule) valid() bool { return r >= RuleScott && r <= RuleUser }

// ParseBandwidthRule parses a rule name as produced by String (case and surrounding blanks are
// ignored; "silverman-1.06" and "nrd" are accepted for RuleSilverman, "robust" for
// RuleSilvermanRobust). It returns an error for an empty or unknown name.
func ParseBandwidthRule(s string) (BandwidthRule, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "scott":
		return RuleScott, nil
	case "silverman", "silverman-1.06", "nrd":
		return RuleSilverman, nil
	case "silverman-robust", "robust":
		return RuleSilvermanRobust, nil
	case "isj":
		return RuleISJ, nil
	case "user":
		return RuleUser, nil
	}
	return 0, fmt.Errorf("bandwidth rule %q: unknown (want scott, silverman, silverman-robust, isj or user)", s)
}

// BandwidthOptions says how to choose a bandwidth.
type BandwidthOptions struct {
	Rule BandwidthRule // zero: DefaultBandwidthRule
	// UserMa is the bandwidth for RuleUser; it must be finite and > 0 then, and is ignored otherwise.
	UserMa float64
	// FallbackMa is used when the dates have no spread (one date, or all equal), where no rule
	// applies. Zero means 1e-3·max(1 Ma, |age|).
	FallbackMa float64
}

// Bandwidth is a chosen bandwidth and how it was chosen.
type Bandwidth struct {
	Ma        float64       // bandwidth in Ma: finite and > 0
	Rule      BandwidthRule // rule that produced Ma
	Requested BandwidthRule // rule that was asked for
	// Note is empty when the requested rule applied; otherwise it says why and what was used
	// instead, in words fit to show beside the plot.
	Note string
}

// Fallback reports whether a rule other than the requested one produced the bandwidth.
func (b Bandwidth) Fallback() bool { return b.Note != "" }

// Errors of the density routines.
var (
	ErrNoDates     = errors.New("no dates")
	ErrNonFinite   = errors.New("non-finite value")
	ErrTooFewDates = errors.New("fewer than two dates")
	ErrNoSpread    = errors.New("all dates equal")
	ErrNoRoot      = errors.New("ζ(t) has no root on [0, 0.1]")
)

// SelectBandwidth chooses a bandwidth for agesMa by opts.Rule. Weights play no part: the rules
// see the dates themselves.
//
// When the rule cannot apply, SelectBandwidth falls back and says so in Note, never failing:
// ISJ without a root of ζ(t) (typical for n ≲ 20) → RuleSilvermanRobust; a zero IQR in the robust
// rule → 0.9·σ̂·n^(−1/5); fewer than two dates or no spread → opts.FallbackMa. It returns an
// error only for bad input: no dates, a non-finite age, a span that overflows float64, an unknown
// rule, or RuleUser without a finite positive UserMa. The returned Ma is then finite and > 0.
func SelectBandwidth(agesMa []float64, opts BandwidthOptions) (Bandwidth, error) {
	rule := opts.Rule
	if rule == 0 {
		rule = DefaultBandwidthRule
	}
	if !rule.valid() {
		return Bandwidth{}, fmt.Errorf("select bandwidth: unknown rule %d", int(rule))
	}
	if err := checkAges(agesMa); err != nil {
		return Bandwidth{}, fmt.Errorf("select bandwidth: %w", err)
	}
	b := Bandwidth{Rule: rule, Requested: rule}
	if rule == RuleUser {
		if !(opts.UserMa > 0) || math.IsInf(opts.UserMa, 0) {
			return Bandwidth{}, fmt.Errorf("select bandwidth: user bandwidth %g Ma: want a finite value > 0", opts.UserMa)
		}
		b.Ma = opts.UserMa
		return b, nil
	}
	s, err := summarizeSpread(agesMa)
	if err != nil {
		return Bandwidth{}, fmt.Errorf("select bandwidth: %w", err)
	}
	if s.n < 2 || s.rangeMa == 0 {
		return fallbackNoSpread(b, s, opts.FallbackMa), nil
	}
	switch rule {
	case RuleScott:
		b.Ma = s.sdMa * math.Pow(float64(s.n), -0.2)
	case RuleSilverman:
		b.Ma = math.Pow(4.0/3.0, 0.2) * s.sdMa * math.Pow(float64(s.n), -0.2)
	case RuleSilvermanRobust:
		b = robustSilverman(b, s)
	case RuleISJ:
		r, err := ISJBandwidth(agesMa, 0)
		if err == nil && r.BandwidthMa > 0 && !math.IsInf(r.BandwidthMa, 0) {
			b.Ma = r.BandwidthMa
			break
		}
		why := "ISJ could not be computed"
		if errors.Is(err, ErrNoRoot) {
			why = fmt.Sprintf("ISJ: ζ(t) has no root on [0, 0.1] for these %d dates (usual for few or clustered dates)", s.n)
		}
		b.Rule = RuleSilvermanRobust
		b = robustSilverman(b, s)
		b.Note = joinNotes(why+"; used the Silverman robust rule instead", b.Note)
	}
	// Underflow (a span of a few ulps) is the only way to get here without a usable value.
	if !(b.Ma > 0) || math.IsInf(b.Ma, 0) {
		return fallbackNoSpread(b, s, opts.FallbackMa), nil
	}
	return b, nil
}

// robustSilverman applies 0.9·min(σ̂, IQR/1.34)·n^(−1/5), using σ̂ alone when the IQR is zero.
func robustSilverman(b Bandwidth, s spread) Bandwidth {
	scale := math.Min(s.sdMa, s.iqrMa()/1.34)
	if !(scale > 0) {
		scale = s.sdMa
		b.Note = joinNotes(b.Note, "IQR is zero (at least half the dates are equal), so the robust rule used σ̂ alone")
	}
	b.Ma = 0.9 * scale * math.Pow(float64(s.n), -0.2)
	return b
}

func fallbackNoSpread(b Bandwidth, s spread, fallbackMa float64) Bandwidth {
	h := fallbackMa
	how := "the caller's fallback"
	if !(h > 0) || math.IsInf(h, 0) {
		h = 1e-3 * math.Max(1, math.Abs(s.minMa)) // all dates equal, or just one
		how = "0.1 % of the age"
	}
	why := "all dates are equal"
	if s.n < 2 {
		why = "there is only one date"
	} else if s.rangeMa > 0 {
		why = "the dates' spread is too small to resolve"
	}
	b.Ma = h
	b.Note = fmt.Sprintf("no bandwidth rule applies because %s; bandwidth set to %.4g Ma (%s)", why, h, how)
	return b
}

func joinNotes(notes ...string) string {
	var parts []string
	for _, n := range notes {
		if n != "" {
			parts = append(parts, n)
		}
	}
	return strings.Join(parts, "; ")
}

// spread holds the scale summaries the bandwidth rules need.
type spread struct {
	n       int
	minMa   float64
	rangeMa float64   // max − min
	sdMa    float64   // sample standard deviation, ddof = 1
	scaled  []float64 // (x − min)/range, for the IQR
}

// iqrMa returns the interquartile range by Hyndman & Fan type 7; it reorders s.scaled.
func (s spread) iqrMa() float64 {
	return s.rangeMa * (quantile7(s.scaled, 0.75) - quantile7(s.scaled, 0.25))
}

func checkAges(agesMa []float64) error {
	if len(agesMa) == 0 {
		return ErrNoDates
	}
	for i, x := range agesMa {
		if math.IsNaN(x - x) { // NaN or ±Inf
			return fmt.Errorf("age %d is %v: %w", i, x, ErrNonFinite)
		}
	}
	return nil
}

// summarizeSpread works on (x − min)/range so that no intermediate overflows for any finite
// input whose range is itself finite. It runs in O(n): quantiles come from selection, not a sort.
func summarizeSpread(agesMa []float64) (spread, error) {
	lo, hi := ageSpan(agesMa)
	r := hi - lo
	if math.IsInf(r, 0) {
		return spread{}, errors.New("the dates span more than the float64 range")
	}
	n := len(agesMa)
	z := make([]float64, n)
	var mean float64
	for i, x := range agesMa {
		if r > 0 {
			z[i] = (x - lo) / r
		}
		mean += z[i]
	}
	mean /= float64(n)
	var ss float64
	for _, v := range z {
		d := v - mean
		ss += d * d
	}
	s := spread{n: n, minMa: lo, rangeMa: r}
	if n > 1 {
		s.sdMa = r * math.Sqrt(ss/float64(n-1))
	}
	s.scaled = z
	return s, nil
}

// quantile7 is the Hyndman & Fan type 7 quantile of x, found by selection in O(n); it reorders x.
func quantile7(x []float64, p float64) float64 {
	n := len(x)
	h := float64(n-1) * p
	i := int(math.Floor(h))
	if i >= n-1 {
		return slices.Max(x)
	}
	selectKth(x, i)
	lo := x[i]
	next := slices.Min(x[i+1:])
	return lo + (h-float64(i))*(next-lo)
}

// selectKth reorders x so that x[k] is the k-th smallest, everything before it ≤ x[k] and
// everything after it ≥ x[k] (Hoare's selection with a median-of-three pivot). x holds no NaN.
func selectKth(x []float64, k int) {
	lo, hi := 0, len(x)-1
	for hi > lo {
		mid := lo + (hi-lo)/2
		if x[mid] < x[lo] {
			x[mid], x[lo] = x[lo], x[mid]
		}
		if x[hi] < x[lo] {
			x[hi], x[lo] = x[lo], x[hi]
		}
		if x[hi] < x[mid] {
			x[hi], x[mid] = x[mid], x[hi]
		}
		pivot := x[mid]
		i, j := lo, hi
		for i <= j {
			for x[i] < pivot {
				i++
			}
			for x[j] > pivot {
				j--
			}
			if i <= j {
				x[i], x[j] = x[j], x[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return
		}
	}
}

// sortedQuantile7 is the Hyndman & Fan (1996) type 7 quantile (numpy's and R's default) of
// sorted x: linear interpolation between order statistics at h = (n−1)p.
func sortedQuantile7(x []float64, p float64) float64 {
	n := len(x)
	if n == 1 {
		return x[0]
	}
	h := float64(n-1) * p
	i := int(math.Floor(h))
	if i >= n-1 {
		return x[n-1]
	}
	return x[i] + (h-float64(i))*(x[i+1]-x[i])
}

// AbramsonBandwidthsMa returns Abramson's (1982) adaptive bandwidths
// hᵢ = h·(f̃(xᵢ)/g)^(−1/2), where f̃ is the fixed-bandwidth KDE with pilotMa (weighted by weight
// when non-nil) evaluated exactly at each date and g is the geometric mean of the f̃(xᵢ)
// (weighted likewise). It also returns g. The result is a new slice in the order of agesMa.
func AbramsonBandwidthsMa(agesMa, weight []float64, pilotMa float64) (hMa []float64, g float64, err error) {
	m := Mixture{AgeMa: agesMa, BandwidthMa: []float64{pilotMa}, Weight: weight}
	pilot, err := m.Eval(agesMa)
	if err != nil {
		return nil, 0, fmt.Errorf("abramson bandwidths: %w", err)
	}
	var sumW, sumLog float64
	for i, f := range pilot {
		w := 1.0
		if weight != nil {
			w = weight[i]
		}
		if w == 0 {
			continue
		}
		// f̃(xᵢ) ≥ wᵢφ(0)/(h·Σw) > 0, so the logarithm is finite.
		sumW += w
		sumLog += w * math.Log(f)
	}
	g = math.Exp(sumLog / sumW)
	hMa = make([]float64, len(agesMa))
	for i, f := range pilot {
		hMa[i] = pilotMa * math.Sqrt(g/f)
		if f == 0 { // only a zero-weight date far from all others; it adds nothing anyway
			hMa[i] = pilotMa
		}
	}
	return hMa, g, nil
}
