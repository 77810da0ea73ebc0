package analysis

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"

	"coeval/stats"
	"coeval/store"
)

// The analysis of a section: host-phase normalisation with the low-host rule, the suggested host,
// robust anomalies on log values, change points, the high-host masking check and the age–height model.

// Defaults of the section analysis. The seed is fixed so a bookmarked page shows the same model.
const (
	DefaultSectionDraws   = 2000
	MaxSectionDraws       = 20000
	MinSectionDraws       = 100
	DefaultSectionSeed    = 1
	DefaultRunningWidth   = 31
	MinBackgroundSamples  = 5
	DefaultAlignedDraws   = 1000
	HostResidualK         = 3 // positive residuals beyond 3σ̂ of the background regression are flagged
	NotEvaluableLabel     = "not evaluable"
	BelowDetectionCSVNote = "below_detection"
)

// SectionOptions are the choices a section analysis depends on (the web layer reads them from the URL).
type SectionOptions struct {
	Host        string  // auto, toc, ts, al
	TocMinWtPct float64 // wt%; below it Hg/TOC is not evaluable
	Baseline    string  // section, window, running
	BgBaseM     float64 // baseline=window: lowest height of the background window
	BgTopM      float64 // baseline=window: highest height
	BgWidth     int     // baseline=running: window in samples (odd)
	ZMin        float64 // modified z threshold
	MinRun      int     // least consecutive samples of an anomaly
	Penalty     float64 // change-point penalty; 0 = default 2·ln n
	Model       string  // mc, linear
	Draws       int
	Seed        uint64
	Level       int    // σ level of displayed tie ages
	TieLevel    string // analytical, tracer, full: the components of ties that come from dates
	// SharedApart leaves the ties' shared components out of the model's draws: the comparison applies
	// them itself, jointly with every other quantity that carries them.
	SharedApart bool
	Include     string // accepted, pending, all: the review states of the ties the age model uses (as for dates)
}

// DefaultSectionOptions are the choices of a section analysis nobody has changed: the host suggested by
// the data, the section's stored low-TOC threshold (stats.DefaultMinTocWtPct when it stores none), the
// whole section as background, modified z ≥ stats.DefaultModifiedZMin over at least 2 samples, the
// default change-point penalty, the Monte Carlo age model with its fixed seed, ± at 2σ, ties from dates
// at the full level, accepted records only.
func DefaultSectionOptions(sec store.Section) SectionOptions {
	toc := sec.TocThresholdWtPct
	if toc == 0 {
		toc = stats.DefaultMinTocWtPct
	}
	return SectionOptions{Host: "auto", TocMinWtPct: toc, Baseline: "section", BgWidth: DefaultRunningWidth,
		ZMin: stats.DefaultModifiedZMin, MinRun: 2, Model: "mc", Draws: DefaultSectionDraws, Seed: DefaultSectionSeed,
		Level: 2, TieLevel: DefaultTieLevel, Include: IncludeAccepted}
}

// Check names every option that cannot be used, each as an *OptionError of its field.
func (o SectionOptions) Check() error {
	var errs OptionErrors
	bad := func(opt, problem string) { errs = append(errs, &OptionError{Option: opt, Problem: problem}) }
	if !slices.Contains([]string{"auto", "toc", "ts", "al"}, o.Host) {
		bad("Host", "unknown host phase "+quote(o.Host)+"; want auto, toc, ts or al")
	}
	if !(o.TocMinWtPct >= 0 && o.TocMinWtPct <= 100) {
		bad("TocMinWtPct", "want a TOC threshold in wt% from 0 to 100")
	}
	switch o.Baseline {
	case "section", "running":
	case "window":
		if !(o.BgBaseM < o.BgTopM) {
			bad("Background", "the background window's base must lie below its top")
		}
	default:
		bad("Baseline", "unknown baseline "+quote(o.Baseline)+"; want section, window or running")
	}
	if o.BgWidth < 3 || o.BgWidth%2 == 0 {
		bad("BgWidth", fmt.Sprintf("want an odd number of samples of at least 3, got %d", o.BgWidth))
	}
	if !(o.ZMin >= 0.5 && o.ZMin <= 50) {
		bad("ZMin", "want a modified z-score from 0.5 to 50")
	}
	if o.MinRun < 1 {
		bad("MinRun", "want at least 1 sample")
	}
	if !(o.Penalty >= 0) {
		bad("Penalty", "want a positive change-point penalty, or 0 for the default 2·ln n")
	}
	if o.Model != "mc" && o.Model != "linear" {
		bad("Model", "unknown age model "+quote(o.Model)+"; want mc or linear")
	}
	if o.Draws < MinSectionDraws || o.Draws > MaxSectionDraws {
		bad("Draws", fmt.Sprintf("want %d to %d age-model draws, got %d", MinSectionDraws, MaxSectionDraws, o.Draws))
	}
	if o.Level != 1 && o.Level != 2 {
		bad("Level", "want a σ level of 1 or 2")
	}
	if !slices.Contains([]string{"analytical", "tracer", "full"}, o.TieLevel) {
		bad("TieLevel", "unknown tie level "+quote(o.TieLevel)+"; want analytical, tracer or full")
	}
	checkInclude(o.Include, &errs)
	return errs.Err()
}

