package web

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
// Every choice comes from the URL (summaryChoice); the numerics are stats'.

// summaryChoice is every display choice of a unit summary, read from the URL.
type summaryChoice struct {
	Cal        calChoice
	Level      stats.UncertaintyLevel // level=analytical|tracer|full (default full)
	Sigma      int                    // sigma=1|2 (default 2)
	Policy     stats.Policy
	PolicyCode string            // policy=never|mswd-gt-1|p-lt-0.05 (default p-lt-0.05)
	Rule       stats.OutlierRule // rule=none|mswd|chauvenet|gesd (default mswd)
	Include    string            // include=accepted|pending|all (default accepted)
	// Range is the acceptable MSWD range and the iterative rule's limit: mswd_range=chi2 (default, the
	// exact 2.5–97.5 % quantiles of χ²_f/f) or wendt-carl (the published 1 ± 2√(2/f)).
	Range stats.MSWDRangeRule
}

// mswdRanges are the acceptable MSWD ranges a reader can choose, with how the page names them.
var mswdRanges = []struct {
	Rule  stats.MSWDRangeRule
	Label string // the choice, in the settings
	Name  string // the range, in a sentence
}{
	{stats.RangeChi2, "exact: 2.5–97.5 % quantiles of χ²_f/f", "95 % range of χ²_f/f"},
	{stats.RangeWendtCarl, "Wendt & Carl 1991: 1 ± 2√(2/f) (approximation)", "Wendt & Carl range 1 ± 2√(2/f)"},
}

// mswdRangeName names the acceptable MSWD range of rule in a sentence.
func mswdRangeName(rule stats.MSWDRangeRule) string {
	for _, m := range mswdRanges {
		if m.Rule == rule {
			return m.Name
		}
	}
	return rule.String()
}

// policies are the URL spellings of the overdispersion policies (stats' own "mswd>1" and "p<0.05" need
// escaping in a URL).
var policies = []struct {
	Code   string
	Policy stats.Policy
	Label  string
}{
	{"never", stats.PolicyNever, "never inflate"},
	{"mswd-gt-1", stats.PolicyWhenMSWDAbove1, "× √MSWD when MSWD > 1"},
	{"p-lt-0.05", stats.PolicyWhenPBelow005, "× √MSWD when MSWD > 1 and p < 0.05"},
}

// includes are the review states whose dates enter a summary.
var includes = []struct{ Code, Label string }{
	{"accepted", "accepted dates only"},
	{"pending", "accepted and pending dates"},
	{"all", "all dates, rejected ones too"},
}

func includeLabel(code string) string {
	for _, i := range includes {
		if i.Code == code {
			return i.Label
		}
	}
	return code
}

func (s *Server) summaryChoice(ctx context.Context, p *params) (summaryChoice, error) {
	cal, err := s.calibration(ctx, p)
	if err != nil {
		return summaryChoice{}, err
	}
	ch := summaryChoice{Cal: cal, Sigma: p.sigmaLevel()}
	ch.Level, _ = stats.ParseUncertaintyLevel(p.oneOf("level", []string{"analytical", "tracer", "full"}, "full"))
	ch.Rule, _ = stats.ParseOutlierRule(p.oneOf("rule", []string{"none", "mswd", "chauvenet", "gesd"}, "mswd"))
	var codes []string
	for _, pol := range policies {
		codes = append(codes, pol.Code)
	}
	ch.PolicyCode = p.oneOf("policy", codes, "p-lt-0.05")
	for _, pol := range policies {
		if pol.Code == ch.PolicyCode {
			ch.Policy = pol.Policy
		}
	}
	ch.Include = p.oneOf("include", includeCodes(), "accepted")
	var ranges []string
	for _, m := range mswdRanges {
		ranges = append(ranges, m.Rule.String())
	}
	ch.Range, _ = stats.ParseMSWDRangeRule(p.oneOf("mswd_range", ranges, stats.RangeChi2.String()))
	return ch, nil
}

// includeCodes are the values of include=.
func includeCodes() []string {
	var out []string
	for _, i := range includes {
		out = append(out, i.Code)
	}
	return out
}

// included reports whether include= (accepted | pending | all) lets a record of reviewState into a
// computation: the one rule for dates, events, tie points and hiatuses.
func included(include, reviewState string) bool {
	switch include {
	case "all":
		return true
	case "pending":
		return reviewState == "accepted" || reviewState == "pending"
	}
	return reviewState == "accepted"
}

func (ch summaryChoice) includes(reviewState string) bool { return included(ch.Include, reviewState) }

