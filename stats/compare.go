package stats

import (
	"fmt"
	"math"
	"slices"
	"strings"
)

// Comparisons read from JointDraws (REFERENCES §8): precedence, lag, closeness, the pulse–event
// relations, the volume fraction, the order matrix and the sensitivity of all of them to the inputs.
// Ages are in Ma, older = larger; "A older than B" means A > B.

// Probability is a Monte Carlo estimate of a probability with its standard error sqrt(P(1 − P)/Neff),
// Neff the effective number of independent draws behind it (effectiveN): 1/Neff = 1/N + Σ 1/M over
// the sampled inputs it is read from, M the rows of each (age-model draws, bootstrap replicates) —
// rows resampled to N draws are no more than M independent values. Without a sampled input Neff = N and
// the SE is the binomial sqrt(P(1 − P)/N). It is the error of drawing, the rows' included, not of the
// inputs themselves. P = 0 or 1 has SE 0: read it as "below about 3/N" or "above about 1 − 3/N" (the
// rule of three), not as certainty.
type Probability struct {
	P  float64
	SE float64
	// NEff is the effective number of independent draws the SE is from (N without sampled inputs).
	NEff float64
}

// newProbability is count of n draws with the SE of neff effective draws.
func newProbability(count, n int, neff float64) Probability {
	p := float64(count) / float64(n)
	return Probability{P: p, SE: math.Sqrt(p * (1 - p) / neff), NEff: neff}
}

// effectiveN is the effective number of independent draws behind a probability read from the draws of
// quantities qs: 1/Neff = 1/N + Σ_s 1/M_s over the distinct row streams s among qs (a sample group, or a
// sampled quantity of its own), M_s its rows. Why: the estimate P̂ is a mean of N indicators whose rows
// are drawn from M_s fixed rows, which are themselves one sample of the input. Conditional on the rows,
// Var P̂ = P_M(1 − P_M)/N; over the rows, P_M = E[1 | rows] varies by Var(g)/M for one input, g(row) the
// chance of the event given the row, and Var(g) ≤ P(1 − P) since 0 ≤ g ≤ 1 (for several independent
// inputs the first-order terms add and their variances sum to at most P(1 − P)). So
// SE² = P(1 − P)(1/N + Σ 1/M_s) is an upper bound, reached when the row decides the outcome (the other
// inputs narrow next to the sampled one), and close when M ≪ N is the larger term.
func (j *JointDraws) effectiveN(qs ...int) float64 {
	inv := 1 / float64(j.N)
	var seen []string
	for _, q := range qs {
		jq := j.qs[q]
		if jq.nrows == 0 || slices.Contains(seen, jq.rowsOf) {
			continue
		}
		seen = append(seen, jq.rowsOf)
		inv += 1 / float64(jq.nrows)
	}
	return 1 / inv
}

// PairOptions configures ComparePair, CompareInterval and Table.
type PairOptions struct {
	// DeltaMa is the tolerance δ of P(|Δ| < δ); it must be ≥ 0 (0 gives P = 0 for continuous ages).
	DeltaMa float64
	// Overlap also estimates the overlapping coefficient of the two distributions from their draws
	// (OverlapSamples with OverlapHistogram on 100 bins: cheap, not exact; OverlapNormal is the closed
	// form). Without it OVL is NaN.
	Overlap bool
}

// PairComparison compares quantity A with quantity B.
type PairComparison struct {
	A, B string
	// Older is P(A older than B) = P(A > B).
	Older Probability
	// LagMa summarises Δ = A − B (positive: A older): median and 2.5/97.5 % (Hyndman & Fan type 7).
	LagMa DrawSummary
	// Near is P(|Δ| < DeltaMa), the chance that the two are within the stated tolerance.
	Near    Probability
	DeltaMa float64
	// OVL is the overlapping coefficient estimated from the draws (NaN unless asked). It measures how
	// alike the two distributions are and is not a probability of synchroneity.
	OVL   float64
	N     int
	Seed  uint64
	Level ComparisonLevel
}

func (j *JointDraws) checkIndex(qs ...int) error {
	for _, q := range qs {
		if q < 0 || q >= len(j.qs) {
			return fmt.Errorf("quantity %d of %d", q, len(j.qs))
		}
	}
	return nil
}