// HostProxy maps a host to its proxy code.
func HostProxy(h stats.Host) string {
	switch h {
	case stats.HostTS:
		return "ts"
	case stats.HostAl:
		return "al"
	}
	return "toc"
}

// RatioName is the trade name of the normalised series, e.g. Hg/TOC.
func RatioName(h stats.Host) string { return "Hg/" + h.String() }

// SampleRow is one sample with its values (NaN when missing or below detection) and what the analysis
// says about it.
type SampleRow struct {
	Sample  string
	HeightM float64
	HgPpb   float64
	HgSigma float64
	HgBelow bool     // below detection
	HgDL    *float64 // detection limit, ppb
	Toc     float64  // wt%
	Ts      float64  // wt%
	Al      float64  // wt%
	D13C    float64  // ‰ VPDB
	Host    float64  // the chosen host's value, wt%
	Ratio   stats.HgRatio
	// RawZ and RatioZ are robust z-scores of log10 values against the background (NaN without a value).
	RawZ, RatioZ       float64
	RawFlag, RatioFlag bool    // in a run above the anomaly threshold of their series
	rawW, ratioW       float64 // working values of the detection (ratio to the running median for a running baseline)
	ResidualPpb        float64 // Hg minus the background regression on the host; NaN without one
	Excess             bool    // residual beyond K·σ̂: more Hg than the host explains
	Anomaly            int     // 1-based number of the reported anomaly holding the sample, 0 for none
	Dated              bool    // within the tie range, so the model gives an age
	Age                stats.DrawSummary
}

// AnomalyReport is one detected anomaly with what it means.
type AnomalyReport struct {
	Number int
	Series string // "Hg/TOC" etc., or "Hg" for raw Hg
	Unit   string // unit of the peak value
	Host   string
	A      stats.Anomaly
	// RawRises: raw Hg is flagged in the interval, or its median there stands above its background by at
	// least half the ratio's rise on the log scale (so Hg, not a low in the host, carries the ratio).
	RawRises  bool
	RatioRise bool    // the ratio is flagged somewhere in the interval
	RawMult   float64 // median raw Hg in the interval over its background median
	RawShare  float64 // share of the ratio's log rise carried by raw Hg (NaN without a ratio)
	NExcess   int     // samples with a positive host-regression residual
	Verdict   string
	Caution   bool
	Age       *EventAge
}

// SegmentRow is one segment of constant mean found by PELT.
type SegmentRow struct {
	Series           string
	BaseM, TopM      float64
	N                int
	MultipleOfMedian float64 // 10^(segment mean − background median) on the log10 scale
}

// EventAge is the age distribution of an event or anomaly pushed through the model.
type EventAge struct {
	Name        string
	Kind        string
	Origin      string
	BaseM, TopM float64
	PeakM       float64 // NaN when no peak height is recorded (entered events)
	Age         stats.DrawSummary
	Seed        uint64
	Note        string
}

// RateRow is the accumulation rate between two successive ties.
type RateRow struct {
	From, To    string
	LowM, HighM float64
	Rate        stats.DrawSummary // m/Ma; Lo95/Hi95 NaN for the naive model
}

// AgeModel is the fitted age–height model (Monte Carlo or the naive linear one).
type AgeModel struct {
	Kind       string // mc, linear
	MC         *stats.AgeModel
	Linear     *stats.NaiveLinearAgeModel
	HeightsM   []float64
	Ages       []stats.DrawSummary // at HeightsM
	Ties       []stats.TiePoint
	TieIns     []TieInput // of Ties: their dates' components
	TieLabels  []string
	SharedNote string // which components were drawn once per draw for the ties that carry them
	Hiatuses   []stats.Hiatus
	Rates      []RateRow
	LowM, TopM float64 // tie range
	NUndated   int     // samples outside the tie range
}

// ageAt returns the model age at a requested height.
func (m *AgeModel) ageAt(z float64) (stats.DrawSummary, bool) {
	j, ok := slices.BinarySearch(m.HeightsM, z)
	if !ok {
		return stats.DrawSummary{}, false
	}
	return m.Ages[j], true
}

// SectionAnalysis is everything a section page, its figure and its downloads show.
type SectionAnalysis struct {
	Sec         store.Section
	Opt         SectionOptions
	Samples     []SampleRow
	Has         map[string]bool  // proxies measured
	D13C        string           // d13c_org, else d13c_carb, else ""
	AllTies     []store.TiePoint // every tie of the section, whatever its review state
	Ties        []store.TiePoint // the ties the age model uses: those Opt.Include lets in
	TieInputs   []TieInput       // per tie of Ties: the age and σ the model uses
	TiesLeftOut []store.TiePoint // the ties Opt.Include leaves out of the model
	Events      []store.Event
	AllHiatuses []store.Hiatus // every hiatus of the section, whatever its review state
	Hiatuses    []store.Hiatus // the hiatuses the age model honours: those Opt.Include lets in
	HiatusesOut []store.Hiatus // the hiatuses Opt.Include leaves out of the model

	Suggestion   stats.HostSuggestion
	Host         stats.Host
	HostChosen   string  // how the host was chosen: "suggested" or "chosen in the address"
	HostMinWtPct float64 // the low-host threshold in use: Opt.TocMinWtPct when the host is TOC, 0 (none) for TS and Al
	NLowHost     int

	RatioRes, RawRes   *stats.AnomalyResult // nil when the series has too few values
	RatioNote, RawNote string               // why a series was not analysed
	Background         *stats.BackgroundFit
	BackgroundNote     string
	Segments           []SegmentRow
	SegmentPenalty     float64
	SegmentNote        string
	Anomalies          []AnomalyReport

	Model      *AgeModel
	ModelNote  string // why there is no model
	EventAges  []EventAge
	OtherMatur []string                // thermal maturities of the other sections that differ from this one
	Decisions  []store.AnomalyDecision // curators' decisions on the section's anomalies, under any settings
}

