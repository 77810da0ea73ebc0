package web

import (
	"context"
	"fmt"
	"net/http"

	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
)

// provinceEdit is the editing flow of provinces. Provinces have no review state: contributors add
// provinces, and only curators rename, describe or delete an existing one.
func (s *Server) provinceEdit() recordEdit {
	return recordEdit{
		recordType: "province", noun: "province", nav: "Provinces", path: "/provinces", newPath: "/provinces/new",
		editRole: store.RoleCurator,
		intro:    "Every field is checked with the rules of the provinces import. Units and their dates are added once the province exists. A palaeomagnetic pole, when given, yields the palaeolatitudes of the province's units on the map.",
		fields: []formField{
			{"province", "Province", "unique name", nil},
			{"description", "Description", "", nil},
			{"pole_latitude", "Palaeomagnetic pole: latitude", "degrees, −90 to 90, north pole; optional: give all four pole fields or none", nil},
			{"pole_longitude", "Pole longitude", "degrees east, −180 to 180 (or 0 to 360)", nil},
			{"pole_a95", "Pole A95", "degrees: the radius of the pole's 95 % confidence circle, at most 30", nil},
			{"pole_source", "Pole source", "where the pole comes from (publication), required with a pole", nil},
		},
		newForm: func(r *http.Request) (store.Form, []views.Link, error) {
			return store.Form{}, []views.Link{{Label: "Provinces", URL: "/provinces"}}, nil
		},
		create: func(r *http.Request, f store.Form, _ bool) (int64, error) {
			p, err := s.store.CreateProvince(r.Context(), f)
			return p.ID, err
		},
		load: func(ctx context.Context, id int64) (stored, error) {
			p, err := s.store.Province(ctx, id)
			return stored{form: store.FormOfProvince(p), version: p.Version, name: p.Name,
				crumbs: []views.Link{{Label: "Provinces", URL: "/provinces"}}}, err
		},
		update: func(ctx context.Context, id int64, version int, f store.Form, _ bool) error {
			_, err := s.store.UpdateProvince(ctx, id, version, f)
			return err
		},
		remove: s.store.DeleteProvince,
	}
}

func (s *Server) registerProvinceEditRoutes(r chi.Router) { s.registerRecordEdit(r, s.provinceEdit()) }

// provinceRecordLinks are the province page's links to its history, its edit form and the form adding a
// unit to it, and its delete button, as far as the user may use them.
func (s *Server) provinceRecordLinks(r *http.Request, p store.Province) ([]views.Link, []views.Action) {
	links, acts := recordLinks(r, s.provinceEdit(), p.ID, stored{version: p.Version})
	if u, ok := currentUser(r.Context()); ok && store.RoleAtLeast(u.Role, store.RoleContributor) {
		links = append(links, views.Link{Label: "Add a unit", URL: fmt.Sprintf("/units/new?province=%d", p.ID)})
	}
	return links, acts
}

// addLink gives contributors a link to a creation form in the page header.
func addLink(r *http.Request, page *views.Page, label, url string) {
	if u, ok := currentUser(r.Context()); ok && store.RoleAtLeast(u.Role, store.RoleContributor) {
		page.UserLinks = append([]views.Link{{Label: label, URL: url}}, page.UserLinks...)
	}
}
