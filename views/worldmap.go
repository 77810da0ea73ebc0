package views

import (
	_ "embed"
	"encoding/json"
	"fmt"
	"math"
	"strings"
)

// The map of the compilation: the units of every province and the sections at today's coordinates, over
// the land of Natural Earth's 1:110m vectors (public domain; packaged as TopoJSON by world-atlas 2.0.2,
// ISC — see mapdata/README.md). The projection is equirectangular with longitudes scaled by the cosine of
// the view's middle latitude, so the shapes of a region are not stretched; the view is fitted to the points.

//go:embed mapdata/land-110m.json
var landTopoJSON []byte

// MapSource names the coastlines' source and licence, for the page.
const MapSource = "Coastlines: Natural Earth 1:110m land, version 4.1.0 (public domain), as packaged by world-atlas 2.0.2 (ISC licence)."

// MapPoint is one place on the map.
type MapPoint struct {
	Lat, Lon float64
	Label    string // its hover text
	URL      string
	Section  bool // a section (square) rather than a unit (circle)
	Group    int  // the province's index, for its colour (units)
	Flag     bool // drawn with a red ring: far from the rest of its province
}

// WorldMap is the figure: its points and the names of the groups (provinces) for the legend.
type WorldMap struct {
	Title  string
	Points []MapPoint
	Groups []string
}

// mapColours are Okabe & Ito's colour-blind-safe colours, one per province, in turn.
var mapColours = []string{"#0072B2", "#E69F00", "#009E73", "#CC79A7", "#56B4E9", "#D55E00", "#F0E442"}

const (
	mapW      = 900.0
	mapMargin = 36.0
)

// topology is the part of a TopoJSON file the map reads.
type topology struct {
	Transform struct {
		Scale     [2]float64 `json:"scale"`
		Translate [2]float64 `json:"translate"`
	} `json:"transform"`
	Arcs    [][][2]float64 `json:"arcs"`
	Objects map[string]struct {
		Geometries []struct {
			Type string          `json:"type"`
			Arcs json.RawMessage `json:"arcs"`
		} `json:"geometries"`
	} `json:"objects"`
}

// LandRings decodes the land of the shipped TopoJSON into rings of [lon, lat] points.
func LandRings() ([][][2]float64, error) {
	var t topology
	if err := json.Unmarshal(landTopoJSON, &t); err != nil {
		return nil, fmt.Errorf("land map: %w", err)
	}
	// Arcs are delta-encoded quantized positions.
	arcs := make([][][2]float64, len(t.Arcs))
	for i, a := range t.Arcs {
		x, y := 0.0, 0.0
		for _, d := range a {
			x, y = x+d[0], y+d[1]
			arcs[i] = append(arcs[i], [2]float64{x*t.Transform.Scale[0] + t.Transform.Translate[0], y*t.Transform.Scale[1] + t.Transform.Translate[1]})
		}
	}
	ring := func(idx []int) ([][2]float64, error) {
		var out [][2]float64
		for k, i := range idx {
			j := i
			if i < 0 {
				j = ^i
			}
			if j >= len(arcs) {
				return nil, fmt.Errorf("land map: arc %d of %d", j, len(arcs))
			}
			a := arcs[j]
			if i < 0 {
				r := make([][2]float64, len(a))
				for n := range a {
					r[n] = a[len(a)-1-n]
				}
				a = r
			}
			if k > 0 && len(a) > 0 {
				a = a[1:] // the first point repeats the previous arc's last
			}
			out = append(out, a...)
		}
		return out, nil
	}
	var rings [][][2]float64
	for _, g := range t.Objects["land"].Geometries {
		var polys [][][]int
		switch g.Type {
		case "MultiPolygon":
			if err := json.Unmarshal(g.Arcs, &polys); err != nil {
				return nil, fmt.Errorf("land map: %w", err)
			}
		case "Polygon":
			var p [][]int
			if err := json.Unmarshal(g.Arcs, &p); err != nil {
				return nil, fmt.Errorf("land map: %w", err)
			}
			polys = [][][]int{p}
		default:
			continue
		}
		for _, p := range polys {
			for _, r := range p {
				pts, err := ring(r)
				if err != nil {
					return nil, err
				}
				rings = append(rings, pts)
			}
		}
	}
	return rings, nil
}

// mapView is the part of the Earth shown and how it is projected.
type mapView struct {
	lon0, lon1, lat0, lat1 float64 // west, east, south, north
	k                      float64 // x stretch: cos of the middle latitude
	scale                  float64 // px per degree of latitude
	h                      float64
}

