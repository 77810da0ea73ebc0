package web

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"html"
	"math"
	"net/http"
	"strconv"
	"strings"
	"testing"

	"coeval/stats"
	"coeval/store"
)

// addMisplacedUnit imports a unit of the demo province entered with its latitude's sign flipped.
func addMisplacedUnit(t testing.TB, db *store.DB) {
	t.Helper()
	body := "province,unit,kind,pile_position,volume_km3,volume_sigma_km3,latitude,longitude,notes\n" +
		"Hvarn Plateau Basalts (invented),Misplaced Flow,flow,,,,47.610,-26.400,latitude entered without its minus sign\n"
	if _, err := db.ImportUnits(context.Background(), "units.csv", strings.NewReader(body)); err != nil {
		t.Fatal(err)
	}
}

// The map draws every located unit and section (as links), names its coastlines' source and licence, and
// flags a unit entered with its latitude's sign flipped, saying so, on the page and in the downloads.
func TestMapShowsPlacesAndFlagsAMisplacedUnit(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	status, _, page := get(t, srv, "/map")
	if status != http.StatusOK {
		t.Fatalf("status %d", status)
	}
	secs, _ := db.Sections(ctx)
	var units []store.Unit // every province's (the demo holds several)
	provs, _ := db.Provinces(ctx)
	for _, pv := range provs {
		us, _ := db.Units(ctx, pv.ID)
		units = append(units, us...)
	}
	if got, want := strings.Count(page, `<a href="/units/`), len(units); got < want {
		t.Errorf("%d unit links on the map page, want at least %d", got, want)
	}
	for _, w := range []string{"<svg", "Natural Earth", "public domain", "world-atlas", "ISC", "Palaeolatitude", secs[0].Name} {
		if !strings.Contains(page, w) {
			t.Errorf("map page lacks %q", w)
		}
	}
	if strings.Contains(page, "Coordinates to check") {
		t.Error("the demo's units are flagged, though they lie together")
	}

	addMisplacedUnit(t, db)
	_, _, page = get(t, srv, "/map")
	if !strings.Contains(page, "Coordinates to check") || !strings.Contains(page, "Misplaced Flow") || !strings.Contains(page, "latitude&#39;s sign flipped") {
		t.Errorf("the misplaced unit is not flagged with its likely correction")
	}
	_, _, body := get(t, srv, "/map?format=csv")
	recs, err := csv.NewReader(strings.NewReader(body)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if got, want := len(recs)-1, len(units)+1+len(secs); got != want {
		t.Errorf("%d rows, want %d units and sections", got, want)
	}
	col := map[string]int{}
	for i, h := range recs[0] {
		col[h] = i
	}
	far := 0
	for _, r := range recs[1:] {
		if r[col["far"]] == "true" {
			far++
			if r[1] != "Misplaced Flow" {
				t.Errorf("%s flagged", r[1])
			}
		}
	}
	if far != 1 {
		t.Errorf("%d flagged, want 1", far)
	}
	var j struct {
		Source string `json:"coastlines_source"`
		Places []struct {
			Name string `json:"name"`
			Far  bool   `json:"far"`
		} `json:"places"`
	}
	_, _, body = get(t, srv, "/map?format=json")
	if err := json.Unmarshal([]byte(body), &j); err != nil || !strings.Contains(j.Source, "Natural Earth") || len(j.Places) != len(recs)-1 {
		t.Errorf("JSON: %v, source %q, %d places", err, j.Source, len(j.Places))
	}
	if status, h, svg := get(t, srv, "/map?format=svg"); status != 200 || !strings.HasPrefix(h.Get("Content-Type"), "image/svg+xml") || !strings.Contains(svg, "</svg>") {
		t.Errorf("SVG download: %d %q", status, h.Get("Content-Type"))
	}
	if status, _, body := get(t, srv, "/map?format=pdf"); status != http.StatusBadRequest || !strings.Contains(body, "format") {
		t.Errorf("format=pdf: %d, want 400 naming format", status)
	}
}

// palaeoByUnitVectors is the palaeolatitude of a site from a pole by the angle between their unit vectors
// (cos d = u·v; 90° − d for a geocentric axial dipole, Butler 1992 from memory): a formula independent of
// the haversine the app uses.
func palaeoByUnitVectors(lat, lon, plat, plon float64) float64 {
	unit := func(la, lo float64) [3]float64 {
		la, lo = la*math.Pi/180, lo*math.Pi/180
		return [3]float64{math.Cos(la) * math.Cos(lo), math.Cos(la) * math.Sin(lo), math.Sin(la)}
	}
	u, v := unit(lat, lon), unit(plat, plon)
	dot := math.Max(-1, math.Min(1, u[0]*v[0]+u[1]*v[1]+u[2]*v[2]))
	return 90 - math.Acos(dot)*180/math.Pi
}

// The map gives each unit of a province with a pole its palaeolatitude from that pole (derived here from
// the raw coordinates), ± the pole's A95 clamped to ±90°, and the pole's source; sections keep theirs as
// entered; a province without a pole is named once, not per unit; the caution is on the page.
func TestMapGivesUnitsPalaeolatitudesFromTheirProvincesPole(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	provs, _ := db.Provinces(ctx)
	byName := map[string]store.Province{}
	var withPole, without int
	for _, p := range provs {
		byName[p.Name] = p
		if p.HasPole() {
			withPole++
		} else {
			without++
		}
	}
	if withPole == 0 || without == 0 {
		t.Fatalf("the demo should hold provinces with and without a pole: %d with, %d without", withPole, without)
	}
	units := map[string]store.Unit{}
	for _, p := range provs {
		us, _ := db.Units(ctx, p.ID)
		for _, u := range us {
			units[p.Name+"/"+u.Name] = u
		}
	}
	secs, _ := db.Sections(ctx)
	secByName := map[string]store.Section{}
	for _, s := range secs {
		secByName[s.Name] = s
	}

	_, _, body := get(t, srv, "/map?format=csv")
	recs, err := csv.NewReader(strings.NewReader(body)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	col := map[string]int{}
	for i, h := range recs[0] {
		col[h] = i
	}
	num := func(r []string, c string) float64 {
		v, err := strconv.ParseFloat(r[col[c]], 64)
		if err != nil {
			t.Fatalf("%s of %s: %q", c, r[col["name"]], r[col[c]])
		}
		return v
	}
	nPole := 0
	for _, r := range recs[1:] {
		switch r[col["kind"]] {
		case "unit":
			p, u := byName[r[col["province"]]], units[r[col["province"]]+"/"+r[col["name"]]]
			if !p.HasPole() {
				if r[col["palaeolatitude_deg"]] != "" || r[col["palaeolatitude_basis"]] != "" || r[col["pole_source"]] != "" {
					t.Errorf("%s of %s (no pole) has a palaeolatitude %q", u.Name, p.Name, r[col["palaeolatitude_deg"]])
				}
				continue
			}
			nPole++
			want := palaeoByUnitVectors(*u.Latitude, *u.Longitude, *p.PoleLatitude, *p.PoleLongitude)
			lo, hi := math.Max(-90, want-*p.PoleA95), math.Min(90, want+*p.PoleA95)
			if got := num(r, "palaeolatitude_deg"); math.Abs(got-want) > 1e-6 {
				t.Errorf("%s: palaeolatitude %v, want %v", u.Name, got, want)
			}
			if a, b := num(r, "palaeolatitude_low_95_deg"), num(r, "palaeolatitude_high_95_deg"); math.Abs(a-lo) > 1e-6 || math.Abs(b-hi) > 1e-6 {
				t.Errorf("%s: 95 %% range %v to %v, want %v to %v", u.Name, a, b, lo, hi)
			}
			if r[col["palaeolatitude_basis"]] != "pole" || r[col["pole_source"]] != p.PoleSource || num(r, "pole_a95_deg") != *p.PoleA95 {
				t.Errorf("%s: basis %q, source %q, A95 %q", u.Name, r[col["palaeolatitude_basis"]], r[col["pole_source"]], r[col["pole_a95_deg"]])
			}
		case "section":
			s := secByName[r[col["name"]]]
			if s.Palaeolatitude == nil || r[col["palaeolatitude_basis"]] != "entered" || num(r, "palaeolatitude_deg") != *s.Palaeolatitude ||
				r[col["palaeolatitude_low_95_deg"]] != "" || r[col["pole_source"]] != "" {
				t.Errorf("section %s: %v, want its entered palaeolatitude %v without a range or pole", s.Name, r, s.Palaeolatitude)
			}
		}
	}
	if nPole == 0 {
		t.Fatal("no unit has a palaeolatitude from a pole")
	}

	_, _, page := get(t, srv, "/map")
	page = html.UnescapeString(page)
	for _, p := range provs {
		msg := "No palaeomagnetic pole recorded for " + p.Name
		if n := strings.Count(page, msg); p.HasPole() && n != 0 || !p.HasPole() && p.NUnits > 0 && n != 1 {
			t.Errorf("%q said %d times (pole %v)", msg, n, p.HasPole())
		}
		if p.HasPole() && !strings.Contains(page, p.PoleSource) {
			t.Errorf("the page lacks the source of the pole of %s", p.Name)
		}
	}
	// One unit's value as the page writes it (one decimal, ± the A95, 95 %), from the closed form.
	for key, u := range units {
		p := byName[u.Province]
		if !p.HasPole() || u.Latitude == nil {
			continue
		}
		want := palaeoByUnitVectors(*u.Latitude, *u.Longitude, *p.PoleLatitude, *p.PoleLongitude)
		if math.Abs(want)+*p.PoleA95 >= 90 {
			continue
		}
		if s := fmt.Sprintf("%.1f° ± %.1f° (95 %%)", want, *p.PoleA95); !strings.Contains(page, s) {
			t.Errorf("%s: the page lacks %q in its label", key, s)
		}
		if s := fmt.Sprintf(">%.1f ± %.1f<", want, *p.PoleA95); !strings.Contains(page, s) {
			t.Errorf("%s: the table lacks %q", key, s)
		}
	}
	for _, w := range []string{"geocentric axial dipole", "not a plate reconstruction", "Palaeomagnetic poles of the provinces", "as entered"} {
		if !strings.Contains(page, w) {
			t.Errorf("the page lacks %q", w)
		}
	}

	var j struct {
		WithoutPole []string `json:"provinces_without_pole"`
		Caution     string   `json:"palaeolatitude_caution"`
	}
	_, _, body = get(t, srv, "/map?format=json")
	if err := json.Unmarshal([]byte(body), &j); err != nil || len(j.WithoutPole) != without || !strings.Contains(j.Caution, "geocentric axial dipole") {
		t.Errorf("JSON: %v, without pole %v, caution %q", err, j.WithoutPole, j.Caution)
	}
}

// A palaeolatitude is written with ± its A95 when the range is symmetric, and as its range where ±90° cuts it.
func TestPalaeolatitudeIsWrittenWithItsRange(t *testing.T) {
	for _, c := range []struct {
		p           stats.Palaeolatitude
		label, cell string
	}{
		{stats.Palaeolatitude{Deg: -31.24, Low95: -38.74, High95: -23.74}, "-31.2° ± 7.5° (95 %)", "-31.2 ± 7.5"},
		{stats.Palaeolatitude{Deg: 85, Low95: 77.5, High95: 90}, "85.0° (95 %: 77.5° to 90.0°)", "85.0 (77.5 to 90.0)"},
	} {
		if got := palaeoWithRange(c.p); got != c.label {
			t.Errorf("label %q, want %q", got, c.label)
		}
		if got := palaeoTableCell(c.p); got != c.cell {
			t.Errorf("cell %q, want %q", got, c.cell)
		}
	}
}
