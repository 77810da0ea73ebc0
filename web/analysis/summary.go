package analysis

import (
	"context"
	"fmt"
	"math"
	"strconv"
	"strings"

	"coeval/stats"
	"coeval/store"
)

// A unit summary combines the dates of one unit into one weighted mean per decay system (never one
// across systems), with its MSWD, p, acceptable MSWD range, outlier flags and the ± at the chosen level.
// The numerics are stats'; this file decides which dates enter and how the results are told.

// SummaryOptions are the choices a unit summary depends on.
type SummaryOptions struct {
	// Calibration is the one ⁴⁰Ar/³⁹Ar dates are recalculated to before they are averaged.
	Calibration stats.Calibration
	Level       stats.UncertaintyLevel // the ± of a mean: analytical, with tracer, or full external
	Policy      stats.Policy           // when a mean's ± is inflated by √MSWD
	Rule        stats.OutlierRule      // the outlier rule whose flags a page shows
	// Range is the acceptable MSWD range and the iterative rule's limit: the exact 2.5–97.5 % quantiles
	// of χ²_f/f, or the published 1 ± 2√(2/f) of Wendt & Carl.
	Range   stats.MSWDRangeRule
	Include string // which review states enter: IncludeAccepted, IncludePending or IncludeAll
}

// DefaultSummaryOptions are the choices of a summary nobody has changed, on the calibration cal (the
// compilation's target): full external ±, inflation when MSWD > 1 and p < 0.05, the iterative MSWD
// rule, the exact χ² range, accepted dates only.
func DefaultSummaryOptions(cal stats.Calibration) SummaryOptions {
	return SummaryOptions{Calibration: cal, Level: stats.FullExternal, Policy: stats.PolicyWhenPBelow005,
		Rule: stats.RuleMSWD, Range: stats.RangeChi2, Include: IncludeAccepted}
}

// Validate names every option that cannot be used.
func (o SummaryOptions) Validate() error {
	var errs OptionErrors
	if _, err := stats.ParseUncertaintyLevel(o.Level.String()); err != nil {
		errs = append(errs, &OptionError{Option: "Level", Problem: "unknown uncertainty level"})
	}
	if PolicyCode(o.Policy) == "" {
		errs = append(errs, &OptionError{Option: "Policy", Problem: "unknown overdispersion policy"})
	}
	if _, err := stats.ParseOutlierRule(o.Rule.String()); err != nil {
		errs = append(errs, &OptionError{Option: "Rule", Problem: "unknown outlier rule"})
	}
	if _, err := stats.ParseMSWDRangeRule(o.Range.String()); err != nil {
		errs = append(errs, &OptionError{Option: "Range", Problem: "unknown MSWD range"})
	}
	checkInclude(o.Include, &errs)
	return errs.Err()
}

// PolicyChoice is one overdispersion policy with the code pages and addresses name it by (stats' own
// "mswd>1" and "p<0.05" need escaping in an address) and how a page describes it.
type PolicyChoice struct {
	Code   string
	Policy stats.Policy
	Label  string
}

// Policies are the overdispersion policies a reader can choose.
func Policies() []PolicyChoice {
	return []PolicyChoice{
		{"never", stats.PolicyNever, "never inflate"},
		{"mswd-gt-1", stats.PolicyWhenMSWDAbove1, "× √MSWD when MSWD > 1"},
		{"p-lt-0.05", stats.PolicyWhenPBelow005, "× √MSWD when MSWD > 1 and p < 0.05"},
	}
}

// PolicyWords says a policy in words, as the forms offer it ("× √MSWD when MSWD > 1 and p < 0.05").
func PolicyWords(p stats.Policy) string {
	for _, c := range Policies() {
		if c.Policy == p {
			return c.Label
		}
	}
	return "never inflate"
}

// RuleWords names an outlier rule in a few words, for the pages.
func RuleWords(r stats.OutlierRule) string {
	switch r {
	case stats.RuleMSWD:
		return "rejection while the MSWD is too high"
	case stats.RuleChauvenet:
		return "Chauvenet's criterion"
	case stats.RuleGESD:
		return "generalized ESD"
	}
	return "none"
}