func checkDelta(d float64) error {
	if !(d >= 0) || math.IsInf(d, 0) {
		return fmt.Errorf("tolerance δ = %g Ma: want finite and ≥ 0", d)
	}
	return nil
}

// ComparePair compares quantities a and b (indices into the quantities given to DrawJoint) at the
// level of the draws. It returns an error for a bad index or δ.
func (j *JointDraws) ComparePair(a, b int, opt PairOptions) (PairComparison, error) {
	if err := j.checkIndex(a, b); err != nil {
		return PairComparison{}, fmt.Errorf("compare pair: %w", err)
	}
	if err := checkDelta(opt.DeltaMa); err != nil {
		return PairComparison{}, fmt.Errorf("compare pair: %w", err)
	}
	return j.comparePair(a, b, opt, make([]float64, j.N)), nil
}

// comparePair is ComparePair on checked arguments, with a scratch slice of N values for the lags.
func (j *JointDraws) comparePair(a, b int, opt PairOptions, lag []float64) PairComparison {
	va, vb := j.pair(a, b)
	older, near := 0, 0
	for d := range lag {
		x := va[d] - vb[d]
		lag[d] = x
		if x > 0 {
			older++
		}
		if math.Abs(x) < opt.DeltaMa {
			near++
		}
	}
	neff := j.effectiveN(a, b)
	r := PairComparison{A: j.Names[a], B: j.Names[b], Older: newProbability(older, j.N, neff),
		Near: newProbability(near, j.N, neff), DeltaMa: opt.DeltaMa, LagMa: summarizeDraws(lag), OVL: math.NaN(),
		N: j.N, Seed: j.Seed, Level: j.Level}
	if opt.Overlap {
		r.OVL = cpOverlap(va, vb)
	}
	return r
}

func cpOverlap(a, b []float64) float64 {
	if len(a) < 2 {
		return math.NaN()
	}
	e, err := OverlapSamples(a, b, OverlapSampleOptions{Method: OverlapHistogram})
	if err != nil {
		return math.NaN()
	}
	return e.OVL
}

// IntervalComparison compares an event with an interval such as an eruptive pulse (onset = older edge,
// end = younger edge).
type IntervalComparison struct {
	Interval, Event string
	// AfterOnset is P(event younger than the onset) = P(X < onset).
	AfterOnset Probability
	// Within is P(end ≤ X ≤ onset), the event inside the interval.
	Within Probability
	// LagMa summarises onset − X, the time from the onset to the event (positive: event after onset).
	LagMa DrawSummary
	// Near is P(|onset − X| < DeltaMa).
	Near    Probability
	DeltaMa float64
	// OVL is the overlap of the onset's and the event's distributions from the draws (NaN unless asked).
	OVL   float64
	N     int
	Seed  uint64
	Level ComparisonLevel
}

// CompareInterval compares event with the interval from onset (older edge) to end (younger edge); the
// two edges are normally the two quantities of PulseEdgeSamples.Quantities, one group, so that every draw
// has onset ≥ end. The level applies pair by pair (onset with event, end with event). It returns an
// error for a bad index or δ.
func (j *JointDraws) CompareInterval(onset, end, event int, opt PairOptions) (IntervalComparison, error) {
	return j.compareInterval(onset, end, event, opt, make([]float64, j.N))
}

// compareInterval is CompareInterval with a scratch slice of N values for the lags.
func (j *JointDraws) compareInterval(onset, end, event int, opt PairOptions, lag []float64) (IntervalComparison, error) {
	if err := j.checkIndex(onset, end, event); err != nil {
		return IntervalComparison{}, fmt.Errorf("compare interval: %w", err)
	}
	if err := checkDelta(opt.DeltaMa); err != nil {
		return IntervalComparison{}, fmt.Errorf("compare interval: %w", err)
	}
	vs, xs := j.pair(onset, event)
	ve, xe := j.pair(end, event)
	after, within, near := 0, 0, 0
	for d := range lag {
		l := vs[d] - xs[d]
		lag[d] = l
		if l > 0 {
			after++
		}
		if l >= 0 && xe[d] >= ve[d] {
			within++
		}
		if math.Abs(l) < opt.DeltaMa {
			near++
		}
	}
	r := IntervalComparison{Interval: j.Names[onset], Event: j.Names[event],
		AfterOnset: newProbability(after, j.N, j.effectiveN(onset, event)), Within: newProbability(within, j.N, j.effectiveN(onset, end, event)),
		Near:    newProbability(near, j.N, j.effectiveN(onset, event)),
		DeltaMa: opt.DeltaMa, LagMa: summarizeDraws(lag), OVL: math.NaN(), N: j.N, Seed: j.Seed, Level: j.Level}
	if opt.Overlap {
		r.OVL = cpOverlap(vs, xs)
	}
	return r, nil
}