// MaturityClass is the maturity stage of a stored description, without the measurement that supports it:
// "immature (Tmax 424 °C)" and "immature (Tmax 428 °C)" are the same stage.
func MaturityClass(s string) string {
	if i := strings.IndexAny(s, "(;,"); i >= 0 {
		s = s[:i]
	}
	return strings.ToLower(strings.TrimSpace(s))
}

func valueOf(s store.Sample, proxy string) float64 {
	m, ok := s.Values[proxy]
	if !ok || m.Value == nil {
		return math.NaN()
	}
	return *m.Value
}

// AnalyseSection runs the numerics of the section page. It returns a badRequest when the options do not
// fit the section (a host it lacks, a background window without samples).
// tieInputs gives the age and σ of each tie (nil: as entered). The model uses the ties whose review state
// o.Include lets in; the others are kept in TiesLeftOut, so the page can say so. Hiatuses likewise
// (HiatusesOut).
func AnalyseSection(sec store.Section, samples []store.Sample, ties []store.TiePoint, tieInputs []TieInput, events []store.Event,
	hiatuses []store.Hiatus, o SectionOptions) (*SectionAnalysis, error) {
	a := &SectionAnalysis{Sec: sec, Opt: o, AllTies: ties, Events: events, AllHiatuses: hiatuses, Has: map[string]bool{}}
	a.Hiatuses, a.HiatusesOut = PartitionReviewed(o.Include, hiatuses, HiatusState)
	a.selectTies(ties, tieInputs)
	a.sampleRows(samples)
	hg, toc, ts, al := a.columns()
	if err := a.chooseHost(hg, toc, ts, al); err != nil {
		return nil, err
	}
	host := map[stats.Host][]float64{stats.HostTOC: toc, stats.HostTS: ts, stats.HostAl: al}[a.Host]
	if err := a.hostRatios(samples, hg, host); err != nil {
		return nil, err
	}
	n := len(samples)
	heights := make([]float64, n)
	for i, r := range a.Samples {
		heights[i] = r.HeightM
	}
	bgMask, err := a.backgroundMask(heights)
	if err != nil {
		return nil, err
	}
	ratioVals := make([]float64, n)
	for i, r := range a.Samples {
		ratioVals[i] = r.Ratio.Value
	}
	a.detect(heights, ratioVals, hg, bgMask)
	a.backgroundFit(hg, host, bgMask)
	a.reportAnomalies()
	a.segment(heights, ratioVals, hg)
	a.fitModel()
	return a, nil
}

// selectTies keeps the ties the review choice lets into the model, each with its input (tieInputs, or
// as entered when nil), and the others in TiesLeftOut.
func (a *SectionAnalysis) selectTies(ties []store.TiePoint, tieInputs []TieInput) {
	o := a.Opt
	for i, t := range ties {
		if !Included(o.Include, string(t.ReviewState)) {
			a.TiesLeftOut = append(a.TiesLeftOut, t)
			continue
		}
		in := TieInput{}
		switch {
		case tieInputs != nil:
			in = tieInputs[i]
		case t.AgeMa != nil && t.SigmaMa != nil:
			in = TieInput{AgeMa: *t.AgeMa, SigmaMa: *t.SigmaMa, Level: "as entered with the tie point"}
		}
		a.Ties = append(a.Ties, t)
		a.TieInputs = append(a.TieInputs, in)
	}
}

// sampleRows lays the samples out with their values, and notes the proxies measured and the carbon
// isotopes shown (organic, else carbonate).
func (a *SectionAnalysis) sampleRows(samples []store.Sample) {
	n := len(samples)
	a.Samples = make([]SampleRow, n)
	for i, s := range samples {
		r := SampleRow{Sample: s.Sample, HeightM: s.HeightM, HgPpb: valueOf(s, "hg"), HgSigma: math.NaN(),
			Toc: valueOf(s, "toc"), Ts: valueOf(s, "ts"), Al: valueOf(s, "al"), D13C: math.NaN(),
			RawZ: math.NaN(), RatioZ: math.NaN(), ResidualPpb: math.NaN()}
		if m, ok := s.Values["hg"]; ok {
			r.HgBelow, r.HgDL = m.BelowDetection, m.DetectionLimit
			if m.Sigma != nil {
				r.HgSigma = *m.Sigma
			}
		}
		for p := range s.Values {
			a.Has[p] = true
		}
		a.Samples[i] = r
	}
	switch {
	case a.Has["d13c_org"]:
		a.D13C = "d13c_org"
	case a.Has["d13c_carb"]:
		a.D13C = "d13c_carb"
	}
	for i, s := range samples {
		if a.D13C != "" {
			a.Samples[i].D13C = valueOf(s, a.D13C)
		}
	}
}

