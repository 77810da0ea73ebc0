package web

import (
	"cmp"
	"fmt"
	"io"
	"math"
	"net/http"
	"slices"
	"strconv"
	"strings"

	"coeval/stats"
	"coeval/store"
	"coeval/views"
)

func (a *sectionAnalysis) settingsJSON() map[string]any {
	s := map[string]any{"host": a.Host.String(), "host_chosen": a.HostChosen, "host_param": a.Opt.Host, "toc_min_wt_pct": a.Opt.TocMinWtPct,
		"host_min_wt_pct": a.HostMinWtPct, "baseline": a.Opt.Baseline, "z_min": a.Opt.ZMin, "min_run": a.Opt.MinRun,
		"penalty": a.SegmentPenalty, "penalty_is_default": a.Opt.Penalty == 0, "model": a.Opt.Model, "draws": a.Opt.Draws, "seed": a.Opt.Seed, "tie_level": a.Opt.TieLevel,
		"include": a.Opt.Include}
	switch a.Opt.Baseline {
	case "window":
		s["bg_base_m"], s["bg_top_m"] = a.Opt.BgBaseM, a.Opt.BgTopM
	case "running":
		s["bg_width_samples"] = a.Opt.BgWidth
	}
	return s
}

func jf(v float64) any {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return v
}

func (a *sectionAnalysis) hostJSON() map[string]any {
	var cs []map[string]any
	for _, c := range a.Suggestion.Correlations {
		cs = append(cs, map[string]any{"host": c.Host.String(), "pearson_r": jf(c.R), "n": c.N})
	}
	out := map[string]any{"suggested": nil, "reason": a.Suggestion.Reason, "correlations": cs, "in_use": a.Host.String(),
		"n_not_evaluable": a.NLowHost}
	if a.Suggestion.OK {
		out["suggested"] = a.Suggestion.Host.String()
	}
	if bg := a.Background; bg != nil {
		out["background_regression"] = map[string]any{"intercept_ppb": bg.InterceptPpb, "slope_ppb_per_wt_pct": bg.SlopePpbPerWt,
			"sigma_hat_ppb": bg.SigmaHatPpb, "k": bg.K, "n_background": bg.N, "n_excess": countExcess(a)}
	}
	return out
}

// anomalyColumnDefs are the columns of a section's anomalies CSV, in file order; the writer's header and
// the dictionary (/help/downloads/section-anomalies) both come from this list.
var anomalyColumnDefs = []downloadColumn{
	{"anomaly", "", "The anomaly's number in the section, from the base up."},
	{"origin", "", "detected: found by the section's anomaly rule (entered events are in the events download)."},
	{"series", "", "The series the anomaly was found in: the Hg/host ratio (for example Hg/TOC) or raw Hg."},
	{"host", "", "The host phase the ratio divides by (TOC, total sulfur or Al)."},
	{"base_height_m", "m", "Height of the anomaly's lowest sample above the section's base."},
	{"top_height_m", "m", "Height of its highest sample."},
	{"peak_height_m", "m", "Height of its highest value."},
	{"peak_value", "peak_unit", "The highest value in the anomaly, in peak_unit."},
	{"peak_unit", "", "The unit of peak_value: ppb for Hg, ppb/wt% for a ratio."},
	{"multiple_of_background_median", "×", "peak_value divided by the median of the section's background."},
	{"robust_z_log10", "", "The peak's robust z-score against the background, on log10 values: (log10 value − median) / (1.4826 × MAD)."},
	{"n_samples", "samples", "How many consecutive samples the anomaly spans."},
	{"raw_hg_rises", "", "true when raw Hg itself rises in the interval (flagged, or its median there at least half the ratio's rise on the log scale): more Hg, not less host."},
	{"raw_hg_multiple_of_background_median", "×", "The median raw Hg in the interval divided by the median raw Hg of the background."},
	{"raw_hg_share_of_ratio_rise", "fraction 0–1", "The share of the ratio's rise (on the log scale) carried by raw Hg; empty for an anomaly of raw Hg."},
	{"host_residual_samples", "samples", "How many of its samples hold more Hg than the background regression of Hg on the host predicts."},
	{"caution", "", "true when the anomaly is to be read with caution; reading says why."},
	{"reading", "", "In words, what the anomaly most likely is: more Hg, or a low in the host that raises the ratio."},
	{"age_model", "", "The age–height model that dated it: monte_carlo (draws kept in stratigraphic order), naive_linear (interpolation between ties with normal errors) or none."},
	{"seed", "", "The seed of the model's random draws."},
	{"draws", "", "The number of the model's draws."},
	{"age_median_ma", "Ma", "The anomaly's median model age, over its extent from base to top; empty outside the tie range."},
	{"age_lo95_ma", "Ma", "Lower (younger) end of the 95 % interval of its age over that extent (2.5 % quantile of the draws, or −1.96σ for the naive model)."},
	{"age_hi95_ma", "Ma", "Upper (older) end of that 95 % interval (97.5 % quantile of the draws, or +1.96σ for the naive model)."},
	{"decision", "", "What a curator decided: open (nothing yet), event (made into an event of the record) or rejected."},
	{"decision_detail", "", "The event's name, or the reason for rejecting it."},
	{"decided_by", "", "Who decided."},
	{"decided_at_utc", "", "When it was decided (UTC, RFC 3339)."},
}