// Volume is an eruptive volume with its 1σ, in km³.
type Volume struct {
	Km3, SigmaKm3 float64
}

// VolumeFraction is the fraction of a province's volume erupted before an event.
type VolumeFraction struct {
	Event string
	// Fraction summarises Σ V_j·1[A_j > A_E] / Σ V_j over the draws: median and 2.5/97.5 %.
	Fraction DrawSummary
	// Mean is its mean over the draws.
	Mean float64
	// Majority is P(fraction > ½): the chance that most of the volume was erupted before the event. It
	// is the fraction's conclusion that Sensitivity can follow across input sets.
	Majority Probability
	N        int
	Seed     uint64
	Level    ComparisonLevel
}

// VolumeFractionBefore returns the fraction of the volume of units (indices of their ages) erupted
// before event: in each draw Σ V_j·1[A_j > A_E] / Σ V_j, the ages compared pair by pair at the level
// of the draws and each volume drawn from N(Km3, SigmaKm3²) truncated at 0. Volume draws come from the
// stream (seed, "volume <index of the unit>"), so they are the same for every event. A draw in which
// every volume is 0 counts as fraction 0. It returns an error for a bad index, a volume count that
// differs from the unit count, a negative or non-finite volume or σ, or all volumes zero.
func (j *JointDraws) VolumeFractionBefore(units []int, volumes []Volume, event int) (VolumeFraction, error) {
	if err := j.checkIndex(append(slices.Clone(units), event)...); err != nil {
		return VolumeFraction{}, fmt.Errorf("volume fraction: %w", err)
	}
	if len(units) == 0 || len(volumes) != len(units) {
		return VolumeFraction{}, fmt.Errorf("volume fraction: %d volumes for %d units", len(volumes), len(units))
	}
	var total float64
	for i, v := range volumes {
		if !(v.Km3 >= 0 && v.SigmaKm3 >= 0) || math.IsInf(v.Km3, 0) || math.IsInf(v.SigmaKm3, 0) {
			return VolumeFraction{}, fmt.Errorf("volume fraction: unit %d: volume %g ± %g km³: want finite and ≥ 0",
				i, v.Km3, v.SigmaKm3)
		}
		total += v.Km3
	}
	if total == 0 {
		return VolumeFraction{}, fmt.Errorf("volume fraction: all volumes are zero")
	}
	num := make([]float64, j.N)
	den := make([]float64, j.N)
	for i, u := range units {
		va, xe := j.pair(u, event)
		vols := j.volumeDraws(u, volumes[i])
		for d, vol := range vols {
			den[d] += vol
			if va[d] > xe[d] {
				num[d] += vol
			}
		}
	}
	frac := num
	var sum float64
	most := 0
	for d := range frac {
		if den[d] > 0 {
			frac[d] /= den[d]
		} else {
			frac[d] = 0
		}
		sum += frac[d]
		if frac[d] > 0.5 {
			most++
		}
	}
	return VolumeFraction{Event: j.Names[event], Fraction: summarizeDraws(frac), Mean: sum / float64(j.N),
		Majority: newProbability(most, j.N, j.effectiveN(append(slices.Clone(units), event)...)), N: j.N, Seed: j.Seed, Level: j.Level}, nil
}