// columns are the Hg values (NaN when none was measured) and the host phases' (nil when not measured).
func (a *SectionAnalysis) columns() (hg, toc, ts, al []float64) {
	n := len(a.Samples)
	col := func(f func(r SampleRow) float64, proxy string) []float64 {
		if !a.Has[proxy] {
			return nil
		}
		out := make([]float64, n)
		for i, r := range a.Samples {
			out[i] = f(r)
		}
		return out
	}
	hg = col(func(r SampleRow) float64 { return r.HgPpb }, "hg")
	if hg == nil {
		hg = make([]float64, n)
		for i := range hg {
			hg[i] = math.NaN()
		}
	}
	toc = col(func(r SampleRow) float64 { return r.Toc }, "toc")
	ts = col(func(r SampleRow) float64 { return r.Ts }, "ts")
	al = col(func(r SampleRow) float64 { return r.Al }, "al")
	return hg, toc, ts, al
}

// chooseHost chooses the host phase: the suggested one (auto), else the one the options name, which
// the section must have measured.
func (a *SectionAnalysis) chooseHost(hg, toc, ts, al []float64) error {
	o, sec := a.Opt, a.Sec
	// The suggestion uses every sample with both values; the low-TOC threshold governs ratios only.
	sug, err := stats.SuggestHost(hg, toc, ts, al)
	if err != nil {
		return fmt.Errorf("section analysis: %w", err)
	}
	a.Suggestion = sug
	switch o.Host {
	case "auto":
		a.HostChosen = "suggested"
		a.Host = stats.HostTOC
		if sug.OK {
			a.Host = sug.Host
		} else if toc == nil {
			switch {
			case ts != nil:
				a.Host = stats.HostTS
			case al != nil:
				a.Host = stats.HostAl
			}
		}
	default:
		a.HostChosen = "chosen in the address"
		a.Host = map[string]stats.Host{"toc": stats.HostTOC, "ts": stats.HostTS, "al": stats.HostAl}[o.Host]
		if !a.Has[HostProxy(a.Host)] {
			return &OptionError{Option: "Host", Problem: fmt.Sprintf("%s has no %s measurements; choose one it has, or auto", sec.Name, a.Host)}
		}
	}
	return nil
}

// hostRatios normalises Hg by the host (NaN ratios without one), the low-host rule marking the samples
// below the threshold not evaluable.
func (a *SectionAnalysis) hostRatios(samples []store.Sample, hg, host []float64) error {
	o, n := a.Opt, len(samples)
	if a.Host == stats.HostTOC {
		a.HostMinWtPct = o.TocMinWtPct
	}
	if host != nil {
		hgSig := make([]float64, n)
		hostSig := make([]float64, n)
		for i, s := range samples {
			hgSig[i] = zeroNaN(a.Samples[i].HgSigma)
			if m, ok := s.Values[HostProxy(a.Host)]; ok && m.Sigma != nil {
				hostSig[i] = *m.Sigma
			}
		}
		ratios, err := stats.HgHostRatios(hg, hgSig, host, hostSig, a.HostMinWtPct)
		if err != nil {
			return fmt.Errorf("section analysis: %w", err)
		}
		for i := range a.Samples {
			// A host below the threshold makes the ratio not evaluable whatever Hg is (also below detection).
			if ratios[i].Status == stats.RatioMissing && host[i] > 0 && host[i] < a.HostMinWtPct {
				ratios[i].Status = stats.RatioLowHost
			}
			a.Samples[i].Host = host[i]
			a.Samples[i].Ratio = ratios[i]
			if ratios[i].Status == stats.RatioLowHost {
				a.NLowHost++
			}
		}
	} else {
		for i := range a.Samples {
			a.Samples[i].Host = math.NaN()
			a.Samples[i].Ratio = stats.HgRatio{Value: math.NaN(), Sigma: math.NaN(), RelSigma: math.NaN(), Status: stats.RatioMissing}
		}
	}

	return nil
}

// detect finds the anomalies of the ratio and of raw Hg against the background, with each sample's
// robust z-score and whether a run holds it.
func (a *SectionAnalysis) detect(heights, ratioVals, hg []float64, bgMask []bool) {
	var ratioWork, rawWork []float64
	a.RatioRes, ratioWork, a.RatioNote = a.findAnomalies(heights, ratioVals, bgMask)
	a.RawRes, rawWork, a.RawNote = a.findAnomalies(heights, hg, bgMask)
	if a.RatioRes != nil {
		zs := robustZs(ratioWork, a.RatioRes)
		for i := range a.Samples {
			a.Samples[i].RatioZ, a.Samples[i].ratioW = zs[i], ratioWork[i]
		}
	}
	if a.RawRes != nil {
		zs := robustZs(rawWork, a.RawRes)
		for i := range a.Samples {
			a.Samples[i].RawZ, a.Samples[i].rawW = zs[i], rawWork[i]
		}
	}
	// Flags: every sample of a run (runs shorter than MinRun are not anomalies and not flagged).
	if a.RatioRes != nil {
		for _, an := range a.RatioRes.Anomalies {
			for i := an.BaseIndex; i <= an.TopIndex; i++ {
				a.Samples[i].RatioFlag = true
			}
		}
	}
	if a.RawRes != nil {
		for _, an := range a.RawRes.Anomalies {
			for i := an.BaseIndex; i <= an.TopIndex; i++ {
				a.Samples[i].RawFlag = true
			}
		}
	}

}

