package web

import (
	"fmt"
	"io"
	"math"
	"net/http"
	"strconv"

	"github.com/go-chi/chi/v5"

	"coeval/stats"
	"coeval/store"
	"coeval/views"
	"coeval/web/analysis"
)

// The map (/map): every province's units and every section at today's coordinates, over coastlines
// shipped with the app (views.MapSource), with units far from the rest of their province flagged as a
// likely entry error (analysis.PlaceUnits). The figure is drawn on the server; no online tiles.

func (s *Server) registerMapRoutes(r chi.Router) {
	r.Get("/map", s.handle(s.handleMap))
}

// mapPlaces is what the map shows: the provinces' located units (checked) and the sections.
type mapPlaces struct {
	Provinces []analysis.ProvincePlaces
	Sections  []store.Section
}

func (s *Server) readMapPlaces(r *http.Request) (mapPlaces, error) {
	ctx := r.Context()
	var m mapPlaces
	provs, err := s.store.Provinces(ctx)
	if err != nil {
		return m, err
	}
	for _, p := range provs {
		units, err := s.store.Units(ctx, p.ID)
		if err != nil {
			return m, err
		}
		m.Provinces = append(m.Provinces, analysis.PlaceUnits(p, units))
	}
	if m.Sections, err = s.store.Sections(ctx); err != nil {
		return m, err
	}
	return m, nil
}

func (s *Server) handleMap(w http.ResponseWriter, r *http.Request) error {
	p := newParams(r)
	format := p.oneOf("format", []string{"html", "svg", "csv", "json"}, "html")
	if err := p.err(); err != nil {
		return err
	}
	m, err := s.readMapPlaces(r)
	if err != nil {
		return err
	}
	switch format {
	case "csv":
		return writeDownload(w, "map-places.csv", func(wr io.Writer) error { return writeMapCSV(wr, m) })
	case "json":
		writeJSON(w, http.StatusOK, mapJSON(m))
		return nil
	}
	fig := mapFigure(m)
	svg, err := fig.SVG()
	if err != nil {
		return err
	}
	if format == "svg" {
		return writeFile(w, "image/svg+xml", "map.svg", svg)
	}
	v := views.MapView{Page: s.page(r.Context(), "Map of the compilation", "Map"), SVG: string(svg)}
	v.Subtitle = "Units of every province and every section, at today's coordinates"
	v.Downloads = []views.Link{{Label: "SVG", URL: withQuery(r, "format", "svg")}, {Label: "CSV", URL: withQuery(r, "format", "csv")}, {Label: "JSON", URL: withQuery(r, "format", "json")},
		{Label: "Columns explained", URL: "/help/downloads/map-places"}}
	v.Intro = "Where the compilation's units and sections lie today (latitude and longitude as entered, WGS 84 degrees), with their palaeolatitudes: a section's as entered for it; a unit's computed from the palaeomagnetic pole recorded for its province, ± the pole's A95 as an approximate 95 % range. A unit far from the rest of its province is circled in red: most often a sign or an entry error in its coordinates."
	v.Caption = "Units as circles in their province's colour, sections as black squares; point at one for its name, click to open it. Equirectangular projection, longitudes scaled by the cosine of the middle latitude. " + views.MapSource
	for _, pp := range m.Provinces {
		for _, u := range pp.Units {
			if u.Far {
				v.Cautions = append(v.Cautions, fmt.Sprintf("%s (%s) at %s, %s: %s.", u.Unit.Name, pp.Province.Name, degrees3(*u.Unit.Latitude), degrees3(*u.Unit.Longitude), u.Why))
			}
		}
		if !pp.Checked && len(pp.Units) > 0 {
			v.Notes = append(v.Notes, fmt.Sprintf("%s: only %s with coordinates, too few to tell which lies far from the others (at least %d).", pp.Province.Name, count(len(pp.Units), "unit"), analysis.MinUnitsToCheck))
		}
		if pp.Unlocated > 0 {
			v.Notes = append(v.Notes, fmt.Sprintf("%s: %s without coordinates, not on the map.", pp.Province.Name, count(pp.Unlocated, "unit")))
		}
		if !pp.Province.HasPole() && len(pp.Units) > 0 {
			v.Notes = append(v.Notes, fmt.Sprintf("No palaeomagnetic pole recorded for %s: its units have no palaeolatitude.", pp.Province.Name))
		}
	}
	v.Notes = append(v.Notes, palaeolatitudeMethod, palaeolatitudeCaution)
	v.Notes = append(v.Notes, fmt.Sprintf("A unit is flagged when it lies more than %g times its province's typical distance (the median distance of its units from their centre, the median latitude and longitude) and more than %g km from that centre; the flag says when flipping a sign or swapping latitude and longitude would bring it among the others.", analysis.FarFactor, analysis.FarMinKm))
	v.Tables = mapTables(m)
	s.render(w, r, http.StatusOK, views.MapPage(v))
	return nil
}

