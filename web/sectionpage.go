package web

import (
	"fmt"
	"io"
	"math"
	"net/http"
	"strconv"
	"strings"

	"coeval/stats"
	"coeval/store"
	"coeval/views"
)

// The section page with its analysis, and the downloads of that analysis: the figure as SVG, and the
// samples with ratios and flags, the anomalies and the model ages as CSV or JSON. Every download takes the
// same URL parameters as the page, so it reproduces what the page shows.

// sectionAnalysisFor reads the route, the options and the format, and runs the analysis.
func (s *Server) sectionAnalysisFor(r *http.Request) (*sectionAnalysis, string, error) {
	id, err := pathID(r, "id")
	if err != nil {
		return nil, "", err
	}
	p := newParams(r)
	format := p.format()
	// The section, its options' defaults and its data are read as one snapshot.
	a, err := s.sectionLoader().ByID(r.Context(), s.store, id, func(sec store.Section) (sectionOptions, error) {
		o := sectionOptionsFrom(p, sec)
		return o, p.err()
	})
	if err != nil {
		return nil, "", optionBadRequest(err, sectionParams)
	}
	return &sectionAnalysis{a}, format, nil
}

// withPath returns path with the request's query, and the given parameters set ("" deletes one).
func withPath(r *http.Request, path string, kv ...string) string {
	u := withQuery(r, kv...)
	if i := strings.IndexByte(u, '?'); i >= 0 {
		return path + u[i:]
	}
	return path
}

// fmtF formats v with d decimals, "—" for NaN.
func fmtF(v float64, d int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "—"
	}
	return strconv.FormatFloat(v, 'f', d, 64)
}

// csvF formats v exactly for a download, empty for NaN.
func csvF(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return ""
	}
	return strconv.FormatFloat(v, 'f', -1, 64)
}

// ageRange writes a median age and its 95 % interval with two significant figures of the half-width.
func ageRange(s stats.DrawSummary) string {
	if math.IsNaN(s.Median) {
		return "—"
	}
	d := sigmaDecimals((s.Hi95 - s.Lo95) / 2)
	return fmt.Sprintf("%s (%s–%s)", fixed(s.Median, d), fixed(s.Lo95, d), fixed(s.Hi95, d))
}

// ratioStatusCode is the machine-readable status of a ratio in downloads.
func ratioStatusCode(st stats.RatioStatus) string {
	switch st {
	case stats.RatioOK:
		return "ok"
	case stats.RatioLowHost:
		return "not_evaluable_low_host"
	}
	return "missing"
}

func (s *Server) handleSectionShow(w http.ResponseWriter, r *http.Request) error {
	a, format, err := s.sectionAnalysisFor(r)
	if err != nil {
		return err
	}
	sec := a.Sec
	switch format {
	case "csv":
		return writeDownload(w, fmt.Sprintf("section-%d.csv", sec.ID), func(w io.Writer) error { return store.WriteSectionsCSV(w, []store.Section{sec}) })
	case "json":
		writeJSON(w, http.StatusOK, map[string]any{"section": sec, "tie_points": a.AllTies, "events": a.Events, "hiatuses": a.AllHiatuses,
			"settings": a.settingsJSON(), "host": a.hostJSON(), "anomalies": a.anomaliesJSON(), "segments": a.segmentsJSON(),
			"age_model": a.modelJSON(), "uncertainties": jsonSigmaNote})
		return nil
	}
	v, err := s.sectionView(r, a, sectionForms{})
	if err != nil {
		return err
	}
	s.render(w, r, http.StatusOK, views.SectionPage(v))
	return nil
}

