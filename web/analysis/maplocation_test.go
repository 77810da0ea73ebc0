package analysis

import (
	"math"
	"strings"
	"testing"

	"coeval/store"
)

// Great-circle distances against closed forms on a sphere of radius R = 6371 km: one degree of latitude
// is 2πR/360 = 111.195 km; the equator to a pole is πR/2 = 10007.543 km; a quarter of the equator too.
func TestDistanceKmClosedForms(t *testing.T) {
	for _, c := range []struct {
		lat1, lon1, lat2, lon2, want float64
	}{
		{10, 20, 11, 20, 2 * math.Pi * EarthRadiusKm / 360},
		{0, 0, 90, 0, math.Pi * EarthRadiusKm / 2},
		{0, 0, 0, 90, math.Pi * EarthRadiusKm / 2},
		{0, 179.5, 0, -179.5, 2 * math.Pi * EarthRadiusKm / 360}, // across the antimeridian
	} {
		if got := DistanceKm(c.lat1, c.lon1, c.lat2, c.lon2); math.Abs(got-c.want) > 1e-6 {
			t.Errorf("(%v, %v)–(%v, %v): %v km, want %v", c.lat1, c.lon1, c.lat2, c.lon2, got, c.want)
		}
	}
}

func unitAt(id int64, lat, lon float64) store.Unit {
	return store.Unit{ID: id, Name: "U", Latitude: &lat, Longitude: &lon}
}

// Five units within ~100 km of (−47.6, −26.0) and three entered wrongly: latitude's sign flipped,
// latitude and longitude swapped, and one simply elsewhere. The first two are flagged with the
// correction that brings them back; the third is flagged without one; the cluster is not flagged.
func TestPlaceUnitsFlagsFarUnitsWithLikelyCorrections(t *testing.T) {
	units := []store.Unit{unitAt(1, -47.6, -26.0), unitAt(2, -47.8, -26.8), unitAt(3, -47.2, -25.5), unitAt(4, -48.0, -26.2),
		unitAt(5, -47.5, -26.5), unitAt(6, 47.6, -26.1), unitAt(7, -26.2, -47.7), unitAt(8, 10, 100), {ID: 9, Name: "no place"}}
	got := PlaceUnits(store.Province{Name: "P"}, units)
	if !got.Checked || got.Unlocated != 1 || len(got.Units) != 8 {
		t.Fatalf("checked %v, unlocated %d, located %d; want checked, 1, 8", got.Checked, got.Unlocated, len(got.Units))
	}
	for _, up := range got.Units {
		switch up.Unit.ID {
		case 6:
			if !up.Far || !strings.Contains(up.Why, "latitude's sign flipped") {
				t.Errorf("unit 6: far %v, %q; want flagged with the latitude's sign", up.Far, up.Why)
			}
		case 7:
			if !up.Far || !strings.Contains(up.Why, "swapped") {
				t.Errorf("unit 7: far %v, %q; want flagged as swapped", up.Far, up.Why)
			}
		case 8:
			if !up.Far || strings.Contains(up.Why, "likely entry error") {
				t.Errorf("unit 8: far %v, %q; want flagged without a correction", up.Far, up.Why)
			}
		default:
			if up.Far {
				t.Errorf("unit %d in the cluster flagged: %s", up.Unit.ID, up.Why)
			}
		}
	}
	// Fewer than three located units: nothing to compare with.
	if p := PlaceUnits(store.Province{}, units[:2]); p.Checked || p.Units[0].Far {
		t.Error("two units checked")
	}
}

// A province's pole gives its located units a palaeolatitude: 90° − the arc from unit to pole (closed form
// on the sphere, Butler 1992 from memory), ± A95 clamped to ±90; a province without a pole gives none.
func TestPlaceUnitsGivesPalaeolatitudesFromTheProvincesPole(t *testing.T) {
	lat, lon, a95 := 60.0, 0.0, 7.5
	units := []store.Unit{unitAt(1, 0, 0), unitAt(2, -30, 0), unitAt(3, 55, 0), {ID: 4, Name: "no place"}}
	got := PlaceUnits(store.Province{Name: "P", PoleLatitude: &lat, PoleLongitude: &lon, PoleA95: &a95, PoleSource: "s"}, units)
	// Along the meridian the arc is the difference of latitudes: 60, 90 and 5° → 30, 0 and 85° (85 + 7.5 → 90).
	want := map[int64][3]float64{1: {30, 22.5, 37.5}, 2: {0, -7.5, 7.5}, 3: {85, 77.5, 90}}
	if len(got.Units) != 3 {
		t.Fatalf("%d located units, want 3", len(got.Units))
	}
	for _, up := range got.Units {
		w := want[up.Unit.ID]
		if up.Palaeo == nil || math.Abs(up.Palaeo.Deg-w[0]) > 1e-9 || math.Abs(up.Palaeo.Low95-w[1]) > 1e-9 || math.Abs(up.Palaeo.High95-w[2]) > 1e-9 {
			t.Errorf("unit %d: %+v, want %v", up.Unit.ID, up.Palaeo, w)
		}
	}
	for _, up := range PlaceUnits(store.Province{Name: "Q"}, units).Units {
		if up.Palaeo != nil {
			t.Errorf("unit %d of a province without a pole has a palaeolatitude", up.Unit.ID)
		}
	}
}