// degrees3 writes a coordinate in degrees to three decimals (about 100 m).
func degrees3(v float64) string { return strconv.FormatFloat(v, 'f', 3, 64) }

func mapFigure(m mapPlaces) views.WorldMap {
	fig := views.WorldMap{Title: "Units and sections of the compilation at today's coordinates"}
	for _, pp := range m.Provinces {
		if len(pp.Units) == 0 {
			continue
		}
		fig.Groups = append(fig.Groups, pp.Province.Name)
		for _, u := range pp.Units {
			label := fmt.Sprintf("%s (%s), %s, %s", u.Unit.Name, pp.Province.Name, degrees3(*u.Unit.Latitude), degrees3(*u.Unit.Longitude))
			if u.Palaeo != nil {
				label += fmt.Sprintf("; palaeolatitude %s from its province's pole (%s)", palaeoWithRange(*u.Palaeo), pp.Province.PoleSource)
			}
			if u.Far {
				label += " — far from the rest of its province: check its coordinates"
			}
			fig.Points = append(fig.Points, views.MapPoint{Lat: *u.Unit.Latitude, Lon: *u.Unit.Longitude, Label: label,
				URL: idURL("/units", u.Unit.ID), Group: len(fig.Groups) - 1, Flag: u.Far})
		}
	}
	for _, sec := range m.Sections {
		if sec.Latitude == nil || sec.Longitude == nil {
			continue
		}
		label := fmt.Sprintf("%s (section), %s, %s", sec.Name, degrees3(*sec.Latitude), degrees3(*sec.Longitude))
		if sec.Palaeolatitude != nil {
			label += fmt.Sprintf("; palaeolatitude %s° as entered", strconv.FormatFloat(*sec.Palaeolatitude, 'f', -1, 64))
		}
		fig.Points = append(fig.Points, views.MapPoint{Lat: *sec.Latitude, Lon: *sec.Longitude, Label: label, URL: idURL("/sections", sec.ID), Section: true})
	}
	return fig
}

// mapRow is one place of the tables and downloads.
type mapRow struct {
	Kind, Name, Province, URL string
	Lat, Lon, Palaeo          *float64
	PalaeoLow, PalaeoHigh     *float64        // a unit's approximate 95 % range (from its province's pole)
	PalaeoBasis               string          // "pole", "entered" or "" (none)
	Pole                      *store.Province // the province whose pole gave a unit's palaeolatitude
	DistanceKm                float64
	Far                       bool
	Check                     string
}

// Palaeolatitude bases, as the downloads write them.
const (
	palaeoFromPole = "pole"
	palaeoEntered  = "entered"
)

// palaeolatitudeMethod and palaeolatitudeCaution say on the map page (and in its JSON) how a unit's
// palaeolatitude is computed and what it assumes.
const (
	palaeolatitudeMethod  = "A unit's palaeolatitude is 90° minus its angular distance from its province's palaeomagnetic pole (for a geocentric axial dipole field). Its 95 % range is that value ± the pole's A95, kept within ±90°: an approximation, the pole's 95 % confidence circle projected on the great circle through unit and pole, so never wider than ± A95. A section's palaeolatitude is the one entered for it, without an uncertainty."
	palaeolatitudeCaution = "A palaeolatitude from a single pole assumes a geocentric axial dipole and that the units sat on the plate the pole belongs to at the pole's age; it is not a plate reconstruction."
)

