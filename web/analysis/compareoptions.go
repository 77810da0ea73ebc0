package analysis

import (
	"fmt"
	"slices"
	"strconv"
	"strings"

	"coeval/stats"
	"coeval/store"
)

// The comparison of a province's eruptive pulses (or its units' weighted means) with the events of the
// sedimentary record. Its inputs come from what the timeline (density, bootstrap band, pulses), the unit
// summaries and the section analyses (age models, events, anomalies) compute; its numbers are stats'
// engine of joint draws (DrawJoint, Table, Order, VolumeFractionBefore, Sensitivity).

// Defaults and bounds of the comparison.
const (
	DefaultCompareDeltaMa = 0.1
	DefaultCompareDraws   = stats.DefaultComparisonDraws
	MinCompareDraws       = 1000
	MaxCompareDraws       = 100_000
	MaxCompareEvents      = 60
	MaxCompareDeltaMa     = 100
)

// The values of CompareOptions.Rows: the table's rows are the pulses of the density, single eruptive
// units (their weighted means), or both.
const (
	RowsPulses = "pulses"
	RowsUnits  = "units"
	RowsBoth   = "both"
)

// CompareRowKinds are the values of CompareOptions.Rows.
var CompareRowKinds = []string{RowsPulses, RowsUnits, RowsBoth}

// EventPoints are the values of CompareOptions.Point: which point of an event with an extent (a
// carbon-isotope excursion from onset to recovery, an anomaly's run of samples) is compared.
var EventPoints = []string{"base", "peak", "top"}

// CompareOptions are the choices a comparison depends on.
type CompareOptions struct {
	// Density is how the unit means and the density with its pulses are made. Its calibration is looked
	// up by code among the stored ones when the data are read; a zero one (no code) is the compilation's
	// target. The unit means are always analytical (Summary.Level is set so): the systematic components
	// are drawn by the engine, once per joint draw, and must not also be in the bootstrap's jitter.
	Density    DensityOptions
	ProvinceID int64    // the province whose pulses and units are compared (0: the first one)
	Pulses     []string // the pulses compared, by name (P1, P2, …; none: all)
	Rows       string   // RowsPulses, RowsUnits or RowsBoth
	UnitIDs    []int64  // the units compared as rows (none: every unit with a mean)
	EventIDs   []int64  // the events compared (none: every event with an age in the chosen sections)
	SectionIDs []int64  // the sections whose events are compared (none: all)
	Groups     []string // event kinds whose events across sections are one correlated event
	Anomalies  bool     // the detected Hg anomalies are events too
	Point      string   // the point of an event with an extent that is compared: base (its onset), peak or top
	DeltaMa    float64  // the tolerance δ of P(|Δ| < δ), Ma
	Level      stats.ComparisonLevel
	N          int    // joint draws
	Model      string // the sections' age–height model: mc or linear
	ModelDraws int    // its draws
	// TocMinWtPct is the low-TOC threshold of every section's Hg/TOC (nil: each section's own).
	TocMinWtPct *float64
	Sensitivity bool     // compute the sensitivity to the alternative choices
	Order       []string // the codes of the order matrix' items (none: every pulse, unit row and event)
}

// DefaultCompareOptions are the choices of a comparison nobody has changed: the density's defaults on the
// compilation's target calibration, the first province, every pulse, event and section, pulses as rows,
// events at their base, δ = 0.1 Ma, the as-needed level, 20 000 joint draws, the Monte Carlo age model
// with its default draws, each section's own TOC threshold, with the sensitivity.
func DefaultCompareOptions() CompareOptions {
	d := DefaultDensityOptions(stats.Calibration{})
	d.Summary.Level = stats.Analytical
	return CompareOptions{Density: d, Rows: RowsPulses, Point: "base", DeltaMa: DefaultCompareDeltaMa,
		Level: stats.LevelAsNeeded, N: DefaultCompareDraws, Model: "mc", ModelDraws: DefaultSectionDraws, Sensitivity: true}
}

// Check names every option that cannot be used, each as an *OptionError of its field (the density's by
// their own names). Options naming records (a province, a section, a unit, a pulse) are checked against
// the data when they are read and computed.
func (o CompareOptions) Check() error {
	errs := AsOptionErrors(o.Density.Validate())
	bad := func(opt, problem string) { errs = append(errs, &OptionError{Option: opt, Problem: problem}) }
	for _, p := range o.Pulses {
		if !strings.HasPrefix(p, "P") || len(p) < 2 {
			bad("Pulses", fmt.Sprintf("want pulse names such as P1,P2, got %q", p))
		}
	}
	if !slices.Contains(CompareRowKinds, o.Rows) {
		bad("Rows", "unknown rows "+quote(o.Rows)+"; want pulses, units or both")
	}
	ids := func(opt string, xs []int64) {
		for _, x := range xs {
			if x <= 0 {
				bad(opt, fmt.Sprintf("want record numbers of at least 1, got %d", x))
			}
		}
	}
	ids("UnitIDs", o.UnitIDs)
	ids("EventIDs", o.EventIDs)
	ids("SectionIDs", o.SectionIDs)
	var kinds []string
	for _, k := range store.EventKinds() {
		kinds = append(kinds, k.Code)
	}
	for _, g := range o.Groups {
		if !slices.Contains(kinds, g) {
			bad("Groups", fmt.Sprintf("unknown event kind %q; want one of %s", g, strings.Join(kinds, ", ")))
		}
	}
	if !slices.Contains(EventPoints, o.Point) {
		bad("Point", "unknown point "+quote(o.Point)+"; want base, peak or top")
	}
	if !(o.DeltaMa >= 0 && o.DeltaMa <= MaxCompareDeltaMa) {
		bad("DeltaMa", "want a tolerance δ in Ma from 0 to 100")
	}
	if _, err := stats.ParseComparisonLevel(o.Level.String()); err != nil {
		bad("Level", "unknown comparison level; want as-needed, analytical or full")
	}
	if o.N < MinCompareDraws || o.N > MaxCompareDraws {
		bad("N", fmt.Sprintf("want %d to %d joint draws, got %d", MinCompareDraws, MaxCompareDraws, o.N))
	}
	if o.Model != "mc" && o.Model != "linear" {
		bad("Model", "unknown age model "+quote(o.Model)+"; want mc or linear")
	}
	if o.ModelDraws < MinSectionDraws || o.ModelDraws > MaxSectionDraws {
		bad("ModelDraws", fmt.Sprintf("want %d to %d age-model draws, got %d", MinSectionDraws, MaxSectionDraws, o.ModelDraws))
	}
	if t := o.TocMinWtPct; t != nil && !(*t >= 0 && *t <= 100) {
		bad("TocMinWtPct", "want a TOC threshold in wt% from 0 to 100")
	}
	return errs.Err()
}

// PulseRows reports whether the table's rows include the pulses; UnitRows whether they include units.
func (o CompareOptions) PulseRows() bool { return o.Rows != RowsUnits }
func (o CompareOptions) UnitRows() bool  { return o.Rows == RowsUnits || o.Rows == RowsBoth }

// IsUnitCode reports whether an order-matrix code names a unit (U7).
func IsUnitCode(code string) bool {
	n, err := strconv.ParseInt(strings.TrimPrefix(code, "U"), 10, 64)
	return strings.HasPrefix(code, "U") && err == nil && n > 0
}
