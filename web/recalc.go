package web

import (
	"context"
	"fmt"

	"coeval/stats"
	"coeval/store"
	"coeval/views"
	"coeval/web/analysis"
)

// statsCalibration maps a stored calibration to the numerics' one (analysis.CalibrationOf).
func statsCalibration(c store.Calibration) stats.Calibration { return analysis.CalibrationOf(c) }

// calChoice is the calibration a view recalculates ⁴⁰Ar/³⁹Ar dates to: the compilation's target unless
// the URL chose another with cal=CODE.
type calChoice struct {
	Cal      store.Calibration
	Stats    stats.Calibration
	Target   store.Calibration // the compilation's target, for saying when a view overrides it
	Override bool              // cal= chose a calibration other than the target
	All      []store.Calibration
}

// label names the chosen calibration for a heading or a note, saying when it is not the target.
func (c calChoice) label() string {
	if c.Override {
		return c.Cal.Name + " (chosen for this view; the compilation's target is " + c.Target.Name + ")"
	}
	return c.Cal.Name + " (the compilation's target)"
}

// calibration reads cal=CODE against the stored calibrations (default: the target). An unknown code is
// a problem of the URL. A compilation without a target uses the first calibration listed.
func (s *Server) calibration(ctx context.Context, p *params) (calChoice, error) {
	return readCalibration(ctx, s.store, p)
}

// readCalibration reads cal=CODE against the calibrations st lists (see Server.calibration).
func readCalibration(ctx context.Context, st calibrationLister, p *params) (calChoice, error) {
	cals, err := st.Calibrations(ctx)
	if err != nil {
		return calChoice{}, err
	}
	if len(cals) == 0 {
		return calChoice{}, fmt.Errorf("calibration: the compilation has no calibrations")
	}
	target := cals[0] // listed target first
	codes := make([]string, len(cals))
	for i, c := range cals {
		codes[i] = c.Code
		if c.IsTarget {
			target = c
		}
	}
	code := p.oneOf("cal", codes, target.Code)
	ch := calChoice{Cal: target, Target: target, All: cals}
	for _, c := range cals {
		if c.Code == code {
			ch.Cal = c
		}
	}
	ch.Override = ch.Cal.Code != target.Code
	ch.Stats = statsCalibration(ch.Cal)
	return ch, nil
}

// recalc is an ⁴⁰Ar/³⁹Ar date on the chosen calibration, 1σ.
type recalc = analysis.Recalc

// notRecalculable is what the pages and downloads say of an ⁴⁰Ar/³⁹Ar date without calibration details.
const notRecalculable = analysis.NotRecalculable

// recalculate moves an ⁴⁰Ar/³⁹Ar date to the calibration to (analysis.Recalculate).
func recalculate(d store.Date, to stats.Calibration) recalc { return analysis.Recalculate(d, to) }

// missingSystematics says which systematic σ a calibration does not store ("" when it has both).
func missingSystematics(c stats.Calibration) string { return analysis.MissingSystematics(c) }

// correlated reports whether a calibration's monitor age and decay constant are correlated in its source.
func correlated(c stats.Calibration) bool { return analysis.Correlated(c) }

// calTerms names the systematic terms of a calibration for a level's label.
func calTerms(c stats.Calibration) string { return analysis.CalTerms(c) }

// calDrawn says how the comparison draws a calibration's terms.
func calDrawn(c stats.Calibration, per string) string { return analysis.CalDrawn(c, per) }

// recalcGroup is the date page's account of an ⁴⁰Ar/³⁹Ar date on the view's calibration.
func recalcGroup(d store.Date, cal calChoice, level int) views.FieldGroup {
	g := views.FieldGroup{Title: "Recalculated to " + cal.Cal.Name}
	calKV := views.KV{Label: "Calibration", Value: cal.label(), URL: "/calibrations"}
	rc := recalculate(d, cal.Stats)
	if !rc.OK {
		g.Fields = []views.KV{{Label: "Recalculated age", Value: rc.Reason, Class: "caution"}, calKV}
		return g
	}
	_, full := ageSigma(rc.AgeMa, rc.FullSigmaMa, level)
	terms := "with the calibration's monitor-age and decay-constant terms"
	if correlated(cal.Stats) {
		terms = fmt.Sprintf("with the calibration's monitor-age and decay-constant terms and their covariance (correlation %.2f, from its source)",
			cal.Stats.LambdaMonitorCorrelation)
	}
	g.Fields = []views.KV{
		{Label: "Recalculated age", Value: plusMinus(rc.AgeMa, rc.AnalyticalSigmaMa, level) + " Ma, analytical"},
		{Label: "± full external", Value: fmt.Sprintf("%s Ma (%dσ, %s)", full, level, terms)},
		calKV,
		{Label: "How", Value: "exact relation keeping the sample/monitor ratio (never linear scaling); σ by first-order propagation"},
		{Label: "Use", Value: "analytical ± against ⁴⁰Ar/³⁹Ar ages on the same calibration; full external ± against any other system"},
	}
	if m := missingSystematics(cal.Stats); m != "" {
		g.Fields = append(g.Fields, views.KV{Label: "Caution", Value: m, Class: "caution"})
	}
	return g
}

// calibrationField is the select of the calibration a view recalculates to.
func calibrationField(cal calChoice) views.Field {
	f := views.Field{Name: "cal", Label: "⁴⁰Ar/³⁹Ar calibration", Kind: "select"}
	for _, c := range cal.All {
		label := c.Name
		if c.Code == cal.Target.Code {
			label += " (target)"
		}
		f.Options = append(f.Options, views.Option{Value: c.Code, Label: label, Selected: c.Code == cal.Cal.Code})
	}
	return f
}
