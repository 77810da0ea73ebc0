package web

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strings"

	"coeval/stats"
)

// The rows of the comparison table (a pulse or a unit against an event), their order, and what their
// sensitivity and model choices say.

// compareRow is one cell of the table — a pulse or a unit against an event — with what goes beside it.
// A unit row's Cell holds its comparison in the pulse's terms: AfterOnset is P(event younger than the
// unit's mean), the lag is unit − event, OVL is of the unit's and the event's draws, and Within, which
// does not apply to a point-like age, is NaN.
type compareRow struct {
	Kind       string // "pulse" or "unit"
	Pulse      string // the row's item: the pulse's code (P155.4) or the unit's label
	Label      string // the row's item in words: "pulse at ~155.4 Ma" or the unit's label
	PulseIdx   int    // index of the pulse (pulse rows) or of the unit row (unit rows)
	Item       int    // place in the table: the pulses, then the units
	Unit       *compareUnitRow
	Event      compareEvent
	EventIdx   int
	Cell       stats.IntervalComparison
	Vol        *stats.VolumeFraction
	Sens       []*stats.SensitivityRow // after, within, near (within nil for a unit row)
	SensAbsent []string
	// VolSens follows P(more than half the volume before the event) across the sensitivity sets, and
	// VolMin, VolMax are the range of the median volume fraction over them (nil and 0 without).
	VolSens        *stats.SensitivityRow
	VolMin, VolMax float64
	VolAbsent      []string
}

func (r compareRow) isUnit() bool { return r.Kind == "unit" }

// code is the row item's code: P155.4 or U7.
func (r compareRow) code() string {
	if r.isUnit() {
		return r.Unit.Code
	}
	return r.Pulse
}

// compareRows lists the cells, in table order (pulses oldest first, then units oldest first, each with
// the events oldest first).
func compareRows(res *compareResult) []compareRow {
	sens := map[string]*stats.SensitivityRow{}
	if res.Sens != nil {
		for i := range res.Sens.Rows {
			sens[res.Sens.Rows[i].Name] = &res.Sens.Rows[i]
		}
	}
	var rows []compareRow
	add := func(row compareRow, e int) {
		ev := res.In.Events[e]
		row.Event, row.EventIdx = ev, e
		if res.Volume != nil {
			row.Vol = res.Volume[e]
		}
		if res.Sens != nil {
			for _, what := range []string{"after", "within", "near"} {
				row.Sens = append(row.Sens, sens[sensRowName(row.code(), ev.Code, what)])
			}
			item := row.Pulse
			if row.isUnit() {
				item = row.Unit.Name
			}
			row.SensAbsent = append(slices.Clone(res.SensMissing[item]), res.SensMissing[ev.Name]...)
			if res.SensVolume != nil {
				row.VolSens = sens[sensVolumeName(ev.Code)]
				row.VolMin, row.VolMax = math.Inf(1), math.Inf(-1)
				for _, med := range res.SensVolume {
					row.VolMin, row.VolMax = math.Min(row.VolMin, med[e]), math.Max(row.VolMax, med[e])
				}
				row.VolAbsent = res.SensMissing[sensVolumeAbsent] // an absent event is named with the row already
			}
		}
		rows = append(rows, row)
	}
	for i, cells := range res.Table.Cells {
		for e, c := range cells {
			add(compareRow{Kind: "pulse", Pulse: res.Table.Intervals[i], Label: res.In.Pulses[i].ID.Label, PulseIdx: i, Item: i, Cell: c}, e)
		}
	}
	for i, cells := range res.UnitTable.Cells {
		u := &res.In.UnitRows[i]
		for e, c := range cells {
			cell := stats.IntervalComparison{Interval: u.Name, Event: c.B, AfterOnset: c.Older,
				Within: stats.Probability{P: math.NaN(), SE: math.NaN()}, LagMa: c.LagMa, Near: c.Near, DeltaMa: c.DeltaMa,
				OVL: c.OVL, N: c.N, Seed: c.Seed, Level: c.Level}
			add(compareRow{Kind: "unit", Pulse: u.Label(), Label: u.Label(), PulseIdx: i, Item: len(res.Table.Cells) + i, Unit: u, Cell: cell}, e)
		}
	}
	slices.SortStableFunc(rows, func(a, b compareRow) int {
		return cmp.Or(cmp.Compare(a.Item, b.Item), cmp.Compare(b.Event.Summary.Median, a.Event.Summary.Median))
	})
	return rows
}

