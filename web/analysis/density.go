package analysis

import (
	"context"
	"fmt"
	"math"
	"slices"
	"strconv"

	"coeval/stats"
	"coeval/store"
)

// The eruptive history of a province as a density through time: what is counted (one value per unit,
// its weighted mean from the unit summaries, or every date), the KDE with its bandwidth rule, its
// bootstrap band, the pulses with their uncertain edges, and an optional PDP. The numerics are stats'.

// The values of DensityOptions.Count and .Weight.
const (
	CountUnit    = "unit"   // one value per unit: its weighted mean
	CountDate    = "date"   // every date that enters a summary
	WeightNone   = "none"   // every value counts alike
	WeightVolume = "volume" // a unit's values share its volume; units without one are left out
)

// Bounds of the bootstrap and of an age window.
const (
	DefaultSeed = 1
	DefaultReps = 1000
	MinReps     = 100
	MaxReps     = 10000
	MaxAgeMa    = 4600 // the age of the Earth bounds a window
	// minPoints and maxPoints bound the density grid; between them it has 8 points per bandwidth (or
	// per smallest σ of a PDP), enough for a smooth curve and no more: every bootstrap replicate is
	// evaluated on it.
	minPoints = 256
	maxPoints = 2048
)

// DensityOptions are the choices a density and its pulses depend on.
type DensityOptions struct {
	Summary  SummaryOptions      // how unit means are made (and which dates enter)
	Count    string              // CountUnit or CountDate
	Weight   string              // WeightNone or WeightVolume
	Rule     stats.BandwidthRule // the bandwidth rule (stats.RuleUser: UserHMa)
	UserHMa  float64             // the bandwidth in Ma with stats.RuleUser
	Adaptive bool                // Abramson's per-value bandwidths, the rule's h as pilot
	PDP      bool                // the PDP too
	FromMa   *float64            // the age window in Ma (either order; either may be nil: automatic)
	ToMa     *float64
	Seed     uint64 // of the bootstrap
	Reps     int    // bootstrap replicates, MinReps to MaxReps
	BWEach   bool   // the (closed-form) rule applied afresh in every replicate
	// WindowSigmas: the automatic window holds every date that enters a summary ± this many of its σ
	// (the error bars a figure draws), not only the values counted.
	WindowSigmas float64
	Stop         func() error `json:"-"` // asked between replicates (nil: never stops)
}

// DefaultDensityOptions are the choices of a density nobody has changed: unit means with the default
// summary on cal, equal weights, the ISJ bandwidth, 1000 replicates of seed 1, a window holding every
// date ± 2σ.
func DefaultDensityOptions(cal stats.Calibration) DensityOptions {
	return DensityOptions{Summary: DefaultSummaryOptions(cal), Count: CountUnit, Weight: WeightNone, Rule: stats.RuleISJ,
		Seed: DefaultSeed, Reps: DefaultReps, WindowSigmas: 2}
}