// volumeDraws returns the N draws of the volume of unit u (its quantity index): N(Km3, SigmaKm3²)
// truncated at 0, from the stream (seed, "volume <u>"). They are drawn once per unit and volume and
// shared by every event (the slice is shared: callers must not modify it).
func (j *JointDraws) volumeDraws(u int, v Volume) []float64 {
	k := jdVolumeKey{u, v}
	c := j.volumes
	c.mu.Lock()
	defer c.mu.Unlock()
	if vols, ok := c.m[k]; ok {
		return vols
	}
	r := jdStream(j.Seed, fmt.Sprintf("volume %d", u))
	vols := make([]float64, j.N)
	for d := range vols {
		vol := v.Km3
		if v.SigmaKm3 > 0 {
			vol += v.SigmaKm3 * truncStdNormal(r, -v.Km3/v.SigmaKm3, math.Inf(1))
			vol = math.Max(vol, 0)
		}
		vols[d] = vol
	}
	c.m[k] = vols
	return vols
}

// OrderMatrix holds P(row older than column) for a set of quantities.
type OrderMatrix struct {
	Names []string
	// P[i][k] is P(item i older than item k), SE[i][k] its Monte Carlo SE (as Probability's); the
	// diagonal is NaN.
	// P[i][k] + P[k][i] = 1 unless the two can be equal in a draw (shared samples).
	P, SE [][]float64
	N     int
	Seed  uint64
	Level ComparisonLevel
}

// Order returns the order matrix of items (indices of quantities), each pair compared at the level of
// the draws. It returns an error for a bad index.
func (j *JointDraws) Order(items []int) (OrderMatrix, error) {
	if err := j.checkIndex(items...); err != nil {
		return OrderMatrix{}, fmt.Errorf("order matrix: %w", err)
	}
	m := len(items)
	o := OrderMatrix{Names: make([]string, m), P: make([][]float64, m), SE: make([][]float64, m),
		N: j.N, Seed: j.Seed, Level: j.Level}
	for i, q := range items {
		o.Names[i] = j.Names[q]
		o.P[i], o.SE[i] = make([]float64, m), make([]float64, m)
		o.P[i][i], o.SE[i][i] = math.NaN(), math.NaN()
	}
	for i := range m {
		for k := i + 1; k < m; k++ {
			va, vb := j.pair(items[i], items[k])
			older, younger := 0, 0
			for d := range va {
				switch {
				case va[d] > vb[d]:
					older++
				case va[d] < vb[d]:
					younger++
				}
			}
			neff := j.effectiveN(items[i], items[k])
			p, q := newProbability(older, j.N, neff), newProbability(younger, j.N, neff)
			o.P[i][k], o.SE[i][k] = p.P, p.SE
			o.P[k][i], o.SE[k][i] = q.P, q.SE
		}
	}
	return o, nil
}

// IntervalRef names an interval among the quantities of a JointDraws: its onset (older edge) and end.
type IntervalRef struct {
	Name       string
	Onset, End int
}

// ComparisonTable is the table of intervals (pulses) × events.
type ComparisonTable struct {
	Intervals, Events []string
	// Cells[i][e] compares interval i with event e.
	Cells   [][]IntervalComparison
	DeltaMa float64
	N       int
	Seed    uint64
	Level   ComparisonLevel
}

// Table compares every interval with every event (CompareInterval, cell by cell). It returns the
// errors of CompareInterval.
func (j *JointDraws) Table(intervals []IntervalRef, events []int, opt PairOptions) (ComparisonTable, error) {
	t := ComparisonTable{Intervals: make([]string, len(intervals)), Events: make([]string, len(events)),
		Cells: make([][]IntervalComparison, len(intervals)), DeltaMa: opt.DeltaMa, N: j.N, Seed: j.Seed, Level: j.Level}
	for e, q := range events {
		if err := j.checkIndex(q); err != nil {
			return ComparisonTable{}, fmt.Errorf("comparison table: event %d: %w", e, err)
		}
		t.Events[e] = j.Names[q]
	}
	lag := make([]float64, j.N)
	for i, iv := range intervals {
		t.Intervals[i] = iv.Name
		t.Cells[i] = make([]IntervalComparison, len(events))
		for e, q := range events {
			c, err := j.compareInterval(iv.Onset, iv.End, q, opt, lag)
			if err != nil {
				return ComparisonTable{}, fmt.Errorf("comparison table: %s × %s: %w", iv.Name, j.Names[q], err)
			}
			c.Interval = iv.Name
			t.Cells[i][e] = c
		}
	}
	return t, nil
}

