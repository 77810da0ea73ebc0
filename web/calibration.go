package web

import (
	"errors"
	"fmt"
	"net/http"

	"coeval/store"
	"coeval/views"
)

func (s *Server) handleCalibrationList(w http.ResponseWriter, r *http.Request) error {
	p := newParams(r)
	format := p.oneOf("format", []string{"html", "json"}, "html")
	if err := p.err(); err != nil {
		return err
	}
	cals, err := s.store.Calibrations(r.Context())
	if err != nil {
		return err
	}
	if format == "json" {
		return writeList(w, "calibrations", len(cals), 0, len(cals), cals)
	}
	t := views.Table{ID: "calibrations", Columns: []views.Column{{Label: "Calibration"}, {Label: "Total ⁴⁰K decay constant", Num: true},
		{Label: "σ(λ)", Unit: "1σ", Num: true}, {Label: "Monitor"}, {Label: "Monitor age", Unit: "Ma", Num: true},
		{Label: "σ(monitor)", Unit: "Ma, 1σ", Num: true},
		{Label: "Correlation of λ and monitor age", Num: true, Title: "from the source's joint fit of the decay constants and the monitor; 0 when they come from independent sources"},
		{Label: "Source"}, {Label: "Target"},
		{Label: "Views", Title: "the dates and a province's unit summaries recalculated to this calibration"}}}
	for _, c := range cals {
		sl := "not given"
		if c.LambdaSigmaPerA != nil {
			sl = lambda(*c.LambdaSigmaPerA)
		}
		target := views.Cell{Text: ""}
		if c.IsTarget {
			target = views.Cell{Text: "compilation target", Class: "target"}
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: c.Name, Title: c.Code}, {Text: lambda(c.LambdaPerA), Num: true}, {Text: sl, Num: true},
			{Text: c.Monitor}, {Text: num(c.MonitorAgeMa), Num: true}, {Text: optNum(c.MonitorSigmaMa), Num: true},
			{Text: fmt.Sprintf("%.2f", c.LambdaMonitorCorrelation), Num: true}, {Text: c.Source}, target, {Text: "dates recalculated to it", URL: "/dates?cal=" + c.Code}})
	}
	t.Notes = []string{"⁴⁰Ar/³⁹Ar ages depend on the fluence-monitor age and the ⁴⁰K decay constant their authors used. Recalculation between calibrations uses the exact closed form (the sample/monitor ratio is invariant), never linear scaling by the monitor-age ratio.",
		"The compilation target is the calibration every ⁴⁰Ar/³⁹Ar date and unit summary is recalculated to by default; every page that shows ⁴⁰Ar/³⁹Ar ages can show them on another calibration (its calibration menu). An admin changes the target with the buttons below the table (or on the command line); the change is recorded like any other and can be undone.",
		"The full external uncertainty of a recalculated age adds the calibration's monitor-age and decay-constant terms to the analytical one. Where the source fits the decay constants and the monitor age jointly (Renne et al. 2010, 2011), the two are correlated, and their covariance is used: in the full external ± (first-order propagation) and in the comparison, which draws them together. Each row's source says which values are published, which are derived and which are from memory.",
		"Where a σ is not given, the full external uncertainty on that calibration lacks that term, and the pages say so."}
	v := views.Detail{Page: s.page(r.Context(), "⁴⁰Ar/³⁹Ar calibrations", "Calibrations"), Tables: []views.Table{t}}
	v.Page.Downloads = []views.Link{{Label: "JSON", URL: "/calibrations?format=json"}}
	if u, ok := currentUser(r.Context()); ok && store.RoleAtLeast(u.Role, store.RoleAdmin) {
		for _, c := range cals {
			if !c.IsTarget {
				v.Actions = append(v.Actions, views.Action{Label: "Make " + c.Name + " the target", URL: "/calibrations/target",
					Hidden: []views.KV{{Label: "code", Value: c.Code}}})
			}
		}
	}
	s.render(w, r, http.StatusOK, views.DetailPage(v))
	return nil
}

// handleCalibrationTarget makes a calibration the compilation's target (admins).
func (s *Server) handleCalibrationTarget(w http.ResponseWriter, r *http.Request) error {
	r = actingCtx(r)
	code := r.PostFormValue("code")
	u, _ := currentUser(r.Context())
	err := s.store.SetTargetCalibration(r.Context(), code, "by "+u.Name+" on the calibrations page")
	if errors.Is(err, store.ErrNotFound) {
		return badRequest{message: "The target cannot be changed:", problems: []string{fmt.Sprintf("code: no calibration %q; choose one of the table's", code)}}
	}
	if err != nil {
		return err
	}
	http.Redirect(w, r, "/calibrations", http.StatusSeeOther)
	return nil
}
