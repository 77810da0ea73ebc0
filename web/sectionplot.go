package web

import (
	"fmt"
	"math"

	"coeval/stats"
	"coeval/views"
	"coeval/web/analysis"
)

// sectionFigure builds the view model of the section figure: raw Hg, the host, the ratio, δ¹³C and the
// model age, side by side against height.
func sectionFigure(a *sectionAnalysis) views.SectionFigure {
	f := views.SectionFigure{Title: a.Sec.Name + " — proxies and age–height model against height"}
	f.Subtitle = fmt.Sprintf("Host %s (%s); low-%s threshold %s wt%%; anomalies: modified z > %s on log10 values, ≥ %d samples; model: %s",
		a.Host, a.HostChosen, a.Host, num(a.HostMinWtPct), num(a.Opt.ZMin), a.Opt.MinRun, modelShort(a))
	hs := []float64{}
	for _, r := range a.Samples {
		hs = append(hs, r.HeightM)
	}
	for _, t := range a.Ties {
		hs = append(hs, t.HeightM)
	}
	lo, hi, _ := extentOf(hs)
	pad := math.Max((hi-lo)*0.02, 0.5)
	f.HeightMinM, f.HeightMaxM = lo-pad, hi+pad
	hg, shown := hgPanel(a)
	f.Panels = []views.Panel{hg, hostPanel(a), ratioPanel(a), d13cPanel(a), modelPanel(a)}
	for _, an := range a.Anomalies {
		f.Bands = append(f.Bands, views.Band{BaseM: an.A.BaseHeightM, TopM: an.A.TopHeightM, Label: fmt.Sprintf("A%d", an.Number), Caution: an.Caution})
	}
	for _, t := range a.Ties {
		f.Ties = append(f.Ties, views.Mark{H: t.HeightM, Label: t.Label})
	}
	for _, h := range a.Hiatuses {
		f.Hiatuses = append(f.Hiatuses, views.Mark{H: h.HeightM, Label: "hiatus"})
	}
	f.Legend = sectionLegend(a, shown)
	if a.Model != nil {
		f.Notes = append(f.Notes, modelSentence(a))
	}
	return f
}

// hgShown says which of the Hg panel's optional series have points.
type hgShown struct{ below, pred, excess bool }

// hgPanel is the raw Hg panel: measured, below detection, the background fit's prediction and the
// samples above it.
func hgPanel(a *sectionAnalysis) (views.Panel, hgShown) {
	hg := views.Panel{Title: "Hg", Unit: "ppb"}
	meas := views.Series{Label: "Hg", Color: views.ColorHg, Marker: "dot", Line: true}
	var below, excess, pred views.Series
	below = views.Series{Label: "below detection", Color: views.ColorHg, Marker: "tri-open"}
	excess = views.Series{Label: "residual", Color: views.ColorExcess, Marker: "ring"}
	pred = views.Series{Label: "predicted", Color: views.ColorMuted, Line: true, Dash: true}
	for _, r := range a.Samples {
		meas.Points = append(meas.Points, views.P(r.HeightM, r.HgPpb))
		if r.HgBelow && r.HgDL != nil {
			below.Points = append(below.Points, views.P(r.HeightM, *r.HgDL))
		}
		if r.Excess {
			excess.Points = append(excess.Points, views.P(r.HeightM, r.HgPpb))
		}
		if a.Background != nil && !math.IsNaN(r.Host) {
			pred.Points = append(pred.Points, views.P(r.HeightM, a.Background.InterceptPpb+a.Background.SlopePpbPerWt*r.Host))
		}
	}
	hg.Series = []views.Series{meas}
	if len(pred.Points) > 0 {
		hg.Series = append([]views.Series{pred}, hg.Series...)
	}
	if len(below.Points) > 0 {
		hg.Series = append(hg.Series, below)
	}
	if len(excess.Points) > 0 {
		hg.Series = append(hg.Series, excess)
	}
	if !a.Has["hg"] {
		hg.Empty = "no Hg measured"
	}

	return hg, hgShown{below: len(below.Points) > 0, pred: len(pred.Points) > 0, excess: len(excess.Points) > 0}
}