// sectionView builds the section page; fs carries the values and problems of a form that was posted
// from it and is shown again.
func (s *Server) sectionView(r *http.Request, a *sectionAnalysis, fs sectionForms) (views.SectionView, error) {
	ctx := r.Context()
	sec := a.Sec
	base := idURL("/sections", sec.ID)
	v := views.SectionView{Page: s.page(ctx, sec.Name, "Sections"), Intro: sec.Notes}
	v.Page.Crumbs = []views.Link{{Label: "Sections", URL: "/sections"}}
	v.Page.Downloads = []views.Link{{Label: "CSV (section)", URL: withQuery(r, "format", "csv")}, {Label: "JSON", URL: withQuery(r, "format", "json")}}
	v.Groups = []views.FieldGroup{{Title: "Section", Fields: []views.KV{
		{Label: "Kind", Value: sec.Kind},
		{Label: "Location", Value: coord(sec.Latitude, sec.Longitude)},
		{Label: "Palaeolatitude", Value: optDeg(sec.Palaeolatitude)},
		{Label: "Thermal maturity", Value: orDash(sec.ThermalMaturity), Class: cautionIf(len(a.OtherMatur) > 0)},
		{Label: "Low-TOC threshold for Hg/TOC", Value: num(sec.TocThresholdWtPct) + " wt% (stored); " + num(a.Opt.TocMinWtPct) + " wt% in use"},
		{Label: "Samples", Value: itoa(sec.NSamples) + " between " + heightRange(sec) + " m"},
	}}}
	v.Controls = sectionControls(r, a)
	v.Cautions = a.cautions()
	v.FigureSVG = views.SectionSVG(sectionFigure(a))
	v.FigureCaption = "Height up, as the section is logged. Shaded: detected anomalies (numbered as in the table). " +
		"Crosses in the ratio panel's left strip: samples whose ratio is not evaluable (kept, not dropped). Triangles on each panel's left edge: tie points."
	v.FigureLinks = []views.Link{{Label: "Figure (SVG)", URL: withPath(r, base+"/figure.svg", "format", "")},
		{Label: "(PNG)", URL: withPath(r, base+"/figure.png", "format", "")}, {Label: "(PDF, text in ASCII)", URL: withPath(r, base+"/figure.pdf", "format", "")}}
	decisions := a.Decisions
	ab := a.anomalyBlock(r, base)
	a.decisionColumn(&ab, decisions)
	ab.Forms = a.anomalyForms(r, base, decisions, fs)
	if dt := decisionTable(decisions, a.detectionSettings()); len(dt.Rows) > 0 {
		ab.Tables = append(ab.Tables, dt)
	}
	v.Blocks = []views.Block{a.hostBlock(), ab, a.segmentBlock(), a.modelBlock(r, base)}
	tt := tieTable(a.AllTies, a.Opt.Level, false)
	tt.Caption = "Tie points"
	if len(a.TiesLeftOut) > 0 {
		tt.Notes = append(tt.Notes, fmt.Sprintf("The age–height model leaves out %s: it uses %s.",
			count(len(a.TiesLeftOut), "tie point"), tieIncludeLabel(a.Opt.Include)))
	}
	ht := hiatusTable(a.AllHiatuses)
	if len(a.HiatusesOut) > 0 {
		ht.Notes = append(ht.Notes, fmt.Sprintf("The age–height model leaves out %d %s: it honours %s.",
			len(a.HiatusesOut), map[bool]string{true: "hiatus", false: "hiatuses"}[len(a.HiatusesOut) == 1], modelIncludeLabel(a.Opt.Include, "hiatuses")))
	}
	et := eventTable(a.Events, false)
	et.Caption = "Events (entered, imported, or made from detected anomalies)"
	st := a.sampleTable()
	v.Blocks = append(v.Blocks, views.Block{ID: "records", Title: "Tie points, hiatuses, events and samples", Tables: []views.Table{tt, ht, et, st},
		Links: []views.Link{
			{Label: "Samples with ratios and flags (CSV)", URL: withPath(r, base+"/ratios", "format", "csv")},
			{Label: "(JSON)", URL: withPath(r, base+"/ratios", "format", "json")},
			{Label: "(columns explained)", URL: "/help/downloads/section-ratios"},
			{Label: "Measurements as stored (CSV)", URL: base + "/measurements?format=csv"},
			{Label: "Tie points (CSV)", URL: base + "/ties?format=csv"},
			{Label: "Events (CSV)", URL: base + "/events?format=csv"},
			{Label: fmt.Sprintf("Show tie ages at %dσ", 3-a.Opt.Level), URL: withQuery(r, "sigma", strconv.Itoa(3-a.Opt.Level))},
		}})
	v.Blocks = append(v.Blocks, s.sectionRecordBlock(r, sec))
	if f, ok := s.eventForm(r, base, fs); ok {
		v.Blocks = append(v.Blocks, f)
	}
	return v, nil
}