var anomalyColumns = columnNames(anomalyColumnDefs)

func (a *sectionAnalysis) anomalyRecords() [][]string {
	var out [][]string
	for _, an := range a.Anomalies {
		age := stats.DrawSummary{Median: math.NaN(), Lo95: math.NaN(), Hi95: math.NaN()}
		if an.Age != nil {
			age = an.Age.Age
		}
		out = append(out, []string{itoa(an.Number), "detected", an.Series, an.Host, csvF(an.A.BaseHeightM), csvF(an.A.TopHeightM),
			csvF(an.A.PeakHeightM), csvF(an.A.PeakValue), an.Unit, csvF(an.A.MultipleOfBackground), csvF(an.A.RobustZ), itoa(an.A.N),
			strconv.FormatBool(an.RawRises), csvF(an.RawMult), csvF(an.RawShare), itoa(an.NExcess), strconv.FormatBool(an.Caution), an.Verdict,
			a.modelCode(), strconv.FormatUint(a.Opt.Seed, 10), itoa(a.Opt.Draws), csvF(age.Median), csvF(age.Lo95), csvF(age.Hi95)})
		dec := []string{"open", "", "", ""}
		if d, ok := a.decisionFor(an, a.Decisions); ok {
			dec = []string{d.Decision, cmp.Or(d.EventName, d.Reason), d.User, d.CreatedAt}
		}
		out[len(out)-1] = append(out[len(out)-1], dec...)
	}
	return out
}

func (a *sectionAnalysis) modelCode() string {
	if a.Model == nil {
		return "none"
	}
	if a.Opt.Model == "linear" {
		return "naive_linear"
	}
	return "monte_carlo"
}

func recordsJSON(cols []string, recs [][]string) []map[string]string {
	out := make([]map[string]string, len(recs))
	for i, r := range recs {
		m := make(map[string]string, len(cols))
		for j, c := range cols {
			m[c] = r[j]
		}
		out[i] = m
	}
	return out
}

func (a *sectionAnalysis) anomaliesJSON() []map[string]string {
	return recordsJSON(anomalyColumns, a.anomalyRecords())
}

func (a *sectionAnalysis) segmentsJSON() []map[string]any {
	var out []map[string]any
	for _, s := range a.Segments {
		out = append(out, map[string]any{"series": s.Series, "base_height_m": s.BaseM, "top_height_m": s.TopM, "n_samples": s.N,
			"mean_multiple_of_background_median": jf(s.MultipleOfMedian)})
	}
	return out
}

