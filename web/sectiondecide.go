package web

import (
	"errors"
	"fmt"
	"net/http"
	"net/url"
	"strconv"
	"strings"

	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
)

// Changes made from a section page: curators decide on detected anomalies (make one an event of the
// section, or reject it with a reason); contributors add events by height or height interval. The forms
// post to URLs that carry the page's query, so the handler re-runs the same analysis and checks that the
// anomaly posted is still the one found.

// registerSectionChangeRoutes adds the routes that change a section's records.
func (s *Server) registerSectionChangeRoutes(r chi.Router) {
	r.With(s.requireRole(store.RoleContributor)).Post("/sections/{id}/events", s.handle(s.handleSectionEventCreate))
	r.With(s.requireRole(store.RoleCurator)).Group(func(r chi.Router) {
		r.Post("/sections/{id}/anomalies/{n}/event", s.handle(s.handleAnomalyToEvent))
		r.Post("/sections/{id}/anomalies/{n}/reject", s.handle(s.handleAnomalyReject))
	})
}

// sectionForms carries a posted form shown again on the section page with its problems.
type sectionForms struct {
	event       *store.EventForm
	eventErrs   []store.Problem
	anomaly     int    // number of the anomaly whose form is shown again
	action      string // "event" or "reject"
	values      url.Values
	anomalyErrs []store.Problem
}

// detectionSettings is the canonical query string of every choice that decides which anomalies are
// found: the host in use, the low-host threshold, the baseline (with its window or width), the modified-z
// threshold and the run length. A decision on an anomaly is stored under it.
func (a *sectionAnalysis) detectionSettings() string {
	v := url.Values{}
	v.Set("host", hostProxy(a.Host))
	v.Set("toc_min", csvF(a.Opt.TocMinWtPct))
	v.Set("baseline", a.Opt.Baseline)
	switch a.Opt.Baseline {
	case "window":
		v.Set("bg_base", csvF(a.Opt.BgBaseM))
		v.Set("bg_top", csvF(a.Opt.BgTopM))
	case "running":
		v.Set("bg_width", strconv.Itoa(a.Opt.BgWidth))
	}
	v.Set("z_min", csvF(a.Opt.ZMin))
	v.Set("min_run", strconv.Itoa(a.Opt.MinRun))
	return v.Encode()
}

func (a *sectionAnalysis) anomalyKey(an anomalyReport) store.AnomalyKey {
	return store.AnomalyKey{SectionID: a.Sec.ID, Series: an.Series, BaseHeightM: an.A.BaseHeightM, TopHeightM: an.A.TopHeightM,
		Settings: a.detectionSettings()}
}

// decisionFor returns the decision on an anomaly under the current settings.
func (a *sectionAnalysis) decisionFor(an anomalyReport, ds []store.AnomalyDecision) (store.AnomalyDecision, bool) {
	k := a.anomalyKey(an)
	for _, d := range ds {
		if d.AnomalyKey == k {
			return d, true
		}
	}
	return store.AnomalyDecision{}, false
}

func decisionText(d store.AnomalyDecision) string {
	by := ""
	if d.User != "" {
		by = " by " + d.User
	}
	if d.Decision == "event" {
		name := d.EventName
		if name == "" {
			name = "(event since deleted)"
		}
		return "made the event “" + name + "”" + by
	}
	return "rejected" + by + ": " + d.Reason
}

// decisionColumn adds the curators' decision to every row of the anomaly table.
func (a *sectionAnalysis) decisionColumn(b *views.Block, ds []store.AnomalyDecision) {
	t := &b.Tables[0]
	t.Columns = append(t.Columns, views.Column{Label: "Decision", Title: "a curator's decision on the anomaly as found with these settings"})
	for i, an := range a.Anomalies {
		c := views.Cell{Text: "open", Class: "pending decision", Title: "no curator has decided on it yet"}
		if d, ok := a.decisionFor(an, ds); ok {
			c = views.Cell{Text: decisionText(d), Class: "decision", Title: "decided " + d.CreatedAt}
			if d.Decision == "rejected" {
				c.Class = "rejected decision"
			}
		}
		t.Rows[i] = append(t.Rows[i], c)
	}
}

