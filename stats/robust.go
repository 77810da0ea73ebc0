package stats

import (
	"errors"
	"fmt"
	"math"
	"slices"
)

// MADScale turns a median absolute deviation into a consistent estimate of the standard deviation of a
// normal distribution: σ̂ = 1.4826·MAD (Hampel 1974, JASA 69:383).
const MADScale = 1.4826

// ModifiedZScale is the factor of the modified z-score 0.6745·(x − median)/MAD (Iglewicz & Hoaglin 1993).
const ModifiedZScale = 0.6745

// DefaultModifiedZMin is the modified z-score above which a value is an outlier (Iglewicz & Hoaglin 1993).
const DefaultModifiedZMin = 3.5

// meanADScale makes the mean absolute deviation a consistent σ estimate for a normal distribution
// (sqrt(π/2)); used by ModifiedZ when the MAD is zero.
const meanADScale = 1.2533141373155003

// Median returns the median of x (the mean of the two middle values for even length). It returns NaN for
// an empty slice. x is not modified. NaN values in x give an unspecified result: remove them first.
func Median(x []float64) float64 {
	if len(x) == 0 {
		return math.NaN()
	}
	s := slices.Clone(x)
	slices.Sort(s)
	return robustMedianSorted(s)
}

func robustMedianSorted(s []float64) float64 {
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return 0.5*s[n/2-1] + 0.5*s[n/2] // halves first: no overflow
}

// MAD returns the raw (unscaled) median absolute deviation from the median, median(|x − median(x)|). It
// returns NaN for an empty slice. Multiply by MADScale, or call RobustSigma, for a σ estimate.
func MAD(x []float64) float64 {
	if len(x) == 0 {
		return math.NaN()
	}
	m := Median(x)
	d := make([]float64, len(x))
	for i, v := range x {
		d[i] = math.Abs(v - m)
	}
	slices.Sort(d)
	return robustMedianSorted(d)
}

// RobustSigma returns σ̂ = 1.4826·MAD, a standard deviation estimate that a minority of outliers cannot
// inflate (Hampel 1974). NaN for an empty slice.
func RobustSigma(x []float64) float64 {
	return MADScale * MAD(x)
}

// ModifiedZ returns the modified z-scores 0.6745·(xᵢ − median)/MAD of Iglewicz & Hoaglin (1993). When the
// MAD is zero (more than half the values equal) it falls back to (xᵢ − median)/(1.2533·mean absolute
// deviation), and when that is zero too every score is 0. The result is a new slice of len(x); finite
// input gives finite output.
func ModifiedZ(x []float64) []float64 {
	z := make([]float64, len(x))
	if len(x) == 0 {
		return z
	}
	m := Median(x)
	mad := MAD(x)
	scale := mad / ModifiedZScale
	if !(mad > 0) || math.IsInf(scale, 0) {
		var s float64
		for _, v := range x {
			s += math.Abs(v-m) / float64(len(x))
		}
		scale = meanADScale * s
	}
	if !(scale > 0) || math.IsInf(scale, 0) {
		return z
	}
	for i, v := range x {
		z[i] = (v - m) / scale
	}
	return z
}

// RunningMedian returns the centred running median of x over an odd window of width samples. Near the
// ends the window shrinks symmetrically (the first and last values are kept as they are). A window of 1
// returns a copy. It returns an error when width is not a positive odd number.
func RunningMedian(x []float64, width int) ([]float64, error) {
	if width < 1 || width%2 == 0 {
		return nil, fmt.Errorf("running median: window %d is not a positive odd number", width)
	}
	out := make([]float64, len(x))
	h := width / 2
	buf := make([]float64, 0, width)
	for i := range x {
		r := min(h, i, len(x)-1-i)
		buf = append(buf[:0], x[i-r:i+r+1]...)
		slices.Sort(buf)
		out[i] = robustMedianSorted(buf)
	}
	return out, nil
}

// AnomalyMethod selects how FindAnomalies sets its threshold.
type AnomalyMethod int