// Validate names every option that cannot be used (Option is the field's name; a window of two equal
// ages is the option "Window").
func (o DensityOptions) Validate() error {
	errs := AsOptionErrors(o.Summary.Validate())
	add := func(option, problem string) { errs = append(errs, &OptionError{Option: option, Problem: problem}) }
	if o.Count != CountUnit && o.Count != CountDate {
		add("Count", "unknown value "+quote(o.Count)+"; want unit or date")
	}
	if o.Weight != WeightNone && o.Weight != WeightVolume {
		add("Weight", "unknown value "+quote(o.Weight)+"; want none or volume")
	}
	if _, err := stats.ParseBandwidthRule(o.Rule.String()); err != nil {
		add("Rule", "unknown bandwidth rule")
	}
	if o.Rule == stats.RuleUser && !(o.UserHMa > 0) {
		add("UserHMa", "want a bandwidth in Ma > 0, got "+num(o.UserHMa))
	}
	inRange := func(option string, v *float64) bool {
		if v != nil && !(*v >= 0 && *v <= MaxAgeMa) {
			add(option, fmt.Sprintf("want an age in Ma from 0 to %d, got %s", MaxAgeMa, num(*v)))
			return false
		}
		return v != nil
	}
	if from, to := inRange("FromMa", o.FromMa), inRange("ToMa", o.ToMa); from && to && *o.FromMa == *o.ToMa {
		add("Window", "the window needs two different ages")
	}
	// BWEach lets the band carry the bandwidth's own uncertainty. ISJ is refused there: its root search
	// on a 2¹⁴-point grid costs milliseconds, seconds over a page's replicates.
	if o.BWEach && (o.Rule == stats.RuleISJ || o.Rule == stats.RuleUser) {
		add("BWEach", fmt.Sprintf("re-estimating the bandwidth in every replicate needs bw=scott, silverman or silverman-robust, not %s (ISJ in every replicate would take seconds; a set h has nothing to re-estimate)", o.Rule))
	}
	if o.Reps < MinReps || o.Reps > MaxReps {
		add("Reps", fmt.Sprintf("want a whole number from %d to %d, got %d", MinReps, MaxReps, o.Reps))
	}
	return errs.Err()
}

// DensityValue is one value counted in the density: a unit's weighted mean, or one date.
type DensityValue struct {
	UnitID  int64   `json:"unit_id"`
	Unit    string  `json:"unit"`
	DateIDs []int64 `json:"date_ids"`
	Sample  string  `json:"sample_code,omitempty"` // CountDate
	System  string  `json:"system"`
	AgeMa   float64 `json:"age_ma"`
	Sigma1s float64 `json:"sigma_ma_1s"`
	Weight  float64 `json:"weight"`
	N       int     `json:"n_dates"`
	// Random1s is the part of Sigma1s that is the value's own (the bootstrap's jitter); syst and cal
	// are the components the level puts in common with other values, drawn once per replicate.
	Random1s float64            `json:"-"`
	syst     []stats.Systematic `json:"-"`
	cal      *stats.Calibration `json:"-"`
}

// withParts sets the value's random 1σ and the components its level shares with other values: at the
// tracer level a U–Pb value's tracer (when its dates name one), at full also λ238, and an ⁴⁰Ar/³⁹Ar
// value's calibration. A term the level includes but no component names (a tracer not named, a system
// without stored components) stays in the value's own σ. analytical is the value's analytical 1σ.
func (v DensityValue) withParts(sys *SystemSummary, analytical float64, o SummaryOptions) DensityValue {
	v.Random1s = v.Sigma1s
	switch {
	case o.Level == stats.Analytical:
		v.Random1s = analytical
	case sys.Key == "upb":
		tracer := sys.TracerName()
		v.Random1s = analytical
		if tracer == "" {
			v.Random1s = math.Hypot(analytical, sys.TracerRel*v.AgeMa)
		}
		syst := stats.UPbSystematics(tracer, sys.TracerRel)
		if o.Level == stats.WithTracer {
			syst = slices.DeleteFunc(syst, func(s stats.Systematic) bool { return s.Key == stats.KeyLambda238 })
		}
		v.syst = syst
	case sys.Key == "arar" && o.Level == stats.FullExternal:
		cal := o.Calibration
		v.Random1s, v.cal = analytical, &cal
	case sys.Key == "arar":
		v.Random1s = analytical
	}
	return v
}

// sharedComponents gathers the values' components, one per key with the values that carry it (the
// largest σ where two values describe one key differently).
func sharedComponents(vals []DensityValue) []stats.SharedComponent {
	return stats.GatherShared(len(vals), func(i int) ([]stats.Systematic, *stats.Calibration) { return vals[i].syst, vals[i].cal })
}

// Density is the density of a province and what went into it.
type Density struct {
	Values    []DensityValue
	Left      []string // what was left out of the count, and why
	NoVolume  []string // units without a volume (WeightVolume leaves them out)
	SetAside  map[int64]string
	Bandwidth stats.Bandwidth
	Band      *stats.DensityBand // nil when there is no density
	PDP       *stats.Density
	Pulses    []stats.PulseSummary
	Shared    []stats.SharedComponent // drawn once per bootstrap replicate
	MinMa     float64
	MaxMa     float64
	Message   string // why there is no density, when there is none
}