// PolicyCode is the code of a policy ("" for none of Policies).
func PolicyCode(p stats.Policy) string {
	for _, c := range Policies() {
		if c.Policy == p {
			return c.Code
		}
	}
	return ""
}

// MSWDRangeChoice is an acceptable MSWD range a reader can choose, with how a page names it.
type MSWDRangeChoice struct {
	Rule  stats.MSWDRangeRule
	Label string // the choice, in the settings
	Name  string // the range, in a sentence
}

// MSWDRanges are the acceptable MSWD ranges a reader can choose.
func MSWDRanges() []MSWDRangeChoice {
	return []MSWDRangeChoice{
		{stats.RangeChi2, "exact: 2.5–97.5 % quantiles of χ²_f/f", "95 % range of χ²_f/f"},
		{stats.RangeWendtCarl, "Wendt & Carl 1991: 1 ± 2√(2/f) (approximation)", "Wendt & Carl range 1 ± 2√(2/f)"},
	}
}

// MSWDRangeName names the acceptable MSWD range of rule in a sentence.
func MSWDRangeName(rule stats.MSWDRangeRule) string {
	for _, m := range MSWDRanges() {
		if m.Rule == rule {
			return m.Name
		}
	}
	return rule.String()
}

// DefaultTracerRelSigma is the relative 1σ of the tracer term used when the dates publish no Y: 0.03 %
// at 2σ, the upper bound for the EARTHTIME tracers (Condon et al. 2015, GCA 164:464).
const DefaultTracerRelSigma = 0.00015

// Entry is one date entering a mean: its age and analytical 1σ as averaged (⁴⁰Ar/³⁹Ar: recalculated to
// the chosen calibration), its weighted residual against the mean of all, and whether the rule flagged it.
type Entry struct {
	D           *store.Date
	AgeMa       float64
	Sigma1s     float64
	Residual    float64
	HasResidual bool
	Flagged     bool
}

// Exclusion is a date of the unit that does not enter its mean, and why.
type Exclusion struct {
	D      *store.Date
	Reason string
	Review bool // left out by the Include choice rather than for a reason of its own
	// Unusable: its σ cannot be weighted (a record stored before imports and forms refused such a σ)
	Unusable bool
}

// Levelled is a weighted mean with its ± at the chosen level, 1σ.
type Levelled struct {
	MeanMa  float64
	Sigma1s float64
	N       int
}

// SystemSummary is the summary of the dates of one unit in one decay system.
type SystemSummary struct {
	Key         string // upb, arar, kar, reos, or the method code of methods without a decay system
	Label       string
	DecaySystem string
	Entries     []Entry
	Excluded    []Exclusion
	Computed    bool // at least one date entered the mean
	Report      stats.OutlierReport
	All, Kept   Levelled
	LevelLabel  string // which ± the summary gives, e.g. "Z (full external: Y ⊕ λ238)"
	LevelShort  bool   // the chosen level does not exist for this system; LevelLabel says what is shown
	Cautions    []string
	Notes       []string
	TracerNote  string  // how the U–Pb tracer term was found, when the level uses it
	TracerRel   float64 // the U–Pb tracer term's relative 1σ at the level (0 at analytical)
	MinMa       float64
	MaxMa       float64
}

// UnitSummary is the summary of one unit: one SystemSummary per decay system of its dates.
type UnitSummary struct {
	Unit    store.Unit
	Systems []SystemSummary
	Mixed   bool // dates of more than one system entered means
}

// SystemOf groups a date's method: ⁴⁰Ar/³⁹Ar and K–Ar share ⁴⁰K but only ⁴⁰Ar/³⁹Ar has a calibration to
// recalculate to, so they are kept apart.
func SystemOf(method string) (key, label, decay string) {
	switch method { // the common cases without a vocabulary lookup
	case "upb_idtims", "upb_laicpms", "upb_sims":
		return "upb", "U–Pb", store.SystemUPb
	case "arar_plateau", "arar_isochron":
		return "arar", "⁴⁰Ar/³⁹Ar", store.SystemKAr
	case "kar":
		return "kar", "K–Ar", store.SystemKAr
	}
	m, ok := store.MethodByCode(method)
	switch {
	case m.DecaySystem == store.SystemUPb:
		return "upb", "U–Pb", m.DecaySystem
	case m.DecaySystem != "":
		return m.Code, m.DecaySystem, m.DecaySystem
	case ok:
		return method, m.Label, ""
	}
	return method, method, ""
}