// fitView fits the view to the points: their extent padded by a fifth (at least 5°), at least 30° of
// longitude and 20° of latitude; the whole world when there is no point.
func fitView(pts []MapPoint) mapView {
	v := mapView{lon0: -180, lon1: 180, lat0: -60, lat1: 80}
	if len(pts) > 0 {
		v.lon0, v.lon1, v.lat0, v.lat1 = math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
		for _, p := range pts {
			v.lon0, v.lon1 = math.Min(v.lon0, p.Lon), math.Max(v.lon1, p.Lon)
			v.lat0, v.lat1 = math.Min(v.lat0, p.Lat), math.Max(v.lat1, p.Lat)
		}
		grow := func(lo, hi, min float64) (float64, float64) {
			pad := math.Max(5, 0.2*(hi-lo))
			lo, hi = lo-pad, hi+pad
			if hi-lo < min {
				c := (lo + hi) / 2
				lo, hi = c-min/2, c+min/2
			}
			return lo, hi
		}
		v.lon0, v.lon1 = grow(v.lon0, v.lon1, 30)
		v.lat0, v.lat1 = grow(v.lat0, v.lat1, 20)
		v.lon0, v.lon1 = math.Max(v.lon0, -180), math.Min(v.lon1, 180)
		v.lat0, v.lat1 = math.Max(v.lat0, -90), math.Min(v.lat1, 90)
	}
	mid := (v.lat0 + v.lat1) / 2
	v.k = math.Max(0.2, math.Cos(mid*math.Pi/180))
	// At most 4 tall to 5 wide: a view spread over latitudes is widened in longitude.
	if want := (v.lat1 - v.lat0) / (0.8 * v.k); v.lon1-v.lon0 < want {
		c := (v.lon0 + v.lon1) / 2
		v.lon0, v.lon1 = c-want/2, c+want/2
		if v.lon0 < -180 {
			v.lon0, v.lon1 = -180, math.Min(180, -180+want)
		}
		if v.lon1 > 180 {
			v.lon0, v.lon1 = math.Max(-180, 180-want), 180
		}
	}
	v.scale = (mapW - 2*mapMargin) / ((v.lon1 - v.lon0) * v.k)
	v.h = (v.lat1-v.lat0)*v.scale + 2*mapMargin
	return v
}

func (v mapView) xy(lon, lat float64) (float64, float64) {
	return mapMargin + (lon-v.lon0)*v.k*v.scale, mapMargin + (v.lat1-lat)*v.scale
}