// Timeline is a province's density with what it was computed from.
type Timeline struct {
	Data      store.ProvinceDates
	Summaries []UnitSummary
	Density   Density
}

// ProvinceDensity reads a province's units and dates in one snapshot, summarises its units and computes
// their density, band and pulses. Unusable options come back as OptionErrors.
func ProvinceDensity(ctx context.Context, src ProvinceSource, provinceID int64, o DensityOptions) (Timeline, error) {
	if err := o.Validate(); err != nil {
		return Timeline{}, err
	}
	data, err := src.ProvinceDates(ctx, provinceID)
	if err != nil {
		return Timeline{Data: data}, err
	}
	return DensityOf(data, o)
}

// DensityOf summarises the units of a province's data (read as one snapshot) and computes their density,
// band and pulses.
func DensityOf(data store.ProvinceDates, o DensityOptions) (Timeline, error) {
	if err := o.Validate(); err != nil {
		return Timeline{}, err
	}
	sums, err := SummarizeUnits(data.Units, data.Dates, o.Summary)
	if err != nil {
		return Timeline{Data: data}, err
	}
	res, err := ComputeDensity(sums, o, DateBars(sums, o.WindowSigmas))
	return Timeline{Data: data, Summaries: sums, Density: res}, err
}

// DateBars are the extents (age ± k σ) of every date that enters a summary, so an automatic window can
// hold all of them.
func DateBars(sums []UnitSummary, k float64) [][2]float64 {
	var out [][2]float64
	for _, us := range sums {
		for _, sys := range us.Systems {
			for _, e := range sys.Entries {
				out = append(out, [2]float64{e.AgeMa - k*e.Sigma1s, e.AgeMa + k*e.Sigma1s})
			}
		}
	}
	return out
}

// countedValues collects what the density counts from the unit summaries.
func countedValues(sums []UnitSummary, o DensityOptions, res *Density) {
	res.SetAside = map[int64]string{}
	for _, us := range sums {
		u := us.Unit
		var vals []DensityValue
		if o.Count == CountUnit {
			v, ok := unitValue(us, o, res)
			if !ok {
				continue
			}
			vals = append(vals, v)
		} else {
			for _, sys := range us.Systems {
				for _, e := range sys.Entries {
					vals = append(vals, DensityValue{UnitID: u.ID, Unit: u.Name, DateIDs: []int64{e.D.ID}, Sample: e.D.SampleCode,
						System: sys.Label, AgeMa: e.AgeMa, Sigma1s: e.Sigma1s, N: 1, Weight: 1}.withParts(&sys, e.Sigma1s, o.Summary))
				}
			}
		}
		if len(vals) == 0 {
			continue
		}
		if u.VolumeKm3 == nil {
			res.NoVolume = append(res.NoVolume, u.Name)
		}
		if o.Weight == WeightVolume {
			if u.VolumeKm3 == nil {
				continue
			}
			for i := range vals {
				vals[i].Weight = *u.VolumeKm3 / float64(len(vals)) // a unit's volume shared among its dates
			}
		}
		res.Values = append(res.Values, vals...)
	}
}