var systemOrder = map[string]int{"upb": 0, "arar": 1, "kar": 2, "reos": 3}

// ProvinceSource is what a province's summaries and density read: the province, its units and their
// dates as one snapshot (store.DB.ProvinceDates reads them in one transaction).
type ProvinceSource interface {
	ProvinceDates(ctx context.Context, provinceID int64) (store.ProvinceDates, error)
}

// SummarizeProvince reads a province's units and dates in one snapshot and summarises each unit.
func SummarizeProvince(ctx context.Context, src ProvinceSource, provinceID int64, o SummaryOptions) (store.ProvinceDates, []UnitSummary, error) {
	if err := o.Validate(); err != nil {
		return store.ProvinceDates{}, nil, err
	}
	data, err := src.ProvinceDates(ctx, provinceID)
	if err != nil {
		return data, nil, err
	}
	sums, err := SummarizeUnits(data.Units, data.Dates, o)
	return data, sums, err
}

// UnitSource is what one unit's summary reads: the unit and its dates as one snapshot
// (store.DB.UnitDates reads them in one transaction).
type UnitSource interface {
	UnitDates(ctx context.Context, unitID int64) (store.UnitDates, error)
}

// SummarizeUnitByID reads a unit and its dates in one snapshot and summarises them.
func SummarizeUnitByID(ctx context.Context, src UnitSource, unitID int64, o SummaryOptions) (store.UnitDates, UnitSummary, error) {
	if err := o.Validate(); err != nil {
		return store.UnitDates{}, UnitSummary{}, err
	}
	data, err := src.UnitDates(ctx, unitID)
	if err != nil {
		return data, UnitSummary{}, err
	}
	us, err := SummarizeUnit(data.Unit, DatePointers(data.Dates), o)
	return data, us, err
}

// SummarizeUnits summarises each unit from the dates ds (any order; dates of other units are ignored).
// The summaries point into ds.
func SummarizeUnits(units []store.Unit, ds []store.Date, o SummaryOptions) ([]UnitSummary, error) {
	byUnit := make(map[int64][]*store.Date, len(units))
	for i := range ds {
		if id := ds[i].UnitID; id != nil {
			byUnit[*id] = append(byUnit[*id], &ds[i])
		}
	}
	out := make([]UnitSummary, 0, len(units))
	for _, u := range units {
		us, err := SummarizeUnit(u, byUnit[u.ID], o)
		if err != nil {
			return nil, err
		}
		out = append(out, us)
	}
	return out, nil
}

// DatePointers points at each date of ds.
func DatePointers(ds []store.Date) []*store.Date {
	out := make([]*store.Date, len(ds))
	for i := range ds {
		out[i] = &ds[i]
	}
	return out
}

// SummarizeUnit summarises the dates of one unit. It fails only on numerics errors for input the store
// should not hold (a σ of 0, say): those dates are excluded with a reason instead where they can be told.
func SummarizeUnit(u store.Unit, ds []*store.Date, o SummaryOptions) (UnitSummary, error) {
	us := UnitSummary{Unit: u, Systems: groupBySystem(ds, o)}
	// Stable order: U–Pb, ⁴⁰Ar/³⁹Ar, K–Ar, Re–Os, then the rest as met.
	sortSystems(us.Systems)
	var names []string
	for i := range us.Systems {
		if err := us.Systems[i].compute(o); err != nil {
			return us, fmt.Errorf("summary of unit %d: %w", u.ID, err)
		}
		if us.Systems[i].Computed {
			names = append(names, us.Systems[i].Label)
		}
	}
	if len(names) > 1 {
		us.Mixed = true
		msg := "unit mixes decay systems (" + strings.Join(names, ", ") + "): one weighted mean per system, none across systems"
		for i := range us.Systems {
			if us.Systems[i].Computed {
				us.Systems[i].Cautions = append(us.Systems[i].Cautions, msg)
			}
		}
	}
	return us, nil
}

