package web

import (
	"context"
	"fmt"
	"io"
	"math"
	"net/http"
	"strconv"
	"strings"

	"coeval/stats"
	"coeval/store"
	"coeval/views"
	"coeval/web/analysis"
)

// The aligned page: every section's Hg (or host-normalised ratio) against its model age, on one age axis.

type alignedOptions struct {
	Series   string // ratio, hg
	Draws    int
	Seed     uint64
	AgeMinMa *float64
	AgeMaxMa *float64
	Include  string // accepted, pending, all: the tie points the age models use, by review state
}

func alignedOptionsFrom(p *params) alignedOptions {
	o := alignedOptions{
		Series:   p.oneOf("series", []string{"ratio", "hg"}, "ratio"),
		Draws:    p.int("draws", defaultAlignedDraws, minSectionDraws, maxSectionDraws),
		Seed:     paramSeed(p, "seed", analysis.DefaultSectionSeed),
		AgeMinMa: p.optFloat("age_min", "an age in Ma"),
		AgeMaxMa: p.optFloat("age_max", "an age in Ma"),
		Include:  p.oneOf("include", includeCodes(), "accepted"),
	}
	if o.AgeMinMa != nil && o.AgeMaxMa != nil && *o.AgeMinMa >= *o.AgeMaxMa {
		p.problems = append(p.problems, "age_min: must be younger (smaller) than age_max")
	}
	return o
}

// alignedAnalyses analyses every section with its defaults (suggested host, stored threshold) and the
// page's model draws, seed and review choice of tie points.
func (s *Server) alignedAnalyses(ctx context.Context, o alignedOptions) ([]*sectionAnalysis, error) {
	as, err := s.sectionLoader().All(ctx, s.store, func(sec store.Section) sectionOptions {
		so := analysis.DefaultSectionOptions(sec)
		so.Draws, so.Seed, so.Include = o.Draws, o.Seed, o.Include
		return so
	})
	if err != nil {
		return nil, optionBadRequest(err, sectionParams)
	}
	out := make([]*sectionAnalysis, len(as))
	for i, a := range as {
		out[i] = &sectionAnalysis{a}
	}
	return out, nil
}

func alignedFigure(as []*sectionAnalysis, o alignedOptions) views.AlignedFigure {
	f := views.AlignedFigure{Title: "Sections on a common age axis", Subtitle: fmt.Sprintf(
		"Each sample at its median model age (Monte Carlo, %d draws, seed %d); value ÷ the section's background median, log scale", o.Draws, o.Seed)}
	lo, hi := math.Inf(1), math.Inf(-1)
	maj := majorityMaturity(as)
	for _, a := range as {
		c := views.AlignedColumn{Title: a.Sec.Name, Subtitle: orDash(a.Sec.ThermalMaturity)}
		res := a.RatioRes
		c.Series = ratioName(a.Host)
		if o.Series == "hg" {
			res, c.Series = a.RawRes, "Hg"
		}
		if o.Series == "ratio" && maj != "" && a.Sec.ThermalMaturity != "" && maturityClass(a.Sec.ThermalMaturity) != maj {
			c.Caution = "maturity differs from most: ratio not comparable"
		}
		switch {
		case a.Model == nil:
			c.Empty = "no age model"
		case res == nil:
			c.Empty = "series not analysed"
		}
		if a.Model != nil && res != nil {
			bg := math.Pow(10, res.BackgroundMedian)
			for _, sr := range a.Samples {
				if !sr.Dated {
					continue
				}
				v := sr.Ratio.Value
				if o.Series == "hg" {
					v = sr.HgPpb
				}
				c.Points = append(c.Points, views.P(sr.Age.Median, v/bg))
				lo, hi = math.Min(lo, sr.Age.Median), math.Max(hi, sr.Age.Median)
				if o.Series == "ratio" && sr.Ratio.Status == stats.RatioLowHost {
					c.NotEval = append(c.NotEval, sr.Age.Median)
				}
			}
			for _, an := range a.Anomalies {
				if an.Age == nil || math.IsNaN(an.Age.Age.Median) {
					continue
				}
				label := fmt.Sprintf("A%d %s: %s Ma", an.Number, an.Series, ageRange(an.Age.Age))
				c.Bands = append(c.Bands, views.Band{BaseM: an.Age.Age.Hi95, TopM: an.Age.Age.Lo95, Label: label, Caution: an.Caution})
				c.Medians = append(c.Medians, views.Mark{H: an.Age.Age.Median, Label: label})
			}
		}
		f.Columns = append(f.Columns, c)
	}
	if math.IsInf(lo, 1) {
		lo, hi = 0, 1
	}
	pad := (hi - lo) * 0.02
	f.AgeMinMa, f.AgeMaxMa = lo-pad, hi+pad
	if o.AgeMinMa != nil {
		f.AgeMinMa = *o.AgeMinMa
	}
	if o.AgeMaxMa != nil {
		f.AgeMaxMa = *o.AgeMaxMa
	}
	f.Legend = []views.LegendItem{
		{Label: "sample at its median model age", Color: views.ColorRatio, Marker: "dot"},
		{Label: "anomaly: 95 % age interval", Marker: "band"},
		{Label: "anomaly to read with caution", Marker: "caution-band"},
		{Label: "anomaly: median age", Color: views.ColorTie, Marker: "line"},
		{Label: "background median (1×)", Color: views.ColorBaseline, Marker: "dash"},
	}
	if o.Series == "ratio" {
		f.Legend = append(f.Legend, views.LegendItem{Label: "ratio not evaluable (low host)", Color: views.ColorNotEval, Marker: "cross"})
	}
	f.Notes = []string{"Only samples within each section's tie range have a model age. Each point's own age interval is in the section's model-age table."}
	return f
}

