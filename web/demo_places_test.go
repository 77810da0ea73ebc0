package web

import (
	"encoding/csv"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"testing"

	"coeval/views"
)

// The demo's places lie in open ocean (demo README: coordinates deliberately at sea, so nobody takes them
// for a real locality) and each province at its own place: every unit, section and date coordinate of
// the demo files lies outside every land ring of the shipped Natural Earth 1:110m land (even–odd ray
// casting, common practice), and the provinces' centres (median of their units) lie at least 500 km apart
// (haversine on a 6371 km sphere), so the map shows them apart.
func TestDemoPlacesLieAtSeaAndApart(t *testing.T) {
	rings, err := views.LandRings()
	if err != nil || len(rings) == 0 {
		t.Fatalf("land: %d rings, %v", len(rings), err)
	}
	onLand := func(lon, lat float64) bool {
		in := false
		for _, r := range rings {
			for i, j := 0, len(r)-1; i < len(r); j, i = i, i+1 {
				a, b := r[i], r[j]
				if (a[1] > lat) != (b[1] > lat) && lon < (b[0]-a[0])*(lat-a[1])/(b[1]-a[1])+a[0] {
					in = !in
				}
			}
		}
		return in
	}
	// The check can fail: a point in central Africa and one in South America are on land.
	if !onLand(20, 0) || !onLand(-60, -10) || onLand(-30, -45) {
		t.Fatal("the land test does not tell land from sea")
	}
	read := func(name string) []map[string]string {
		f, err := os.Open(filepath.Join("..", "testdata", "demo", name))
		if err != nil {
			t.Fatal(err)
		}
		defer f.Close()
		recs, err := csv.NewReader(f).ReadAll()
		if err != nil {
			t.Fatal(err)
		}
		var rows []map[string]string
		for _, r := range recs[1:] {
			m := map[string]string{}
			for i, h := range recs[0] {
				m[h] = r[i]
			}
			rows = append(rows, m)
		}
		return rows
	}
	units := read("units.csv")
	byProvince := map[string][][2]float64{}
	for file, rows := range map[string][]map[string]string{"units.csv": units, "sections.csv": read("sections.csv"), "dates.csv": read("dates.csv")} {
		for i, r := range rows {
			lat, err1 := strconv.ParseFloat(r["latitude"], 64)
			lon, err2 := strconv.ParseFloat(r["longitude"], 64)
			if err1 != nil || err2 != nil {
				if file == "dates.csv" && r["latitude"] == "" {
					continue
				}
				t.Fatalf("%s row %d: coordinates %q, %q", file, i+2, r["latitude"], r["longitude"])
			}
			if onLand(lon, lat) {
				t.Errorf("%s row %d: %.3f, %.3f lies on land", file, i+2, lat, lon)
			}
			if file == "units.csv" {
				byProvince[r["province"]] = append(byProvince[r["province"]], [2]float64{lat, lon})
			}
		}
	}
	median := func(v []float64) float64 {
		s := slices.Clone(v)
		slices.Sort(s)
		if n := len(s); n%2 == 0 {
			return (s[n/2-1] + s[n/2]) / 2
		}
		return s[len(s)/2]
	}
	type centre struct {
		name     string
		lat, lon float64
	}
	var cs []centre
	for name, pts := range byProvince {
		var la, lo []float64
		for _, p := range pts {
			la, lo = append(la, p[0]), append(lo, p[1])
		}
		cs = append(cs, centre{name, median(la), median(lo)})
	}
	if len(cs) < 4 {
		t.Errorf("%d provinces with units, want at least 4", len(cs))
	}
	rad := math.Pi / 180
	for i := range cs {
		for j := i + 1; j < len(cs); j++ {
			a, b := cs[i], cs[j]
			h := math.Pow(math.Sin((b.lat-a.lat)*rad/2), 2) + math.Cos(a.lat*rad)*math.Cos(b.lat*rad)*math.Pow(math.Sin((b.lon-a.lon)*rad/2), 2)
			if d := 2 * 6371 * math.Asin(math.Sqrt(h)); d < 500 {
				t.Errorf("%s and %s lie %.0f km apart, want ≥ 500 km", a.name, b.name, d)
			}
		}
	}
}