// groupBySystem sorts the dates into their systems, as entries or as exclusions with their reason
// (left out by review, not recalculable, or a σ that cannot be weighted).
func groupBySystem(ds []*store.Date, o SummaryOptions) []SystemSummary {
	var systems []SystemSummary
	idx := map[string]int{}
	for _, d := range ds {
		key, label, decay := SystemOf(d.Method)
		i, ok := idx[key]
		if !ok {
			i = len(systems)
			idx[key] = i
			systems = append(systems, SystemSummary{Key: key, Label: label, DecaySystem: decay})
		}
		sys := &systems[i]
		if !Included(o.Include, string(d.ReviewState)) {
			sys.Excluded = append(sys.Excluded, Exclusion{D: d, Review: true,
				Reason: store.Label(store.ReviewStates(), d.ReviewState) + ": not included (" + IncludeLabel(o.Include) + ")"})
			continue
		}
		e := Entry{D: d, AgeMa: d.AgeMa, Sigma1s: d.SigmaMa}
		if key == "arar" {
			rc := Recalculate(*d, o.Calibration)
			if !rc.OK {
				sys.Excluded = append(sys.Excluded, Exclusion{D: d, Reason: rc.Reason})
				continue
			}
			e.AgeMa, e.Sigma1s = rc.AgeMa, rc.AnalyticalSigmaMa
		}
		if !(e.Sigma1s > 0) || !stats.UsableSigma(e.AgeMa, e.Sigma1s) {
			sys.Excluded = append(sys.Excluded, Exclusion{D: d, Reason: unusableSigma(d.ID, e.AgeMa, e.Sigma1s), Unusable: true})
			continue
		}
		sys.Entries = append(sys.Entries, e)
	}
	return systems
}

// unusableSigma says why a stored date cannot be weighted: its σ is not a number, 0, or below
// 10⁻⁶ × its age (stats.UsableSigma; imports and forms refuse such a σ, but older records may hold one).
func unusableSigma(id int64, ageMa, sigma1s float64) string {
	return fmt.Sprintf("(date %d) no usable uncertainty: 1σ %s Ma for %s Ma is not at least 10⁻⁶ × the age, so it cannot be weighted; correct the record",
		id, strconv.FormatFloat(sigma1s, 'g', 4, 64), strconv.FormatFloat(ageMa, 'g', 8, 64))
}

// UnusableSigmaCautions names, for pages that show no unit summaries (the timeline, the comparison),
// each date left out of its unit's mean because its σ cannot be weighted.
func UnusableSigmaCautions(sums []UnitSummary) []string {
	var out []string
	for _, us := range sums {
		for _, sys := range us.Systems {
			for _, x := range sys.Excluded {
				if x.Unusable {
					out = append(out, fmt.Sprintf("Date %s of %s left out: %s.", x.D.SampleCode, us.Unit.Name, x.Reason))
				}
			}
		}
	}
	return out
}

func sortSystems(ss []SystemSummary) {
	rank := func(k string) int {
		if r, ok := systemOrder[k]; ok {
			return r
		}
		return len(systemOrder)
	}
	// insertion sort: a handful of systems, and stable for the unranked ones
	for i := 1; i < len(ss); i++ {
		for j := i; j > 0 && rank(ss[j].Key) < rank(ss[j-1].Key); j-- {
			ss[j], ss[j-1] = ss[j-1], ss[j]
		}
	}
}

