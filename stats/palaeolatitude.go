package stats

import (
	"errors"
	"math"
)

// Palaeolatitude of a site from a palaeomagnetic pole, for a geocentric axial dipole field: the pole is the
// palaeo-north pole, so the site's palaeolatitude is 90° minus its angular distance from the pole
// (common practice; Butler 1992, "Paleomagnetism: Magnetic Domains to Geologic Terranes", the handbook
// treatment of pole and site, from memory). It assumes the site sat on the plate the pole belongs to at the
// pole's age; it is no plate reconstruction.

// PoleDistanceDeg is the angular distance in degrees (0 to 180) between two points given by latitude and
// longitude in degrees, by the haversine formula (well conditioned for near and far points alike).
func PoleDistanceDeg(lat1, lon1, lat2, lon2 float64) float64 {
	rad := math.Pi / 180
	dLat, dLon := (lat2-lat1)*rad, (lon2-lon1)*rad
	h := math.Sin(dLat/2)*math.Sin(dLat/2) + math.Cos(lat1*rad)*math.Cos(lat2*rad)*math.Sin(dLon/2)*math.Sin(dLon/2)
	return 2 * math.Asin(math.Sqrt(math.Min(1, math.Max(0, h)))) / rad
}

// Palaeolatitude is a site's palaeolatitude from a pole, with an approximate 95 % range.
type Palaeolatitude struct {
	Deg    float64 // 90° − the angular distance of site and pole
	Low95  float64 // Deg − A95, no lower than −90
	High95 float64 // Deg + A95, no higher than 90
}

// ErrBadPole is returned for coordinates or an A95 out of range.
var ErrBadPole = errors.New("palaeolatitude: latitudes must lie in -90..90, longitudes be finite and A95 in (0, 180]")

// PalaeolatitudeFromPole gives the palaeolatitude of a site (siteLat, siteLon) from a pole (poleLat,
// poleLon) with A95 a95, all in degrees. The range Deg ± A95 (clamped to ±90) is an approximation of the
// 95 % range: it projects the pole's 95 % confidence circle onto the great circle through site and pole,
// where the circle's points lie between distance − A95 and distance + A95 of the site; so the half-width is
// at most A95, and since a 95 % circle in two dimensions is wider than a 95 % interval in one, it is if
// anything generous.
func PalaeolatitudeFromPole(siteLat, siteLon, poleLat, poleLon, a95 float64) (Palaeolatitude, error) {
	for _, lat := range []float64{siteLat, poleLat} {
		if !(lat >= -90 && lat <= 90) {
			return Palaeolatitude{}, ErrBadPole
		}
	}
	if math.IsNaN(siteLon) || math.IsInf(siteLon, 0) || math.IsNaN(poleLon) || math.IsInf(poleLon, 0) || !(a95 > 0 && a95 <= 180) {
		return Palaeolatitude{}, ErrBadPole
	}
	p := 90 - PoleDistanceDeg(siteLat, siteLon, poleLat, poleLon)
	return Palaeolatitude{Deg: p, Low95: math.Max(-90, p-a95), High95: math.Min(90, p+a95)}, nil
}
