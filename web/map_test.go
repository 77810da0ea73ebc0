package web

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"net/http"
	"strings"
	"testing"

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
	far := 0
	for _, r := range recs[1:] {
		if r[7] == "true" {
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
