package stats

import (
	"errors"
	"fmt"
	"math"
)

// DefaultChangepointPenalty returns the BIC-type penalty p·ln n with p = 2 (a new mean and a change
// position for every added segment), in units of the Gaussian cost Σ(x − mean)²/σ̂², which is −2·log
// likelihood up to a constant.
func DefaultChangepointPenalty(n int) float64 {
	if n < 2 {
		return 0
	}
	return 2 * math.Log(float64(n))
}

// ChangepointOptions configures SegmentOP and SegmentPELT. The zero value uses the defaults.
type ChangepointOptions struct {
	// Penalty is added for every segment; 0 means DefaultChangepointPenalty(n). Larger values give fewer
	// change points. It must not be negative.
	Penalty float64
	// MinSegment is the least number of samples in a segment; 0 means 2.
	MinSegment int
	// SigmaHat is the noise standard deviation used to scale the cost; 0 means estimated robustly as
	// 1.4826·MAD of the first differences / √2 (a mean shift affects only a few differences).
	SigmaHat float64
}

// Segmentation is a split of a series into segments of constant mean.
type Segmentation struct {
	// Starts holds the first index of every segment, Starts[0] = 0.
	Starts []int
	// Changepoints holds the first index of every segment after the first (Starts[1:]).
	Changepoints []int
	Means        []float64 // mean of every segment
	// Cost is the minimised penalised cost: Σ over segments of Σ(x − mean)²/σ̂² + Penalty·(segments − 1).
	Cost       float64
	SigmaHat   float64 // σ̂ used (estimated or given); 0 for a constant series
	Penalty    float64
	MinSegment int
	Method     string // "OP" or "PELT"
}

// ErrEmptySeries is returned by the segmentation functions for a series without values.
var ErrEmptySeries = errors.New("empty series")

// SegmentOP segments x into pieces of constant mean by exact optimal partitioning (Jackson et al. 2005,
// IEEE Signal Process. Lett. 12:105): it minimises the penalised Gaussian cost over all segmentations with
// segments of at least MinSegment samples, in O(n²) time. A series shorter than 2·MinSegment is one
// segment. Values must be finite; the error says otherwise. It gives the same result as SegmentPELT.
func SegmentOP(x []float64, opt ChangepointOptions) (Segmentation, error) {
	return segmentMeans(x, opt, false)
}

// SegmentPELT gives exactly the segmentation of SegmentOP, with the pruning of Killick, Fearnhead &
// Eckley (2012, JASA 107:1590), usually in close to O(n) time when change points keep appearing as the
// series grows. Candidates are pruned only after MinSegment further samples, which keeps the pruning exact
// with a minimum segment length.
func SegmentPELT(x []float64, opt ChangepointOptions) (Segmentation, error) {
	return segmentMeans(x, opt, true)
}