// backgroundFit regresses Hg on the host over the background samples.
func (a *SectionAnalysis) backgroundFit(hg, host []float64, bgMask []bool) {
	n := len(a.Samples)
	// Background regression of Hg on the host, over samples outside every run (and inside the window
	// when one was chosen), so the excursion cannot bend the line it is measured against.
	if host != nil {
		win := make([]bool, n)
		for i, r := range a.Samples {
			win[i] = !r.RawFlag && !r.RatioFlag && (bgMask == nil || bgMask[i])
		}
		fit, err := stats.FitBackground(hg, host, stats.BackgroundOptions{Window: win, K: HostResidualK})
		if err != nil {
			a.BackgroundNote = "No background regression: " + err.Error() + "."
		} else {
			a.Background = &fit
			for i := range a.Samples {
				a.Samples[i].ResidualPpb = fit.ResidualsPpb[i]
				a.Samples[i].Excess = fit.Excess[i]
			}
		}
	} else {
		a.BackgroundNote = "No background regression: no host phase was measured."
	}

}

func zeroNaN(v float64) float64 {
	if math.IsNaN(v) {
		return 0
	}
	return v
}

// backgroundMask marks the samples that define the baseline for baseline=window; nil otherwise.
func (a *SectionAnalysis) backgroundMask(heights []float64) ([]bool, error) {
	if a.Opt.Baseline != "window" {
		return nil, nil
	}
	mask := make([]bool, len(heights))
	k := 0
	for i, z := range heights {
		mask[i] = z >= a.Opt.BgBaseM && z <= a.Opt.BgTopM
		if mask[i] {
			k++
		}
	}
	if k < MinBackgroundSamples {
		return nil, &OptionError{Option: "Background", Problem: fmt.Sprintf("the background window %s–%s m holds %d samples; it needs at least %d",
			num(a.Opt.BgBaseM), num(a.Opt.BgTopM), k, MinBackgroundSamples)}
	}
	return mask, nil
}

// findAnomalies runs the robust-baseline detection on log10 values, with the chosen baseline. A running
// baseline divides each value by the running median of its evaluable neighbours first (and reports the
// peak in the original unit). It returns nil and a note when the series cannot be analysed.
func (a *SectionAnalysis) findAnomalies(heights, values []float64, bg []bool) (*stats.AnomalyResult, []float64, string) {
	var idx []int
	for i, v := range values {
		if v > 0 && !math.IsInf(v, 0) {
			idx = append(idx, i)
		}
	}
	if len(idx) < MinBackgroundSamples {
		return nil, nil, fmt.Sprintf("too few samples with a value (%d; at least %d)", len(idx), MinBackgroundSamples)
	}
	work := make([]float64, len(values))
	for i, v := range values {
		work[i] = math.NaN()
		if v > 0 && !math.IsInf(v, 0) {
			work[i] = v
		}
	}
	if a.Opt.Baseline == "running" {
		logs := make([]float64, len(idx))
		for k, i := range idx {
			logs[k] = math.Log10(values[i])
		}
		w := min(a.Opt.BgWidth, len(logs)-(1-len(logs)%2))
		rm, err := stats.RunningMedian(logs, max(w, 1))
		if err != nil {
			return nil, nil, "running median: " + err.Error()
		}
		for k, i := range idx {
			work[i] = values[i] / math.Pow(10, rm[k])
		}
	}
	res, err := stats.FindAnomalies(heights, work, stats.AnomalyOptions{ZMin: a.Opt.ZMin, MinRun: a.Opt.MinRun, Background: bg})
	if err != nil {
		if errors.Is(err, stats.ErrNoBackground) {
			return nil, nil, "no background sample has a value"
		}
		return nil, nil, err.Error()
	}
	if a.Opt.Baseline == "running" {
		for j := range res.Anomalies {
			res.Anomalies[j].PeakValue = values[res.Anomalies[j].PeakIndex]
		}
	}
	return &res, work, ""
}

// robustZs returns the modified z-score of every working value's log10 against the result's background
// (for a running baseline the working value is the ratio to the running median).
func robustZs(values []float64, res *stats.AnomalyResult) []float64 {
	out := make([]float64, len(values))
	scale := res.BackgroundMAD / stats.ModifiedZScale
	for i, v := range values {
		out[i] = math.NaN()
		if v > 0 && scale > 0 && res.Log10 {
			out[i] = (math.Log10(v) - res.BackgroundMedian) / scale
		}
	}
	return out
}

