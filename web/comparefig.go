package web

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"coeval/stats"
	"coeval/views"
)

// compareFigure assembles the aligned figure: the province's density and pulses as on its timeline, and
// each event's age distribution (the draws of its random part) by section, on one age window.
func compareFigure(res *compareResult) (views.CompareFigure, error) {
	ch := res.Choice
	chart, err := icsChart()
	if err != nil {
		return views.CompareFigure{}, err
	}
	lo, hi := res.Density.MinMa, res.Density.MaxMa
	for _, e := range res.In.Events {
		lo, hi = math.Min(lo, e.Summary.Lo95), math.Max(hi, e.Summary.Hi95)
	}
	var units []compareUnitRow
	if ch.unitRows() {
		units = res.In.UnitRows
	}
	for _, u := range units {
		lo, hi = math.Min(lo, u.MeanMa-1.96*u.Sigma1s), math.Max(hi, u.MeanMa+1.96*u.Sigma1s)
	}
	if ch.Dens.FromMa == nil && ch.Dens.ToMa == nil && (lo < res.Density.MinMa || hi > res.Density.MaxMa) {
		m := 0.02 * (hi - lo)
		lo, hi = lo-m, hi+m
	} else {
		lo, hi = res.Density.MinMa, res.Density.MaxMa
	}
	t := timelineFigure(res.Province, nil, res.Density, ch.Dens, chart)
	t.Title = res.Province.Name + " — pulses and events"
	t.MinMa, t.MaxMa = lo, hi
	t.Stages, t.Epochs = stagesIn(chart, "Age", lo, hi), stagesIn(chart, "Epoch", lo, hi)
	t.Markers = nil
	t.SigmaNote = fmt.Sprintf("Event rows: the density of each event's age draws at its %s (random part: age-model draws or its direct age; shared systematic components are drawn in the comparison, not here), its median (bar) and 95 %% interval (whisker). Density per Ma, unit means analytical; pulses named by the age of their mode. Seed %d.", strings.SplitN(pointLabel(ch.Point), ":", 2)[0], ch.Dens.Seed)
	f := views.CompareFigure{}
	if len(units) > 0 {
		t.SigmaNote = "Unit rows: the unit's weighted mean with its analytical 1σ as a normal curve (its systematic components are drawn in the comparison, not here), 95 % interval whiskered. " + t.SigmaNote
	}
	// The units first, under the pulses they make, oldest at the top; then the events by section.
	for _, u := range units {
		t.Rows = append(t.Rows, views.FigureRow{Label: u.Name, URL: idURL("/units", u.ID), Group: "Eruptive units (weighted means)"})
		ea := views.FigureEventAge{MedianMa: u.MeanMa, LoMa: u.MeanMa - 1.96*u.Sigma1s, HiMa: u.MeanMa + 1.96*u.Sigma1s, Unit: true,
			Title: fmt.Sprintf("%s (%s): %s weighted mean %s ± %s Ma (1σ analytical), n = %d", u.Name, u.Code, u.System, fixed(u.MeanMa, 3), fixed(u.Sigma1s, 3), u.N)}
		ea.AgesMa, ea.Density = drawDensity(compareEvent{Q: stats.NormalAge(u.Name, u.MeanMa, u.Sigma1s)})
		f.Events = append(f.Events, ea)
	}
	events := slices.Clone(res.In.Events)
	slices.SortStableFunc(events, func(a, b compareEvent) int {
		if a.Section != b.Section {
			if a.Section < b.Section {
				return -1
			}
			return 1
		}
		return -cmpF(a.Summary.Median, b.Summary.Median)
	})
	for _, e := range events {
		group := e.Section
		if group == "" {
			group = "Direct ages"
		}
		t.Rows = append(t.Rows, views.FigureRow{Label: e.Name, URL: eventURL(e), Group: group})
		ea := views.FigureEventAge{MedianMa: e.Summary.Median, LoMa: e.Summary.Lo95, HiMa: e.Summary.Hi95,
			Title: fmt.Sprintf("%s (%s): %s Ma, 95 %% %s – %s", e.Name, orDash(e.Section), fixed(e.Summary.Median, 3), fixed(e.Summary.Hi95, 3), fixed(e.Summary.Lo95, 3))}
		ea.AgesMa, ea.Density = drawDensity(e)
		f.Events = append(f.Events, ea)
	}
	f.Timeline = t
	return f, nil
}

// drawDensity is a smoothed histogram of an event's draws on 80 bins (a normal curve for a direct
// age), ascending in age.
func drawDensity(e compareEvent) ([]float64, []float64) {
	const bins = 80
	if len(e.Draws) == 0 {
		mu, sd := e.Q.AgeMa, e.Q.SigmaMa
		if !(sd > 0) {
			return nil, nil
		}
		ages, dens := make([]float64, bins), make([]float64, bins)
		for k := range ages {
			ages[k] = mu - 4*sd + 8*sd*float64(k)/(bins-1)
			z := (ages[k] - mu) / sd
			dens[k] = math.Exp(-z * z / 2)
		}
		return ages, dens
	}
	s := slices.Clone(e.Draws)
	slices.Sort(s)
	lo, hi := s[len(s)/200], s[len(s)-1-len(s)/200]
	if !(hi > lo) {
		return nil, nil
	}
	w := (hi - lo) / bins
	counts := make([]float64, bins+2)
	for _, v := range s {
		k := int((v-lo)/w) + 1
		if k >= 0 && k < len(counts) {
			counts[k]++
		}
	}
	ages, dens := make([]float64, len(counts)), make([]float64, len(counts))
	for k := range counts {
		ages[k] = lo + (float64(k)-0.5)*w
		a, b, c := counts[max(k-1, 0)], counts[k], counts[min(k+1, len(counts)-1)]
		dens[k] = (a + 2*b + c) / 4
	}
	dens[0], dens[len(dens)-1] = 0, 0
	return ages, dens
}