// palaeoTableCell writes a palaeolatitude in the table, whose column names the unit and the 95 % level:
// "-31.2 ± 7.5", or, where the range is cut at ±90°, "85.0 (77.5 to 90.0)".
func palaeoTableCell(p stats.Palaeolatitude) string {
	if math.Abs((p.Deg-p.Low95)-(p.High95-p.Deg)) < 1e-9 {
		return fixed(p.Deg, 1) + " ± " + fixed(p.High95-p.Deg, 1)
	}
	return fmt.Sprintf("%s (%s to %s)", fixed(p.Deg, 1), fixed(p.Low95, 1), fixed(p.High95, 1))
}

// palaeoWithRange writes a palaeolatitude with its approximate 95 % range: "-31.2° ± 7.5° (95 %)", or, where
// the range is cut at ±90°, "85.0° (95 %: 77.5° to 90.0°)".
func palaeoWithRange(p stats.Palaeolatitude) string {
	f := func(v float64) string { return fixed(v, 1) + "°" }
	lo, hi := p.Deg-p.Low95, p.High95-p.Deg
	if math.Abs(lo-hi) < 1e-9 {
		return fmt.Sprintf("%s ± %s (95 %%)", f(p.Deg), f(hi))
	}
	return fmt.Sprintf("%s (95 %%: %s to %s)", f(p.Deg), f(p.Low95), f(p.High95))
}

func mapRows(m mapPlaces) []mapRow {
	var rows []mapRow
	for _, pp := range m.Provinces {
		for _, u := range pp.Units {
			r := mapRow{Kind: "unit", Name: u.Unit.Name, Province: pp.Province.Name, URL: idURL("/units", u.Unit.ID),
				Lat: u.Unit.Latitude, Lon: u.Unit.Longitude, DistanceKm: u.DistanceKm, Far: u.Far, Check: u.Why}
			if u.Palaeo != nil {
				deg, lo, hi := u.Palaeo.Deg, u.Palaeo.Low95, u.Palaeo.High95
				r.Palaeo, r.PalaeoLow, r.PalaeoHigh, r.PalaeoBasis, r.Pole = &deg, &lo, &hi, palaeoFromPole, &pp.Province
			}
			rows = append(rows, r)
		}
	}
	for _, sec := range m.Sections {
		if sec.Latitude == nil || sec.Longitude == nil {
			continue
		}
		rows = append(rows, mapRow{Kind: "section", Name: sec.Name, URL: idURL("/sections", sec.ID), Lat: sec.Latitude, Lon: sec.Longitude,
			Palaeo: sec.Palaeolatitude, PalaeoBasis: basisIf(sec.Palaeolatitude != nil, palaeoEntered), DistanceKm: math.NaN()})
	}
	return rows
}

func basisIf(ok bool, basis string) string {
	if ok {
		return basis
	}
	return ""
}

func optCoord(v *float64) string {
	if v == nil {
		return "–"
	}
	return degrees3(*v)
}

