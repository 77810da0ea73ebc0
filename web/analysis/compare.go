package analysis

import (
	"coeval/stats"
	"coeval/store"
	"context"
	"fmt"
	"slices"
	"strings"
	"time"
)

func SensRowName(pulse, event, what string) string { return pulse + " × " + event + " · " + what }

// SensVolumeName names the volume fraction's conclusion for an event in the sensitivity analysis:
// P(more than half the volume erupted before the event).
func SensVolumeName(event string) string { return SensRowName("volume", event, "most before") }

// SensVolumeAbsent is the SensMissing entry of the volume fraction: the sets in which a unit with a
// volume had no mean.
const SensVolumeAbsent = "volume fraction"

// Compare computes the comparison of the data d (LoadCompareData, with the same options) with the
// options o: it builds the inputs (pulses, events, unit rows), draws them jointly, and computes the
// table, the volume fraction, the order matrix and, with o.Sensitivity, the sensitivity to the
// alternative choices. Options naming pulses, units, events or order items the comparison does not have
// are *OptionErrors of their field. It stops, with ctx's error, between its steps once ctx is done.
func Compare(ctx context.Context, d *CompareData, o CompareOptions) (*Comparison, error) {
	start := time.Now()
	if err := o.Check(); err != nil {
		return nil, err
	}
	o = d.resolve(o, ctx)
	res := &Comparison{Province: d.Province, Options: o}
	// The limit on events is checked before anything is computed, from what the data already say.
	if n := EventsAtLeast(d, o); n > MaxCompareEvents {
		return nil, &OptionError{Option: "EventIDs", Problem: fmt.Sprintf("at least %d events chosen, at most %d (choose with events= or sections=)", n, MaxCompareEvents)}
	}
	if err := res.inputs(ctx, d, o); err != nil {
		return nil, err
	}
	res.cautions(d, o)
	if len(d.SectionsAway) > 0 {
		var names []string
		for _, sec := range d.SectionsAway {
			names = append(names, sec.Name)
		}
		res.Notes = append(res.Notes, fmt.Sprintf("With no section chosen, the sections compared are those with a tie point within %g Ma of the province's dates. Left out as too far in age: %s. Name them under Sections to compare them anyway.",
			SectionReachMa, strings.Join(names, ", ")))
	}
	rows := 0
	if o.UnitRows() {
		rows = len(res.In.UnitRows)
		if rows == 0 {
			res.Cautions = append(res.Cautions, "No unit of the province has a weighted mean under these choices: there is no unit row to compare.")
		}
	}
	if o.PulseRows() {
		rows += len(res.In.Pulses)
	}
	if rows == 0 || len(res.In.Events) == 0 {
		if len(res.In.Events) == 0 {
			res.Cautions = append(res.Cautions, "No event with an age to compare in the chosen sections.")
		}
		res.Computed = time.Since(start)
		return res, nil
	}
	if err := res.draw(ctx, d, o); err != nil {
		return nil, err
	}
	res.Computed = time.Since(start)
	return res, nil
}

// resolve sets what the data decide: the province read and the calibration chosen, as stored; the unit
// means analytical; the density stopping with ctx.
func (d *CompareData) resolve(o CompareOptions, ctx context.Context) CompareOptions {
	o.ProvinceID = d.Province.ID
	o.Density.Summary.Calibration = d.Calibration
	o.Density.Summary.Level = stats.Analytical
	o.Density.Stop = ctx.Err
	return o
}

// inputs builds the pulses, events and unit rows; the pulses, units and events the options name but the
// comparison does not have are said together.
func (res *Comparison) inputs(ctx context.Context, d *CompareData, o CompareOptions) error {
	pulses, dens, sums, edgeNote, err := pulseInputs(d, o.Density)
	if err != nil {
		return err
	}
	res.Density, res.Sums = dens, sums
	if dens.Band == nil {
		res.Cautions = append(res.Cautions, "No density, so no pulse to compare: "+dens.Message)
	}
	var bad OptionErrors
	if len(o.Pulses) > 0 {
		var keep []ComparePulse
		ids := make([]PulseID, len(pulses))
		for i, p := range pulses {
			ids[i] = p.ID
		}
		for _, name := range o.Pulses {
			i := PulseByCode(ids, name)
			if i < 0 {
				bad = append(bad, &OptionError{Option: "Pulses", Problem: fmt.Sprintf("there is no pulse %s with these density choices (a pulse is named by its age: P and an age within its range; there are %s)", name, pulseCodeList(pulses))})
				continue
			}
			if !slices.ContainsFunc(keep, func(p ComparePulse) bool { return p.Name == pulses[i].Name }) {
				keep = append(keep, pulses[i])
			}
		}
		pulses = keep
	}
	sc := sectionChoice{Model: o.Model, Draws: o.ModelDraws, Seed: o.Density.Seed, TocMinWtPct: o.TocMinWtPct}
	events, enotes, err := eventInputs(ctx, d, o, sc)
	if err != nil {
		return err
	}
	if len(events) > MaxCompareEvents {
		bad = append(bad, &OptionError{Option: "EventIDs", Problem: fmt.Sprintf("%d events chosen, at most %d (choose with events= or sections=)", len(events), MaxCompareEvents)})
	}
	if len(bad) > 0 {
		return bad
	}
	res.In = CompareInputs{Pulses: pulses, Events: events, Units: unitInputs(sums, o.Density), EdgeNote: edgeNote, Notes: enotes}
	res.Notes = append(res.Notes, enotes...)
	if o.UnitRows() || slices.ContainsFunc(o.Order, IsUnitCode) {
		rows, unotes := unitRowInputs(sums, o.Density)
		if len(o.UnitIDs) > 0 {
			var keep []CompareUnitRow
			for _, id := range o.UnitIDs {
				i := slices.IndexFunc(rows, func(u CompareUnitRow) bool { return u.ID == id })
				if i < 0 {
					bad = append(bad, unknownUnit(d, id))
					continue
				}
				keep = append(keep, rows[i])
			}
			rows = keep
		} else if o.UnitRows() {
			res.Notes = append(res.Notes, unotes...)
		}
		res.In.UnitRows = rows
	}
	return bad.Err()
}