func cautionIf(b bool) string {
	if b {
		return "caution"
	}
	return ""
}

// sectionControls is the form of the analysis choices; every field is a URL parameter.
func sectionControls(r *http.Request, a *sectionAnalysis) views.Form {
	o := a.Opt
	opt := func(v, label, cur string) views.Option {
		return views.Option{Value: v, Label: label, Selected: v == cur}
	}
	hosts := []views.Option{opt("auto", "suggested ("+a.suggestedLabel()+")", o.Host)}
	for _, h := range []string{"toc", "ts", "al"} {
		if a.Has[h] {
			hosts = append(hosts, opt(h, "Hg/"+strings.ToUpper(h[:1])+h[1:], o.Host))
		}
	}
	for i := range hosts[1:] {
		hosts[i+1].Label = map[string]string{"toc": "Hg/TOC", "ts": "Hg/TS", "al": "Hg/Al"}[hosts[i+1].Value]
	}
	penalty := ""
	if o.Penalty > 0 {
		penalty = num(o.Penalty)
	}
	q := r.URL.Query()
	return views.Form{Action: r.URL.Path, Reset: r.URL.Path, Fields: []views.Field{
		{Name: "host", Label: "Host phase", Kind: "select", Options: hosts},
		{Name: "toc_min", Label: "Low-TOC threshold (wt%)", Kind: "number", Value: num(o.TocMinWtPct), Step: "0.01"},
		{Name: "baseline", Label: "Baseline", Kind: "select", Options: []views.Option{
			opt("section", "whole section (robust)", o.Baseline), opt("window", "background window", o.Baseline), opt("running", "running median", o.Baseline)}},
		{Name: "bg_base", Label: "Window base (m)", Kind: "number", Value: q.Get("bg_base"), Step: "any", Placeholder: "window only"},
		{Name: "bg_top", Label: "Window top (m)", Kind: "number", Value: q.Get("bg_top"), Step: "any", Placeholder: "window only"},
		{Name: "bg_width", Label: "Running width (samples)", Kind: "number", Value: itoa(o.BgWidth), Step: "2"},
		{Name: "z_min", Label: "Modified z above", Kind: "number", Value: num(o.ZMin), Step: "0.1"},
		{Name: "penalty", Label: "Change-point penalty", Kind: "number", Value: penalty, Step: "any", Placeholder: fmtF(a.SegmentPenalty, 1) + " (2·ln n)"},
		{Name: "model", Label: "Age model", Kind: "select", Options: []views.Option{
			opt("mc", "Monte Carlo, kept in stratigraphic order", o.Model), opt("linear", "naive linear (under-covers)", o.Model)}},
		{Name: "tie_level", Label: "± of ties from dates", Kind: "select", Options: []views.Option{
			opt("full", "full external (default)", o.TieLevel), opt("tracer", "with tracer (Y)", o.TieLevel), opt("analytical", "analytical (X)", o.TieLevel)}},
		{Name: "include", Label: "Tie points and hiatuses in the model", Kind: "select", Options: modelIncludeOptions(o.Include)},
		{Name: "draws", Label: "Draws", Kind: "number", Value: itoa(o.Draws), Step: "100"},
		{Name: "seed", Label: "Seed", Kind: "number", Value: strconv.FormatUint(o.Seed, 10), Step: "1"},
	}}
}

func (a *sectionAnalysis) suggestedLabel() string {
	if a.Suggestion.OK {
		return "Hg/" + a.Suggestion.Host.String()
	}
	return "none qualifies: Hg/" + a.Host.String()
}