// PairTable is the table of point-like ages (such as unit means) × events: each cell compares one item
// A with one event B (ComparePair), so Older is P(event younger than the item) and the lag is item −
// event (positive: the event came after the item).
type PairTable struct {
	Items, Events []string
	// Cells[i][e] compares item i with event e.
	Cells   [][]PairComparison
	DeltaMa float64
	N       int
	Seed    uint64
	Level   ComparisonLevel
}

// PairTable compares every item with every event (ComparePair, cell by cell, the level applied pair by
// pair). It returns an error for a bad index or δ.
func (j *JointDraws) PairTable(items, events []int, opt PairOptions) (PairTable, error) {
	if err := checkDelta(opt.DeltaMa); err != nil {
		return PairTable{}, fmt.Errorf("pair table: %w", err)
	}
	t := PairTable{Items: make([]string, len(items)), Events: make([]string, len(events)),
		Cells: make([][]PairComparison, len(items)), DeltaMa: opt.DeltaMa, N: j.N, Seed: j.Seed, Level: j.Level}
	for e, q := range events {
		if err := j.checkIndex(q); err != nil {
			return PairTable{}, fmt.Errorf("pair table: event %d: %w", e, err)
		}
		t.Events[e] = j.Names[q]
	}
	lag := make([]float64, j.N)
	for i, a := range items {
		if err := j.checkIndex(a); err != nil {
			return PairTable{}, fmt.Errorf("pair table: item %d: %w", i, err)
		}
		t.Items[i] = j.Names[a]
		t.Cells[i] = make([]PairComparison, len(events))
		for e, b := range events {
			t.Cells[i][e] = j.comparePair(a, b, opt, lag)
		}
	}
	return t, nil
}

// Text formats the table as tab-separated text with a header line that records N, seed, level and δ;
// probabilities with their SE to 6 decimals, lags in Ma to 6 decimals. The same table always gives the
// same bytes.
func (t ComparisonTable) Text() string {
	var b strings.Builder
	fmt.Fprintf(&b, "# N=%d seed=%d level=%s delta_ma=%g\n", t.N, t.Seed, t.Level, t.DeltaMa)
	b.WriteString("interval\tevent\tp_after_onset\tse\tp_within\tse\tp_near\tse\tlag_median_ma\tlag_lo95_ma\tlag_hi95_ma\tovl\n")
	for i, row := range t.Cells {
		for e, c := range row {
			fmt.Fprintf(&b, "%s\t%s\t%.6f\t%.6f\t%.6f\t%.6f\t%.6f\t%.6f\t%.6f\t%.6f\t%.6f\t%.6f\n",
				t.Intervals[i], t.Events[e], c.AfterOnset.P, c.AfterOnset.SE, c.Within.P, c.Within.SE,
				c.Near.P, c.Near.SE, c.LagMa.Median, c.LagMa.Lo95, c.LagMa.Hi95, c.OVL)
		}
	}
	return b.String()
}

// NamedProbability is one probability of a comparison, named so that it can be followed across input
// sets (e.g. "P(CAMP pulse 1 onset older than Hg onset at St Audrie's Bay)").
type NamedProbability struct {
	Name string
	Probability
}

// InputSet is one set of quantities for Sensitivity: the baseline or an alternative (another
// calibration, bandwidth rule, TOC threshold or age model). Every set must list its quantities in the
// same order so that the comparison function can use the same indices.
type InputSet struct {
	Name       string
	Quantities []Quantity
}

// SensitivityOptions configures Sensitivity.
type SensitivityOptions struct {
	// Draws are the options of DrawJoint, the same for every set: one seed for all gives common random
	// numbers, so the differences between sets come from the inputs, not from the drawing.
	Draws DrawOptions
	// Threshold is the probability a conclusion needs (P > Threshold, or P < 1 − Threshold for the
	// reverse); 0 means 0.95. It must lie in (0.5, 1).
	Threshold float64
}

// SensitivityRow is one probability across the input sets.
type SensitivityRow struct {
	Name string
	// P and SE have one entry per input set, in order.
	P, SE      []float64
	MinP, MaxP float64
	// Conclusion is +1 when the baseline (the first set) has P > Threshold, −1 when P < 1 − Threshold,
	// 0 otherwise. Survives is true when Conclusion ≠ 0 and every set reaches the same side.
	Conclusion int
	Survives   bool
	// Caution is empty unless the baseline reaches a conclusion that some set does not; it then names
	// the sets, in words fit to show beside the number.
	Caution string
}

