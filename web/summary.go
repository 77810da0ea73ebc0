package web

import (
	"context"
	"fmt"

	"coeval/stats"
	"coeval/store"
	"coeval/web/analysis"
)

// A unit summary combines the dates of one unit into one weighted mean per decay system; the pipeline is
// analysis.SummarizeUnits. This file reads its choices from the URL (summaryChoice) and turns them into
// analysis.SummaryOptions; summaryview.go and summarydownload.go lay the results out.

// summaryChoice is every display choice of a unit summary, read from the URL.
type summaryChoice struct {
	Cal        calChoice
	Level      stats.UncertaintyLevel // level=analytical|tracer|full
	Sigma      int                    // sigma=1|2 (default 2)
	Policy     stats.Policy
	PolicyCode string            // policy=never|mswd-gt-1|p-lt-0.05
	Rule       stats.OutlierRule // rule=none|mswd|chauvenet|gesd
	Include    string            // include=accepted|pending|all
	// Range is the acceptable MSWD range and the iterative rule's limit: mswd_range=chi2 (the exact
	// 2.5–97.5 % quantiles of χ²_f/f) or wendt-carl (the published 1 ± 2√(2/f)).
	Range stats.MSWDRangeRule
}

// The summaries' results, as the pages and downloads name them.
type (
	unitSummary   = analysis.UnitSummary
	systemSummary = analysis.SystemSummary
	levelled      = analysis.Levelled
)

// defaultTracerRelSigma is the relative 1σ of the tracer term used when the dates publish no Y.
const defaultTracerRelSigma = analysis.DefaultTracerRelSigma

// summaryChoice reads the summary's choices; a choice left out of the URL is analysis'
// DefaultSummaryOptions on the chosen calibration.
func (s *Server) summaryChoice(ctx context.Context, p *params) (summaryChoice, error) {
	return readSummaryChoice(ctx, s.store, p)
}

// readSummaryChoice reads the summary's choices with the calibrations st lists.
func readSummaryChoice(ctx context.Context, st calibrationLister, p *params) (summaryChoice, error) {
	cal, err := readCalibration(ctx, st, p)
	if err != nil {
		return summaryChoice{}, err
	}
	def := analysis.DefaultSummaryOptions(cal.Stats)
	ch := summaryChoice{Cal: cal, Sigma: p.sigmaLevel()}
	ch.Level, _ = stats.ParseUncertaintyLevel(p.oneOf("level", []string{"analytical", "tracer", "full"}, def.Level.String()))
	ch.Rule, _ = stats.ParseOutlierRule(p.oneOf("rule", []string{"none", "mswd", "chauvenet", "gesd"}, def.Rule.String()))
	var codes []string
	for _, pol := range analysis.Policies() {
		codes = append(codes, pol.Code)
	}
	ch.PolicyCode = p.oneOf("policy", codes, analysis.PolicyCode(def.Policy))
	for _, pol := range analysis.Policies() {
		if pol.Code == ch.PolicyCode {
			ch.Policy = pol.Policy
		}
	}
	ch.Include = p.oneOf("include", includeCodes(), def.Include)
	var ranges []string
	for _, m := range analysis.MSWDRanges() {
		ranges = append(ranges, m.Rule.String())
	}
	ch.Range, _ = stats.ParseMSWDRangeRule(p.oneOf("mswd_range", ranges, def.Range.String()))
	return ch, nil
}

// options are the analysis options the choice stands for.
func (ch summaryChoice) options() analysis.SummaryOptions {
	return analysis.SummaryOptions{Calibration: ch.Cal.Stats, Level: ch.Level, Policy: ch.Policy, Rule: ch.Rule,
		Range: ch.Range, Include: ch.Include}
}

// tracerRelSigma is the relative 1σ of a U–Pb system's tracer term with the URL's choices.
func tracerRelSigma(s *systemSummary, ch summaryChoice) float64 {
	return s.TracerRelSigma(ch.options())
}

// mswdRangeName names the acceptable MSWD range of rule in a sentence.
func mswdRangeName(rule stats.MSWDRangeRule) string { return analysis.MSWDRangeName(rule) }

// includeLabel names an include= value for dates.
func includeLabel(code string) string { return analysis.IncludeLabel(code) }

// includeCodes are the values of include=.
func includeCodes() []string { return analysis.IncludeCodes() }

// included reports whether include= lets a record of reviewState into a computation (analysis.Included,
// the one rule for dates, events, tie points and hiatuses).
func included(include, reviewState string) bool { return analysis.Included(include, reviewState) }

// partitionReviewed splits records into those include= lets into a computation and those it leaves out.
func partitionReviewed[T any](include string, xs []T, state func(T) string) (in, out []T) {
	return analysis.PartitionReviewed(include, xs, state)
}

// systemOf groups a date's method by decay system (analysis.SystemOf).
func systemOf(method string) (key, label, decay string) { return analysis.SystemOf(method) }

// summarizeUnits summarises each unit from the dates ds with the URL's choices.
func summarizeUnits(units []store.Unit, ds []store.Date, ch summaryChoice) ([]unitSummary, error) {
	return analysis.SummarizeUnits(units, ds, ch.options())
}

// summarizeUnit summarises the dates of one unit with the URL's choices.
func summarizeUnit(u store.Unit, ds []*store.Date, ch summaryChoice) (unitSummary, error) {
	return analysis.SummarizeUnit(u, ds, ch.options())
}

// datePointers points at each date of ds.
func datePointers(ds []store.Date) []*store.Date { return analysis.DatePointers(ds) }

// unusableSigmaCautions names each date left out of its unit's mean because its σ cannot be weighted.
func unusableSigmaCautions(sums []unitSummary) []string { return analysis.UnusableSigmaCautions(sums) }

func fmtMSWD(v float64) string { return analysis.FormatMSWD(v) }

func fmtP(p float64) string { return analysis.FormatP(p) }

func count(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return fmt.Sprintf("%d %ss", n, noun)
}