// cautions lists what a reader must know before using the numbers.
func (a *sectionAnalysis) cautions() []string {
	var out []string
	if a.NLowHost > 0 {
		out = append(out, fmt.Sprintf("%d of %d samples have %s below %s wt%%: their %s is not evaluable (the %s error dominates and a %s low makes a false spike). They are kept in every table and marked ×; raw Hg stays usable.",
			a.NLowHost, len(a.Samples), a.Host, num(a.HostMinWtPct), ratioName(a.Host), a.Host, a.Host))
	}
	if len(a.OtherMatur) > 0 {
		out = append(out, fmt.Sprintf("Thermal maturity: this section is %s; other sections are %s. Maturation changes organic carbon and inflates Hg/TOC, so compare ratios between sections of different maturity with care.",
			orDash(a.Sec.ThermalMaturity), strings.Join(a.OtherMatur, "; ")))
	}
	for _, an := range a.Anomalies {
		if an.Caution {
			out = append(out, fmt.Sprintf("Anomaly %d (%s–%s m): %s.", an.Number, num(an.A.BaseHeightM), num(an.A.TopHeightM), an.Verdict))
		}
	}
	if a.Opt.Model == "linear" {
		out = append(out, "The naive linear age model ignores how irregular deposition is and treats tie errors as independent: its 95 % intervals cover the true age far less often than 95 % in simulation. Use it only for comparison with the Monte Carlo model (model=mc).")
	}
	out = append(out, tieReviewCautions("", a.Ties, a.TiesLeftOut, a.Opt.Include)...)
	out = append(out, hiatusReviewCautions("", a.Hiatuses, a.HiatusesOut, a.Opt.Include)...)
	if a.ModelNote != "" {
		out = append(out, a.ModelNote)
	}
	if a.Model != nil && a.Model.NUndated > 0 {
		out = append(out, fmt.Sprintf("%d samples lie outside the tie range (%s–%s m) and get no model age: the model does not extrapolate.",
			a.Model.NUndated, num(a.Model.LowM), num(a.Model.TopM)))
	}
	return out
}

func (a *sectionAnalysis) hostBlock() views.Block {
	b := views.Block{ID: "host", Title: "Host phase of mercury"}
	if a.Suggestion.OK {
		b.Paras = append(b.Paras, fmt.Sprintf("Suggested host: %s. Why: %s. A suggestion to confirm, not a decision.", a.Suggestion.Host, a.Suggestion.Reason))
	} else {
		b.Paras = append(b.Paras, "No host suggested: "+a.Suggestion.Reason+".")
	}
	b.Paras = append(b.Paras, fmt.Sprintf("In use: Hg/%s (%s). Low-host rule: below %s wt%% %s the ratio is not evaluable; %d samples are below it.",
		a.Host, a.HostChosen, num(a.HostMinWtPct), a.Host, a.NLowHost))
	if a.Background != nil {
		bg := a.Background
		b.Paras = append(b.Paras, fmt.Sprintf("High-host masking check: background regression Hg = %s + %s·%s (ppb, %s in wt%%) over %d samples outside the anomalies; σ̂ of residuals = %s ppb (1.4826·MAD). %d samples hold more Hg than it predicts by over %g σ̂ (ringed in the figure).",
			fmtF(bg.InterceptPpb, 1), fmtF(bg.SlopePpbPerWt, 2), a.Host, a.Host, bg.N, fmtF(bg.SigmaHatPpb, 2), countExcess(a), bg.K))
	} else {
		b.Paras = append(b.Paras, a.BackgroundNote)
	}
	t := views.Table{ID: "host-correlations", Caption: "Correlation of Hg with each measured host", Columns: []views.Column{
		{Label: "Host"}, {Label: "Pearson r", Num: true}, {Label: "Paired samples", Num: true}, {Label: "Ratio"}}}
	for _, c := range a.Suggestion.Correlations {
		t.Rows = append(t.Rows, []views.Cell{{Text: c.Host.String()}, {Text: fmtF(c.R, 2), Num: true}, {Text: itoa(c.N), Num: true}, {Text: ratioName(c.Host) + " (ppb/wt%)"}})
	}
	t.Empty = "No host phase (TOC, TS, Al) was measured."
	t.Notes = []string{fmt.Sprintf("The strongest positive correlation over at least %d samples suggests the host (Shen et al. 2020, EPSL 543:116333).", stats.MinHostPairs)}
	b.Tables = []views.Table{t}
	return b
}