// SensitivityResult is the outcome of Sensitivity.
type SensitivityResult struct {
	Sets      []string
	Rows      []SensitivityRow
	Threshold float64
	N         int
	Seed      uint64
	Level     ComparisonLevel
}

// Sensitivity draws every input set with the same options, applies compare to each, and reports the
// range of every probability and whether the baseline's conclusion (the first set) survives all the
// others. compare is called once per set, in the order of sets, never concurrently (so it may collect
// other values of each set beside the probabilities); it must return the same names in the same order
// for every set. The threshold is applied
// to the estimates; a P within about 3 SE of it is not settled by the draws either. It returns an error
// for no sets, a bad threshold, the errors of DrawJoint and of compare, or names that do not match.
func Sensitivity(sets []InputSet, opt SensitivityOptions, compare func(*JointDraws) ([]NamedProbability, error)) (SensitivityResult, error) {
	if len(sets) == 0 {
		return SensitivityResult{}, fmt.Errorf("sensitivity: no input sets")
	}
	t := opt.Threshold
	if t == 0 {
		t = 0.95
	}
	if !(t > 0.5 && t < 1) {
		return SensitivityResult{}, fmt.Errorf("sensitivity: threshold %g: want a value in (0.5, 1)", opt.Threshold)
	}
	res := SensitivityResult{Sets: make([]string, len(sets)), Threshold: t, Seed: opt.Draws.Seed, Level: opt.Draws.Level}
	var volumes *jdVolumes
	for s, set := range sets {
		res.Sets[s] = set.Name
		j, err := DrawJoint(set.Quantities, opt.Draws)
		if err != nil {
			return SensitivityResult{}, fmt.Errorf("sensitivity: set %q: %w", set.Name, err)
		}
		// One seed and N for every set: the volume draws of a unit are the same in each, so draw them once.
		if volumes == nil {
			volumes = j.volumes
		}
		j.volumes = volumes
		res.N = j.N
		ps, err := compare(j)
		if err != nil {
			return SensitivityResult{}, fmt.Errorf("sensitivity: set %q: %w", set.Name, err)
		}
		if s == 0 {
			res.Rows = make([]SensitivityRow, len(ps))
			for k, p := range ps {
				res.Rows[k] = SensitivityRow{Name: p.Name, P: make([]float64, len(sets)), SE: make([]float64, len(sets))}
			}
		}
		if len(ps) != len(res.Rows) {
			return SensitivityResult{}, fmt.Errorf("sensitivity: set %q gives %d probabilities, the baseline %d",
				set.Name, len(ps), len(res.Rows))
		}
		for k, p := range ps {
			if p.Name != res.Rows[k].Name {
				return SensitivityResult{}, fmt.Errorf("sensitivity: set %q: probability %d is %q, the baseline's %q",
					set.Name, k, p.Name, res.Rows[k].Name)
			}
			res.Rows[k].P[s], res.Rows[k].SE[s] = p.P, p.SE
		}
	}
	side := func(p float64) int {
		switch {
		case p > t:
			return 1
		case p < 1-t:
			return -1
		}
		return 0
	}
	for k := range res.Rows {
		r := &res.Rows[k]
		r.MinP, r.MaxP = slices.Min(r.P), slices.Max(r.P)
		r.Conclusion = side(r.P[0])
		if r.Conclusion == 0 {
			continue
		}
		var fail []string
		for s, p := range r.P {
			if side(p) != r.Conclusion {
				fail = append(fail, fmt.Sprintf("%s (P = %.3f)", res.Sets[s], p))
			}
		}
		r.Survives = len(fail) == 0
		if !r.Survives {
			cmp := ">"
			lim := t
			if r.Conclusion < 0 {
				cmp, lim = "<", 1-t
			}
			r.Caution = fmt.Sprintf("P %s %.3g under %s but not under %s", cmp, lim, res.Sets[0], strings.Join(fail, ", "))
		}
	}
	return res, nil
}
