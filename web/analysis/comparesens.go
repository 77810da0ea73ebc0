package analysis

import (
	"context"
	"fmt"
	"slices"
	"strings"
	"sync"

	"coeval/stats"
	"coeval/store"
)

// The sensitivity of a comparison: every cell recomputed under the alternative calibrations, bandwidth
// rules, age-model choices and (with anomalies) TOC thresholds, with the same seed and draws (common
// random numbers).

// sensAlt is one alternative set of choices: another density, or other section choices.
type sensAlt struct {
	name string
	dens *DensityOptions
	sec  *sectionChoice
}

// SensitivitySets names the alternative sets a comparison with the options on the data d is recomputed
// under, in order after "as chosen": each other calibration (when the province has ⁴⁰Ar/³⁹Ar dates), each
// other bandwidth rule, the other age model (when an event has an age-model age), and with anomalies each
// other TOC threshold of 0.2, 0.5 and 1 wt%.
func SensitivitySets(d *CompareData, o CompareOptions, in CompareInputs) []string {
	var out []string
	for _, a := range sensAlts(d, d.resolve(o, context.Background()), in) {
		out = append(out, a.name)
	}
	return out
}

func sensAlts(d *CompareData, o CompareOptions, in CompareInputs) []sensAlt {
	var alts []sensAlt
	hasArAr := slices.ContainsFunc(d.Dates, func(dt store.Date) bool { k, _, _ := SystemOf(dt.Method); return k == "arar" })
	if hasArAr {
		for _, c := range d.Cals {
			if c.Code == o.Density.Summary.Calibration.Code {
				continue
			}
			dc := o.Density
			dc.Summary.Calibration = CalibrationOf(c)
			alts = append(alts, sensAlt{name: "calibration " + c.Name, dens: &dc})
		}
	}
	for _, rule := range []string{"isj", "scott", "silverman", "silverman-robust"} {
		if rule == o.Density.Rule.String() {
			continue
		}
		dc := o.Density
		dc.Rule, _ = stats.ParseBandwidthRule(rule)
		alts = append(alts, sensAlt{name: "smoothing: " + SmoothingWords(dc.Rule), dens: &dc})
	}
	base := sectionChoice{Model: o.Model, Draws: o.ModelDraws, Seed: o.Density.Seed, TocMinWtPct: o.TocMinWtPct}
	if slices.ContainsFunc(in.Events, func(e CompareEvent) bool { return e.SectionID != 0 || strings.HasPrefix(e.Code, "G:") }) {
		sc := base
		sc.Model = map[string]string{"mc": "linear", "linear": "mc"}[o.Model]
		alts = append(alts, sensAlt{name: "age model " + sc.Model, sec: &sc})
	}
	if o.Anomalies {
		for _, t := range []float64{0.2, 0.5, 1} {
			if o.TocMinWtPct != nil && *o.TocMinWtPct == t {
				continue
			}
			sc := base
			tt := t
			sc.TocMinWtPct = &tt
			alts = append(alts, sensAlt{name: fmt.Sprintf("TOC threshold %s wt%%", num(t)), sec: &sc})
		}
	}
	return alts
}