// hostPanel is the host phase's panel with its low-host threshold.
func hostPanel(a *sectionAnalysis) views.Panel {
	hostName := a.Host.String()
	host := views.Panel{Title: hostName, Unit: "wt%"}
	hv := views.Series{Label: hostName, Color: views.ColorHost, Marker: "dot", Line: true}
	low := views.Series{Label: "below threshold", Color: views.ColorNotEval, Marker: "open"}
	for _, r := range a.Samples {
		hv.Points = append(hv.Points, views.P(r.HeightM, r.Host))
		if r.Ratio.Status == stats.RatioLowHost {
			low.Points = append(low.Points, views.P(r.HeightM, r.Host))
		}
	}
	host.Series = []views.Series{hv}
	if len(low.Points) > 0 {
		host.Series = append(host.Series, low)
	}
	if a.HostMinWtPct > 0 {
		host.VLines = append(host.VLines, views.VLine{X: a.HostMinWtPct, Label: fmt.Sprintf("low-%s threshold %s wt%%", hostName, num(a.HostMinWtPct)), Color: views.ColorNotEval})
	}
	if !a.Has[hostProxy(a.Host)] {
		host.Empty = "no host phase measured"
	}

	return host
}

// ratioPanel is the Hg/host panel with the samples not evaluable in its gutter.
func ratioPanel(a *sectionAnalysis) views.Panel {
	hostName, ratio := a.Host.String(), ratioName(a.Host)
	rp := views.Panel{Title: ratio, Unit: "ppb/wt%", GutterColor: views.ColorNotEval,
		GutterLabel: fmt.Sprintf("%s not evaluable (%s < %s wt%%)", ratio, hostName, num(a.HostMinWtPct))}
	rv := views.Series{Label: ratio, Color: views.ColorRatio, Marker: "dot", Line: true}
	for _, r := range a.Samples {
		rv.Points = append(rv.Points, views.P(r.HeightM, r.Ratio.Value))
		if r.Ratio.Status == stats.RatioLowHost {
			rp.Gutter = append(rp.Gutter, r.HeightM)
		}
	}
	rp.Series = []views.Series{rv}
	if a.RatioRes != nil && a.Opt.Baseline != "running" {
		rp.VLines = append(rp.VLines,
			views.VLine{X: math.Pow(10, a.RatioRes.BackgroundMedian), Label: "background median", Color: views.ColorBaseline},
			views.VLine{X: math.Pow(10, a.RatioRes.Threshold), Label: "anomaly threshold", Color: views.ColorTie})
	}
	if a.RatioRes == nil {
		rp.Empty = "no evaluable ratio"
	}

	return rp
}

// d13cPanel is the carbon-isotope panel.
func d13cPanel(a *sectionAnalysis) views.Panel {
	dp := views.Panel{Title: d13cTitle(a.D13C), Unit: "‰ VPDB", Empty: "no δ¹³C measured"}
	if a.D13C != "" {
		dv := views.Series{Label: "δ¹³C", Color: views.ColorD13C, Marker: "dot", Line: true}
		for _, r := range a.Samples {
			dv.Points = append(dv.Points, views.P(r.HeightM, r.D13C))
		}
		dp.Series = []views.Series{dv}
	}

	return dp
}

// modelPanel is the age–height model's panel: median, 95 % interval and tie ages.
func modelPanel(a *sectionAnalysis) views.Panel {
	mp := views.Panel{Title: "Model age", Unit: "Ma", Empty: "no age model"}
	if m := a.Model; m != nil {
		env := &views.Envelope{Label: "95 % interval", Color: views.ColorModel}
		med := views.Series{Label: "median", Color: views.ColorAge, Line: true}
		for j, z := range m.HeightsM {
			env.H = append(env.H, z)
			env.Lo = append(env.Lo, m.Ages[j].Lo95)
			env.Hi = append(env.Hi, m.Ages[j].Hi95)
			med.Points = append(med.Points, views.P(z, m.Ages[j].Median))
		}
		mp.Envelope = env
		ties := views.Series{Label: "tie points", Color: views.ColorTie, Marker: "diamond"}
		for _, t := range m.Ties {
			pt := views.Pt{H: t.HeightM}
			if t.Kind == stats.TieUniform {
				pt.X, pt.XLo, pt.XHi = (t.MinAgeMa+t.MaxAgeMa)/2, t.MinAgeMa, t.MaxAgeMa
			} else {
				pt.X, pt.XLo, pt.XHi = t.AgeMa, t.AgeMa-2*t.SigmaMa, t.AgeMa+2*t.SigmaMa
			}
			ties.Points = append(ties.Points, pt)
		}
		mp.Series = []views.Series{med, ties}
	}
	return mp
}