const (
	// AnomalyModifiedZ flags samples whose modified z-score exceeds ZMin (default 3.5).
	AnomalyModifiedZ AnomalyMethod = iota
	// AnomalyRobustSigma flags samples above the background median + K·σ̂ (σ̂ = 1.4826·MAD).
	AnomalyRobustSigma
)

// String returns the method's name.
func (m AnomalyMethod) String() string {
	switch m {
	case AnomalyModifiedZ:
		return "modified z"
	case AnomalyRobustSigma:
		return "median + k·σ̂"
	}
	return fmt.Sprintf("AnomalyMethod(%d)", int(m))
}

// AnomalyOptions configures FindAnomalies. The zero value means: log10 values, modified z > 3.5, at
// least 2 consecutive samples, background from all samples.
type AnomalyOptions struct {
	Method AnomalyMethod
	// ZMin is the modified z-score threshold of AnomalyModifiedZ; 0 means DefaultModifiedZMin.
	ZMin float64
	// K is the multiple of σ̂ of AnomalyRobustSigma; 0 means 3.
	K float64
	// MinRun is the least number of consecutive flagged samples that make an anomaly; 0 means 2 [T].
	MinRun int
	// Linear works on the values themselves instead of their log10 (the default, [T]).
	Linear bool
	// Background marks the samples that define the baseline (median, MAD); nil means all samples.
	// It must have the length of the values when set.
	Background []bool
}

// Anomaly is one run of consecutive samples above the threshold. Indices refer to the input slices.
type Anomaly struct {
	BaseIndex, TopIndex     int     // first and last sample of the run (lowest and highest)
	BaseHeightM, TopHeightM float64 // their heights
	PeakIndex               int
	PeakValue               float64 // in the units of the input (not log10)
	PeakHeightM             float64
	// MultipleOfBackground is PeakValue divided by the background median, both in input units.
	MultipleOfBackground float64
	// RobustZ is the modified z-score of the peak against the background (on log10 values unless Linear).
	RobustZ float64
	N       int // samples in the run
}

// AnomalyResult holds the anomalies and the baseline they were measured against. Baseline values are in
// the working scale: log10 of the input unless Linear was set.
type AnomalyResult struct {
	Anomalies        []Anomaly
	BackgroundMedian float64 // working scale
	BackgroundMAD    float64 // working scale, unscaled MAD
	SigmaHat         float64 // 1.4826·MAD, working scale
	Threshold        float64 // working scale: values above it are flagged
	Log10            bool    // whether the working scale is log10
	NBackground      int
}

// ErrNoBackground is returned when no finite sample is left to define a baseline.
var ErrNoBackground = errors.New("no background samples")