func (s *Server) alignedRequest(r *http.Request) ([]*sectionAnalysis, alignedOptions, string, error) {
	p := newParams(r)
	format := p.format()
	o := alignedOptionsFrom(p)
	if err := p.err(); err != nil {
		return nil, o, "", err
	}
	as, err := s.alignedAnalyses(r.Context(), o)
	return as, o, format, err
}

// alignedColumnDefs are the columns of the aligned sections' CSV (/help/downloads/sections-aligned).
var alignedColumnDefs = []downloadColumn{
	{"section", "", "The section's name."},
	{"sample", "", "The sample's code."},
	{"height_m", "m", "Its height above the section's base."},
	{"series", "", "The series shown: the Hg/host ratio (for example Hg/TOC) or Hg."},
	{"value", "value_unit", "The sample's value in that series."},
	{"value_unit", "", "ppb/wt% for a ratio, ppb for Hg."},
	{"multiple_of_background_median", "×", "value divided by the median of the section's background: the common scale of the figure."},
	{"ratio_status", "", "ok, not_evaluable_low_host (host below the section's threshold) or missing."},
	{"age_model", "", "The section's age–height model: monte_carlo, naive_linear or none."},
	{"seed", "", "The seed of the models' random draws."},
	{"draws", "", "The number of the models' draws."},
	{"age_median_ma", "Ma", "The sample's median model age (only samples within their section's tie range are in the file)."},
	{"age_lo95_ma", "Ma", "Lower (younger) end of its 95 % interval (2.5 % quantile of the draws, or −1.96σ for the naive model)."},
	{"age_hi95_ma", "Ma", "Upper (older) end of its 95 % interval (97.5 % quantile, or +1.96σ)."},
}

var alignedColumns = columnNames(alignedColumnDefs)

func alignedRecords(as []*sectionAnalysis, o alignedOptions) [][]string {
	var out [][]string
	for _, a := range as {
		res, series, unit := a.RatioRes, ratioName(a.Host), "ppb/wt%"
		if o.Series == "hg" {
			res, series, unit = a.RawRes, "Hg", "ppb"
		}
		for _, sr := range a.Samples {
			if !sr.Dated {
				continue
			}
			v := sr.Ratio.Value
			if o.Series == "hg" {
				v = sr.HgPpb
			}
			mult := math.NaN()
			if res != nil {
				mult = v / math.Pow(10, res.BackgroundMedian)
			}
			out = append(out, []string{a.Sec.Name, sr.Sample, csvF(sr.HeightM), series, csvF(v), unit, csvF(mult), ratioStatusCode(sr.Ratio.Status),
				a.modelCode(), strconv.FormatUint(o.Seed, 10), itoa(o.Draws), csvF(sr.Age.Median), csvF(sr.Age.Lo95), csvF(sr.Age.Hi95)})
		}
	}
	return out
}