// exclusionNotes says what was left out of the mean: each exclusion with a reason of its own as a
// caution, the dates without calibration details together, and those left out by review in a note.
func (s *SystemSummary) exclusionNotes(o SummaryOptions) {
	var notRecalc, review []string
	for _, x := range s.Excluded {
		if x.Review {
			review = append(review, x.D.SampleCode)
		} else if x.Reason == NotRecalculable {
			notRecalc = append(notRecalc, x.D.SampleCode)
		} else {
			s.Cautions = append(s.Cautions, x.D.SampleCode+" excluded: "+x.Reason)
		}
	}
	if len(notRecalc) > 0 {
		s.Cautions = append(s.Cautions, fmt.Sprintf("%s not recalculable (%s): published without monitor age or decay constant — listed, excluded from the mean, not guessed",
			count(len(notRecalc), "⁴⁰Ar/³⁹Ar date"), strings.Join(notRecalc, ", ")))
	}
	if len(review) > 0 {
		s.Notes = append(s.Notes, fmt.Sprintf("%s not included (%s): %s", count(len(review), "date"), strings.Join(review, ", "), IncludeLabel(o.Include)))
	}
}

// compute runs the weighted mean and the outlier rule on the entries and fills in the ± at the chosen
// level, the cautions and the notes.
func (s *SystemSummary) compute(o SummaryOptions) error {
	s.exclusionNotes(o)
	s.LevelLabel, s.LevelShort = levelLabel(s.Key, o)
	if len(s.Entries) == 0 {
		s.Cautions = append(s.Cautions, "no date enters the mean")
		return nil
	}
	s.Computed = true
	xs, ss := make([]float64, len(s.Entries)), make([]float64, len(s.Entries))
	s.MinMa, s.MaxMa = math.Inf(1), math.Inf(-1)
	for i, e := range s.Entries {
		xs[i], ss[i] = e.AgeMa, e.Sigma1s
		s.MinMa, s.MaxMa = math.Min(s.MinMa, e.AgeMa), math.Max(s.MaxMa, e.AgeMa)
	}
	rep, err := stats.FlagOutliers(xs, ss, stats.OutlierOptions{Rule: o.Rule, Policy: o.Policy, Range: o.Range})
	if err != nil {
		return err
	}
	s.Report = rep
	for i := range s.Entries {
		if rep.Residuals != nil {
			s.Entries[i].Residual, s.Entries[i].HasResidual = rep.Residuals[i], true
		}
	}
	for _, i := range rep.Flagged {
		s.Entries[i].Flagged = true
	}
	tracer := s.TracerRelSigma(o)
	s.TracerRel = tracer
	if s.All, err = s.levelled(rep.All, o, tracer); err != nil {
		return err
	}
	if s.Kept, err = s.levelled(rep.Kept, o, tracer); err != nil {
		return err
	}
	s.scatterNotes(o)
	return nil
}

// scatterNotes says how the dates of all scatter against the acceptable MSWD range, and whether the ±
// was inflated.
func (s *SystemSummary) scatterNotes(o SummaryOptions) {
	a := s.Report.All
	if !a.MSWDDefined {
		s.Cautions = append(s.Cautions, "single date: no MSWD and no outlier test; the ± is that date's own")
	} else if !a.InRange {
		how := "more than their uncertainties allow"
		if a.MSWD < a.MSWDLow {
			how = "less than their uncertainties allow (the uncertainties may be overestimated)"
		}
		s.Cautions = append(s.Cautions, fmt.Sprintf("MSWD %s outside the %s, %s–%s for f = %d: the dates scatter %s",
			FormatMSWD(a.MSWD), MSWDRangeName(a.Range), FormatMSWD(a.MSWDLow), FormatMSWD(a.MSWDHigh), a.DoF, how))
	}
	if a.Inflated {
		s.Notes = append(s.Notes, fmt.Sprintf("± inflated by √MSWD = %.2f (%s)", a.Factor, PolicyWords(o.Policy)))
	}
}