// overlaps reports whether the sample index ranges [b1, t1] and [b2, t2] share a sample.
func overlaps(b1, t1, b2, t2 int) bool { return b1 <= t2 && b2 <= t1 }

// reportAnomalies turns the runs of the ratio and of raw Hg into anomaly reports: every ratio anomaly,
// and every raw-Hg anomaly that no ratio anomaly covers (the case the ratio hides). Each says whether
// raw Hg rises too, and whether the host regression leaves positive residuals in it.
func (a *SectionAnalysis) reportAnomalies() {
	hostName := a.Host.String()
	ratio := RatioName(a.Host)
	excess := func(b, t int) int {
		k := 0
		for i := b; i <= t; i++ {
			if a.Samples[i].Excess {
				k++
			}
		}
		return k
	}
	flagged := func(b, t int, f func(r SampleRow) bool) bool {
		for i := b; i <= t; i++ {
			if f(a.Samples[i]) {
				return true
			}
		}
		return false
	}
	// rise is the median log10 rise of a series over [b, t] above its background median.
	rise := func(b, t int, res *stats.AnomalyResult, w func(r SampleRow) float64) float64 {
		if res == nil {
			return math.NaN()
		}
		var v []float64
		for i := b; i <= t; i++ {
			if x := w(a.Samples[i]); x > 0 {
				v = append(v, math.Log10(x))
			}
		}
		if len(v) == 0 {
			return math.NaN()
		}
		return stats.Median(v) - res.BackgroundMedian
	}
	rawRise := func(b, t int) float64 { return rise(b, t, a.RawRes, func(r SampleRow) float64 { return r.rawW }) }
	var out []AnomalyReport
	if a.RatioRes != nil {
		for _, an := range a.RatioRes.Anomalies {
			r := AnomalyReport{Series: ratio, Unit: "ppb/wt%", Host: hostName, A: an, RatioRise: true}
			dRaw := rawRise(an.BaseIndex, an.TopIndex)
			dRatio := rise(an.BaseIndex, an.TopIndex, a.RatioRes, func(r SampleRow) float64 { return r.ratioW })
			r.RawMult, r.RawShare = math.Pow(10, dRaw), dRaw/dRatio
			r.RawRises = flagged(an.BaseIndex, an.TopIndex, func(s SampleRow) bool { return s.RawFlag }) ||
				(dRaw > 0 && dRatio > 0 && dRaw >= 0.5*dRatio)
			r.NExcess = excess(an.BaseIndex, an.TopIndex)
			if r.RawRises {
				r.Verdict = fmt.Sprintf("Hg and %s rise together: more Hg, not less host", ratio)
			} else {
				r.Verdict = fmt.Sprintf("only %s rises; raw Hg stays at background: a low in %s drives the ratio, likely an artefact of the host, not more Hg", ratio, hostName)
				r.Caution = true
			}
			out = append(out, r)
		}
	}
	if a.RawRes != nil {
		for _, an := range a.RawRes.Anomalies {
			covered := false
			if a.RatioRes != nil {
				for _, ra := range a.RatioRes.Anomalies {
					covered = covered || overlaps(an.BaseIndex, an.TopIndex, ra.BaseIndex, ra.TopIndex)
				}
			}
			if covered {
				continue
			}
			r := AnomalyReport{Series: "Hg", Unit: "ppb", Host: hostName, A: an, RawRises: true, RawShare: math.NaN()}
			r.RawMult = math.Pow(10, rawRise(an.BaseIndex, an.TopIndex))
			r.NExcess = excess(an.BaseIndex, an.TopIndex)
			switch {
			case a.Background == nil:
				r.Verdict = fmt.Sprintf("raw Hg rises but %s does not; no host regression to tell whether %s explains it", ratio, hostName)
				r.Caution = true
			case r.NExcess > 0:
				r.Verdict = fmt.Sprintf("host-regression residual: raw Hg rises while %s stays flat, and %d of %d samples hold more Hg than the background regression on %s predicts — the ratio masks an Hg rise (high-%s masking)",
					ratio, r.NExcess, an.N, hostName, hostName)
				r.Caution = true
			default:
				r.Verdict = fmt.Sprintf("raw Hg rises with %s and the background regression on %s explains it (no positive residual)", hostName, hostName)
			}
			out = append(out, r)
		}
	}
	slices.SortStableFunc(out, func(x, y AnomalyReport) int { return CmpF(x.A.BaseHeightM, y.A.BaseHeightM) })
	for k := range out {
		out[k].Number = k + 1
		for i := out[k].A.BaseIndex; i <= out[k].A.TopIndex; i++ {
			if a.Samples[i].Anomaly == 0 {
				a.Samples[i].Anomaly = k + 1
			}
		}
	}
	a.Anomalies = out
}

func CmpF(x, y float64) int {
	switch {
	case x < y:
		return -1
	case x > y:
		return 1
	}
	return 0
}