// sensitivity recomputes the pulse rows' P(after onset), P(within) and P(|lag| < δ), the unit rows'
// P(after) and P(|lag| < δ) (a calibration moves the ⁴⁰Ar/³⁹Ar unit means), and each event's volume
// fraction — its median, and P(more than half the volume before the event) as the conclusion that may
// flip — under every alternative. An input absent under an alternative (a pulse the alternative density
// lacks, an anomaly the alternative threshold does not find) keeps its baseline value there and is named
// in SensMissing.
func (res *Comparison) sensitivity(ctx context.Context, d *CompareData, o CompareOptions, base []stats.Quantity, iv []stats.IntervalRef, evIdx, unitIdx, rowIdx []int) error {
	alts := sensAlts(d, o, res.In)
	sets := []stats.InputSet{{Name: "as chosen", Quantities: base}}
	missing := map[string][]string{}
	results := make([][]stats.Quantity, len(alts))
	errs := make([]error, len(alts))
	absent := make([][]string, len(alts))
	idx := sensIndex{iv: iv, evIdx: evIdx, unitIdx: unitIdx, rowIdx: rowIdx}
	var wg sync.WaitGroup
	for k, a := range alts {
		wg.Go(func() {
			if errs[k] = ctx.Err(); errs[k] != nil {
				return
			}
			results[k], absent[k], errs[k] = res.altQuantities(ctx, d, o, a, base, idx)
		})
	}
	wg.Wait()
	for k, a := range alts {
		if errs[k] != nil {
			return fmt.Errorf("sensitivity %s: %w", a.name, errs[k])
		}
		sets = append(sets, stats.InputSet{Name: a.name, Quantities: unifyKeys(results[k])})
		for _, n := range absent[k] {
			missing[n] = append(missing[n], a.name)
		}
	}
	var volMedians [][]float64
	compare := func(j *stats.JointDraws) ([]stats.NamedProbability, error) {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		out, med, err := res.sensProbabilities(j, o, idx)
		if med != nil {
			// Sensitivity calls compare once per set, in order: the medians line up with its sets.
			volMedians = append(volMedians, med)
		}
		return out, err
	}
	sr, err := stats.Sensitivity(sets, stats.SensitivityOptions{Draws: stats.DrawOptions{N: o.N, Seed: o.Density.Seed, Level: o.Level}}, compare)
	if err != nil {
		return err
	}
	res.Sens = &sr
	res.SensMissing = missing
	if res.Volume != nil {
		res.SensVolume = volMedians
	}
	return nil
}

// sensIndex is where the inputs sit among the engine's quantities (assemble).
type sensIndex struct {
	iv                     []stats.IntervalRef
	evIdx, unitIdx, rowIdx []int
}

// altQuantities are the engine's quantities under an alternative, with the inputs absent there.
func (res *Comparison) altQuantities(ctx context.Context, d *CompareData, o CompareOptions, a sensAlt, base []stats.Quantity, x sensIndex) ([]stats.Quantity, []string, error) {
	qs := slices.Clone(base)
	var absent []string
	if a.dens != nil {
		ps, _, sums, _, err := pulseInputs(d, *a.dens)
		if err != nil {
			return nil, nil, err
		}
		// The unit means under the alternative (another calibration moves the ⁴⁰Ar/³⁹Ar ones).
		units := unitInputs(sums, *a.dens)
		for i, u := range res.In.Units {
			j := slices.IndexFunc(units, func(x CompareUnit) bool { return x.ID == u.ID })
			if j < 0 {
				absent = append(absent, u.Name)
				if !slices.Contains(absent, SensVolumeAbsent) {
					absent = append(absent, SensVolumeAbsent)
				}
				continue
			}
			q := units[j].Q
			q.Name = u.Q.Name
			qs[x.unitIdx[i]] = q
		}
		if len(res.In.UnitRows) > 0 {
			rows, _ := unitRowInputs(sums, *a.dens)
			for i, u := range res.In.UnitRows {
				j := slices.IndexFunc(rows, func(x CompareUnitRow) bool { return x.ID == u.ID })
				if j < 0 {
					if !slices.Contains(absent, u.Name) {
						absent = append(absent, u.Name)
					}
					continue
				}
				q := rows[j].Q
				q.Name = u.Q.Name
				qs[x.rowIdx[i]] = q
			}
		}
		absent = append(absent, pulsesUnder(res.In.Pulses, ps, qs, x.iv)...)
	}
	if a.sec != nil {
		evs, _, err := eventInputs(ctx, d, o, *a.sec)
		if err != nil {
			return nil, nil, err
		}
		for i, e := range res.In.Events {
			j := slices.IndexFunc(evs, func(x CompareEvent) bool { return x.Code == e.Code })
			if j < 0 {
				absent = append(absent, e.Name)
				continue
			}
			q := evs[j].Q
			q.Name = e.Q.Name
			qs[x.evIdx[i]] = q
		}
	}
	return qs, absent, nil
}

