package web

import (
	"net/http"

	"coeval/store"
	"coeval/views"
)

// eventInputs are the fields of the form that adds an event to a section.
func sectionEventInputs(f store.EventForm, problems []store.Problem) ([]views.Input, []string) {
	errs := map[string]string{}
	var other []string
	for _, p := range problems {
		switch p.Column {
		case "name", "kind", "base_height_m", "top_height_m", "notes":
			errs[p.Column] = p.Message
		default:
			other = append(other, p.String())
		}
	}
	kinds := []views.Option{{Value: "", Label: "— choose —", Selected: f.Kind == ""}}
	for _, k := range store.EventKinds() {
		kinds = append(kinds, views.Option{Value: k.Code, Label: k.Label, Selected: k.Code == f.Kind})
	}
	return []views.Input{
		{Name: "name", Label: "Name", Value: f.Name, Error: errs["name"], Help: "unique in the section, e.g. CIE onset"},
		{Name: "kind", Label: "Kind", Kind: "select", Options: kinds, Error: errs["kind"]},
		{Name: "base_height_m", Label: "Base height (m)", Value: f.BaseHeightM, Error: errs["base_height_m"], Help: "the horizon, or the base of the interval"},
		{Name: "top_height_m", Label: "Top height (m)", Value: f.TopHeightM, Error: errs["top_height_m"], Help: "optional: for an interval"},
		{Name: "notes", Label: "Notes", Kind: "textarea", Value: f.Notes, Error: errs["notes"]},
	}, other
}

// eventForm is the block with the form that adds an event, for contributors and up.
func (s *Server) eventForm(r *http.Request, base string, fs sectionForms) (views.Block, bool) {
	u, ok := currentUser(r.Context())
	if !ok || !store.RoleAtLeast(u.Role, store.RoleContributor) {
		return views.Block{}, false
	}
	f := store.EventForm{}
	if fs.event != nil {
		f = *fs.event
	}
	inputs, other := sectionEventInputs(f, fs.eventErrs)
	b := views.Block{ID: "add-event", Title: "Add an event"}
	b.Paras = []string{"An event of the sedimentary record at a height (a horizon) or over a height interval: a CIE onset, an extinction horizon, a boundary, … Its age comes from the age–height model. A contributor's event is pending until a curator accepts it; a curator's is accepted at once."}
	b.Forms = []views.PostForm{{ID: "event-form", Action: withPath(r, base+"/events", "format", ""), Inputs: inputs, Errors: other,
		Submit: "Add event", Wide: true}}
	return b, true
}

func (s *Server) handleSectionEventCreate(w http.ResponseWriter, r *http.Request) error {
	r = actingCtx(r)
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	f := store.EventForm{Name: r.PostFormValue("name"), Kind: r.PostFormValue("kind"), BaseHeightM: r.PostFormValue("base_height_m"),
		TopHeightM: r.PostFormValue("top_height_m"), Notes: r.PostFormValue("notes")}
	_, err = s.store.AddSectionEvent(r.Context(), id, f, isCurator(r))
	if ve, ok := store.AsValidation(err); ok {
		a, _, err := s.sectionAnalysisFor(r)
		if err != nil {
			return err
		}
		return s.reshowSection(w, r, a, sectionForms{event: &f, eventErrs: ve.Problems})
	}
	if err != nil {
		return err
	}
	http.Redirect(w, r, withPath(r, idURL("/sections", id), "format", "")+"#records", http.StatusSeeOther)
	return nil
}