// unitValue is the one value a unit counts with CountUnit: the mean of its first system with a mean in
// the order U–Pb, ⁴⁰Ar/³⁹Ar, K–Ar, Re–Os; the others are set aside and said so.
func unitValue(us UnitSummary, o DensityOptions, res *Density) (DensityValue, bool) {
	u := us.Unit
	first := -1
	for i, sys := range us.Systems {
		if sys.Computed && first < 0 {
			first = i
		} else if sys.Computed {
			res.SetAside[u.ID] = sys.Key
			res.Left = append(res.Left, fmt.Sprintf("%s: its %s mean is set aside; the %s mean is counted (one value per unit, first in the order U–Pb, ⁴⁰Ar/³⁹Ar, K–Ar, Re–Os)",
				u.Name, sys.Label, us.Systems[first].Label))
		}
	}
	if first < 0 {
		if len(us.Systems) > 0 {
			res.Left = append(res.Left, u.Name+": no date enters a mean (see the unit summaries)")
		}
		return DensityValue{}, false
	}
	sys := us.Systems[first]
	v := DensityValue{UnitID: u.ID, Unit: u.Name, System: sys.Label, AgeMa: sys.All.MeanMa, Sigma1s: sys.All.Sigma1s, N: sys.All.N, Weight: 1}
	v = v.withParts(&sys, sys.Report.All.SigmaReported, o.Summary)
	for _, e := range sys.Entries {
		v.DateIDs = append(v.DateIDs, e.D.ID)
	}
	return v, true
}

// ComputeDensity counts the values and, when there are at least two with a positive total weight,
// computes the KDE on the window with its bootstrap band, the pulses and, if asked, the PDP. dateBars are
// the extents of the drawn dates (ages ± their σ at the shown level), so the automatic window holds them.
// A window without width is an *OptionError of "Window".
func ComputeDensity(sums []UnitSummary, o DensityOptions, dateBars [][2]float64) (Density, error) {
	var res Density
	countedValues(sums, o, &res)
	ages := make([]float64, len(res.Values))
	sigmas := make([]float64, len(res.Values))
	var weights []float64
	total := 0.0
	for i, v := range res.Values {
		ages[i], sigmas[i] = v.AgeMa, v.Sigma1s
		total += v.Weight
	}
	if o.Weight == WeightVolume {
		weights = make([]float64, len(res.Values))
		for i, v := range res.Values {
			weights[i] = v.Weight
		}
	}
	switch {
	case len(res.Values) < 2:
		res.Message = fmt.Sprintf("No density: it needs at least two values to count, and there are %d.", len(res.Values))
	case !(total > 0):
		res.Message = "No density: the units counted have a total volume of 0 km³."
	}
	if res.Message == "" {
		bw, err := stats.SelectBandwidth(ages, stats.BandwidthOptions{Rule: o.Rule, UserMa: o.UserHMa})
		if err != nil {
			return res, fmt.Errorf("density bandwidth: %w", err)
		}
		res.Bandwidth = bw
	}
	if err := res.window(ages, sigmas, weights, o, dateBars); err != nil {
		return res, err
	}
	if res.Message != "" {
		return res, nil
	}
	return res, res.band(ages, sigmas, weights, o)
}

// window sets the age window: the automatic one holds the date bars and the values with 4 bandwidths
// (or 4 σ of a PDP) either side, with a margin; FromMa and ToMa replace it, or one end of it.
func (res *Density) window(ages, sigmas, weights []float64, o DensityOptions, dateBars [][2]float64) error {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, b := range dateBars {
		lo, hi = math.Min(lo, b[0]), math.Max(hi, b[1])
	}
	if res.Message == "" {
		pad := 4 * res.Bandwidth.Ma
		if o.Adaptive {
			hs, _, err := stats.AbramsonBandwidthsMa(ages, weights, res.Bandwidth.Ma)
			if err != nil {
				return fmt.Errorf("adaptive bandwidths: %w", err)
			}
			pad = 4 * slices.Max(hs)
		}
		if o.PDP {
			pad = math.Max(pad, 4*slices.Max(sigmas))
		}
		lo, hi = math.Min(lo, slices.Min(ages)-pad), math.Max(hi, slices.Max(ages)+pad)
	}
	if math.IsInf(lo, 0) { // nothing to draw at all
		lo, hi = 0, 1
	}
	if hi-lo < 1e-6 {
		lo, hi = lo-0.5, hi+0.5
	}
	margin := 0.02 * (hi - lo)
	res.MinMa, res.MaxMa = lo-margin, hi+margin
	if o.FromMa == nil && o.ToMa == nil {
		return nil
	}
	a, b := res.MinMa, res.MaxMa
	if o.FromMa != nil && o.ToMa != nil {
		a, b = min(*o.FromMa, *o.ToMa), max(*o.FromMa, *o.ToMa)
	} else {
		v := *cmpOr(o.FromMa, o.ToMa)
		// One end given: it replaces the nearer automatic end.
		if math.Abs(v-a) < math.Abs(v-b) {
			a = v
		} else {
			b = v
		}
	}
	if !(b > a) {
		return &OptionError{Option: "Window", Problem: fmt.Sprintf("the window %s–%s Ma is empty", num(a), num(b))}
	}
	res.MinMa, res.MaxMa = a, b
	return nil
}