func (s *Server) handleSectionsAligned(w http.ResponseWriter, r *http.Request) error {
	as, o, format, err := s.alignedRequest(r)
	if err != nil {
		return err
	}
	switch format {
	case "csv":
		return writeDownload(w, "sections-aligned.csv", func(w io.Writer) error { return writeRecords(w, alignedColumns, alignedRecords(as, o)) })
	case "json":
		recs := alignedRecords(as, o)
		writeJSON(w, http.StatusOK, map[string]any{"kind": "aligned_samples", "series": o.Series, "draws": o.Draws, "seed": o.Seed,
			"count": len(recs), "items": recordsJSON(alignedColumns, recs)})
		return nil
	}
	v := views.AlignedView{Page: s.page(r.Context(), "Sections on a common age axis", "Sections")}
	v.Page.Crumbs = []views.Link{{Label: "Sections", URL: "/sections"}}
	v.Page.Downloads = toLinks(downloads(r))
	v.Intro = "Every section's samples placed at their median model age, so anomalies of different sections can be compared in time. Values are divided by each section's background median, so sections with different Hg levels share one scale. Each section uses its suggested host and its stored low-TOC threshold; open a section to change them."
	opt := func(val, label, cur string) views.Option {
		return views.Option{Value: val, Label: label, Selected: val == cur}
	}
	v.Controls = views.Form{Action: r.URL.Path, Reset: r.URL.Path, Fields: []views.Field{
		{Name: "series", Label: "Series", Kind: "select", Options: []views.Option{opt("ratio", "Hg / host (ratio)", o.Series), opt("hg", "raw Hg", o.Series)}},
		{Name: "age_min", Label: "Youngest (Ma)", Kind: "number", Value: r.URL.Query().Get("age_min"), Step: "any"},
		{Name: "age_max", Label: "Oldest (Ma)", Kind: "number", Value: r.URL.Query().Get("age_max"), Step: "any"},
		{Name: "draws", Label: "Draws", Kind: "number", Value: itoa(o.Draws), Step: "100"},
		{Name: "seed", Label: "Seed", Kind: "number", Value: strconv.FormatUint(o.Seed, 10), Step: "1"},
		{Name: "include", Label: "Tie points and hiatuses in the models", Kind: "select", Options: modelIncludeOptions(o.Include)},
	}}
	for _, a := range as {
		v.Cautions = append(v.Cautions, tieReviewCautions(a.Sec.Name, a.Ties, a.TiesLeftOut, o.Include)...)
		v.Cautions = append(v.Cautions, hiatusReviewCautions(a.Sec.Name, a.Hiatuses, a.HiatusesOut, o.Include)...)
	}
	var matur []string
	seen := map[string]bool{}
	for _, a := range as {
		if m := a.Sec.ThermalMaturity; m != "" {
			seen[maturityClass(m)] = true
			matur = append(matur, a.Sec.Name+": "+m)
		}
	}
	if len(seen) > 1 {
		v.Cautions = append(v.Cautions, "These sections differ in thermal maturity ("+strings.Join(matur, "; ")+"). Maturation inflates Hg/TOC: compare ratios across them with care, and check raw Hg (shown with the series choice set to Hg).")
	}
	v.FigureSVG = views.AlignedSVG(alignedFigure(as, o))
	v.FigureLinks = []views.Link{{Label: "Figure (SVG)", URL: withPath(r, "/sections/aligned/figure.svg", "format", "")},
		{Label: "(PNG)", URL: withPath(r, "/sections/aligned/figure.png", "format", "")}, {Label: "(PDF, text in ASCII)", URL: withPath(r, "/sections/aligned/figure.pdf", "format", "")},
		{Label: "Samples with ages (CSV)", URL: withQuery(r, "format", "csv")}, {Label: "(columns explained)", URL: "/help/downloads/sections-aligned"}}
	t := views.Table{ID: "aligned", Caption: "Sections and their anomalies", Columns: []views.Column{{Label: "Section"}, {Label: "Host"},
		{Label: "Thermal maturity"}, {Label: "Dated samples", Num: true}, {Label: "Anomalies", Unit: "Ma, median (95 %)"}}}
	for _, a := range as {
		dated := 0
		for _, sr := range a.Samples {
			if sr.Dated {
				dated++
			}
		}
		var ans []string
		for _, an := range a.Anomalies {
			if an.Age != nil {
				ans = append(ans, fmt.Sprintf("A%d %s %s", an.Number, an.Series, ageRange(an.Age.Age)))
			}
		}
		if a.ModelNote != "" {
			ans = append(ans, a.ModelNote)
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: a.Sec.Name, URL: idURL("/sections", a.Sec.ID)}, {Text: ratioName(a.Host)},
			{Text: orDash(a.Sec.ThermalMaturity), Class: cautionIf(a.Sec.ThermalMaturity != "" && maturityClass(a.Sec.ThermalMaturity) != majorityMaturity(as))}, {Text: itoa(dated), Num: true}, {Text: orDash(strings.Join(ans, "; "))}})
	}
	v.Blocks = []views.Block{{ID: "aligned-sections", Title: "Sections", Tables: []views.Table{t}}}
	s.render(w, r, http.StatusOK, views.AlignedPage(v))
	return nil
}

// majorityMaturity is the most common maturity stage among the sections ("" when none is stored); ties go
// to the stage met first.
func majorityMaturity(as []*sectionAnalysis) string {
	count := map[string]int{}
	best := ""
	for _, a := range as {
		if a.Sec.ThermalMaturity == "" {
			continue
		}
		c := maturityClass(a.Sec.ThermalMaturity)
		count[c]++
		if count[c] > count[best] {
			best = c
		}
	}
	return best
}
