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
		{Label: "Correlation", Unit: "of λ and monitor age", Num: true, Title: "from the source's joint fit of the decay constants and the monitor; 0 when they come from independent sources"},
		{Label: "Target"}, {Label: "Views", Title: "the dates and a province's unit summaries recalculated to this calibration"}}}
	src := views.Table{ID: "calibration-sources", Caption: "Where the values come from", Columns: []views.Column{{Label: "Calibration"}, {Label: "Source"}, {Label: "Checked against the paper"}}}
	for _, c := range cals {
		st := calibrationStandingOf(c)
		sl, sm := st.SigmaLambda, st.SigmaMonitor
		if c.LambdaSigmaPerA != nil {
			sl = lambda(*c.LambdaSigmaPerA)
		}
		if c.MonitorSigmaMa != nil {
			sm = num(*c.MonitorSigmaMa)
		}
		target := views.Cell{Text: ""}
		if c.IsTarget {
			target = views.Cell{Text: "compilation target", Class: "target"}
		}
		checked := views.Cell{Text: st.Checked, Class: "prose"}
		if !st.AllChecked {
			checked.Class = "prose caution"
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: c.Name, Title: c.Code}, {Text: lambda(c.LambdaPerA), Num: true}, {Text: sl, Num: true, Title: st.SigmaLambdaWhy},
			{Text: c.Monitor}, {Text: num(c.MonitorAgeMa), Num: true}, {Text: sm, Num: true, Title: st.SigmaMonitorWhy},
			{Text: fmt.Sprintf("%.2f", c.LambdaMonitorCorrelation), Num: true}, target, {Text: "dates on it", URL: "/dates?cal=" + c.Code}})
		src.Rows = append(src.Rows, []views.Cell{{Text: c.Name}, {Text: st.Source, Class: "prose"}, checked})
	}
	src.Notes = []string{calibrationsUnchecked, calibrationsDerived}
	t.Notes = []string{
		"⁴⁰Ar/³⁹Ar ages depend on the fluence-monitor age and the ⁴⁰K decay constant their authors used. Recalculation between calibrations uses the exact closed form (the sample/monitor ratio is invariant), never linear scaling by the monitor-age ratio.",
		"The compilation target is the calibration every ⁴⁰Ar/³⁹Ar date and unit summary is recalculated to by default; every page that shows ⁴⁰Ar/³⁹Ar ages can show them on another calibration (its calibration menu). An admin changes the target with the buttons below the table (or on the command line); the change is recorded like any other and can be undone.",
		"The full external uncertainty of a recalculated age adds the calibration's monitor-age and decay-constant terms to the analytical one; where a calibration has no σ for a term, that term is missing from it and the pages say so. Where the source fits the decay constants and the monitor age jointly (Renne et al. 2010, 2011), the two are correlated, and their covariance is used: in the full external ± (first-order propagation) and in the comparison, which draws them together."}
	v := views.Detail{Page: s.page(r.Context(), "⁴⁰Ar/³⁹Ar calibrations", "Calibrations"), Tables: []views.Table{t, src}}
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

// What the calibrations page says of where its values come from and which were checked against the
// papers (their abstracts, read through the search of published pages; see the notes of the branch that
// checked them). The stored source text of each calibration is kept for the JSON and for calibrations
// this list does not know; the page shows this instead, so that it says once, plainly, what is unchecked.
type calibrationStanding struct {
	Source                          string // the citation, without remarks on how the values were entered
	Checked                         string // which values were checked against the paper, and which not
	AllChecked                      bool   // every value and σ level of the row was checked
	SigmaLambda                     string // what the σ(λ) cell says when no σ is stored, and why
	SigmaMonitor                    string // what the σ(monitor) cell says when no σ is stored, and why
	SigmaLambdaWhy, SigmaMonitorWhy string
}