// segment runs PELT on the log10 ratio and on log10 raw Hg (samples with a value only).
func (a *SectionAnalysis) segment(heights, ratio, hg []float64) {
	for _, sr := range []struct {
		name string
		v    []float64
		res  *stats.AnomalyResult
	}{{RatioName(a.Host), ratio, a.RatioRes}, {"Hg", hg, a.RawRes}} {
		if sr.res == nil {
			continue
		}
		var x, z []float64
		for i, v := range sr.v {
			if v > 0 && !math.IsInf(v, 0) {
				x = append(x, math.Log10(v))
				z = append(z, heights[i])
			}
		}
		seg, err := stats.SegmentPELT(x, stats.ChangepointOptions{Penalty: a.Opt.Penalty})
		if err != nil {
			a.SegmentNote = "change points: " + err.Error()
			continue
		}
		a.SegmentPenalty = seg.Penalty
		for j, st := range seg.Starts {
			end := len(x)
			if j+1 < len(seg.Starts) {
				end = seg.Starts[j+1]
			}
			row := SegmentRow{Series: sr.name, BaseM: z[st], TopM: z[end-1], N: end - st}
			bgMed := sr.res.BackgroundMedian
			if a.Opt.Baseline == "running" {
				bgMed = math.Log10(stats.Median(x2lin(x)))
			}
			row.MultipleOfMedian = math.Pow(10, seg.Means[j]-bgMed)
			a.Segments = append(a.Segments, row)
		}
	}
}

// x2lin turns log10 values back to values.
func x2lin(x []float64) []float64 {
	out := make([]float64, len(x))
	for i, v := range x {
		out[i] = math.Pow(10, v)
	}
	return out
}

// TieHasAge reports whether a tie point has an age an age model can use: normal with age and σ, or a
// range. The model and the comparison's count of events before computing share this rule.
func TieHasAge(t store.TiePoint) bool {
	return (t.Distribution == "normal" && t.AgeMa != nil && t.SigmaMa != nil) || (t.AgeMinMa != nil && t.AgeMaxMa != nil)
}

// fitModel fits the age–height model over the tie range and pushes events and anomalies through it.
func (a *SectionAnalysis) fitModel() {
	m := a.modelInputs()
	if m == nil {
		return
	}
	if err := a.fit(m); err != nil {
		a.ModelNote = "No age–height model: " + err.Error() + "."
		return
	}
	a.Model = m
	for i, r := range a.Samples {
		if s, ok := m.ageAt(r.HeightM); ok {
			a.Samples[i].Dated, a.Samples[i].Age = true, s
		}
	}
	m.rates()
	a.eventAges(m)
}

// modelInputs gathers the model's ties (those with an age), its tie range, the hiatuses within it and the
// heights it is evaluated at (samples, ties and event ends within the range); nil, with ModelNote saying
// why, when fewer than two ties have an age.
func (a *SectionAnalysis) modelInputs() *AgeModel {
	if len(a.Ties) < 2 {
		a.ModelNote = fmt.Sprintf("No age–height model: it needs at least two tie points, and this section has %d.", len(a.Ties))
		if len(a.TiesLeftOut) > 0 {
			a.ModelNote = fmt.Sprintf("No age–height model: it needs at least two tie points, and the review choice (%s) lets in %d of this section's %d.",
				ModelIncludeLabel(a.Opt.Include, "tie points"), len(a.Ties), len(a.AllTies))
		}
		return nil
	}
	m := &AgeModel{Kind: a.Opt.Model}
	for i, t := range a.Ties {
		switch {
		case t.Distribution == "normal" && t.AgeMa != nil && t.SigmaMa != nil:
			m.Ties = append(m.Ties, stats.NormalTie(t.HeightM, a.TieInputs[i].AgeMa, a.TieInputs[i].SigmaMa))
			m.TieIns = append(m.TieIns, a.TieInputs[i])
		case t.AgeMinMa != nil && t.AgeMaxMa != nil:
			m.Ties = append(m.Ties, stats.UniformTie(t.HeightM, *t.AgeMinMa, *t.AgeMaxMa))
			m.TieIns = append(m.TieIns, TieInput{})
		default:
			continue
		}
		m.TieLabels = append(m.TieLabels, t.Label)
	}
	if len(m.Ties) < 2 {
		a.ModelNote = "No age–height model: fewer than two tie points have an age."
		return nil
	}
	m.LowM, m.TopM = m.Ties[0].HeightM, m.Ties[len(m.Ties)-1].HeightM
	for _, t := range m.Ties {
		m.LowM, m.TopM = math.Min(m.LowM, t.HeightM), math.Max(m.TopM, t.HeightM)
	}
	for _, h := range a.Hiatuses {
		if h.HeightM > m.LowM && h.HeightM < m.TopM {
			m.Hiatuses = append(m.Hiatuses, stats.Hiatus{HeightM: h.HeightM, MinDurationMa: h.MinDurationMa})
		}
	}
	var hs []float64
	for _, r := range a.Samples {
		if m.in(r.HeightM) {
			hs = append(hs, r.HeightM)
		} else {
			m.NUndated++
		}
	}
	for _, t := range m.Ties {
		hs = append(hs, t.HeightM)
	}
	for _, e := range a.Events {
		for _, z := range []*float64{e.BaseHeightM, e.TopHeightM} {
			if z != nil && m.in(*z) {
				hs = append(hs, *z)
			}
		}
	}
	slices.Sort(hs)
	m.HeightsM = slices.Compact(hs)
	return m
}

