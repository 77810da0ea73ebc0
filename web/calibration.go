package web

import (
	"fmt"
	"net/http"

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
			{Text: fmt.Sprintf("%.2f", c.LambdaMonitorCorrelation), Num: true}, {Text: c.Source}, target, {Text: "dates (cal=" + c.Code + ")", URL: "/dates?cal=" + c.Code}})
	}
	t.Notes = []string{"⁴⁰Ar/³⁹Ar ages depend on the fluence-monitor age and the ⁴⁰K decay constant their authors used. Recalculation between calibrations uses the exact closed form (the sample/monitor ratio is invariant), never linear scaling by the monitor-age ratio.",
		"The compilation target is the calibration every ⁴⁰Ar/³⁹Ar date and unit summary is recalculated to by default; any view can choose another with cal=CODE in its address (the codes are in the first column's tooltip and the Views links). The target is changed by a curator on the command line (coeval target CODE); changing it from these pages waits for accounts.",
		"The full external uncertainty of a recalculated age adds the calibration's monitor-age and decay-constant terms to the analytical one. Where the source fits the decay constants and the monitor age jointly (Renne et al. 2010, 2011), the two are correlated, and their covariance is used: in the full external ± (first-order propagation) and in the comparison, which draws them together. Each row's source says which values are published, which are derived and which are from memory.",
		"Where a σ is not given, the full external uncertainty on that calibration lacks that term, and the pages say so."}
	l := views.List{Page: s.page(r.Context(), "⁴⁰Ar/³⁹Ar calibrations", "Calibrations"), Table: t}
	l.Page.Downloads = []views.Link{{Label: "JSON", URL: "/calibrations?format=json"}}
	s.render(w, r, http.StatusOK, views.ListPage(l))
	return nil
}