func (a *sectionAnalysis) modelJSON() map[string]any {
	if a.Model == nil {
		return map[string]any{"model": "none", "note": a.ModelNote}
	}
	m := a.Model
	out := map[string]any{"model": a.modelCode(), "seed": a.Opt.Seed, "draws": a.Opt.Draws, "tie_range_m": []float64{m.LowM, m.TopM},
		"statement": a.modelParas()}
	if m.MC != nil {
		out["sampler"] = m.MC.Sampler.String()
		out["acceptance"] = m.MC.Acceptance
		out["rigidity_prior_per_m"] = []float64{stats.DefaultRigidityMinPerM, stats.DefaultRigidityMaxPerM}
	}
	var rates []map[string]any
	for _, r := range m.Rates {
		rates = append(rates, map[string]any{"from": r.From, "to": r.To, "low_height_m": r.LowM, "high_height_m": r.HighM,
			"rate_median_m_per_ma": jf(r.Rate.Median), "rate_lo95_m_per_ma": jf(r.Rate.Lo95), "rate_hi95_m_per_ma": jf(r.Rate.Hi95)})
	}
	out["accumulation_rates"] = rates
	var evs []map[string]any
	for _, e := range a.EventAges {
		evs = append(evs, map[string]any{"name": e.Name, "kind": e.Kind, "origin": e.Origin, "base_height_m": e.BaseM, "top_height_m": e.TopM,
			"age_median_ma": jf(e.Age.Median), "age_lo95_ma": jf(e.Age.Lo95), "age_hi95_ma": jf(e.Age.Hi95), "note": e.Note})
	}
	out["event_ages"] = evs
	return out
}

// ageModelColumnDefs are the columns of a section's model-ages CSV (/help/downloads/section-age-model).
var ageModelColumnDefs = []downloadColumn{
	{"sample", "", "The sample's code."},
	{"height_m", "m", "Its height above the section's base."},
	{"age_model", "", "The age–height model: monte_carlo (draws kept in stratigraphic order, deposition between ties as a random process), naive_linear (straight lines between ties, normal errors) or none."},
	{"seed", "", "The seed of the model's random draws."},
	{"draws", "", "The number of the model's draws."},
	{"age_median_ma", "Ma", "The sample's median model age; empty outside the range of the tie points (the model gives no age there)."},
	{"age_lo95_ma", "Ma", "Lower (younger) end of its 95 % interval: the 2.5 % quantile of the draws, or −1.96σ for the naive model."},
	{"age_hi95_ma", "Ma", "Upper (older) end of its 95 % interval: the 97.5 % quantile of the draws, or +1.96σ for the naive model."},
}

var ageModelColumns = columnNames(ageModelColumnDefs)

func (a *sectionAnalysis) ageModelRecords() [][]string {
	var out [][]string
	for _, s := range a.Samples {
		med, lo, hi := "", "", ""
		if s.Dated {
			med, lo, hi = csvF(s.Age.Median), csvF(s.Age.Lo95), csvF(s.Age.Hi95)
		}
		out = append(out, []string{s.Sample, csvF(s.HeightM), a.modelCode(), strconv.FormatUint(a.Opt.Seed, 10), itoa(a.Opt.Draws), med, lo, hi})
	}
	return out
}

// ratioColumnDefs are the columns of the samples-with-ratios CSV (/help/downloads/section-ratios); the
// δ¹³C column is named after the section's δ¹³C (ratioColumns).
var ratioColumnDefs = []downloadColumn{
	{"sample", "", "The sample's code."},
	{"height_m", "m", "Its height above the section's base."},
	{"hg_ppb", "ppb", "Hg as measured."},
	{"hg_sigma_ppb_1s", "ppb (1σ)", "Its 1σ uncertainty, where given."},
	{"hg_below_detection", "", "true when Hg was below the detection limit."},
	{"hg_detection_limit_ppb", "ppb", "The detection limit, where given."},
	{"toc_wt_pct", "wt%", "Total organic carbon."},
	{"ts_wt_pct", "wt%", "Total sulfur."},
	{"al_wt_pct", "wt%", "Aluminium."},
	{"d13c_org_permil", "‰", "δ¹³C of organic carbon (VPDB); the column is d13c_carb_permil, δ¹³C of carbonate, for a section measured on carbonate."},
	{"host", "", "The host phase the ratio divides by (TOC, total sulfur or Al), as used for the section."},
	{"host_min_wt_pct", "wt%", "The low-host threshold: below it a sample's ratio is not evaluable."},
	{"ratio_ppb_per_wt_pct", "ppb/wt%", "Hg divided by the host."},
	{"ratio_sigma_ppb_per_wt_pct_1s", "ppb/wt% (1σ)", "The ratio's 1σ uncertainty from those of Hg and the host."},
	{"ratio_status", "", "ok, not_evaluable_low_host (host below host_min_wt_pct) or missing (Hg or host not measured)."},
	{"ratio_robust_z_log10", "", "The ratio's robust z-score against the section's background, on log10 values."},
	{"hg_robust_z_log10", "", "Raw Hg's robust z-score against its background, on log10 values."},
	{"ratio_in_run", "", "true when the sample belongs to a run the anomaly rule flags in the ratio."},
	{"hg_in_run", "", "true when it belongs to a run flagged in raw Hg."},
	{"host_residual_ppb", "ppb", "Hg minus what the background regression of Hg on the host predicts."},
	{"host_residual_excess", "", "true when that residual counts as an excess of Hg."},
	{"anomaly", "", "The number of the anomaly the sample belongs to, empty for none."},
}