// in reports whether a height lies within the model's tie range.
func (m *AgeModel) in(z float64) bool { return z >= m.LowM && z <= m.TopM }

// fit fits the naive linear or the Monte Carlo model, with the ties' shared components unless the
// comparison applies them itself.
func (a *SectionAnalysis) fit(m *AgeModel) error {
	var err error
	if m.Kind == "linear" {
		m.Linear, err = stats.FitNaiveLinear(m.Ties, m.HeightsM)
		if err == nil && !a.Opt.SharedApart {
			comps := TieComponents(m.TieIns, a.Opt.TieLevel)
			if err = m.Linear.AddShared(comps); err == nil {
				m.SharedNote = ComponentsNote(comps, len(m.Ties))
			}
		}
		if err == nil {
			m.Ages = make([]stats.DrawSummary, len(m.HeightsM))
			for j := range m.HeightsM {
				m.Ages[j] = stats.DrawSummary{Median: m.Linear.AgeMa[j], Lo95: m.Linear.Lo95[j], Hi95: m.Linear.Hi95[j]}
			}
		}
		return err
	}
	m.MC, err = stats.FitAgeModel(m.Ties, m.Hiatuses, m.HeightsM, stats.AgeModelOptions{Draws: a.Opt.Draws, Seed: a.Opt.Seed})
	if err == nil && !a.Opt.SharedApart {
		comps := TieComponents(m.TieIns, a.Opt.TieLevel)
		if err = m.MC.ApplyShared(comps, a.Opt.Seed); err == nil {
			m.SharedNote = ComponentsNote(comps, len(m.Ties))
		}
	}
	if err == nil {
		m.Ages = m.MC.Ages
	}
	return err
}

// rates are the accumulation rates between successive ties (by height).
func (m *AgeModel) rates() {
	order := make([]int, len(m.Ties))
	for i := range order {
		order[i] = i
	}
	slices.SortFunc(order, func(x, y int) int { return CmpF(m.Ties[x].HeightM, m.Ties[y].HeightM) })
	for k := 0; k+1 < len(order); k++ {
		lo, hi := m.Ties[order[k]], m.Ties[order[k+1]]
		row := RateRow{From: m.TieLabels[order[k]], To: m.TieLabels[order[k+1]], LowM: lo.HeightM, HighM: hi.HeightM}
		if m.MC != nil {
			_, row.Rate, _ = m.MC.AccumulationRate(lo.HeightM, hi.HeightM)
		} else {
			a1, _ := m.ageAt(lo.HeightM)
			a2, _ := m.ageAt(hi.HeightM)
			row.Rate = stats.DrawSummary{Median: (hi.HeightM - lo.HeightM) / (a1.Median - a2.Median), Lo95: math.NaN(), Hi95: math.NaN()}
		}
		m.Rates = append(m.Rates, row)
	}
}

// eventAges pushes the events (entered and detected) through the model, each Monte Carlo event with a
// seed of its own, one after the options' seed.
func (a *SectionAnalysis) eventAges(m *AgeModel) {
	seed := a.Opt.Seed
	nan := stats.DrawSummary{Median: math.NaN(), Lo95: math.NaN(), Hi95: math.NaN()}
	push := func(name, kind, origin string, base, top, peak float64) *EventAge {
		if !m.in(base) || !m.in(top) {
			return &EventAge{Name: name, Kind: kind, Origin: origin, BaseM: base, TopM: top, PeakM: peak, Note: "outside the tie range: no model age", Age: nan}
		}
		seed++
		e := &EventAge{Name: name, Kind: kind, Origin: origin, BaseM: base, TopM: top, PeakM: peak, Seed: seed}
		if m.MC != nil {
			ea, err := m.MC.EventAge(base, top, seed)
			if err != nil {
				e.Note, e.Age = err.Error(), nan
			} else {
				e.Age = ea.Summary
			}
			return e
		}
		lo, _ := m.ageAt(base)
		hi, _ := m.ageAt(top)
		e.Age = stats.DrawSummary{Median: (lo.Median + hi.Median) / 2, Lo95: math.Min(lo.Lo95, hi.Lo95), Hi95: math.Max(lo.Hi95, hi.Hi95)}
		e.Seed = 0
		e.Note = "naive linear: mid-point age, interval spanning both ends"
		return e
	}
	for _, ev := range a.Events {
		if ev.BaseHeightM == nil {
			continue
		}
		top := *ev.BaseHeightM
		if ev.TopHeightM != nil {
			top = *ev.TopHeightM
		}
		a.EventAges = append(a.EventAges, *push(ev.Name, store.Label(store.EventKinds(), ev.Kind), ev.Origin, *ev.BaseHeightM, top, math.NaN()))
	}
	for k := range a.Anomalies {
		an := a.Anomalies[k]
		e := push(fmt.Sprintf("Anomaly %d (%s)", an.Number, an.Series), "Hg anomaly", "detected", an.A.BaseHeightM, an.A.TopHeightM, an.A.PeakHeightM)
		a.Anomalies[k].Age = e
		a.EventAges = append(a.EventAges, *e)
	}
}