// SVG draws the map.
func (m WorldMap) SVG() ([]byte, error) {
	rings, err := LandRings()
	if err != nil {
		return nil, err
	}
	v := fitView(m.Points)
	legendH := 22.0 * float64(2+len(m.Groups))
	H := v.h + legendH
	var b strings.Builder
	fmt.Fprintf(&b, `<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 %s %s" width="%s" height="%s" role="img" aria-label="%s" font-family="Liberation Sans, Arial, sans-serif" font-size="12">`,
		f2(mapW), f2(H), f2(mapW), f2(H), esc(m.Title))
	fmt.Fprintf(&b, `<title>%s</title>`, esc(m.Title))
	x0, y0 := mapMargin, mapMargin
	w, h := mapW-2*mapMargin, v.h-2*mapMargin
	fmt.Fprintf(&b, `<defs><clipPath id="map-clip"><rect x="%s" y="%s" width="%s" height="%s"/></clipPath></defs>`, f2(x0), f2(y0), f2(w), f2(h))
	fmt.Fprintf(&b, `<rect x="%s" y="%s" width="%s" height="%s" fill="#e8f1f8" stroke="#8a9aa8"/>`, f2(x0), f2(y0), f2(w), f2(h))
	b.WriteString(`<g clip-path="url(#map-clip)">`)
	// Land: one path; rings that leave the view are clipped.
	b.WriteString(`<path fill="#ece6d6" stroke="#8c8372" stroke-width="0.6" fill-rule="evenodd" d="`)
	for _, r := range rings {
		u, lo, hi := unwrapRing(r)
		for _, off := range []float64{-360, 0, 360} {
			if hi+off < v.lon0 || lo+off > v.lon1 {
				continue
			}
			for i, p := range u {
				x, y := v.xy(p[0]+off, p[1])
				if i == 0 {
					b.WriteString("M")
				} else {
					b.WriteString("L")
				}
				b.WriteString(f2(x) + " " + f2(y))
			}
			b.WriteString("Z")
		}
	}
	b.WriteString(`"/>`)
	// Graticule every 1, 2, 5, 10, 20 or 30° so that about six lines cross the view.
	step := 1.0
	for _, s := range []float64{1, 2, 5, 10, 20, 30} {
		step = s
		if (v.lon1-v.lon0)/s <= 8 {
			break
		}
	}
	var labels strings.Builder
	for lon := math.Ceil(v.lon0/step) * step; lon <= v.lon1; lon += step {
		x, _ := v.xy(lon, 0)
		fmt.Fprintf(&b, `<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#9fb3c4" stroke-width="0.5" stroke-dasharray="2 3"/>`, f2(x), f2(y0), f2(x), f2(y0+h))
		fmt.Fprintf(&labels, `<text x="%s" y="%s" text-anchor="middle" fill="#555">%s</text>`, f2(x), f2(y0+h+14), degrees(lon, "E", "W"))
	}
	for lat := math.Ceil(v.lat0/step) * step; lat <= v.lat1; lat += step {
		_, y := v.xy(0, lat)
		fmt.Fprintf(&b, `<line x1="%s" y1="%s" x2="%s" y2="%s" stroke="#9fb3c4" stroke-width="0.5" stroke-dasharray="2 3"/>`, f2(x0), f2(y), f2(x0+w), f2(y))
		fmt.Fprintf(&labels, `<text x="%s" y="%s" text-anchor="end" fill="#555">%s</text>`, f2(x0-4), f2(y+4), degrees(lat, "N", "S"))
	}
	// Points: sections as black squares, units as circles in their province's colour, a red ring when far.
	for _, p := range m.Points {
		x, y := v.xy(p.Lon, p.Lat)
		if p.URL != "" {
			fmt.Fprintf(&b, `<a href="%s">`, esc(p.URL))
		}
		b.WriteString("<g>")
		fmt.Fprintf(&b, `<title>%s</title>`, esc(p.Label))
		if p.Section {
			fmt.Fprintf(&b, `<rect x="%s" y="%s" width="9" height="9" fill="#222" stroke="#fff" stroke-width="1"/>`, f2(x-4.5), f2(y-4.5))
		} else {
			fmt.Fprintf(&b, `<circle cx="%s" cy="%s" r="4.5" fill="%s" stroke="#fff" stroke-width="1"/>`, f2(x), f2(y), mapColours[p.Group%len(mapColours)])
			if p.Flag {
				fmt.Fprintf(&b, `<circle cx="%s" cy="%s" r="9" fill="none" stroke="#c00" stroke-width="2"/>`, f2(x), f2(y))
			}
		}
		b.WriteString("</g>")
		if p.URL != "" {
			b.WriteString("</a>")
		}
	}
	b.WriteString(`</g>`)
	b.WriteString(labels.String())
	// Legend.
	ly := v.h + 8
	item := func(shape, text string) {
		fmt.Fprintf(&b, `<g transform="translate(%s %s)">%s<text x="16" y="4">%s</text></g>`, f2(mapMargin+6), f2(ly), shape, esc(text))
		ly += 20
	}
	for i, g := range m.Groups {
		item(fmt.Sprintf(`<circle r="4.5" fill="%s"/>`, mapColours[i%len(mapColours)]), "units of "+g)
	}
	item(`<rect x="-4.5" y="-4.5" width="9" height="9" fill="#222"/>`, "sections")
	item(`<circle r="8" fill="none" stroke="#c00" stroke-width="2"/>`, "a unit far from the rest of its province: check its coordinates")
	b.WriteString(`</svg>`)
	return []byte(b.String()), nil
}

// unwrapRing makes a ring's longitudes continuous where it crosses the antimeridian (a step of more than
// 180°), so it is drawn as one shape instead of with a line across the map; it returns the ring and its
// longitude range. A ring that goes once round the globe (Antarctica) is closed through its pole.
func unwrapRing(r [][2]float64) ([][2]float64, float64, float64) {
	out := make([][2]float64, 0, len(r)+2)
	shift := 0.0
	lo, hi := math.Inf(1), math.Inf(-1)
	for i, p := range r {
		if i > 0 {
			switch d := p[0] + shift - out[i-1][0]; {
			case d > 180:
				shift -= 360
			case d < -180:
				shift += 360
			}
		}
		q := [2]float64{p[0] + shift, p[1]}
		out = append(out, q)
		lo, hi = math.Min(lo, q[0]), math.Max(hi, q[0])
	}
	if n := len(out); n > 1 && math.Abs(out[n-1][0]-out[0][0]) > 180 {
		pole := -90.0
		if out[0][1] > 0 {
			pole = 90
		}
		out = append(out, [2]float64{out[n-1][0], pole}, [2]float64{out[0][0], pole})
	}
	return out, lo, hi
}

// degrees writes a graticule label: 30°S, 0°, 120°E.
func degrees(v float64, pos, neg string) string {
	switch {
	case v > 0:
		return fmt.Sprintf("%g°%s", v, pos)
	case v < 0:
		return fmt.Sprintf("%g°%s", -v, neg)
	}
	return "0°"
}