// sensProbabilities are the probabilities the sensitivity follows in one set's joint draws, with the
// median volume fraction before each event (nil without a volume fraction).
func (res *Comparison) sensProbabilities(j *stats.JointDraws, o CompareOptions, x sensIndex) ([]stats.NamedProbability, []float64, error) {
	var out []stats.NamedProbability
	if o.PulseRows() {
		t, err := j.Table(x.iv, x.evIdx, stats.PairOptions{DeltaMa: o.DeltaMa})
		if err != nil {
			return nil, nil, err
		}
		for i, row := range t.Cells {
			for e, c := range row {
				out = append(out,
					stats.NamedProbability{Name: SensRowName(t.Intervals[i], res.In.Events[e].Code, "after"), Probability: c.AfterOnset},
					stats.NamedProbability{Name: SensRowName(t.Intervals[i], res.In.Events[e].Code, "within"), Probability: c.Within},
					stats.NamedProbability{Name: SensRowName(t.Intervals[i], res.In.Events[e].Code, "near"), Probability: c.Near})
			}
		}
	}
	if o.UnitRows() && len(x.rowIdx) > 0 {
		t, err := j.PairTable(x.rowIdx, x.evIdx, stats.PairOptions{DeltaMa: o.DeltaMa})
		if err != nil {
			return nil, nil, err
		}
		for i, row := range t.Cells {
			for e, c := range row {
				code := res.In.UnitRows[i].Code
				out = append(out,
					stats.NamedProbability{Name: SensRowName(code, res.In.Events[e].Code, "after"), Probability: c.Older},
					stats.NamedProbability{Name: SensRowName(code, res.In.Events[e].Code, "near"), Probability: c.Near})
			}
		}
	}
	if res.Volume == nil {
		return out, nil, nil
	}
	vols := make([]stats.Volume, len(res.In.Units))
	for i, u := range res.In.Units {
		vols[i] = u.Volume
	}
	med := make([]float64, len(x.evIdx))
	for e, q := range x.evIdx {
		vf, err := j.VolumeFractionBefore(x.unitIdx, vols, q)
		if err != nil {
			return nil, nil, err
		}
		med[e] = vf.Fraction.Median
		out = append(out, stats.NamedProbability{Name: SensVolumeName(res.In.Events[e].Code), Probability: vf.Majority})
	}
	return out, med, nil
}

// pulsesUnder puts an alternative's pulses (alt) in place of the chosen ones (base, at iv among qs): each
// chosen pulse takes the edges of the alternative's pulse that is the same pulse (MatchComparePulses: by
// age range, not by place, so an extra pulse before it changes nothing), under its own names and random
// stream (common random numbers). It returns the names of the chosen pulses the alternative lacks,
// which keep their own edges.
func pulsesUnder(base, alt []ComparePulse, qs []stats.Quantity, iv []stats.IntervalRef) []string {
	var absent []string
	match := MatchComparePulses(base, alt)
	for i, p := range base {
		j := match.Counterpart(i)
		if j < 0 {
			absent = append(absent, p.Name)
			continue
		}
		on, end := alt[j].Onset, alt[j].End
		on.Name, end.Name = p.Onset.Name, p.End.Name
		on.Group, end.Group = p.Onset.Group, p.End.Group
		qs[iv[i].Onset], qs[iv[i].End] = on, end
	}
	return absent
}

// MatchComparePulses matches pulses of one comparison's inputs (a) with another's (b) by their age
// ranges (stats.MatchPulses), never by their place in the list.
func MatchComparePulses(a, b []ComparePulse) stats.PulseMatching {
	span := func(ps []ComparePulse) []stats.PulseSpan {
		out := make([]stats.PulseSpan, len(ps))
		for i, p := range ps {
			out[i] = p.ID.Span
		}
		return out
	}
	return stats.MatchPulses(span(a), span(b))
}
