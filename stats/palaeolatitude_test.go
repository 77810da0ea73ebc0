package stats

import (
	"math"
	"math/rand/v2"
	"testing"
)

// Closed forms of spherical geometry (common practice): the palaeolatitude is 90° minus the arc from the
// site to the pole (Butler 1992, "Paleomagnetism", from memory).
func TestPalaeolatitudeClosedForms(t *testing.T) {
	cases := []struct {
		name                         string
		siteLat, siteLon, pLat, pLon float64
		want                         float64
	}{
		{"site at the pole", 37.2, -121.5, 37.2, -121.5, 90},
		{"site at the pole, longitude written 360° further", 37.2, -121.5, 37.2, 238.5, 90},
		{"site 90° of arc from the pole (on the equator, pole at the north pole)", 0, 45, 90, 0, 0},
		{"site at the antipode", -20, 30, 20, -150, -90},
		{"site (0°, 0°), pole (0°, 90° E): a quarter circle apart", 0, 0, 0, 90, 0},
		{"site (30° N, 0°), pole at 90° N: palaeolatitude = latitude", 30, 0, 90, 0, 30},
		{"site (30° S, 100° E), pole at 90° N: palaeolatitude = latitude", -30, 100, 90, 17, -30},
		{"site (0°, 0°), pole (60° N, 0°): 60° of arc along the meridian", 0, 0, 60, 0, 30},
		{"site (0°, 0°), pole (0°, 150° W): 150° of arc along the equator", 0, 0, 0, -150, -60},
		// cos d = sin φ₁ sin φ₂ + cos φ₁ cos φ₂ cos Δλ = ½ + ½ · 0 = ½ for (45° N, 0°) and (45° N, 90° E) → d = 60°.
		{"site (45° N, 0°), pole (45° N, 90° E): cos d = ½", 45, 0, 45, 90, 30},
		// cos d = 0 + cos 45° · cos 90° = 0 for (45° N, 0°) and (0°, 90° E) → d = 90°.
		{"site (45° N, 0°), pole (0°, 90° E): cos d = 0", 45, 0, 0, 90, 0},
		// cos d = sin²45° + cos²45° · cos 180° = 0 for (45° N, 0°) and (45° N, 180°) → d = 90°, over the pole.
		{"site (45° N, 0°), pole (45° N, 180°): across the north pole", 45, 0, 45, 180, 0},
	}
	for _, c := range cases {
		got, err := PalaeolatitudeFromPole(c.siteLat, c.siteLon, c.pLat, c.pLon, 5)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		if math.Abs(got.Deg-c.want) > 1e-9 {
			t.Errorf("%s: %.12g, want %g", c.name, got.Deg, c.want)
		}
	}
}

// The 95 % range is the palaeolatitude ± A95, clamped to ±90°.
func TestPalaeolatitudeRangeIsAPlusMinusA95Clamped(t *testing.T) {
	cases := []struct {
		siteLat, pLat, a95, deg, lo, hi float64
	}{
		{30, 90, 8, 30, 22, 38},
		{85, 90, 8, 85, 77, 90},     // near the pole: the range stops at 90
		{-86, 90, 8, -86, -90, -78}, // near the antipode: stops at −90
		{90, 90, 30, 90, 60, 90},    // site at the pole
		{-10, 90, 0.5, -10, -10.5, -9.5},
	}
	for _, c := range cases {
		got, err := PalaeolatitudeFromPole(c.siteLat, 10, c.pLat, 0, c.a95)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(got.Deg-c.deg) > 1e-9 || math.Abs(got.Low95-c.lo) > 1e-9 || math.Abs(got.High95-c.hi) > 1e-9 {
			t.Errorf("site %g, A95 %g: %+v, want %g (%g to %g)", c.siteLat, c.a95, got, c.deg, c.lo, c.hi)
		}
	}
	for _, bad := range [][5]float64{{91, 0, 80, 0, 5}, {0, 0, -90.1, 0, 5}, {0, math.NaN(), 80, 0, 5}, {0, 0, 80, 0, 0}, {0, 0, 80, 0, -1}, {0, 0, 80, math.Inf(1), 5}} {
		if _, err := PalaeolatitudeFromPole(bad[0], bad[1], bad[2], bad[3], bad[4]); err == nil {
			t.Errorf("%v accepted", bad)
		}
	}
}

// Cross-check of the haversine arc against an independent formula, the angle between the unit vectors of
// site and pole (cos d = u·v, taken through atan2(|u×v|, u·v) to stay accurate at 0 and 180°), over random
// points (seeded).
func TestPalaeolatitudeAgreesWithUnitVectors(t *testing.T) {
	rng := rand.New(rand.NewPCG(17, 2026))
	unit := func(lat, lon float64) [3]float64 {
		la, lo := lat*math.Pi/180, lon*math.Pi/180
		return [3]float64{math.Cos(la) * math.Cos(lo), math.Cos(la) * math.Sin(lo), math.Sin(la)}
	}
	// Points drawn uniform on the sphere (latitude = asin of a uniform −1..1), longitudes −180..360.
	draw := func() (float64, float64) {
		return math.Asin(2*rng.Float64()-1) * 180 / math.Pi, -180 + 540*rng.Float64()
	}
	for i := 0; i < 20000; i++ {
		sLat, sLon := draw()
		pLat, pLon := draw()
		u, v := unit(sLat, sLon), unit(pLat, pLon)
		dot := u[0]*v[0] + u[1]*v[1] + u[2]*v[2]
		cx := [3]float64{u[1]*v[2] - u[2]*v[1], u[2]*v[0] - u[0]*v[2], u[0]*v[1] - u[1]*v[0]}
		d := math.Atan2(math.Sqrt(cx[0]*cx[0]+cx[1]*cx[1]+cx[2]*cx[2]), dot) * 180 / math.Pi
		got, err := PalaeolatitudeFromPole(sLat, sLon, pLat, pLon, 10)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(got.Deg-(90-d)) > 1e-9 {
			t.Fatalf("site (%g, %g), pole (%g, %g): haversine %.12g, unit vectors %.12g", sLat, sLon, pLat, pLon, got.Deg, 90-d)
		}
		// Symmetry: the arc is the same seen from either end.
		if back := PoleDistanceDeg(pLat, pLon, sLat, sLon); math.Abs(back-d) > 1e-9 {
			t.Fatalf("arc not symmetric: %g vs %g", back, d)
		}
	}
}