func countExcess(a *sectionAnalysis) int {
	k := 0
	for _, r := range a.Samples {
		if r.Excess {
			k++
		}
	}
	return k
}

// baselineSentence describes how the baseline was set.
func (a *sectionAnalysis) baselineSentence() string {
	switch a.Opt.Baseline {
	case "window":
		return fmt.Sprintf("background window %s–%s m", num(a.Opt.BgBaseM), num(a.Opt.BgTopM))
	case "running":
		return fmt.Sprintf("running median over %d samples (values divided by it)", a.Opt.BgWidth)
	}
	return "median and MAD of the whole section (robust to the excursion)"
}

func (a *sectionAnalysis) anomalyBlock(r *http.Request, base string) views.Block {
	b := views.Block{ID: "anomalies", Title: "Anomalies"}
	desc := func(name string, res *stats.AnomalyResult, note string) string {
		if res == nil {
			return name + ": not analysed (" + note + ")."
		}
		bm := math.Pow(10, res.BackgroundMedian)
		unit := " ppb/wt%"
		if name == "Hg" {
			unit = " ppb"
		}
		if a.Opt.Baseline == "running" {
			unit = " × running median"
		}
		return fmt.Sprintf("%s: background median %s%s over %d samples, σ̂ = %s log10 units (1.4826·MAD); flagged above %s%s.",
			name, fmtF(bm, 2), unit, res.NBackground, fmtF(res.SigmaHat, 3), fmtF(math.Pow(10, res.Threshold), 2), unit)
	}
	b.Paras = []string{desc(ratioName(a.Host), a.RatioRes, a.RatioNote), desc("Hg", a.RawRes, a.RawNote)}
	b.How = []string{
		fmt.Sprintf("On log10 values with a robust baseline (%s): modified z = 0.6745·(x − median)/MAD above %s in at least %d consecutive samples. Run on %s and on raw Hg; a raw-Hg run that the ratio misses is reported too.",
			a.baselineSentence(), num(a.Opt.ZMin), a.Opt.MinRun, ratioName(a.Host)),
		"Origin: detected. A curator can make an anomaly an event of the section (kind Hg anomaly, its base and top, with a note of the settings that found it) or reject it with a reason; a decision holds for the anomaly as found with these settings (series, interval, host, threshold, baseline, z and run length).",
	}
	b.Links = []views.Link{{Label: "Anomalies (CSV)", URL: withPath(r, base+"/anomalies", "format", "csv")}, {Label: "(JSON)", URL: withPath(r, base+"/anomalies", "format", "json")},
		{Label: "(columns explained)", URL: "/help/downloads/section-anomalies"}}
	t := views.Table{ID: "anomaly-table", Caption: "Detected anomalies", Empty: "No anomaly: no run of samples stands above the threshold.", Columns: []views.Column{
		{Label: "No.", Num: true}, {Label: "Series"}, {Label: "Interval", Unit: "m", Num: true},
		{Label: "Peak", Unit: "value at height", Num: true}, {Label: "× background", Unit: "median", Num: true}, {Label: "Robust z", Unit: "log10, peak", Num: true},
		{Label: "n", Unit: "samples", Num: true}, {Label: "Raw Hg", Unit: "× background"}, {Label: "Host residual", Unit: "samples, on " + a.Host.String()}, {Label: "Reading"},
		{Label: "Model age", Unit: "Ma, median (95 %)", Num: true}}}
	for _, an := range a.Anomalies {
		raw := "rises (×" + fmtF(an.RawMult, 2) + ")"
		if !an.RawRises {
			raw = "does not rise (×" + fmtF(an.RawMult, 2) + ")"
		}
		age := "—"
		if an.Age != nil {
			age = ageRange(an.Age.Age)
		}
		reading := views.Cell{Text: an.Verdict, Class: "reading"}
		if an.Caution {
			reading.Class = "caution reading"
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: itoa(an.Number), Num: true}, {Text: an.Series},
			{Text: num(an.A.BaseHeightM) + "–" + num(an.A.TopHeightM), Num: true},
			{Text: fmtF(an.A.PeakValue, 1) + " " + an.Unit + " at " + num(an.A.PeakHeightM) + " m", Num: true},
			{Text: fmtF(an.A.MultipleOfBackground, 2), Num: true}, {Text: fmtF(an.A.RobustZ, 1), Num: true}, {Text: itoa(an.A.N), Num: true},
			{Text: raw}, {Text: fmt.Sprintf("%d of %d", an.NExcess, an.A.N)}, reading, {Text: age, Num: true}})
	}
	b.Tables = []views.Table{t}
	return b
}