// decisionTable lists every decision on the section's anomalies, also those taken under other settings
// (which the anomaly table cannot show).
func decisionTable(ds []store.AnomalyDecision, current string) views.Table {
	t := views.Table{ID: "anomaly-decisions", Caption: "Curators' decisions on anomalies of this section", Columns: []views.Column{
		{Label: "Series"}, {Label: "Base", Unit: "m", Num: true}, {Label: "Top", Unit: "m", Num: true}, {Label: "Decision"},
		{Label: "By"}, {Label: "When"}, {Label: "Settings that found it"}, {Label: "Change", Title: "the change that took the decision; a curator withdraws the decision by undoing it"}}}
	for _, d := range ds {
		dec := views.Cell{Text: "made the event “" + d.EventName + "”"}
		if d.Decision == "rejected" {
			dec = views.Cell{Text: "rejected: " + d.Reason, Class: "rejected"}
		}
		set := views.Cell{Text: d.Settings}
		if d.Settings == current {
			set.Text += " (as on this page)"
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: d.Series}, {Text: num(d.BaseHeightM), Num: true}, {Text: num(d.TopHeightM), Num: true},
			dec, {Text: orDash(d.User)}, {Text: d.CreatedAt}, set, changeCell(d.ChangeID)})
	}
	t.Notes = []string{"A curator withdraws a decision by undoing its change (follow its number); an event made from the anomaly goes with it, unless something was changed since.",
		"An anomaly found with other settings (another host, threshold, baseline, z or run length) is another finding; its decision is listed here and not in the table above."}
	return t
}

// changeCell links to a change by its number.
func changeCell(id int64) views.Cell {
	if id == 0 {
		return views.Cell{Text: "—"}
	}
	return views.Cell{Text: strconv.FormatInt(id, 10), Num: true, URL: fmt.Sprintf("/changes/%d", id)}
}

// defaultAnomalyEventName names the event an anomaly becomes, unique enough within a section.
func defaultAnomalyEventName(an anomalyReport) string {
	return fmt.Sprintf("Hg anomaly %s–%s m (%s)", num(an.A.BaseHeightM), num(an.A.TopHeightM), an.Series)
}

// anomalyForms are the curator's forms of every undecided anomaly: make it an event, or reject it.
func (a *sectionAnalysis) anomalyForms(r *http.Request, base string, ds []store.AnomalyDecision, fs sectionForms) []views.PostForm {
	if !isCurator(r) {
		return nil
	}
	var out []views.PostForm
	for _, an := range a.Anomalies {
		if _, ok := a.decisionFor(an, ds); ok {
			continue
		}
		hidden := []views.KV{{Label: "series", Value: an.Series}, {Label: "base_height_m", Value: csvF(an.A.BaseHeightM)},
			{Label: "top_height_m", Value: csvF(an.A.TopHeightM)}, {Label: "settings", Value: a.detectionSettings()}}
		name, reason := defaultAnomalyEventName(an), ""
		var errs map[string]string
		var other []string
		if fs.anomaly == an.Number {
			name, reason = fs.values.Get("name"), fs.values.Get("reason")
			errs = map[string]string{}
			for _, p := range fs.anomalyErrs {
				if p.Column == "name" || p.Column == "reason" {
					errs[p.Column] = p.Message
				} else {
					other = append(other, p.String())
				}
			}
		}
		title := fmt.Sprintf("Anomaly %d · %s · %s–%s m", an.Number, an.Series, num(an.A.BaseHeightM), num(an.A.TopHeightM))
		ev := views.PostForm{ID: fmt.Sprintf("anomaly-%d-event", an.Number), Title: title,
			Action: withPath(r, fmt.Sprintf("%s/anomalies/%d/event", base, an.Number), "format", ""), Hidden: hidden,
			Inputs: []views.Input{{Name: "name", Label: "Event name", Value: name, Error: errs["name"]},
				{Name: "notes", Label: "Notes (optional)", Value: fs.values.Get("notes")}},
			Submit: "Make it an event"}
		rj := views.PostForm{ID: fmt.Sprintf("anomaly-%d-reject", an.Number), Danger: true,
			Action: withPath(r, fmt.Sprintf("%s/anomalies/%d/reject", base, an.Number), "format", ""), Hidden: hidden,
			Inputs: []views.Input{{Name: "reason", Label: "Reason for rejecting", Value: reason, Error: errs["reason"],
				Help: "required; shown with the anomaly"}},
			Submit: "Reject"}
		if fs.action == "reject" {
			rj.Errors = other
		} else {
			ev.Errors = other
		}
		out = append(out, ev, rj)
	}
	return out
}

