package web

import (
	"context"
	"net/http"

	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
)

// eventEdit is the editing flow of events. Events are reviewed like dates: a contributor's event (new or
// edited) is pending, contributors edit events that are not accepted, curators edit anything, review and
// delete.
func (s *Server) eventEdit() recordEdit {
	return recordEdit{
		recordType: "event", noun: "event", nav: "Events", path: "/events", newPath: "/sections/{id}/events/new",
		editRole: store.RoleContributor,
		intro:    "Heights in metres above the section's base. Every field is checked with the rules of the events import; a contributor's event is pending until a curator accepts it.",
		fields: []formField{
			{"name", "Name", "unique within the section", nil},
			{"kind", "Kind", "", store.EventKinds},
			{"base_height_m", "Base (m)", "", nil},
			{"top_height_m", "Top (m)", "empty for a horizon", nil},
			{"review_state", "Review", "curators only; a contributor's change is pending", store.ReviewStates},
			{"notes", "Notes", "", nil},
		},
		newForm: s.newInSection(store.Form{"kind": "hg_anomaly", "review_state": string(store.ReviewPending)}),
		create:  createdInSection(s.store.CreateEvent, func(x store.Event) int64 { return x.ID }),
		load: func(ctx context.Context, id int64) (stored, error) {
			e, err := s.store.Event(ctx, id)
			return stored{form: store.FormOfEvent(e), version: e.Version, name: e.Name, review: e.ReviewState,
				crumbs: eventCrumbs(e)}, err
		},
		update: savedBy(s.store.UpdateEvent),
		remove: s.store.DeleteEvent,
		mayEdit: func(r *http.Request, id int64, st stored) error {
			return s.mayEditDraft(r, "event", "event", id, st.review)
		},
	}
}

func (s *Server) registerEventEditRoutes(r chi.Router) {
	s.registerRecordEdit(r, s.eventEdit())
	r.Get("/events/{id}", s.handle(s.handleEventShow))
}

// sectionOfPath reads the section named by the {id} of a path such as /sections/{id}/events/new.
func (s *Server) sectionOfPath(r *http.Request) (store.Section, error) {
	id, err := pathID(r, "id")
	if err != nil {
		return store.Section{}, err
	}
	return s.store.Section(r.Context(), id)
}

func sectionCrumbs(sec store.Section) []views.Link {
	return []views.Link{{Label: "Sections", URL: "/sections"}, {Label: sec.Name, URL: idURL("/sections", sec.ID)}}
}

func eventCrumbs(e store.Event) []views.Link {
	if e.SectionID == nil {
		return []views.Link{{Label: "Events", URL: "/events"}}
	}
	return sectionCrumbs(store.Section{ID: *e.SectionID, Name: e.Section})
}

// handleEventShow is the page of one event: its fields, review, history and the changes the user may make.
func (s *Server) handleEventShow(w http.ResponseWriter, r *http.Request) error {
	ctx := r.Context()
	id, format, err := idAndFormat(r)
	if err != nil {
		return err
	}
	e, err := s.store.Event(ctx, id)
	if err != nil {
		return err
	}
	ans, err := s.answerFor(r, e)
	if err != nil {
		return err
	}
	if format == "json" {
		writeJSON(w, http.StatusOK, map[string]any{"event": e, "uncertainties": jsonSigmaNote, "answer": ans.jsonOf()})
		return nil
	}
	v := views.Detail{Page: s.page(ctx, e.Name, "Events")}
	v.Page.Crumbs = eventCrumbs(e)
	v.Page.Downloads = []views.Link{{Label: "JSON", URL: withQuery(r, "format", "json")}}
	top := "— (a horizon)"
	if e.TopHeightM != nil {
		top = num(*e.TopHeightM) + " m"
	}
	sec := views.KV{Label: "Section", Value: orDash(e.Section)}
	if e.SectionID != nil {
		sec.URL = idURL("/sections", *e.SectionID)
	}
	review := reviewField(e.ReviewState)
	v.Groups = []views.FieldGroup{{Title: "Event", Fields: []views.KV{sec,
		{Label: "Kind", Value: store.Label(store.EventKinds(), e.Kind)},
		{Label: "Base", Value: optNum(e.BaseHeightM) + " m"},
		{Label: "Top", Value: top},
		{Label: "Found", Value: e.Origin},
		{Label: "Notes", Value: orDash(e.Notes)},
	}}, {Title: "Record", Fields: append([]views.KV{review}, recordFields(e.ID, e.Version, e.CreatedAt, e.UpdatedAt)...)}}
	if e.ReviewNote != "" {
		v.Notes = append(v.Notes, "Review note: "+e.ReviewNote)
	}
	notes, groups, tables, links := answerBlock(ans)
	v.Answer = ans.Sentence
	v.Notes = append(notes, v.Notes...)
	v.Groups = append(groups, v.Groups...)
	v.Tables = append(tables, v.Tables...)
	v.Links, v.Actions = recordPage(r, s.eventEdit(), id, stored{version: e.Version, review: e.ReviewState})
	v.Links = append(links, v.Links...)
	s.render(w, r, http.StatusOK, views.DetailPage(v))
	return nil
}
