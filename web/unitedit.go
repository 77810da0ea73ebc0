package web

import (
	"context"
	"net/http"

	"github.com/go-chi/chi/v5"

	"coeval/store"
	"coeval/views"
)

// unitEdit is the editing flow of units. Units have no review state: contributors add units, and only
// curators edit or delete an existing one, since its dates and summaries hang on it.
func (s *Server) unitEdit() recordEdit {
	return recordEdit{
		recordType: "unit", noun: "unit", nav: "Provinces", path: "/units", newPath: "/units/new",
		editRole: store.RoleCurator,
		intro:    "Every field is checked with the rules of the units import. A province not yet in the compilation is added with the unit.",
		fields: []formField{
			{"province", "Province", "created if new", nil},
			{"unit", "Unit", "unique within its province", nil},
			{"kind", "Kind", "", store.UnitKinds},
			{"pile_position", "Position in the pile", "whole number, 1 = lowest (oldest)", nil},
			{"volume_km3", "Volume (km³)", "optional", nil},
			{"volume_sigma_km3", "± volume (km³, 1σ)", "optional, with a volume", nil},
			{"latitude", "Latitude (°)", "", nil},
			{"longitude", "Longitude (°)", "", nil},
			{"notes", "Notes", "", nil},
		},
		newForm: func(r *http.Request) (store.Form, []views.Link, error) {
			f := store.Form{"kind": "flow"}
			p := newParams(r)
			pid := p.id("province")
			if err := p.err(); err != nil {
				return nil, nil, err
			}
			crumbs := []views.Link{{Label: "Provinces", URL: "/provinces"}}
			if pid != 0 {
				prov, err := s.store.Province(r.Context(), pid)
				if err != nil {
					return nil, nil, err
				}
				f["province"] = prov.Name
				crumbs = append(crumbs, views.Link{Label: prov.Name, URL: idURL("/provinces", pid)})
			}
			return f, crumbs, nil
		},
		create: func(r *http.Request, f store.Form, _ bool) (int64, error) {
			u, err := s.store.CreateUnit(r.Context(), f)
			return u.ID, err
		},
		load: func(ctx context.Context, id int64) (stored, error) {
			u, err := s.store.Unit(ctx, id)
			return stored{form: store.FormOfUnit(u), version: u.Version, name: u.Name,
				crumbs: []views.Link{{Label: "Provinces", URL: "/provinces"}, {Label: u.Province, URL: idURL("/provinces", u.ProvinceID)}}}, err
		},
		update: func(ctx context.Context, id int64, version int, f store.Form, _ bool) error {
			_, err := s.store.UpdateUnit(ctx, id, version, f)
			return err
		},
		remove: s.store.DeleteUnit,
	}
}

func (s *Server) registerUnitEditRoutes(r chi.Router) { s.registerRecordEdit(r, s.unitEdit()) }