// ratioColumns are the columns of the samples-with-ratios download.
func (a *sectionAnalysis) ratioColumns() []string {
	cols := columnNames(ratioColumnDefs)
	if a.D13C == "d13c_carb" {
		cols[slices.Index(cols, "d13c_org_permil")] = "d13c_carb_permil"
	}
	return cols
}

func (a *sectionAnalysis) ratioRecords() [][]string {
	var out [][]string
	for _, s := range a.Samples {
		dl := ""
		if s.HgDL != nil {
			dl = csvF(*s.HgDL)
		}
		an := ""
		if s.Anomaly > 0 {
			an = itoa(s.Anomaly)
		}
		out = append(out, []string{s.Sample, csvF(s.HeightM), csvF(s.HgPpb), csvF(s.HgSigma), strconv.FormatBool(s.HgBelow), dl,
			csvF(s.Toc), csvF(s.Ts), csvF(s.Al), csvF(s.D13C), a.Host.String(), csvF(a.HostMinWtPct), csvF(s.Ratio.Value), csvF(s.Ratio.Sigma),
			ratioStatusCode(s.Ratio.Status), csvF(s.RatioZ), csvF(s.RawZ), strconv.FormatBool(s.RatioFlag), strconv.FormatBool(s.RawFlag),
			csvF(s.ResidualPpb), strconv.FormatBool(s.Excess), an})
	}
	return out
}

func writeRecords(w io.Writer, cols []string, recs [][]string) error {
	cw := store.NewCSVWriter(w)
	if err := cw.Write(cols); err != nil {
		return err
	}
	if err := cw.WriteAll(recs); err != nil {
		return err
	}
	cw.Flush()
	return cw.Error()
}

// analysisJSON is the envelope of the analysis downloads: the settings that produced the items.
type analysisJSON struct {
	Kind          string         `json:"kind"`
	Section       string         `json:"section"`
	SectionID     int64          `json:"section_id"`
	Settings      map[string]any `json:"settings"`
	Uncertainties string         `json:"uncertainties"`
	Count         int            `json:"count"`
	Items         any            `json:"items"`
}

func (a *sectionAnalysis) writeJSONTable(w http.ResponseWriter, kind string, cols []string, recs [][]string) error {
	writeJSON(w, http.StatusOK, analysisJSON{Kind: kind, Section: a.Sec.Name, SectionID: a.Sec.ID, Settings: a.settingsJSON(),
		Uncertainties: "intervals are central 95 % (2.5–97.5 percentiles of the draws, or ±1.96σ for the naive model); fields ending _1s are 1σ",
		Count:         len(recs), Items: recordsJSON(cols, recs)})
	return nil
}