func (a *sectionAnalysis) segmentBlock() views.Block {
	b := views.Block{ID: "changepoints", Title: "Change points"}
	pen := "the default 2·ln n"
	if a.Opt.Penalty > 0 {
		pen = "as chosen"
	}
	b.How = []string{fmt.Sprintf("Segments of constant mean of log10 values by penalised change-point segmentation (PELT, exact as optimal partitioning), samples with a value only, cost scaled by a robust noise σ. Penalty per segment: %s (%s); a larger penalty among the analysis choices gives fewer segments.",
		fmtF(a.SegmentPenalty, 2), pen)}
	if a.SegmentNote != "" {
		b.Paras = append(b.Paras, a.SegmentNote)
	}
	t := views.Table{ID: "segments", Caption: "Segments", Empty: "No series to segment.", Columns: []views.Column{{Label: "Series"}, {Label: "Base", Unit: "m", Num: true},
		{Label: "Top", Unit: "m", Num: true}, {Label: "Samples", Num: true}, {Label: "Mean", Unit: "× background median", Num: true}}}
	for _, s := range a.Segments {
		c := views.Cell{Text: fmtF(s.MultipleOfMedian, 2), Num: true}
		if s.MultipleOfMedian >= 2 {
			c.Class = "pending"
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: s.Series}, {Text: num(s.BaseM), Num: true}, {Text: num(s.TopM), Num: true}, {Text: itoa(s.N), Num: true}, c})
	}
	b.Tables = []views.Table{t}
	return b
}

func (a *sectionAnalysis) modelBlock(r *http.Request, base string) views.Block {
	b := views.Block{ID: "agemodel", Title: "Age–height model"}
	b.Links = []views.Link{{Label: "Model ages (CSV)", URL: withPath(r, base+"/agemodel", "format", "csv")}, {Label: "(JSON)", URL: withPath(r, base+"/agemodel", "format", "json")},
		{Label: "(columns explained)", URL: "/help/downloads/section-age-model"},
		{Label: "Model ages page", URL: withPath(r, base+"/agemodel", "format", "")}}
	m := a.Model
	if m == nil {
		b.Paras = []string{a.ModelNote}
		return b
	}
	b.How = a.modelParas()
	rt := views.Table{ID: "rates", Caption: "Accumulation rate between tie points", Columns: []views.Column{{Label: "From"}, {Label: "To"},
		{Label: "Heights", Unit: "m", Num: true}, {Label: "Rate", Unit: "m/Ma, median (95 %)", Num: true}}}
	for _, rr := range m.Rates {
		rate := fmtF(rr.Rate.Median, 1)
		if !math.IsNaN(rr.Rate.Lo95) {
			rate += " (" + fmtF(rr.Rate.Lo95, 1) + "–" + fmtF(rr.Rate.Hi95, 1) + ")"
		} else {
			rate += " (no interval: naive model)"
		}
		rt.Rows = append(rt.Rows, []views.Cell{{Text: rr.From}, {Text: rr.To}, {Text: num(rr.LowM) + "–" + num(rr.HighM), Num: true}, {Text: rate, Num: true}})
	}
	et := views.Table{ID: "event-ages", Caption: "Ages of events and detected anomalies (height or interval pushed through the draws)", Empty: "No event.",
		Columns: []views.Column{{Label: "Event"}, {Label: "Kind"}, {Label: "Origin"}, {Label: "Heights", Unit: "m", Num: true},
			{Label: "Age", Unit: "Ma, median (95 %)", Num: true}, {Label: "Note"}}}
	for _, e := range a.EventAges {
		hs := num(e.BaseM)
		if e.TopM > e.BaseM {
			hs += "–" + num(e.TopM)
		}
		note := e.Note
		if note == "" && e.TopM > e.BaseM {
			note = fmt.Sprintf("uniform within the interval in each draw (seed %d)", e.Seed)
		}
		et.Rows = append(et.Rows, []views.Cell{{Text: e.Name}, {Text: e.Kind}, {Text: e.Origin}, {Text: hs, Num: true}, {Text: ageRange(e.Age), Num: true}, {Text: orDash(note)}})
	}
	b.Tables = []views.Table{a.tieModelTable(), rt, et}
	return b
}