// band computes the KDE's bootstrap band on the window, the pulses and, if asked, the PDP.
func (res *Density) band(ages, sigmas, weights []float64, o DensityOptions) error {
	grid := stats.AgeGrid{MinMa: res.MinMa, MaxMa: res.MaxMa, Points: densityPoints(res.MaxMa-res.MinMa, res.Bandwidth.Ma, o.PDP, sigmas)}
	// The bandwidth chosen above, handed on as set: the rule is not run twice (ISJ is the costly one),
	// and the replicates keep the reference h. With BWEach the (closed-form) rule goes to the bootstrap
	// instead, which gives the reference the same h and applies the rule to every replicate.
	bandBW := stats.BandwidthOptions{Rule: stats.RuleUser, UserMa: res.Bandwidth.Ma}
	if o.BWEach {
		bandBW = stats.BandwidthOptions{Rule: o.Rule}
	}
	// The bootstrap jitters each value by its own random part and draws the shared components once per
	// replicate, so a decay constant or tracer common to many units moves them together.
	randoms := make([]float64, len(res.Values))
	for i, v := range res.Values {
		randoms[i] = v.Random1s
	}
	res.Shared = sharedComponents(res.Values)
	band, err := stats.BootstrapBand(ages, randoms, stats.BandOptions{
		KDE:        stats.KDEOptions{Bandwidth: bandBW, Adaptive: o.Adaptive, Weight: weights, Grid: grid},
		Replicates: o.Reps, Seed: o.Seed, ReestimateBandwidth: o.BWEach, Shared: res.Shared, Stop: o.Stop})
	if err != nil {
		return fmt.Errorf("density band: %w", err)
	}
	res.Band = &band
	res.Pulses, err = stats.BootstrapPulses(band, stats.PulseOptions{})
	if err != nil {
		return fmt.Errorf("pulses: %w", err)
	}
	if o.PDP {
		pdp, err := stats.PDP(ages, sigmas, stats.PDPOptions{Weight: weights, Grid: grid})
		if err != nil {
			return fmt.Errorf("pdp: %w", err)
		}
		res.PDP = &pdp
	}
	return nil
}

// densityPoints is the number of grid points over a window of spanMa for a bandwidth hMa.
func densityPoints(spanMa, hMa float64, pdp bool, sigmas []float64) int {
	finest := hMa
	if pdp {
		finest = math.Min(finest, slices.Min(sigmas))
	}
	n := int(math.Ceil(8 * spanMa / finest))
	return min(max(n, minPoints), maxPoints)
}

func cmpOr(a, b *float64) *float64 {
	if a != nil {
		return a
	}
	return b
}

// PulseName numbers pulses from the oldest (P1 is the first eruptive pulse): only the key of a pulse's
// random stream in the comparison; pages and downloads name pulses by their age (PulseNames).
func PulseName(i int) string { return "P" + strconv.Itoa(i+1) }

// OldestFirst returns the pulses oldest first (stats gives them youngest first).
func OldestFirst(ps []stats.PulseSummary) []stats.PulseSummary {
	out := slices.Clone(ps)
	slices.Reverse(out)
	return out
}

// num writes a number as given, without exponent or trailing zeros.
func num(v float64) string { return strconv.FormatFloat(v, 'f', -1, 64) }