// tablePage serves one table of the analysis as CSV, JSON or a page.
func (s *Server) tablePage(w http.ResponseWriter, r *http.Request, kind, title string, cols func(a *sectionAnalysis) []string,
	recs func(a *sectionAnalysis) [][]string, table func(a *sectionAnalysis) views.Table, intro func(a *sectionAnalysis) (string, []string)) error {
	a, format, err := s.sectionAnalysisFor(r)
	if err != nil {
		return err
	}
	switch format {
	case "csv":
		return writeDownload(w, fmt.Sprintf("section-%d-%s.csv", a.Sec.ID, kind), func(w io.Writer) error { return writeRecords(w, cols(a), recs(a)) })
	case "json":
		return a.writeJSONTable(w, kind, cols(a), recs(a))
	}
	l := views.List{Page: s.page(r.Context(), title+" · "+a.Sec.Name, "Sections"), Table: table(a)}
	l.Intro, l.How = intro(a)
	l.Page.Crumbs = []views.Link{{Label: "Sections", URL: "/sections"}, {Label: a.Sec.Name, URL: withPath(r, idURL("/sections", a.Sec.ID))}}
	l.Page.Downloads = toLinks(downloads(r))
	if help, ok := map[string]string{"ratios": "section-ratios", "anomalies": "section-anomalies", "agemodel": "section-age-model"}[kind]; ok {
		l.Page.Downloads = append(l.Page.Downloads, views.Link{Label: "Columns explained", URL: "/help/downloads/" + help})
	}
	s.render(w, r, http.StatusOK, views.ListPage(l))
	return nil
}

func (s *Server) handleSectionRatios(w http.ResponseWriter, r *http.Request) error {
	return s.tablePage(w, r, "ratios", "Samples with ratios and flags", (*sectionAnalysis).ratioColumns, (*sectionAnalysis).ratioRecords,
		(*sectionAnalysis).sampleTable, func(a *sectionAnalysis) (string, []string) {
			return fmt.Sprintf("Every sample, none dropped: Hg/%s (%s), its status under the low-host rule (%s wt%%), robust z and flags, and the host-regression residual.",
				a.Host, a.HostChosen, num(a.HostMinWtPct)), nil
		})
}

func (s *Server) handleSectionAnomalies(w http.ResponseWriter, r *http.Request) error {
	return s.tablePage(w, r, "anomalies", "Anomalies", func(*sectionAnalysis) []string { return anomalyColumns }, (*sectionAnalysis).anomalyRecords,
		func(a *sectionAnalysis) views.Table {
			b := a.anomalyBlock(r, "")
			a.decisionColumn(&b, a.Decisions)
			s.anomalyAnswerColumn(r, a, &b)
			return b.Tables[0]
		},
		func(a *sectionAnalysis) (string, []string) {
			b := a.anomalyBlock(r, "")
			return strings.Join(b.Paras, " "), b.How
		})
}

func (s *Server) handleSectionAgeModel(w http.ResponseWriter, r *http.Request) error {
	return s.tablePage(w, r, "agemodel", "Model ages", func(*sectionAnalysis) []string { return ageModelColumns }, (*sectionAnalysis).ageModelRecords,
		func(a *sectionAnalysis) views.Table {
			t := views.Table{ID: "model-ages", Caption: "Model age of every sample", Columns: []views.Column{{Label: "Sample"}, {Label: "Height", Unit: "m", Num: true},
				{Label: "Median", Unit: "Ma", Num: true}, {Label: "95 % interval", Unit: "Ma", Num: true}}}
			for _, s := range a.Samples {
				med, iv := "—", "outside the tie range"
				if s.Dated {
					d := sigmaDecimals((s.Age.Hi95 - s.Age.Lo95) / 2)
					med, iv = fixed(s.Age.Median, d), fixed(s.Age.Lo95, d)+" – "+fixed(s.Age.Hi95, d)
				}
				t.Rows = append(t.Rows, []views.Cell{{Text: s.Sample}, {Text: num(s.HeightM), Num: true}, {Text: med, Num: true}, {Text: iv, Num: true}})
			}
			return t
		},
		func(a *sectionAnalysis) (string, []string) {
			if a.Model == nil {
				return a.ModelNote, nil
			}
			return fmt.Sprintf("Model ages of the %d samples between %s and %s m (median and 95 %% interval of the draws).", len(a.Samples), num(a.Model.LowM), num(a.Model.TopM)), a.modelParas()
		})
}