// pulseCodeList names the pulses by their codes and ranges, for a message: "P155.4 (155.6–155.1 Ma), …" or "none".
func pulseCodeList(ps []ComparePulse) string {
	if len(ps) == 0 {
		return "none"
	}
	var parts []string
	for _, p := range ps {
		parts = append(parts, fmt.Sprintf("%s (%s–%s Ma)", p.Name, num3(p.ID.Span.OldMa), num3(p.ID.Span.YoungMa)))
	}
	return strings.Join(parts, ", ")
}

// unknownUnit says why the options name a unit that cannot be compared.
func unknownUnit(d *CompareData, id int64) *OptionError {
	i := slices.IndexFunc(d.Units, func(u store.Unit) bool { return u.ID == id })
	if i < 0 {
		return &OptionError{Option: "UnitIDs", Problem: fmt.Sprintf("there is no unit %d in %s", id, d.Province.Name)}
	}
	return &OptionError{Option: "UnitIDs", Problem: fmt.Sprintf("unit %d (%s) has no weighted mean under these choices (no date enters it: see its summary)", id, d.Units[i].Name)}
}

// cautions say what the review choice left out of the comparison or let in, and which dates could not be
// weighted.
func (res *Comparison) cautions(d *CompareData, o CompareOptions) {
	include := o.Density.Summary.Include
	for _, sec := range d.Sections {
		res.Cautions = append(res.Cautions, TieReviewCautions(sec.Name, d.Ties[sec.ID], d.TiesOut[sec.ID], include)...)
		hIn, hOut := PartitionReviewed(include, d.Hiatuses[sec.ID], HiatusState) // as AnalyseSection splits them
		res.Cautions = append(res.Cautions, HiatusReviewCautions(sec.Name, hIn, hOut, include)...)
	}
	res.Cautions = append(res.Cautions, EventReviewCautions(d.EventsIn, d.EventsOut, include)...)
	res.Cautions = append(res.Cautions, UnusableSigmaCautions(res.Sums)...)
}