// nonEmpty gives the paragraphs that say something.
func nonEmpty(paras ...string) []string {
	var out []string
	for _, p := range paras {
		if p != "" {
			out = append(out, p)
		}
	}
	return out
}

// samplerWords says in words how the tie ages were drawn.
func samplerWords(sampler string) string {
	switch sampler {
	case "rejection":
		return "all together, keeping only draws in stratigraphic order"
	case "gibbs":
		return "one tie at a time, each within the bounds its neighbours leave"
	}
	return "by the " + sampler + " sampler"
}

// modelParas states the model and every choice behind it, in our words, citing the methods by name.
func (a *sectionAnalysis) modelParas() []string {
	m := a.Model
	ties := fmt.Sprintf("%d tie points between %s and %s m (normal ages drawn from N(age, σ); biostratigraphic and other ranges uniform)", len(m.Ties), num(m.LowM), num(m.TopM))
	hi := "no hiatus"
	if len(m.Hiatuses) > 0 {
		hi = fmt.Sprintf("%d hiatuses with minimum durations", len(m.Hiatuses))
	}
	if m.MC != nil {
		return nonEmpty(
			fmt.Sprintf("Model: Monte Carlo draws of the ages, each draw kept in stratigraphic order (older below). Seed %d, %d draws. From %s; %s.", m.MC.Seed, m.MC.NDraws, ties, hi),
			a.tieLevelSentence(),
			a.tieReviewSentence(),
			a.hiatusReviewSentence(),
			fmt.Sprintf("Tie ages drawn %s; share of draws kept: %.1f %% of %d tried. A draw out of stratigraphic order is thrown away whole, never sorted; when fewer than %g %% would be kept, each tie's age is drawn in turn within the bounds its neighbours leave (a Gibbs sampler of truncated ages, Buck, Cavanagh & Litton 1996).",
				samplerWords(m.MC.Sampler.String()), 100*m.MC.Acceptance, m.MC.Attempts, 100*stats.DefaultMinAcceptance),
			fmt.Sprintf("Between ties: regularity of deposition (how evenly sediment accumulated, counted as deposition steps per m): drawn for each draw between %g and %g per m, evenly on a log scale, so the intervals average over how regular deposition was instead of trusting one value. Given it, the ages between two ties follow the Beta bridge of a Poisson-process deposition model (Bronk Ramsey 2008, Quaternary Science Reviews 27:42–60).",
				float64(stats.DefaultRigidityMinPerM), float64(stats.DefaultRigidityMaxPerM)),
			"What the 95 % intervals are worth depends on that choice. In simulated sections (BENCHMARKS.md) they held the true age in about 95 % of cases averaged over the range drawn, 93 % where deposition was very irregular (about 0.5 steps per m) and 99 % or more where it was regular (2 or more steps per m): there they are wider than they need be.",
			"Ages: median and 95 % interval (2.5 and 97.5 percentiles of the draws) at every sample in the tie range. The same seed and draws give the same numbers.",
		)
	}
	return []string{
		fmt.Sprintf("Model: NAIVE linear interpolation between tie means, from %s; hiatuses ignored. Tie errors are propagated as if independent; interval = mean ± 1.96σ.", ties),
		a.tieLevelSentence(),
		a.tieReviewSentence(),
		"Caution: this model under-covers — in simulation its 95 % intervals hold the true age far less often than 95 %. It is offered only as a labelled comparison; use model=mc.",
	}
}