func mapTables(m mapPlaces) []views.Table {
	t := views.Table{ID: "places", Caption: "Places on the map", Columns: []views.Column{
		{Label: "What"}, {Label: "Name"}, {Label: "Province"}, {Label: "Latitude", Unit: "°", Num: true}, {Label: "Longitude", Unit: "°", Num: true},
		{Label: "Palaeolatitude", Unit: "°, ± 95 %", Num: true, Title: "a unit's from its province's pole, ± the pole's A95; a section's as entered"},
		{Label: "Palaeolatitude from"},
		{Label: "From the province's centre", Unit: "km", Num: true}, {Label: "Check"},
	}, Empty: "No unit or section has coordinates."}
	for _, r := range mapRows(m) {
		dist := "–"
		if !math.IsNaN(r.DistanceKm) {
			dist = strconv.FormatFloat(r.DistanceKm, 'f', 0, 64)
		}
		check := views.Cell{Text: ""}
		if r.Far {
			check = views.Cell{Text: "far from the rest of its province", Class: "caution", Title: r.Check}
		}
		palaeo, from := views.Cell{Text: "–", Num: true}, views.Cell{Text: "–"}
		switch r.PalaeoBasis {
		case palaeoFromPole:
			palaeo.Text = palaeoTableCell(stats.Palaeolatitude{Deg: *r.Palaeo, Low95: *r.PalaeoLow, High95: *r.PalaeoHigh})
			from = views.Cell{Text: "its province's pole", Title: r.Pole.PoleSource}
		case palaeoEntered:
			palaeo.Text = strconv.FormatFloat(*r.Palaeo, 'f', -1, 64) // as entered, without digits it never had
			from.Text = "as entered"
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: r.Kind}, {Text: r.Name, URL: r.URL}, {Text: orDash(r.Province)},
			{Text: optCoord(r.Lat), Num: true}, {Text: optCoord(r.Lon), Num: true}, palaeo, from,
			{Text: dist, Num: true}, check})
	}
	t.Notes = []string{"Today's latitude and longitude in degrees (north and east positive), as entered. Palaeolatitudes in degrees, north positive: a section's as entered; a unit's from its province's pole (listed below with its source), ± the pole's A95 as an approximate 95 % range."}
	return []views.Table{t, poleTable(m)}
}

// poleTable lists the poles the units' palaeolatitudes come from, with their sources, and the provinces
// without one.
func poleTable(m mapPlaces) views.Table {
	t := views.Table{ID: "poles", Caption: "Palaeomagnetic poles of the provinces", Columns: []views.Column{
		{Label: "Province"}, {Label: "Pole latitude", Unit: "° N", Num: true}, {Label: "Pole longitude", Unit: "° E", Num: true},
		{Label: "A95", Unit: "°, 95 %", Num: true}, {Label: "Source"},
	}, Empty: "No palaeomagnetic pole is recorded for any province."}
	for _, pp := range m.Provinces {
		p := pp.Province
		if !p.HasPole() {
			continue
		}
		t.Rows = append(t.Rows, []views.Cell{{Text: p.Name, URL: idURL("/provinces", p.ID)}, {Text: fixed(*p.PoleLatitude, 1), Num: true},
			{Text: fixed(*p.PoleLongitude, 1), Num: true}, {Text: fixed(*p.PoleA95, 1), Num: true}, {Text: p.PoleSource, Class: "prose"}})
	}
	t.Notes = []string{"North pole convention; A95 is the radius of the pole's 95 % confidence circle. A pole is entered on its province's page."}
	return t
}

// mapColumnDefs are the columns of the map's CSV (/help/downloads/map-places).
var mapColumnDefs = []downloadColumn{
	{"kind", "", "unit (an eruptive unit with coordinates) or section."},
	{"name", "", "The unit's or section's name."},
	{"province", "", "The unit's province (empty for a section)."},
	{"latitude_deg", "° N", "Today's latitude as entered, north positive."},
	{"longitude_deg", "° E", "Today's longitude as entered, east positive."},
	{"palaeolatitude_deg", "° N", "A unit's palaeolatitude computed from its province's palaeomagnetic pole (90° minus the unit's angular distance from the pole, for a geocentric axial dipole); a section's as entered. Empty when there is none (palaeolatitude_basis says which)."},
	{"palaeolatitude_low_95_deg", "° N", "A unit's approximate 95 % range, lower end: palaeolatitude_deg − pole_a95_deg, no lower than −90. Empty for a section (entered without an uncertainty)."},
	{"palaeolatitude_high_95_deg", "° N", "Its upper end: palaeolatitude_deg + pole_a95_deg, no higher than 90."},
	{"palaeolatitude_basis", "", "pole (computed from the province's pole), entered (a section's, as entered) or empty (none: no pole recorded for the province, or none entered for the section)."},
	{"pole_latitude_deg", "° N", "The latitude of the pole a unit's palaeolatitude was computed from (north pole convention)."},
	{"pole_longitude_deg", "° E", "The pole's longitude, −180 to 180."},
	{"pole_a95_deg", "°", "The pole's A95: the radius of its 95 % confidence circle."},
	{"pole_source", "", "Where the pole comes from, as recorded with the province."},
	{"distance_from_province_centre_km", "km", "A unit's great-circle distance from its province's centre; empty for a section, or when the province was not checked."},
	{"far", "", "true when a unit lies implausibly far from the rest of its province (check says why)."},
	{"check", "", "Why a unit is flagged as far, with a likely correction (for example a swapped sign) when one fits."},
}

