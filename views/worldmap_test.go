package views

import (
	"math"
	"os"
	"strings"
	"testing"
)

// The shipped land decodes into closed rings of longitudes and latitudes within the file's bounding box
// (world-atlas land-110m: [−180, −85.609] to [180, 83.645]); the rings' extremes reach that box, so no
// arc was dropped; and no ring is empty.
func TestLandRingsDecode(t *testing.T) {
	rings, err := LandRings()
	if err != nil {
		t.Fatal(err)
	}
	if len(rings) < 100 {
		t.Fatalf("%d rings, want the 1:110m land's (over a hundred)", len(rings))
	}
	lo := [2]float64{math.Inf(1), math.Inf(1)}
	hi := [2]float64{math.Inf(-1), math.Inf(-1)}
	for i, r := range rings {
		if len(r) < 4 {
			t.Errorf("ring %d has %d points", i, len(r))
			continue
		}
		if r[0] != r[len(r)-1] {
			t.Errorf("ring %d is not closed: %v … %v", i, r[0], r[len(r)-1])
		}
		for _, p := range r {
			for k := range 2 {
				lo[k], hi[k] = math.Min(lo[k], p[k]), math.Max(hi[k], p[k])
			}
		}
	}
	// The file's bbox, to the quantization step (scale ≈ 0.0036° × 0.0017°).
	want := [4]float64{-180, -85.60903777459777, 180, 83.64513000000002}
	got := [4]float64{lo[0], lo[1], hi[0], hi[1]}
	for k := range 4 {
		if math.Abs(got[k]-want[k]) > 0.004 {
			t.Errorf("extent %v, want the file's bbox %v", got, want)
			break
		}
	}
}

// A map fitted to points spread over many latitudes is not taller than wide, and every point lies inside
// the map frame.
func TestWorldMapFitsItsPoints(t *testing.T) {
	pts := []MapPoint{{Lat: -47.6, Lon: -26}, {Lat: 47.6, Lon: -26.4, Flag: true}, {Lat: -45.9, Lon: -24.1, Section: true}}
	v := fitView(pts)
	if v.h > mapW {
		t.Errorf("map %v px tall for %v px wide", v.h, mapW)
	}
	for _, p := range pts {
		x, y := v.xy(p.Lon, p.Lat)
		if x < mapMargin || x > mapW-mapMargin || y < mapMargin || y > v.h-mapMargin {
			t.Errorf("point %+v drawn at (%v, %v), outside the frame", p, x, y)
		}
	}
	svg, err := WorldMap{Title: "t", Points: pts, Groups: []string{"P"}}.SVG()
	if err != nil {
		t.Fatal(err)
	}
	if s := string(svg); !strings.HasPrefix(s, "<svg") || strings.Count(s, `stroke="#c00"`) != 2 { // the flag and its legend
		t.Errorf("svg lacks the flag ring")
	}
	if dir := os.Getenv("COEVAL_MAP_SVG"); dir != "" {
		os.WriteFile(dir, svg, 0o644)
	}
}