// partitionReviewed splits records into those include= lets into a computation and those it leaves out
// (kept, so a page can name them).
func partitionReviewed[T any](include string, xs []T, state func(T) string) (in, out []T) {
	for _, x := range xs {
		if included(include, state(x)) {
			in = append(in, x)
		} else {
			out = append(out, x)
		}
	}
	return in, out
}

func tieState(t store.TiePoint) string  { return string(t.ReviewState) }
func hiatusState(h store.Hiatus) string { return string(h.ReviewState) }
func eventState(e store.Event) string   { return string(e.ReviewState) }

// defaultTracerRelSigma is the relative 1σ of the tracer term used when the dates publish no Y: 0.03 %
// at 2σ, the upper bound for the EARTHTIME tracers (Condon et al. 2015, GCA 164:464).
const defaultTracerRelSigma = 0.00015

// entry is one date entering a mean: its age and analytical 1σ as averaged (⁴⁰Ar/³⁹Ar: recalculated to
// the chosen calibration), its weighted residual against the mean of all, and whether the rule flagged it.
type entry struct {
	D           *store.Date
	AgeMa       float64
	Sigma1s     float64
	Residual    float64
	HasResidual bool
	Flagged     bool
}

// exclusion is a date of the unit that does not enter its mean, and why.
type exclusion struct {
	D      *store.Date
	Reason string
	Review bool // left out by the include= choice rather than for a reason of its own
	// Unusable: its σ cannot be weighted (a record stored before imports and forms refused such a σ)
	Unusable bool
}

// levelled is a weighted mean with its ± at the chosen level, 1σ.
type levelled struct {
	MeanMa  float64
	Sigma1s float64
	N       int
}

// systemSummary is the summary of the dates of one unit in one decay system.
type systemSummary struct {
	Key         string // upb, arar, kar, reos, or the method code of methods without a decay system
	Label       string
	DecaySystem string
	Entries     []entry
	Excluded    []exclusion
	Computed    bool // at least one date entered the mean
	Report      stats.OutlierReport
	All, Kept   levelled
	LevelLabel  string // which ± the summary gives, e.g. "Z (full external: Y ⊕ λ238)"
	LevelShort  bool   // the chosen level does not exist for this system; LevelLabel says what is shown
	Cautions    []string
	Notes       []string
	TracerNote  string  // how the U–Pb tracer term was found, when the level uses it
	TracerRel   float64 // the U–Pb tracer term's relative 1σ at the level (0 at analytical)
	MinMa       float64
	MaxMa       float64
}

// unitSummary is the summary of one unit: one systemSummary per decay system of its dates.
type unitSummary struct {
	Unit    store.Unit
	Systems []systemSummary
	Mixed   bool // dates of more than one system entered means
}

// systemOf groups a date's method: ⁴⁰Ar/³⁹Ar and K–Ar share ⁴⁰K but only ⁴⁰Ar/³⁹Ar has a calibration to
// recalculate to, so they are kept apart.
func systemOf(method string) (key, label, decay string) {
	switch method { // the common cases without a vocabulary lookup
	case "upb_idtims", "upb_laicpms", "upb_sims":
		return "upb", "U–Pb", store.SystemUPb
	case "arar_plateau", "arar_isochron":
		return "arar", "⁴⁰Ar/³⁹Ar", store.SystemKAr
	case "kar":
		return "kar", "K–Ar", store.SystemKAr
	}
	m, _ := store.MethodByCode(method)
	switch {
	case m.DecaySystem == store.SystemUPb:
		return "upb", "U–Pb", m.DecaySystem
	case m.DecaySystem != "":
		return m.Code, m.DecaySystem, m.DecaySystem
	}
	return method, methodLabel(method), ""
}

var systemOrder = map[string]int{"upb": 0, "arar": 1, "kar": 2, "reos": 3}

// summarizeUnits summarises each unit from the dates ds (any order; dates of other units are ignored).
// The summaries point into ds.
func summarizeUnits(units []store.Unit, ds []store.Date, ch summaryChoice) ([]unitSummary, error) {
	byUnit := make(map[int64][]*store.Date, len(units))
	for i := range ds {
		if id := ds[i].UnitID; id != nil {
			byUnit[*id] = append(byUnit[*id], &ds[i])
		}
	}
	out := make([]unitSummary, 0, len(units))
	for _, u := range units {
		us, err := summarizeUnit(u, byUnit[u.ID], ch)
		if err != nil {
			return nil, err
		}
		out = append(out, us)
	}
	return out, nil
}