// postedAnomaly re-runs the page's analysis (its options are in the URL) and returns the anomaly the
// form names, after checking that the form's series, heights and settings are still those of that
// anomaly: the data or the analysis may have changed since the page was shown.
func (s *Server) postedAnomaly(r *http.Request) (*sectionAnalysis, anomalyReport, error) {
	a, _, err := s.sectionAnalysisFor(r)
	if err != nil {
		return nil, anomalyReport{}, err
	}
	n, err := strconv.Atoi(chi.URLParam(r, "n"))
	if err != nil || n < 1 {
		return nil, anomalyReport{}, notFoundError{what: "anomaly " + chi.URLParam(r, "n")}
	}
	var missing []string
	for _, f := range []string{"series", "base_height_m", "top_height_m", "settings"} {
		if strings.TrimSpace(r.PostFormValue(f)) == "" {
			missing = append(missing, f+": missing from the form")
		}
	}
	if len(missing) > 0 {
		return nil, anomalyReport{}, badRequest{message: "The form does not say which anomaly it is about; open the section page again and use its buttons.", problems: missing}
	}
	if n > len(a.Anomalies) {
		return nil, anomalyReport{}, conflictError{fmt.Sprintf("With these settings the section has %d anomalies, not %d: the data or the settings changed. Reload the page.", len(a.Anomalies), n)}
	}
	an := a.Anomalies[n-1]
	base, ok1 := store.ParseDecimal(r.PostFormValue("base_height_m"))
	top, ok2 := store.ParseDecimal(r.PostFormValue("top_height_m"))
	if !ok1 || !ok2 || base != an.A.BaseHeightM || top != an.A.TopHeightM || r.PostFormValue("series") != an.Series ||
		r.PostFormValue("settings") != a.detectionSettings() {
		return nil, anomalyReport{}, conflictError{fmt.Sprintf("Anomaly %d is no longer the one the form was made for (now %s, %s–%s m): the data or the settings changed. Nothing was saved; reload the page.",
			n, an.Series, num(an.A.BaseHeightM), num(an.A.TopHeightM))}
	}
	return a, an, nil
}

// decided explains a refusal because the anomaly already has a decision.
func decided(d store.AnomalyDecision) error {
	return conflictError{"This anomaly was decided meanwhile (" + decisionText(d) + "). Nothing was changed; reload the page."}
}

// reshowSection renders the section page again with a posted form and its problems (422).
func (s *Server) reshowSection(w http.ResponseWriter, r *http.Request, a *sectionAnalysis, fs sectionForms) error {
	v, err := s.sectionView(r, a, fs)
	if err != nil {
		return err
	}
	v.Alert = &views.Link{Label: "Nothing was saved: the form has problems, marked at its fields. Go to the form.", URL: "#event-form"}
	if fs.anomaly > 0 {
		v.Alert.URL = fmt.Sprintf("#anomaly-%d-%s", fs.anomaly, fs.action)
	}
	s.render(w, r, http.StatusUnprocessableEntity, views.SectionPage(v))
	return nil
}

func (s *Server) handleAnomalyToEvent(w http.ResponseWriter, r *http.Request) error {
	r = actingCtx(r)
	a, an, err := s.postedAnomaly(r)
	if err != nil {
		return err
	}
	_, dec, err := s.store.AnomalyToEvent(r.Context(), a.anomalyKey(an), r.PostFormValue("name"), r.PostFormValue("notes"))
	if ve, ok := store.AsValidation(err); ok {
		r.ParseForm()
		return s.reshowSection(w, r, a, sectionForms{anomaly: an.Number, action: "event", values: r.PostForm, anomalyErrs: ve.Problems})
	}
	if errors.Is(err, store.ErrDecided) {
		return decided(dec)
	}
	if err != nil {
		return err
	}
	http.Redirect(w, r, withPath(r, idURL("/sections", a.Sec.ID))+"#anomalies", http.StatusSeeOther)
	return nil
}

func (s *Server) handleAnomalyReject(w http.ResponseWriter, r *http.Request) error {
	r = actingCtx(r)
	a, an, err := s.postedAnomaly(r)
	if err != nil {
		return err
	}
	dec, err := s.store.RejectAnomaly(r.Context(), a.anomalyKey(an), r.PostFormValue("reason"))
	if ve, ok := store.AsValidation(err); ok {
		r.ParseForm()
		return s.reshowSection(w, r, a, sectionForms{anomaly: an.Number, action: "reject", values: r.PostForm, anomalyErrs: ve.Problems})
	}
	if errors.Is(err, store.ErrDecided) {
		return decided(dec)
	}
	if err != nil {
		return err
	}
	http.Redirect(w, r, withPath(r, idURL("/sections", a.Sec.ID))+"#anomalies", http.StatusSeeOther)
	return nil
}