var mapColumns = columnNames(mapColumnDefs)

func writeMapCSV(w io.Writer, m mapPlaces) error {
	cw := store.NewCSVWriter(w)
	if err := cw.Write(mapColumns); err != nil {
		return err
	}
	opt := func(v *float64) string {
		if v == nil {
			return ""
		}
		return gs(*v)
	}
	for _, r := range mapRows(m) {
		var pLat, pLon, pA95 *float64
		var pSource string
		if r.Pole != nil {
			pLat, pLon, pA95, pSource = r.Pole.PoleLatitude, r.Pole.PoleLongitude, r.Pole.PoleA95, r.Pole.PoleSource
		}
		if err := cw.Write([]string{r.Kind, r.Name, r.Province, opt(r.Lat), opt(r.Lon), opt(r.Palaeo), opt(r.PalaeoLow), opt(r.PalaeoHigh),
			r.PalaeoBasis, opt(pLat), opt(pLon), opt(pA95), pSource, gs(r.DistanceKm), strconv.FormatBool(r.Far), r.Check}); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

func mapJSON(m mapPlaces) any {
	type place struct {
		Kind       string   `json:"kind"`
		Name       string   `json:"name"`
		Province   string   `json:"province,omitempty"`
		Latitude   *float64 `json:"latitude_deg"`
		Longitude  *float64 `json:"longitude_deg"`
		Palaeo     *float64 `json:"palaeolatitude_deg"`
		PalaeoLow  *float64 `json:"palaeolatitude_low_95_deg"`
		PalaeoHigh *float64 `json:"palaeolatitude_high_95_deg"`
		Basis      string   `json:"palaeolatitude_basis"`
		PoleLat    *float64 `json:"pole_latitude_deg"`
		PoleLon    *float64 `json:"pole_longitude_deg"`
		PoleA95    *float64 `json:"pole_a95_deg"`
		PoleSource string   `json:"pole_source,omitempty"`
		DistanceKm *float64 `json:"distance_from_province_centre_km"`
		Far        bool     `json:"far"`
		Check      string   `json:"check,omitempty"`
	}
	out := struct {
		Source      string   `json:"coastlines_source"`
		Method      string   `json:"palaeolatitude_method"`
		Caution     string   `json:"palaeolatitude_caution"`
		WithoutPole []string `json:"provinces_without_pole"`
		Places      []place  `json:"places"`
	}{Source: views.MapSource, Method: palaeolatitudeMethod, Caution: palaeolatitudeCaution, WithoutPole: []string{}, Places: []place{}}
	for _, pp := range m.Provinces {
		if !pp.Province.HasPole() {
			out.WithoutPole = append(out.WithoutPole, pp.Province.Name)
		}
	}
	for _, r := range mapRows(m) {
		pl := place{Kind: r.Kind, Name: r.Name, Province: r.Province, Latitude: r.Lat, Longitude: r.Lon, Palaeo: r.Palaeo,
			PalaeoLow: r.PalaeoLow, PalaeoHigh: r.PalaeoHigh, Basis: r.PalaeoBasis, Far: r.Far, Check: r.Check}
		if r.Pole != nil {
			pl.PoleLat, pl.PoleLon, pl.PoleA95, pl.PoleSource = r.Pole.PoleLatitude, r.Pole.PoleLongitude, r.Pole.PoleA95, r.Pole.PoleSource
		}
		if !math.IsNaN(r.DistanceKm) {
			d := r.DistanceKm
			pl.DistanceKm = &d
		}
		out.Places = append(out.Places, pl)
	}
	return out
}