// datePointers points at each date of ds.
func datePointers(ds []store.Date) []*store.Date {
	out := make([]*store.Date, len(ds))
	for i := range ds {
		out[i] = &ds[i]
	}
	return out
}

// summarizeUnit summarises the dates of one unit. It fails only on numerics errors for input the store
// should not hold (a σ of 0, say): those dates are excluded with a reason instead where they can be told.
func summarizeUnit(u store.Unit, ds []*store.Date, ch summaryChoice) (unitSummary, error) {
	us := unitSummary{Unit: u}
	idx := map[string]int{}
	for _, d := range ds {
		key, label, decay := systemOf(d.Method)
		i, ok := idx[key]
		if !ok {
			i = len(us.Systems)
			idx[key] = i
			us.Systems = append(us.Systems, systemSummary{Key: key, Label: label, DecaySystem: decay})
		}
		sys := &us.Systems[i]
		if !ch.includes(string(d.ReviewState)) {
			sys.Excluded = append(sys.Excluded, exclusion{D: d, Review: true,
				Reason: store.Label(store.ReviewStates(), d.ReviewState) + ": not included (" + includeLabel(ch.Include) + ")"})
			continue
		}
		e := entry{D: d, AgeMa: d.AgeMa, Sigma1s: d.SigmaMa}
		if key == "arar" {
			rc := recalculate(*d, ch.Cal.Stats)
			if !rc.OK {
				sys.Excluded = append(sys.Excluded, exclusion{D: d, Reason: rc.Reason})
				continue
			}
			e.AgeMa, e.Sigma1s = rc.AgeMa, rc.AnalyticalSigmaMa
		}
		if !(e.Sigma1s > 0) || !stats.UsableSigma(e.AgeMa, e.Sigma1s) {
			sys.Excluded = append(sys.Excluded, exclusion{D: d, Reason: unusableSigma(d.ID, e.AgeMa, e.Sigma1s), Unusable: true})
			continue
		}
		sys.Entries = append(sys.Entries, e)
	}
	// Stable order: U–Pb, ⁴⁰Ar/³⁹Ar, K–Ar, Re–Os, then the rest as met.
	sortSystems(us.Systems)
	computed := 0
	for i := range us.Systems {
		if err := us.Systems[i].compute(ch); err != nil {
			return us, fmt.Errorf("summary of unit %d: %w", u.ID, err)
		}
		if us.Systems[i].Computed {
			computed++
		}
	}
	if computed > 1 {
		us.Mixed = true
		var names []string
		for _, s := range us.Systems {
			if s.Computed {
				names = append(names, s.Label)
			}
		}
		msg := "unit mixes decay systems (" + strings.Join(names, ", ") + "): one weighted mean per system, none across systems"
		for i := range us.Systems {
			if us.Systems[i].Computed {
				us.Systems[i].Cautions = append(us.Systems[i].Cautions, msg)
			}
		}
	}
	return us, nil
}

// unusableSigma says why a stored date cannot be weighted: its σ is not a number, 0, or below
// 10⁻⁶ × its age (stats.UsableSigma; imports and forms refuse such a σ, but older records may hold one).
func unusableSigma(id int64, ageMa, sigma1s float64) string {
	return fmt.Sprintf("(date %d) no usable uncertainty: 1σ %s Ma for %s Ma is not at least 10⁻⁶ × the age, so it cannot be weighted; correct the record",
		id, strconv.FormatFloat(sigma1s, 'g', 4, 64), strconv.FormatFloat(ageMa, 'g', 8, 64))
}