func segmentMeans(x []float64, opt ChangepointOptions, prune bool) (Segmentation, error) {
	n := len(x)
	if n == 0 {
		return Segmentation{}, fmt.Errorf("segment: %w", ErrEmptySeries)
	}
	for i, v := range x {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return Segmentation{}, fmt.Errorf("segment: value %d is %g", i, v)
		}
	}
	m := opt.MinSegment
	if m == 0 {
		m = 2
	}
	if m < 1 {
		return Segmentation{}, fmt.Errorf("segment: MinSegment %d < 1", opt.MinSegment)
	}
	beta := opt.Penalty
	if beta == 0 {
		beta = DefaultChangepointPenalty(n)
	}
	if beta < 0 || math.IsNaN(beta) || math.IsInf(beta, 0) {
		return Segmentation{}, fmt.Errorf("segment: penalty %g", opt.Penalty)
	}
	if opt.SigmaHat < 0 || math.IsNaN(opt.SigmaHat) || math.IsInf(opt.SigmaHat, 0) {
		return Segmentation{}, fmt.Errorf("segment: SigmaHat %g", opt.SigmaHat)
	}
	seg := Segmentation{Penalty: beta, MinSegment: m, Method: "OP"}
	if prune {
		seg.Method = "PELT"
	}
	seg.SigmaHat = opt.SigmaHat
	if seg.SigmaHat == 0 {
		seg.SigmaHat = diffSigma(x)
	}

	// Prefix sums of the centred series keep the cost accurate for large offsets.
	var mean float64
	for i, v := range x {
		mean += (v - mean) / float64(i+1)
	}
	s1 := make([]float64, n+1)
	s2 := make([]float64, n+1)
	for i, v := range x {
		d := v - mean
		s1[i+1] = s1[i] + d
		s2[i+1] = s2[i] + d*d
	}
	if seg.SigmaHat == 0 || n < 2*m {
		seg.Starts = []int{0}
		seg.Changepoints = []int{}
		seg.Means = []float64{mean}
		if seg.SigmaHat > 0 {
			seg.Cost = math.Max(0, s2[n]-s1[n]*s1[n]/float64(n)) / (seg.SigmaHat * seg.SigmaHat)
		}
		return seg, nil
	}
	inv := 1 / (seg.SigmaHat * seg.SigmaHat)
	cost := func(s, t int) float64 { // segment x[s:t]
		d := s1[t] - s1[s]
		c := s2[t] - s2[s] - d*d/float64(t-s)
		return math.Max(0, c) * inv
	}

	f := make([]float64, n+1)
	last := make([]int, n+1)
	f[0] = -beta
	for t := 1; t <= n; t++ {
		f[t] = math.Inf(1)
		last[t] = -1
	}
	type cand struct{ s, prunedAt int }
	var cands []cand // PELT candidate set, ascending s
	for t := m; t <= n; t++ {
		best, arg := math.Inf(1), -1
		if prune {
			// s = t − m becomes eligible now; drop candidates pruned at least m steps ago.
			if s := t - m; s == 0 || s >= m {
				cands = append(cands, cand{s, -1})
			}
			k := 0
			for _, c := range cands {
				if c.prunedAt >= 0 && t-c.prunedAt >= m {
					continue
				}
				cands[k] = c
				k++
			}
			cands = cands[:k]
			for _, c := range cands {
				if v := f[c.s] + cost(c.s, t) + beta; v < best {
					best, arg = v, c.s
				}
			}
		} else {
			for s := 0; s <= t-m; s++ {
				if s != 0 && s < m {
					continue // no valid segmentation ends at s
				}
				if v := f[s] + cost(s, t) + beta; v < best {
					best, arg = v, s
				}
			}
		}
		f[t], last[t] = best, arg
		if prune && !math.IsInf(best, 1) {
			tol := 1e-9 * (1 + math.Abs(best))
			for i, c := range cands {
				if c.prunedAt < 0 && f[c.s]+cost(c.s, t) > best+tol {
					cands[i].prunedAt = t
				}
			}
		}
	}

	var starts []int
	for t := n; t > 0; t = last[t] {
		starts = append(starts, last[t])
	}
	for i, j := 0, len(starts)-1; i < j; i, j = i+1, j-1 {
		starts[i], starts[j] = starts[j], starts[i]
	}
	seg.Starts = starts
	seg.Changepoints = append([]int{}, starts[1:]...)
	seg.Means = make([]float64, len(starts))
	for i, s := range starts {
		e := n
		if i+1 < len(starts) {
			e = starts[i+1]
		}
		seg.Means[i] = mean + (s1[e]-s1[s])/float64(e-s)
	}
	seg.Cost = f[n]
	return seg, nil
}

// diffSigma estimates the noise σ from first differences: 1.4826·MAD/√2, falling back to their standard
// deviation/√2 when more than half the differences are equal. It returns 0 for a constant series.
func diffSigma(x []float64) float64 {
	if len(x) < 2 {
		return 0
	}
	d := make([]float64, len(x)-1)
	for i := range d {
		d[i] = x[i+1] - x[i]
	}
	if s := RobustSigma(d) / math.Sqrt2; s > 0 && !math.IsInf(s, 0) {
		return s
	}
	var mean, ss float64
	for i, v := range d {
		mean += (v - mean) / float64(i+1)
	}
	for _, v := range d {
		ss += (v - mean) * (v - mean)
	}
	if len(d) < 2 {
		return math.Sqrt(ss) / math.Sqrt2
	}
	return math.Sqrt(ss/float64(len(d)-1)) / math.Sqrt2
}
