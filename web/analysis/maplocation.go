package analysis

import (
	"fmt"
	"math"
	"slices"

	"coeval/stats"
	"coeval/store"
)

// Where the units of a province lie, as a curation aid: a unit whose coordinates sit far from the rest of
// its province is flagged, and when flipping the sign of its latitude or longitude, or swapping the two,
// would put it among the others, the flag says so (the usual entry errors).

// EarthRadiusKm is the mean radius of the Earth (IUGG), for great-circle distances.
const EarthRadiusKm = 6371.0

// Rules of the flag: a unit is far when it lies more than FarFactor times the province's typical
// distance (the median distance of its units from their centre) and more than FarMinKm from the centre.
// The centre is the coordinate-wise median of the located units (robust to the outliers sought).
const (
	FarFactor       = 5.0
	FarMinKm        = 500.0
	MinUnitsToCheck = 3 // fewer located units: no centre to compare with
)

// DistanceKm is the great-circle distance between two points (degrees), by the haversine formula.
func DistanceKm(lat1, lon1, lat2, lon2 float64) float64 {
	rad := math.Pi / 180
	dLat, dLon := (lat2-lat1)*rad, (lon2-lon1)*rad
	a := math.Sin(dLat/2)*math.Sin(dLat/2) + math.Cos(lat1*rad)*math.Cos(lat2*rad)*math.Sin(dLon/2)*math.Sin(dLon/2)
	return 2 * EarthRadiusKm * math.Asin(math.Min(1, math.Sqrt(a)))
}

// UnitPlace is a located unit with what the check found.
type UnitPlace struct {
	Unit       store.Unit
	DistanceKm float64 // from the province's centre (NaN when the province was not checked)
	Far        bool
	Why        string // the reason of the flag, with a likely correction when one fits
	// Palaeo is the unit's palaeolatitude from its province's pole (stats.PalaeolatitudeFromPole), nil when
	// the province has no pole.
	Palaeo *stats.Palaeolatitude
}

// ProvincePlaces are the located units of one province, its centre and its typical distance.
type ProvincePlaces struct {
	Province          store.Province
	Units             []UnitPlace
	Unlocated         int // units without coordinates
	Checked           bool
	CentreLat         float64
	CentreLon         float64
	TypicalDistanceKm float64
}

// PlaceUnits checks the located units of a province and, when the province carries a palaeomagnetic pole,
// gives each its palaeolatitude from that pole. Units lacking a latitude or longitude are counted,
// not placed. A province with fewer than MinUnitsToCheck located units is not checked.
func PlaceUnits(p store.Province, units []store.Unit) ProvincePlaces {
	out := ProvincePlaces{Province: p, CentreLat: math.NaN(), CentreLon: math.NaN(), TypicalDistanceKm: math.NaN()}
	var lats, lons []float64
	for _, u := range units {
		if u.Latitude == nil || u.Longitude == nil {
			out.Unlocated++
			continue
		}
		up := UnitPlace{Unit: u, DistanceKm: math.NaN()}
		if p.HasPole() {
			if pl, err := stats.PalaeolatitudeFromPole(*u.Latitude, *u.Longitude, *p.PoleLatitude, *p.PoleLongitude, *p.PoleA95); err == nil {
				up.Palaeo = &pl
			}
		}
		out.Units = append(out.Units, up)
		lats, lons = append(lats, *u.Latitude), append(lons, *u.Longitude)
	}
	if len(out.Units) < MinUnitsToCheck {
		return out
	}
	out.Checked = true
	out.CentreLat, out.CentreLon = median(lats), median(lons)
	d := make([]float64, len(out.Units))
	for i := range out.Units {
		u := out.Units[i].Unit
		d[i] = DistanceKm(out.CentreLat, out.CentreLon, *u.Latitude, *u.Longitude)
		out.Units[i].DistanceKm = d[i]
	}
	out.TypicalDistanceKm = median(d)
	limit := math.Max(FarMinKm, FarFactor*out.TypicalDistanceKm)
	for i := range out.Units {
		up := &out.Units[i]
		if up.DistanceKm <= limit {
			continue
		}
		up.Far = true
		up.Why = fmt.Sprintf("%.0f km from the centre of its province's units, where they typically lie within %.0f km", up.DistanceKm, out.TypicalDistanceKm)
		lat, lon := *up.Unit.Latitude, *up.Unit.Longitude
		for _, c := range []struct {
			what     string
			lat, lon float64
		}{
			{"latitude's sign flipped", -lat, lon},
			{"longitude's sign flipped", lat, -lon},
			{"both signs flipped", -lat, -lon},
			{"latitude and longitude swapped", lon, lat},
		} {
			if c.lat < -90 || c.lat > 90 {
				continue
			}
			if DistanceKm(out.CentreLat, out.CentreLon, c.lat, c.lon) <= limit {
				up.Why += fmt.Sprintf("; with its %s (%.3f, %.3f) it would lie among them: a likely entry error", c.what, c.lat, c.lon)
				break
			}
		}
	}
	return out
}

func median(x []float64) float64 {
	s := slices.Clone(x)
	slices.Sort(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}