func calibrationStandingOf(c store.Calibration) calibrationStanding {
	switch c.Code {
	case "sj77-fcs2802":
		return calibrationStanding{Source: "λ: Steiger & Jäger 1977, EPSL 36:359, who give no uncertainty for it. FCs age: Renne et al. 1998, Chem. Geol. 145:117, whose uncertainty is not entered: the full external ± on this calibration lacks both terms.",
			Checked:     "Not yet: λ and the FCs age are as entered.",
			SigmaLambda: "none published", SigmaLambdaWhy: "Steiger & Jäger (1977) give no uncertainty for λ",
			SigmaMonitor: "not entered", SigmaMonitorWhy: "the uncertainty of Renne et al. (1998) is not in the compilation"}
	case "min00-fcs28201":
		return calibrationStanding{Source: "λ: Min et al. 2000, GCA 64:73. FCs age: Kuiper et al. 2008, Science 320:500.",
			Checked: "FCs 28.201 ± 0.046 Ma: as in the abstract of Kuiper et al. (2008), which does not say whether the ± is 1σ or 2σ (taken as 2σ). " +
				"λ and its ± 0.107×10⁻¹⁰ a⁻¹ (taken as 2σ): not yet."}
	case "renne10-fcs28305":
		return calibrationStanding{Source: "Renne et al. 2010, GCA 74:5349.",
			Checked: "λε = (0.5755 ± 0.0016)×10⁻¹⁰ a⁻¹, λβ = (4.9737 ± 0.0093)×10⁻¹⁰ a⁻¹ (λ is their sum), the FCs ⁴⁰Ar*/⁴⁰K ratio, their covariances and FCs 28.305 ± 0.036 Ma: as in the paper's abstract. " +
				"It does not say whether the ± 0.036 Ma is 1σ or 2σ; it is read as 2σ, because the published covariances cannot give a 1σ so large."}
	case "renne11-fcs28294":
		return calibrationStanding{Source: "Renne et al. 2011, GCA 75:5097 (their response to a comment, revising the values of 2010).",
			Checked: "Not yet: λε 0.5757×10⁻¹⁰ a⁻¹, λβ 4.9548×10⁻¹⁰ a⁻¹, FCs 28.294 ± 0.036 Ma and the σ of λε and λβ are as entered; the joint uncertainty is derived (see below)."}
	}
	return calibrationStanding{Source: c.Source, Checked: "—", AllChecked: true, SigmaLambda: "none stored", SigmaMonitor: "none stored"}
}

// calibrationsUnchecked says once which values were not checked against the papers and what to check.
const calibrationsUnchecked = "Not every value here has been checked against its paper. Unchecked: λ of Steiger & Jäger (1977) and FCs 28.02 Ma (Renne et al. 1998); " +
	"λ = 5.463×10⁻¹⁰ a⁻¹ of Min et al. (2000) and its ± 0.107×10⁻¹⁰ a⁻¹; every value of Renne et al. (2011); and whether the ± of the FCs ages of Kuiper et al. (2008) " +
	"and Renne et al. (2010) is 1σ or 2σ, which their abstracts do not say. These were entered as they are usually quoted, not copied from the papers. " +
	"Before publishing ⁴⁰Ar/³⁹Ar ages recalculated here, check them in the papers' tables: the value, its ±, and whether the ± is 1σ or 2σ (a ± read at the wrong level halves or doubles that term of the full external uncertainty)."

// calibrationsDerived says how the joint uncertainties that no paper gives directly were found.
const calibrationsDerived = "How the joint uncertainties were found. Renne et al. 2010: σ(λ) and the correlation of λ and the FCs age (0.25) reduced, to first order, from the published covariances. " +
	"Renne et al. 2011: σ(λ) from the σ of λε and λβ with the covariance of 2010; the correlation 0.25 as for 2010; the σ of the FCs age chosen so that the K–Pg sanidine age, " +
	"66.043 ± 0.010 Ma analytical, has its published full ± 0.043 Ma (Sprain et al. 2015, GSAB 127:393), which reads the published ± 0.036 Ma as 2σ. " +
	"Min et al. 2000 with Kuiper et al. 2008, and Steiger & Jäger 1977 with Renne et al. 1998: independent sources, correlation 0."