// TracerRelSigma is the relative 1σ of the U–Pb tracer term: the mean of the term the dates imply by
// their published X and Y, sqrt(Y² − X²)/t, or DefaultTracerRelSigma when none publishes Y. It notes
// which, and cautions when the dates used more than one tracer.
func (s *SystemSummary) TracerRelSigma(o SummaryOptions) float64 {
	if s.Key != "upb" || o.Level == stats.Analytical {
		return 0
	}
	var sum float64
	var n int
	tracers := map[string]bool{}
	for _, e := range s.Entries {
		if e.D.Tracer != "" {
			tracers[e.D.Tracer] = true
		}
		if y := e.D.SigmaYMa; y != nil && *y >= e.D.SigmaMa && e.D.AgeMa > 0 {
			sum += math.Sqrt(*y**y-e.D.SigmaMa*e.D.SigmaMa) / e.D.AgeMa
			n++
		}
	}
	if len(tracers) > 1 {
		s.Cautions = append(s.Cautions, "dates of more than one tracer: one tracer term is added to the mean, which understates the spread between tracers")
	}
	if n == 0 {
		s.Notes = append(s.Notes, "tracer term 0.030 % (2σ) assumed: the dates publish no Y (Condon et al. 2015)")
		s.TracerNote = s.Notes[len(s.Notes)-1]
		return DefaultTracerRelSigma
	}
	rel := sum / float64(n)
	s.TracerNote = fmt.Sprintf("tracer term %.3f %% (2σ), from the dates' published X and Y; λ238 term %.3f %% (2σ, Jaffey et al. 1971); both added after averaging",
		200*rel, 200*stats.Lambda238RelSigma)
	return rel
}

// TracerName is the tracer all the system's U–Pb dates name, or "" when they name none or several.
func (s *SystemSummary) TracerName() string {
	name := ""
	for _, e := range s.Entries {
		switch {
		case e.D.Tracer == "":
			return ""
		case name == "":
			name = e.D.Tracer
		case e.D.Tracer != name:
			return ""
		}
	}
	return name
}

// levelled gives a weighted mean's ± at the chosen level (1σ). Systematic terms are added after
// averaging: U–Pb Y and Z by stats.UPbXYZ, ⁴⁰Ar/³⁹Ar full external by stats.Recalculate of the mean on
// the chosen calibration to itself (its monitor-age and λ terms).
func (s *SystemSummary) levelled(m stats.WeightedMeanResult, o SummaryOptions, tracerRel float64) (Levelled, error) {
	l := Levelled{MeanMa: m.Mean, Sigma1s: m.SigmaReported, N: m.N}
	switch {
	case s.Key == "upb" && o.Level != stats.Analytical:
		xyz, err := stats.UPbXYZ(m.Mean, m.SigmaReported, tracerRel, stats.Lambda238RelSigma)
		if err != nil {
			return l, err
		}
		l.Sigma1s = xyz.Sigma(o.Level)
	case s.Key == "arar" && o.Level == stats.FullExternal:
		r, err := stats.Recalculate(m.Mean, m.SigmaReported, o.Calibration, o.Calibration)
		if err != nil {
			return l, err
		}
		l.Sigma1s = r.FullSigmaMa
	}
	return l, nil
}

// levelLabel says which ± a system's summary gives at the chosen level, and whether that falls short of
// the level asked for (a level the system has no terms for).
func levelLabel(key string, o SummaryOptions) (string, bool) {
	switch key {
	case "upb":
		return map[stats.UncertaintyLevel]string{
			stats.Analytical:   "X (analytical)",
			stats.WithTracer:   "Y (X ⊕ tracer)",
			stats.FullExternal: "Z (full external: Y ⊕ λ238)",
		}[o.Level], false
	case "arar":
		switch o.Level {
		case stats.WithTracer:
			return "analytical (⁴⁰Ar/³⁹Ar has no tracer term)", true
		case stats.FullExternal:
			l := "full external (⊕ " + CalTerms(o.Calibration) + ")"
			if m := MissingSystematics(o.Calibration); m != "" {
				return l + "; " + m, true
			}
			return l, false
		}
		return "analytical", false
	}
	if o.Level == stats.Analytical {
		return "analytical", false
	}
	return "analytical only (no systematic terms are stored for this system)", true
}

// FormatMSWD writes an MSWD as the pages and notes give it, two decimals.
func FormatMSWD(v float64) string { return fmt.Sprintf("%.2f", v) }

func count(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return fmt.Sprintf("%d %ss", n, noun)
}

func quote(s string) string { return strconv.Quote(s) }