// FindAnomalies finds intervals of a section where values (e.g. HgPpb or Hg/TOC) stand above a robust
// baseline. Samples must be ordered by height (heightM non-decreasing). NaN values mark samples without a
// value (e.g. a ratio that is not evaluable): they are never flagged, take no part in the baseline and
// break a run. By default the work is on log10 values, so every finite value must then be > 0; otherwise
// an error is returned. Each anomaly needs at least MinRun consecutive flagged samples.
//
// When the background MAD is zero, the modified z-scores fall back as in ModifiedZ; a zero spread of the
// working values in the background then flags every value above the background median.
func FindAnomalies(heightM, values []float64, opt AnomalyOptions) (AnomalyResult, error) {
	n := len(values)
	if len(heightM) != n {
		return AnomalyResult{}, fmt.Errorf("anomalies: %d heights for %d values", len(heightM), n)
	}
	if opt.Background != nil && len(opt.Background) != n {
		return AnomalyResult{}, fmt.Errorf("anomalies: background mask of %d for %d values", len(opt.Background), n)
	}
	for i := 1; i < n; i++ {
		if !(heightM[i] >= heightM[i-1]) {
			return AnomalyResult{}, fmt.Errorf("anomalies: heights not ordered at sample %d", i)
		}
	}
	zMin := opt.ZMin
	if zMin == 0 {
		zMin = DefaultModifiedZMin
	}
	k := opt.K
	if k == 0 {
		k = 3
	}
	minRun := opt.MinRun
	if minRun == 0 {
		minRun = 2
	}
	if minRun < 1 || zMin < 0 || k < 0 {
		return AnomalyResult{}, fmt.Errorf("anomalies: invalid options (MinRun %d, ZMin %g, K %g)", opt.MinRun, opt.ZMin, opt.K)
	}

	w := make([]float64, n)
	var bg []float64
	for i, v := range values {
		switch {
		case math.IsNaN(v):
			w[i] = math.NaN()
			continue
		case math.IsInf(v, 0):
			return AnomalyResult{}, fmt.Errorf("anomalies: value %d is infinite", i)
		case !opt.Linear && v <= 0:
			return AnomalyResult{}, fmt.Errorf("anomalies: value %d is %g, not > 0 (log10 scale)", i, v)
		}
		if opt.Linear {
			w[i] = v
		} else {
			w[i] = math.Log10(v)
		}
		if opt.Background == nil || opt.Background[i] {
			bg = append(bg, w[i])
		}
	}
	if len(bg) == 0 {
		return AnomalyResult{}, fmt.Errorf("anomalies: %w", ErrNoBackground)
	}

	res := AnomalyResult{Log10: !opt.Linear, NBackground: len(bg)}
	res.BackgroundMedian = Median(bg)
	res.BackgroundMAD = MAD(bg)
	res.SigmaHat = MADScale * res.BackgroundMAD
	zScale := res.BackgroundMAD / ModifiedZScale
	if !(zScale > 0) || math.IsInf(zScale, 0) {
		var s float64
		for _, v := range bg {
			s += math.Abs(v-res.BackgroundMedian) / float64(len(bg))
		}
		zScale = meanADScale * s
	}
	if math.IsInf(zScale, 0) || math.IsNaN(zScale) {
		zScale = 0
	}
	robustZ := func(v float64) float64 {
		d := v - res.BackgroundMedian
		if zScale == 0 {
			switch {
			case d > 0:
				return math.MaxFloat64
			case d < 0:
				return -math.MaxFloat64
			}
			return 0
		}
		z := d / zScale
		return math.Max(-math.MaxFloat64, math.Min(math.MaxFloat64, z))
	}
	switch opt.Method {
	case AnomalyModifiedZ:
		res.Threshold = res.BackgroundMedian + zMin*zScale
	case AnomalyRobustSigma:
		res.Threshold = res.BackgroundMedian + k*res.SigmaHat
	default:
		return AnomalyResult{}, fmt.Errorf("anomalies: unknown method %v", opt.Method)
	}
	if math.IsInf(res.Threshold, 0) {
		res.Threshold = math.Copysign(math.MaxFloat64, res.Threshold)
	}
	bgMedianInput := res.BackgroundMedian
	if !opt.Linear {
		bgMedianInput = math.Pow(10, res.BackgroundMedian)
	}

	flush := func(start, end int) {
		if end-start+1 < minRun {
			return
		}
		a := Anomaly{BaseIndex: start, TopIndex: end, BaseHeightM: heightM[start], TopHeightM: heightM[end], N: end - start + 1}
		a.PeakIndex = start
		for i := start + 1; i <= end; i++ {
			if w[i] > w[a.PeakIndex] {
				a.PeakIndex = i
			}
		}
		a.PeakValue = values[a.PeakIndex]
		a.PeakHeightM = heightM[a.PeakIndex]
		a.RobustZ = robustZ(w[a.PeakIndex])
		if bgMedianInput != 0 {
			a.MultipleOfBackground = a.PeakValue / bgMedianInput
		}
		if math.IsInf(a.MultipleOfBackground, 0) || math.IsNaN(a.MultipleOfBackground) {
			a.MultipleOfBackground = math.Copysign(math.MaxFloat64, a.PeakValue)
		}
		res.Anomalies = append(res.Anomalies, a)
	}
	start := -1
	for i, v := range w {
		if !math.IsNaN(v) && v > res.Threshold {
			if start < 0 {
				start = i
			}
			continue
		}
		if start >= 0 {
			flush(start, i-1)
			start = -1
		}
	}
	if start >= 0 {
		flush(start, n-1)
	}
	return res, nil
}
