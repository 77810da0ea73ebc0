package web

import (
	"context"
	"fmt"
	"net/http"

	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
)

// sectionEdit is the editing flow of sections. Sections have no review state: contributors add sections,
// and only curators edit or delete an existing one, since samples, ties and events hang on it.
func (s *Server) sectionEdit() recordEdit {
	return recordEdit{
		recordType: "section", noun: "section", nav: "Sections", path: "/sections", newPath: "/sections/new",
		editRole: store.RoleCurator,
		intro:    "Every field is checked with the rules of the sections import. Samples, tie points and events are added to a section once it exists.",
		fields: []formField{
			{"section", "Section", "unique name", nil},
			{"kind", "Kind", "", store.SectionKinds},
			{"latitude", "Latitude (°)", "", nil},
			{"longitude", "Longitude (°)", "", nil},
			{"palaeolatitude", "Palaeolatitude (°)", "", nil},
			{"thermal_maturity", "Thermal maturity", "e.g. immature, oil window; Hg/TOC is doubtful in overmature rocks", nil},
			{"toc_threshold_wt_pct", "Low-TOC threshold (wt%)", "below it Hg/TOC is not evaluable; 0.2 when empty", nil},
			{"notes", "Notes", "", nil},
		},
		newForm: func(r *http.Request) (store.Form, []views.Link, error) {
			return store.Form{"kind": "outcrop", "toc_threshold_wt_pct": "0.2"}, []views.Link{{Label: "Sections", URL: "/sections"}}, nil
		},
		create: func(r *http.Request, f store.Form, _ bool) (int64, error) {
			sec, err := s.store.CreateSection(r.Context(), f)
			return sec.ID, err
		},
		load: func(ctx context.Context, id int64) (stored, error) {
			sec, err := s.store.Section(ctx, id)
			return stored{form: store.FormOfSection(sec), version: sec.Version, name: sec.Name,
				crumbs: []views.Link{{Label: "Sections", URL: "/sections"}}}, err
		},
		update: func(ctx context.Context, id int64, version int, f store.Form, _ bool) error {
			_, err := s.store.UpdateSection(ctx, id, version, f)
			return err
		},
		remove: s.store.DeleteSection,
	}
}

func (s *Server) registerSectionEditRoutes(r chi.Router) { s.registerRecordEdit(r, s.sectionEdit()) }

// sectionRecordBlock is the part of a section's page that leads to its history and, for who may, to its
// edit form (which also deletes) and to the forms adding tie points, hiatuses and events.
func (s *Server) sectionRecordBlock(r *http.Request, sec store.Section) views.Block {
	links, _ := recordLinks(r, s.sectionEdit(), sec.ID, stored{version: sec.Version})
	if u, ok := currentUser(r.Context()); ok && store.RoleAtLeast(u.Role, store.RoleContributor) {
		links = append(links, views.Link{Label: "Add a tie point", URL: fmt.Sprintf("/sections/%d/ties/new", sec.ID)},
			views.Link{Label: "Add a hiatus", URL: fmt.Sprintf("/sections/%d/hiatuses/new", sec.ID)},
			views.Link{Label: "Add an event", URL: fmt.Sprintf("/sections/%d/events/new", sec.ID)})
	}
	return views.Block{ID: "record", Title: "This record", Links: links,
		Paras: []string{"Tie points, hiatuses and events have pages of their own (follow a name in the tables above), each with its history."}}
}