func sortRows(rows []compareRow, key, dir string) {
	val := func(r compareRow) float64 {
		switch key {
		case "after":
			return r.Cell.AfterOnset.P
		case "within":
			if r.isUnit() {
				return math.Inf(-1)
			}
			return r.Cell.Within.P
		case "lag":
			return r.Cell.LagMa.Median
		case "near":
			return r.Cell.Near.P
		case "ovl":
			return r.Cell.OVL
		case "volume":
			if r.Vol == nil {
				return math.Inf(-1)
			}
			return r.Vol.Fraction.Median
		case "event":
			return -r.Event.Summary.Median
		}
		return float64(r.Item)
	}
	slices.SortStableFunc(rows, func(a, b compareRow) int {
		c := cmp.Compare(val(a), val(b))
		if dir == "desc" {
			c = -c
		}
		return c
	})
}

func howID(pulse, code string) string {
	return "how-" + strings.NewReplacer(":", "-", ".", "-", " ", "-").Replace(pulse+"-"+code)
}

// sensText sums up the sensitivity of a cell: the range of each probability over the alternatives and
// whether the conclusion survives them. A unit row has no "within".
func sensText(row compareRow, sets int) (string, string, bool) {
	if len(row.Sens) == 0 || row.Sens[0] == nil {
		return "—", "", false
	}
	labels := []string{"after onset", "within"}
	if row.isUnit() {
		labels = []string{"after the unit"}
	}
	var parts, cautions []string
	for k, l := range labels {
		s := row.Sens[k]
		parts = append(parts, fixed(s.MinP, 2)+nbDash+fixed(s.MaxP, 2))
		if s.Caution != "" {
			cautions = append(cautions, l+": "+s.Caution)
		}
	}
	if v := row.VolSens; v != nil {
		parts = append(parts, "vol.\u00a0"+volRangeText(row.VolMin, row.VolMax))
		if v.Caution != "" {
			cautions = append(cautions, "most of the volume before the event: "+v.Caution)
		}
	}
	text := strings.Join(parts, " · ")
	if len(row.SensAbsent) > 0 {
		cautions = append(cautions, "absent under "+strings.Join(row.SensAbsent, ", ")+" (baseline kept there)")
	}
	if len(row.VolAbsent) > 0 && row.VolSens != nil {
		cautions = append(cautions, "volume fraction: a unit's mean absent under "+strings.Join(row.VolAbsent, ", ")+" (baseline kept there)")
	}
	fails := volFlips(row)
	for k := range labels {
		if row.Sens[k].Conclusion != 0 && !row.Sens[k].Survives {
			fails = true
		}
	}
	if fails {
		text += "\u00a0⚠"
	}
	_ = sets
	return text, strings.Join(cautions, " · "), fails
}

// nbDash is an en dash that a line does not break at (word joiners around it): a range stays whole in a
// narrow table cell.
const nbDash = "\u2060–\u2060"

// volRangeText writes the range of the median volume fraction over the sensitivity sets, in %.
func volRangeText(lo, hi float64) string {
	a, b := fixed(100*lo, 0), fixed(100*hi, 0)
	if a == b {
		return a + "\u00a0%"
	}
	return a + nbDash + b + "\u00a0%"
}

// volFlips reports whether the volume fraction's conclusion (P(more than half before) > 0.95 or < 0.05)
// fails under some sensitivity set.
func volFlips(row compareRow) bool {
	return row.VolSens != nil && row.VolSens.Conclusion != 0 && !row.VolSens.Survives
}

// restsOn names the model choices briefly, for the table; dependsText gives them in full.
func restsOn(row compareRow) string {
	ev := row.Event
	parts := []string{"bandwidth"}
	if row.isUnit() {
		parts = []string{"unit mean"}
	}
	for _, d := range ev.Depends {
		switch {
		case strings.HasPrefix(d, "age model"):
			parts = append(parts, strings.TrimPrefix(d, "age model: ")+" model")
		case strings.HasPrefix(d, "Hg/TOC"):
			parts = append(parts, "TOC threshold")
		case strings.HasPrefix(d, "synchroneity"):
			parts = append(parts, "synchroneity")
		}
	}
	return strings.Join(parts, ", ")
}

// dependsText names the model choices a row's probabilities rest on.
func dependsText(res *compareResult, row compareRow) string {
	d := res.Density
	parts := []string{"KDE with " + smoothingWords(d.Bandwidth.Rule) + ", h = " + fixed(d.Bandwidth.Ma, sigmaDecimals(d.Bandwidth.Ma)+1) + " Ma"}
	if d.Bandwidth.Note != "" {
		parts[0] += " (fallback)"
	}
	if row.isUnit() {
		s := res.Choice.Dens.Sum
		parts = []string{fmt.Sprintf("%s weighted mean (± %s, outlier rule: %s, %s", row.Unit.System, policyLabel(s.PolicyCode), ruleShort(s.Rule), includeLabel(s.Include))}
		if row.Unit.Q.ArAr != nil {
			parts[0] += ", calibration " + s.Cal.Cal.Name
		}
		parts[0] += ")"
	}
	parts = append(parts, row.Event.Depends...)
	return strings.Join(parts, "; ")
}
