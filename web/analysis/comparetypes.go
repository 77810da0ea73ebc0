package analysis

import (
	"coeval/stats"
	"coeval/store"
	"math"
	"time"
)

// CompareEvent is one event (or group of correlated events) as compared: its age as a quantity of the
// engine, where the age comes from, and the choices it depends on.
type CompareEvent struct {
	Code      string // E12, G:cie_onset, A3.1
	Name      string
	Section   string
	SectionID int64
	Kind      string
	How       string   // how its age is made, in words
	Depends   []string // model choices its age depends on
	Q         stats.Quantity
	Summary   stats.DrawSummary
	Draws     []float64 // the draws of its age (random part) for the figure
	Point     string    // which point of the event is compared, in words ("base (onset)", "peak", "top", "height")
	groupOnly bool      // chosen only as a member of a group
}

// PointWords says where an event is read, for its account: "its base (onset)", or "the event" at one height.
func PointWords(where string) string {
	if where == "height" {
		return "the event"
	}
	return "its " + where
}

// eventPoint returns the height of the chosen point of an event and its name in words. An event at one
// height is compared there; an event without a recorded peak is compared at its base, and the words say so.
func eventPoint(ea EventAge, point string) (float64, string) {
	if ea.BaseM == ea.TopM && (math.IsNaN(ea.PeakM) || ea.PeakM == ea.BaseM) {
		return ea.BaseM, "height"
	}
	switch point {
	case "top":
		return ea.TopM, "top"
	case "peak":
		if !math.IsNaN(ea.PeakM) {
			return ea.PeakM, "peak"
		}
		return ea.BaseM, "base (onset; no peak height is recorded)"
	}
	return ea.BaseM, "base (onset)"
}

// ComparePulse is a pulse of the density with its edge draws.
type ComparePulse struct {
	Name    string  // its code (P155.4), from its age: PulseNames
	ID      PulseID // its names and the age range it is matched by
	Summary stats.PulseSummary
	Edges   stats.PulseEdgeSamples
	Onset   stats.Quantity
	End     stats.Quantity
}

// CompareUnit is a unit mean with its volume, for the fraction of the volume erupted before an event.
type CompareUnit struct {
	ID     int64
	Name   string
	Q      stats.Quantity
	Volume stats.Volume
}

// CompareUnitRow is a single eruptive unit compared as a row of the table: its weighted mean, a
// point-like age, with its decay system's systematic components (as for the volume fraction).
type CompareUnitRow struct {
	Code    string // U12
	ID      int64
	Name    string
	System  string  // the decay system of the mean, e.g. U–Pb
	MeanMa  float64 // weighted mean of the dates include= lets in (all of them: flagged dates are flagged, not dropped)
	Sigma1s float64 // its analytical 1σ, as the policy leaves it
	N       int
	How     string // how the mean is made, in words
	Syst    string // which systematic components it carries
	Q       stats.Quantity
}

// Label names the row in the table: the unit's name with its code.
func (u CompareUnitRow) Label() string { return u.Name + " (" + u.Code + ")" }

// CompareInputs is one set of inputs: the pulses, the events and the units.
type CompareInputs struct {
	Pulses   []ComparePulse
	Events   []CompareEvent
	Units    []CompareUnit    // units with a volume, for the volume fraction
	UnitRows []CompareUnitRow // units in the engine as point-like ages: the rows of rows=units|both, and U codes of order=
	EdgeNote string           // which systematic components the pulse edges carry
	Notes    []string
}

// Comparison is a computed comparison: what the page, the figure and the downloads show.
type Comparison struct {
	Province   store.Province
	Options    CompareOptions // as computed: province and calibration resolved
	Computed   time.Duration
	Density    Density
	Sums       []UnitSummary
	In         CompareInputs
	Table      stats.ComparisonTable   // pulse rows (RowsPulses, RowsBoth)
	UnitTable  stats.PairTable         // unit rows (RowsUnits, RowsBoth): each unit's mean against each event
	Volume     []*stats.VolumeFraction // per event; nil without volumes
	VolumeNote string
	Order      stats.OrderMatrix
	OrderCodes []string
	Sens       *stats.SensitivityResult
	// SensMissing maps a row name to the sets in which one of its inputs was absent.
	SensMissing map[string][]string
	// SensVolume is the median volume fraction before each event under each sensitivity set
	// ([set][event]); nil without a volume fraction or sensitivity.
	SensVolume [][]float64
	Keys       []string
	MinSamples int
	Notes      []string
	Cautions   []string
}