// sampleTable lists every sample with its ratio, status, flags and model age; none is dropped.
func (a *sectionAnalysis) sampleTable() views.Table {
	ratio := ratioName(a.Host)
	t := views.Table{ID: "measurements", Caption: fmt.Sprintf("Samples (%d), lowest first, with %s, flags and model ages", len(a.Samples), ratio),
		Columns: []views.Column{{Label: "Sample"}, {Label: "Height", Unit: "m", Num: true}, {Label: "Hg", Unit: "ppb", Num: true},
			{Label: a.Host.String(), Unit: "wt%", Num: true}, {Label: ratio, Unit: "ppb/wt% ± 1σ", Num: true}, {Label: "z", Unit: "log10 ratio", Num: true},
			{Label: "z", Unit: "log10 Hg", Num: true}, {Label: d13cTitle(a.D13C), Unit: "‰ VPDB", Num: true}, {Label: "Host residual", Unit: "ppb", Num: true},
			{Label: "Anomaly", Num: true}, {Label: "Model age", Unit: "Ma, median (95 %)", Num: true}}}
	hdec := 0
	for _, s := range a.Samples {
		hdec = max(hdec, decimals(s.HeightM))
	}
	for _, s := range a.Samples {
		hg := views.Cell{Text: fmtF(s.HgPpb, 1), Num: true}
		if s.HgBelow {
			hg = views.Cell{Text: "<DL", Num: true, Class: "muted", Title: "below the detection limit"}
			if s.HgDL != nil {
				hg.Text = "<" + num(*s.HgDL)
			}
		}
		rc := views.Cell{Num: true}
		switch s.Ratio.Status {
		case stats.RatioOK:
			rc.Text = fmtF(s.Ratio.Value, 1) + " ± " + fmtF(s.Ratio.Sigma, 1)
		case stats.RatioLowHost:
			rc.Text, rc.Class = "× "+notEvaluableLabel, "noteval"
			rc.Title = fmt.Sprintf("%s below %s wt%%: relative 1σ of the ratio would be %s %%", a.Host, num(a.HostMinWtPct), fmtF(100*s.Ratio.RelSigma, 0))
		default:
			rc.Text, rc.Class = "—", "muted"
		}
		res := views.Cell{Text: fmtF(s.ResidualPpb, 1), Num: true}
		if s.Excess {
			res.Class, res.Title = "caution", "more Hg than the background regression on the host predicts"
		}
		an := ""
		if s.Anomaly > 0 {
			an = "A" + itoa(s.Anomaly)
		}
		age := "—"
		if s.Dated {
			age = ageRange(s.Age)
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: s.Sample}, {Text: fixed(s.HeightM, hdec), Num: true}, hg, {Text: fmtF(s.Host, 3), Num: true}, rc,
			{Text: fmtF(s.RatioZ, 1), Num: true}, {Text: fmtF(s.RawZ, 1), Num: true}, {Text: fmtF(s.D13C, 2), Num: true}, res, {Text: an, Num: true}, {Text: age, Num: true}})
	}
	t.Notes = []string{fmt.Sprintf("“× not evaluable”: %s below the threshold; the sample stays, raw Hg stays usable. z: modified z of log10 values against the background. Ratio ± is 1σ, propagated from the Hg and host 1σ.", a.Host)}
	return t
}

// Downloads.