// sectionLegend is the figure's legend: what is drawn, and only that.
func sectionLegend(a *sectionAnalysis, shown hgShown) []views.LegendItem {
	hostName, ratio := a.Host.String(), ratioName(a.Host)
	legend := []views.LegendItem{{Label: "Hg (ppb)", Color: views.ColorHg, Marker: "dot"}}
	if shown.below {
		legend = append(legend, views.LegendItem{Label: "Hg below detection (at the limit)", Color: views.ColorHg, Marker: "tri-open"})
	}
	if shown.pred {
		legend = append(legend, views.LegendItem{Label: "Hg predicted from " + hostName + " (background fit)", Color: views.ColorMuted, Marker: "dash"})
	}
	if shown.excess {
		legend = append(legend, views.LegendItem{Label: fmt.Sprintf("Hg above the fit by > %g σ̂ (residual)", float64(analysis.HostResidualK)), Color: views.ColorExcess, Marker: "ring"})
	}
	if a.NLowHost > 0 {
		legend = append(legend, views.LegendItem{Label: fmt.Sprintf("%s below %s wt%%: %s not evaluable", hostName, num(a.HostMinWtPct), ratio), Color: views.ColorNotEval, Marker: "cross"})
	}
	var plain, caution bool
	for _, an := range a.Anomalies {
		plain, caution = plain || !an.Caution, caution || an.Caution
	}
	if plain {
		legend = append(legend, views.LegendItem{Label: "anomaly: Hg and ratio rise", Marker: "band"})
	}
	if caution {
		legend = append(legend, views.LegendItem{Label: "anomaly to read with caution (see table)", Marker: "caution-band"})
	}
	legend = append(legend, views.LegendItem{Label: "tie point (height)", Marker: "tie"})
	if a.RatioRes != nil && a.Opt.Baseline != "running" {
		legend = append(legend, views.LegendItem{Label: "background median, threshold", Color: views.ColorBaseline, Marker: "dash"})
	}
	if a.Model != nil {
		legend = append(legend, views.LegendItem{Label: "model age: median and 95 % interval", Color: views.ColorModel, Marker: "band"},
			views.LegendItem{Label: "tie age ± 2σ (normal) or range (uniform)", Color: views.ColorTie, Marker: "errbar"})
	}
	if len(a.Hiatuses) > 0 {
		legend = append(legend, views.LegendItem{Label: "hiatus", Marker: "hiatus"})
	}
	return legend
}

func d13cTitle(code string) string {
	if code == "d13c_carb" {
		return "δ¹³C carb"
	}
	return "δ¹³C org"
}

func extentOf(v []float64) (float64, float64, bool) {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, x := range v {
		if !math.IsNaN(x) {
			lo, hi = math.Min(lo, x), math.Max(hi, x)
		}
	}
	if math.IsInf(lo, 1) {
		return 0, 1, false
	}
	return lo, hi, true
}

// modelShort names the model in a few words.
func modelShort(a *sectionAnalysis) string {
	ties := "ties from dates at " + a.Opt.TieLevel + " σ"
	if a.Opt.Model == "linear" {
		return "naive linear (under-covers); " + ties
	}
	return fmt.Sprintf("Monte Carlo, %d draws, seed %d; %s", a.Opt.Draws, a.Opt.Seed, ties)
}

// modelSentence states the model and its choices in one line.
func modelSentence(a *sectionAnalysis) string {
	m := a.Model
	if m == nil {
		return a.ModelNote
	}
	if m.MC != nil {
		return fmt.Sprintf("Age model: Monte Carlo kept in stratigraphic order, %d draws, seed %d, %.1f %% of draws kept; regularity of deposition drawn between %g and %g steps per m; band = 95 %% interval.",
			m.MC.NDraws, m.MC.Seed, 100*m.MC.Acceptance, float64(stats.DefaultRigidityMinPerM), float64(stats.DefaultRigidityMaxPerM))
	}
	return "Age model: NAIVE linear interpolation between tie means with tie errors propagated as if independent (mean ± 1.96σ); its intervals under-cover."
}