// draw draws the inputs jointly and computes the tables, the volume fraction, the order matrix and the
// sensitivity.
func (res *Comparison) draw(ctx context.Context, d *CompareData, o CompareOptions) error {
	qs, iv, evIdx, unitIdx, rowIdx := assemble(res.In)
	if err := ctx.Err(); err != nil {
		return err
	}
	jd, err := stats.DrawJoint(qs, stats.DrawOptions{N: o.N, Seed: o.Density.Seed, Level: o.Level})
	if err != nil {
		return err
	}
	res.Keys, res.MinSamples = jd.Keys, jd.MinSamples
	opt := stats.PairOptions{DeltaMa: o.DeltaMa, Overlap: true}
	if o.PulseRows() {
		if res.Table, err = jd.Table(iv, evIdx, opt); err != nil {
			return err
		}
	}
	if o.UnitRows() {
		if res.UnitTable, err = jd.PairTable(rowIdx, evIdx, opt); err != nil {
			return err
		}
	}
	res.volume(jd, evIdx, unitIdx)
	if err := res.order(jd, o, iv, evIdx, rowIdx); err != nil {
		return err
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	if o.Sensitivity {
		return res.sensitivity(ctx, d, o, qs, iv, evIdx, unitIdx, rowIdx)
	}
	return nil
}

// volume computes the fraction of the volume erupted before each event.
func (res *Comparison) volume(jd *stats.JointDraws, evIdx, unitIdx []int) {
	if len(unitIdx) == 0 {
		res.VolumeNote = "No volume fraction: no unit of the province has both a volume and a mean."
		return
	}
	vols := make([]stats.Volume, len(res.In.Units))
	for i, u := range res.In.Units {
		vols[i] = u.Volume
	}
	res.Volume = make([]*stats.VolumeFraction, len(res.In.Events))
	for e, q := range evIdx {
		vf, err := jd.VolumeFractionBefore(unitIdx, vols, q)
		if err != nil {
			res.VolumeNote = "No volume fraction: " + err.Error()
			res.Volume = nil
			return
		}
		res.Volume[e] = &vf
	}
	res.VolumeNote = fmt.Sprintf("Volume before the event: %d units with a volume (each drawn from its volume ± 1σ, truncated at 0) and their weighted means; units without a volume are left out.", len(unitIdx))
}

// order computes the order matrix of the items the options name (by default every pulse onset and end,
// unit row and event).
func (res *Comparison) order(jd *stats.JointDraws, o CompareOptions, iv []stats.IntervalRef, evIdx, rowIdx []int) error {
	codes := o.Order
	if len(codes) == 0 {
		if o.PulseRows() {
			for _, p := range res.In.Pulses {
				codes = append(codes, p.Name, p.Name+".end")
			}
		}
		if o.UnitRows() {
			for _, u := range res.In.UnitRows {
				codes = append(codes, u.Code)
			}
		}
		for _, e := range res.In.Events {
			codes = append(codes, e.Code)
		}
	}
	var items []int
	var bad OptionErrors
	for _, c := range codes {
		i, ok := itemIndex(c, res.In, iv, evIdx, rowIdx)
		if !ok {
			bad = append(bad, &OptionError{Option: "Order", Problem: fmt.Sprintf("unknown item %q; want a pulse by its age (P155.4 for its onset, P155.4.end), a unit (U7), an event (E12), a group (G:cie_onset) or an anomaly (A3.1) of this comparison", c)})
			continue
		}
		items = append(items, i)
	}
	if len(bad) > 0 {
		return bad
	}
	res.OrderCodes = codes
	var err error
	res.Order, err = jd.Order(items)
	return err
}

// assemble lays the inputs out as the engine's quantities: pulse onsets and ends, events, units with a
// volume, then the unit rows without one. A unit row with a volume is the volume fraction's quantity
// (rowIdx points at it), so a unit has one set of draws; and with no unit rows the quantities, and so
// every draw, are what they were before unit rows existed.
func assemble(in CompareInputs) (qs []stats.Quantity, iv []stats.IntervalRef, evIdx, unitIdx, rowIdx []int) {
	for _, p := range in.Pulses {
		iv = append(iv, stats.IntervalRef{Name: p.Name, Onset: len(qs), End: len(qs) + 1})
		qs = append(qs, p.Onset, p.End)
	}
	for _, e := range in.Events {
		evIdx = append(evIdx, len(qs))
		qs = append(qs, e.Q)
	}
	for _, u := range in.Units {
		unitIdx = append(unitIdx, len(qs))
		qs = append(qs, u.Q)
	}
	for _, r := range in.UnitRows {
		if i := slices.IndexFunc(in.Units, func(u CompareUnit) bool { return u.ID == r.ID }); i >= 0 {
			rowIdx = append(rowIdx, unitIdx[i])
			continue
		}
		rowIdx = append(rowIdx, len(qs))
		qs = append(qs, r.Q)
	}
	return unifyKeys(qs), iv, evIdx, unitIdx, rowIdx
}

// unifyKeys gives every quantity carrying a systematic key the same description of it: the tracer
// term of one tracer is estimated from different dates for the province and for each section, and the
// engine requires one σ per key; the largest is kept (the conservative choice).
func unifyKeys(qs []stats.Quantity) []stats.Quantity {
	widest := map[string]stats.Systematic{}
	for _, q := range qs {
		for _, s := range q.Systematics {
			if w, ok := widest[s.Key]; !ok || s.RelSigma > w.RelSigma || s.SigmaMa > w.SigmaMa {
				widest[s.Key] = s
			}
		}
	}
	for i := range qs {
		if len(qs[i].Systematics) == 0 {
			continue
		}
		sys := slices.Clone(qs[i].Systematics)
		for k, s := range sys {
			sys[k] = widest[s.Key]
		}
		qs[i].Systematics = sys
	}
	return qs
}

// itemIndex finds the quantity of an order-matrix code.
func itemIndex(code string, in CompareInputs, iv []stats.IntervalRef, evIdx, rowIdx []int) (int, bool) {
	for i, u := range in.UnitRows {
		if u.Code == code {
			return rowIdx[i], true
		}
	}
	ids := make([]PulseID, len(in.Pulses))
	for i, p := range in.Pulses {
		ids[i] = p.ID
	}
	pulse, edge := code, "onset"
	for _, suffix := range []string{".onset", ".end"} {
		if c, ok := strings.CutSuffix(code, suffix); ok {
			pulse, edge = c, suffix[1:]
		}
	}
	if i := PulseByCode(ids, pulse); i >= 0 {
		if edge == "end" {
			return iv[i].End, true
		}
		return iv[i].Onset, true
	}
	for i, e := range in.Events {
		if e.Code == code {
			return evIdx[i], true
		}
	}
	return 0, false
}