// unusableSigmaCautions names, for pages that show no unit summaries (the timeline, the comparison),
// each date left out of its unit's mean because its σ cannot be weighted.
func unusableSigmaCautions(sums []unitSummary) []string {
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

func sortSystems(ss []systemSummary) {
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

// compute runs the weighted mean and the outlier rule on the entries and fills in the ± at the chosen
// level, the cautions and the notes.
func (s *systemSummary) compute(ch summaryChoice) error {
	var notRecalc, review []string
	for _, x := range s.Excluded {
		if x.Review {
			review = append(review, x.D.SampleCode)
		} else if x.Reason == notRecalculable {
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
		s.Notes = append(s.Notes, fmt.Sprintf("%s not included (%s): %s", count(len(review), "date"), strings.Join(review, ", "), includeLabel(ch.Include)))
	}
	s.LevelLabel, s.LevelShort = levelLabel(s.Key, ch)
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
	rep, err := stats.FlagOutliers(xs, ss, stats.OutlierOptions{Rule: ch.Rule, Policy: ch.Policy, Range: ch.Range})
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
	tracer := s.tracerRelSigma(ch)
	s.TracerRel = tracer
	if s.All, err = s.levelled(rep.All, ch, tracer); err != nil {
		return err
	}
	if s.Kept, err = s.levelled(rep.Kept, ch, tracer); err != nil {
		return err
	}
	a := rep.All
	if !a.MSWDDefined {
		s.Cautions = append(s.Cautions, "single date: no MSWD and no outlier test; the ± is that date's own")
	} else if !a.InRange {
		how := "more than their uncertainties allow"
		if a.MSWD < a.MSWDLow {
			how = "less than their uncertainties allow (the uncertainties may be overestimated)"
		}
		s.Cautions = append(s.Cautions, fmt.Sprintf("MSWD %s outside the %s, %s–%s for f = %d: the dates scatter %s",
			fmtMSWD(a.MSWD), mswdRangeName(a.Range), fmtMSWD(a.MSWDLow), fmtMSWD(a.MSWDHigh), a.DoF, how))
	}
	if a.Inflated {
		s.Notes = append(s.Notes, fmt.Sprintf("± inflated by √MSWD = %.2f (policy %s)", a.Factor, ch.PolicyCode))
	}
	return nil
}

// tracerRelSigma is the relative 1σ of the U–Pb tracer term: the mean of the term the dates imply by
// their published X and Y, sqrt(Y² − X²)/t, or defaultTracerRelSigma when none publishes Y. It notes
// which, and cautions when the dates used more than one tracer.
func (s *systemSummary) tracerRelSigma(ch summaryChoice) float64 {
	if s.Key != "upb" || ch.Level == stats.Analytical {
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
		return defaultTracerRelSigma
	}
	rel := sum / float64(n)
	s.TracerNote = fmt.Sprintf("tracer term %.3f %% (2σ), from the dates' published X and Y; λ238 term %.3f %% (2σ, Jaffey et al. 1971); both added after averaging",
		200*rel, 200*stats.Lambda238RelSigma)
	return rel
}

// tracerName is the tracer all the system's U–Pb dates name, or "" when they name none or several.
func (s *systemSummary) tracerName() string {
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
func (s *systemSummary) levelled(m stats.WeightedMeanResult, ch summaryChoice, tracerRel float64) (levelled, error) {
	l := levelled{MeanMa: m.Mean, Sigma1s: m.SigmaReported, N: m.N}
	switch {
	case s.Key == "upb" && ch.Level != stats.Analytical:
		xyz, err := stats.UPbXYZ(m.Mean, m.SigmaReported, tracerRel, stats.Lambda238RelSigma)
		if err != nil {
			return l, err
		}
		l.Sigma1s = xyz.Sigma(ch.Level)
	case s.Key == "arar" && ch.Level == stats.FullExternal:
		r, err := stats.Recalculate(m.Mean, m.SigmaReported, ch.Cal.Stats, ch.Cal.Stats)
		if err != nil {
			return l, err
		}
		l.Sigma1s = r.FullSigmaMa
	}
	return l, nil
}

// levelLabel says which ± a system's summary gives at the chosen level, and whether that falls short of
// the level asked for (a level the system has no terms for).
func levelLabel(key string, ch summaryChoice) (string, bool) {
	switch key {
	case "upb":
		return map[stats.UncertaintyLevel]string{
			stats.Analytical:   "X (analytical)",
			stats.WithTracer:   "Y (X ⊕ tracer)",
			stats.FullExternal: "Z (full external: Y ⊕ λ238)",
		}[ch.Level], false
	case "arar":
		switch ch.Level {
		case stats.WithTracer:
			return "analytical (⁴⁰Ar/³⁹Ar has no tracer term)", true
		case stats.FullExternal:
			l := "full external (⊕ " + calTerms(ch.Cal.Stats) + ")"
			if m := missingSystematics(ch.Cal.Stats); m != "" {
				return l + "; " + m, true
			}
			return l, false
		}
		return "analytical", false
	}
	if ch.Level == stats.Analytical {
		return "analytical", false
	}
	return "analytical only (no systematic terms are stored for this system)", true
}

func fmtMSWD(v float64) string { return fmt.Sprintf("%.2f", v) }

func fmtP(p float64) string {
	if p < 0.001 {
		return fmt.Sprintf("%.1e", p)
	}
	return fmt.Sprintf("%.3f", p)
}

func count(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return fmt.Sprintf("%d %ss", n, noun)
}
