// Package large writes a large INVENTED compilation for trying coeval at size: many provinces and units,
// up to hundreds of thousands of dates mixing U–Pb and ⁴⁰Ar/³⁹Ar (under two calibrations), and many
// sections with their samples, tie points and events. Nothing in the output is real data: every province
// and section name says "invented", laboratories are invented, no person is named, DOIs are left empty
// and coordinates point at open ocean.
//
// The files are those of the demo (CSV import formats v1) with a manifest.csv giving the import order, so
// `coeval import …` file by file, or the demo seeding, loads them. The output is a pure function of the
// sizes and the seed (for a given Go release); each part (units, dates, each section) has its own random
// stream. The dates file is written row by row: memory does not grow with the number of dates.
package large

import (
	"bufio"
	"encoding/csv"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
)

// Sizes are what Write generates.
type Sizes struct {
	Provinces         int
	Units             int // spread over the provinces in turn
	Dates             int // spread over the units in turn
	Sections          int
	SamplesPerSection int
	Ties              int // spread over the sections in turn
	Events            int // spread over the sections in turn
	Seed              uint64
}

// Default is the size of a large group's compilation (issue 13 of the project's tracker).
func Default() Sizes {
	return Sizes{Provinces: 40, Units: 400, Dates: 100000, Sections: 30, SamplesPerSection: 300, Ties: 150, Events: 150, Seed: 2013}
}

// Check returns an error naming the first size out of range.
func (s Sizes) Check() error {
	for _, c := range []struct {
		name   string
		v, min int
	}{
		{"provinces", s.Provinces, 1}, {"units", s.Units, 1}, {"dates", s.Dates, 0}, {"sections", s.Sections, 0},
		{"samples", s.SamplesPerSection, 0}, {"ties", s.Ties, 0}, {"events", s.Events, 0},
	} {
		if c.v < c.min {
			return fmt.Errorf("%s: want %d or more, got %d", c.name, c.min, c.v)
		}
	}
	if s.Units < s.Provinces {
		return fmt.Errorf("units: want at least one per province (%d or more), got %d", s.Provinces, s.Units)
	}
	if s.Sections == 0 && s.Ties+s.Events > 0 {
		return fmt.Errorf("sections: ties and events need sections, got 0 sections with %d ties and %d events", s.Ties, s.Events)
	}
	return nil
}

// ProvinceName, UnitName and SectionName are the invented names Write gives (i from 0).
func ProvinceName(i int) string { return fmt.Sprintf("Large Demo Province %02d (invented)", i+1) }

// UnitName is the name of unit k (from 0) of its province.
func UnitName(k int) string { return fmt.Sprintf("Flow Group %03d", k+1) }

// SectionName is the name of section i (from 0).
func SectionName(i int) string { return fmt.Sprintf("Large Demo Section %02d (invented)", i+1) }

// Files lists what Write writes, in import order (the manifest's rows: kind, section, file).
type Files [][3]string

// ⁴⁰Ar/³⁹Ar calibrations (monitor, monitor age Ma, total λ per a) the dates are published under: one
// from a 2000s convention and one from a 1970s convention, so the compilation needs recalculation.
var calibrations = [2]struct {
	monitor string
	tsMa    float64
	lambda  float64
}{{"FCs", 28.201, 5.463e-10}, {"FCs", 28.02, 5.543e-10}}

// recalc moves an age from the first calibration to calibration c keeping the sample/monitor ratio:
// t' = (1/λ')·ln[1 + (e^{λ' t_s'} − 1)·(e^{λ t} − 1)/(e^{λ t_s} − 1)] (as in testdata/demo/gen).
func recalc(tMa float64, c int) float64 {
	from, to := calibrations[0], calibrations[c]
	ratio := math.Expm1(from.lambda*tMa*1e6) / math.Expm1(from.lambda*from.tsMa*1e6)
	return math.Log1p(math.Expm1(to.lambda*to.tsMa*1e6)*ratio) / to.lambda / 1e6
}

func rng(seed uint64, part uint64) *rand.Rand { return rand.New(rand.NewPCG(seed, part)) }

func f(v float64, prec int) string { return strconv.FormatFloat(v, 'f', prec, 64) }

// provinceAgeMa is the invented centre age of province p; unitAgeMa the true age of its unit k of n
// (older at the base of the pile).
func provinceAgeMa(p int) float64 { return 66 + 23.7*float64(p) }
func unitAgeMa(p, k, n int) float64 {
	return provinceAgeMa(p) + 0.6*float64(n-k)/float64(n)
}

// Write writes the compilation into dir (created if needed) and returns the manifest's rows.
func Write(dir string, s Sizes) (Files, error) {
	if err := s.Check(); err != nil {
		return nil, err
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, err
	}
	var files Files
	add := func(kind, section, name string, write func(w *csv.Writer) error) error {
		fh, err := os.Create(filepath.Join(dir, name))
		if err != nil {
			return err
		}
		bw := bufio.NewWriterSize(fh, 1<<16)
		w := csv.NewWriter(bw)
		err = write(w)
		w.Flush()
		if err == nil {
			err = w.Error()
		}
		if err == nil {
			err = bw.Flush()
		}
		if cerr := fh.Close(); err == nil {
			err = cerr
		}
		if err != nil {
			return fmt.Errorf("write %s: %w", name, err)
		}
		files = append(files, [3]string{kind, section, name})
		return nil
	}
	// unitsOf[p] is how many units province p has (units go to provinces in turn).
	unitsOf := make([]int, s.Provinces)
	for u := range s.Units {
		unitsOf[u%s.Provinces]++
	}
	err := add("provinces", "", "provinces.csv", func(w *csv.Writer) error {
		w.Write([]string{"province", "description"})
		for p := range s.Provinces {
			w.Write([]string{ProvinceName(p), fmt.Sprintf("INVENTED province of the large demo (not real data), seed %d: %d units erupted over about 0.6 Myr around %s Ma.",
				s.Seed, unitsOf[p], f(provinceAgeMa(p), 1))})
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	err = add("units", "", "units.csv", func(w *csv.Writer) error {
		r := rng(s.Seed, 1)
		w.Write([]string{"province", "unit", "kind", "pile_position", "volume_km3", "volume_sigma_km3", "latitude", "longitude", "notes"})
		for u := range s.Units {
			p, k := u%s.Provinces, u/s.Provinces
			kind, pile := "flow_group", strconv.Itoa(k+1)
			switch k % 9 {
			case 7:
				kind, pile = "sill", ""
			case 8:
				kind, pile = "dyke", ""
			}
			vol := 200 + 3000*r.Float64()
			w.Write([]string{ProvinceName(p), UnitName(k), kind, pile, f(vol, 0), f(vol*0.2, 0),
				f(-40-float64(p%10)-r.Float64(), 3), f(-20-float64(p/10)-r.Float64(), 3), "Invented unit of the large demo."})
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	if s.Sections > 0 {
		err = add("sections", "", "sections.csv", func(w *csv.Writer) error {
			w.Write([]string{"section", "kind", "latitude", "longitude", "palaeolatitude", "thermal_maturity", "toc_threshold_wt_pct", "notes"})
			for i := range s.Sections {
				kind := map[bool]string{true: "core", false: "outcrop"}[i%3 == 0]
				w.Write([]string{SectionName(i), kind, f(-45-float64(i%7)*0.5, 3), f(-30-float64(i/7)*0.5, 3), f(30+float64(i%11), 1), "immature", "",
					fmt.Sprintf("Invented section of the large demo, recording %s.", ProvinceName(i%s.Provinces))})
			}
			return nil
		})
		if err != nil {
			return nil, err
		}
	}
	if err := add("dates", "", "dates.csv", func(w *csv.Writer) error { return writeDates(w, s, unitsOf) }); err != nil {
		return nil, err
	}
	for i := range s.Sections {
		name := SectionName(i)
		ties := spread(s.Ties, s.Sections, i)
		events := spread(s.Events, s.Sections, i)
		sec := section(s, i)
		if ties > 0 {
			if err := add("ties", name, fmt.Sprintf("ties-%02d.csv", i+1), func(w *csv.Writer) error { return writeTies(w, s, i, ties, sec) }); err != nil {
				return nil, err
			}
		}
		if s.SamplesPerSection > 0 {
			if err := add("measurements", name, fmt.Sprintf("measurements-%02d.csv", i+1), func(w *csv.Writer) error { return writeSamples(w, s, i, sec) }); err != nil {
				return nil, err
			}
		}
		if events > 0 {
			if err := add("events", name, fmt.Sprintf("events-%02d.csv", i+1), func(w *csv.Writer) error { return writeEvents(w, s, i, events, sec) }); err != nil {
				return nil, err
			}
		}
	}
	manifest := files
	err = add("", "", "manifest.csv", func(w *csv.Writer) error {
		w.Write([]string{"kind", "section", "file"})
		for _, m := range manifest {
			w.Write(m[:])
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	files = manifest
	readme := fmt.Sprintf("# coeval large demo — INVENTED data\n\nEverything in this folder is **invented** (generated by `coeval demo large`, seed %d): "+
		"%d provinces, %d units, %d dates, %d sections of %d samples, %d tie points, %d events. No name, laboratory or "+
		"number here is real; coordinates point at open ocean. **Do not cite any of it as data.**\n\n"+
		"`manifest.csv` gives the import order: provinces, units, sections, dates, then ties, measurements and events of each section.\n",
		s.Seed, s.Provinces, s.Units, s.Dates, s.Sections, s.SamplesPerSection, s.Ties, s.Events)
	if err := os.WriteFile(filepath.Join(dir, "README.md"), []byte(readme), 0o644); err != nil {
		return nil, err
	}
	return files, nil
}

// spread is how many of n items go to part i of parts when they are dealt in turn.
func spread(n, parts, i int) int {
	if parts == 0 {
		return 0
	}
	c := n / parts
	if i < n%parts {
		c++
	}
	return c
}

func writeDates(w *csv.Writer, s Sizes, unitsOf []int) error {
	r := rng(s.Seed, 2)
	w.Write([]string{"province", "unit", "section", "height_m", "sample_code", "method", "material", "interpretation",
		"age_ma", "sigma_ma", "sigma_y_ma", "sigma_z_ma", "sigma_level", "tracer", "monitor", "monitor_age_ma",
		"lambda_per_a", "laboratory", "citation", "doi", "latitude", "longitude", "review_state", "notes"})
	row := make([]string, 24)
	for i := range s.Dates {
		u := i % s.Units
		p, k := u%s.Provinces, u/s.Provinces
		n := unitsOf[p]
		interp := "eruption"
		if k%9 >= 7 {
			interp = "crystallisation"
		}
		truth := unitAgeMa(p, k, n)
		for j := range row {
			row[j] = ""
		}
		row[0], row[1] = ProvinceName(p), UnitName(k)
		row[4] = fmt.Sprintf("LD%02d-%03d-%05d", p+1, k+1, i/s.Units+1)
		row[7] = interp
		row[18] = "Invented large-demo data, not a publication"
		row[20], row[21] = f(-40-float64(p%10)-r.Float64(), 3), f(-20-float64(p/10)-r.Float64(), 3)
		row[22] = "accepted"
		if r.IntN(50) == 0 {
			row[22] = "pending"
		}
		if i%2 == 0 { // U–Pb zircon, published at 2σ with tracer and full external uncertainty
			rel := 0.0002 + 0.0006*r.Float64()
			s1 := rel * truth
			row[5] = []string{"upb_idtims", "upb_laicpms", "upb_sims"}[r.IntN(3)]
			if row[5] != "upb_idtims" {
				s1 *= 5
			}
			row[6], row[8], row[9] = "zircon", f(truth+s1*r.NormFloat64(), 4), f(2*s1, 4)
			row[10], row[11], row[12] = f(2*math.Hypot(s1, 0.00015*truth), 4), f(2*math.Hypot(s1, 0.0006*truth), 4), "2"
			row[13] = "ET2535"
			row[17] = "Invented U-Pb Laboratory " + string(rune('A'+p%4))
			row[23] = "invented weighted mean of single-zircon dates"
		} else { // ⁴⁰Ar/³⁹Ar plateau or isochron under one of two calibrations, at 1σ or 2σ
			c := r.IntN(2)
			s1 := (0.001 + 0.002*r.Float64()) * truth
			level := 1 + r.IntN(2)
			row[5] = []string{"arar_plateau", "arar_isochron"}[r.IntN(2)]
			row[6] = []string{"plagioclase", "sanidine", "groundmass"}[r.IntN(3)]
			row[8], row[9], row[12] = f(recalc(truth+s1*r.NormFloat64(), c), 4), f(float64(level)*s1, 4), strconv.Itoa(level)
			row[14], row[15], row[16] = calibrations[c].monitor, f(calibrations[c].tsMa, 3), strconv.FormatFloat(calibrations[c].lambda, 'e', 4, 64)
			row[17] = "Invented Argon Laboratory " + string(rune('A'+p%3))
			row[23] = "invented plateau"
		}
		if err := w.Write(row); err != nil {
			return err
		}
	}
	return nil
}

// sectionModel is the invented age model of a section: age = baseMa − rateMaPerM·height, samples every
// stepM metres, an Hg anomaly and a carbon-isotope excursion between the heights given.
type sectionModel struct {
	baseMa, rateMaPerM, stepM float64
	topM                      float64
	anomalyM                  [2]float64
}

func section(s Sizes, i int) sectionModel {
	r := rng(s.Seed, 100+uint64(i))
	m := sectionModel{baseMa: provinceAgeMa(i%s.Provinces) + 0.9, rateMaPerM: 0.008 + 0.008*r.Float64(), stepM: 0.25}
	m.topM = m.stepM * float64(max(s.SamplesPerSection, 40))
	a := m.topM * (0.3 + 0.3*r.Float64())
	m.anomalyM = [2]float64{a, a + m.topM*0.1}
	return m
}

func writeTies(w *csv.Writer, s Sizes, i, n int, m sectionModel) error {
	r := rng(s.Seed, 1000+uint64(i))
	w.Write([]string{"label", "height_m", "kind", "distribution", "age_ma", "sigma_ma", "sigma_level", "age_min_ma", "age_max_ma", "date_sample_code", "notes"})
	for k := range n {
		h := m.topM * (float64(k) + 0.5) / float64(n)
		age := m.baseMa - m.rateMaPerM*h
		if k%3 == 2 {
			w.Write([]string{fmt.Sprintf("Invented zone Z%02d-%d (base)", i+1, k+1), f(h, 2), "biostratigraphic", "uniform", "", "", "",
				f(age-0.15, 3), f(age+0.15, 3), "", "invented biozone"})
			continue
		}
		s1 := 0.01 + 0.02*r.Float64()
		w.Write([]string{fmt.Sprintf("Invented ash %02d-%d", i+1, k+1), f(h, 2), "radiometric", "normal",
			f(age+s1*r.NormFloat64(), 4), f(2*s1, 4), "2", "", "", "", "invented ash bed"})
	}
	return nil
}

func writeSamples(w *csv.Writer, s Sizes, i int, m sectionModel) error {
	r := rng(s.Seed, 2000+uint64(i))
	w.Write([]string{"sample", "height_m", "hg_ppb", "hg_sigma_ppb", "toc_wt_pct", "d13c_org_permil"})
	for k := range s.SamplesPerSection {
		h := m.stepM*float64(k) + 0.1*r.Float64()
		in := h >= m.anomalyM[0] && h <= m.anomalyM[1]
		hg := 30 + 10*r.Float64()
		d13 := -26.5 + 0.3*r.NormFloat64()
		if in {
			hg *= 3 + 2*r.Float64()
			d13 -= 2.5
		}
		w.Write([]string{fmt.Sprintf("LS%02d-%04d", i+1, k+1), f(h, 2), f(hg, 1), f(hg*0.05, 1), f(0.5+2.5*r.Float64(), 3), f(d13, 2)})
	}
	return nil
}

func writeEvents(w *csv.Writer, s Sizes, i, n int, m sectionModel) error {
	kinds := []string{"hg_anomaly", "cie", "cie_onset", "extinction", "anoxia"}
	w.Write([]string{"name", "kind", "base_height_m", "top_height_m", "notes"})
	for k := range n {
		kind := kinds[k%len(kinds)]
		base := m.anomalyM[0] + m.topM*0.02*float64(k)
		top := f(base+m.topM*0.05, 2)
		if kind == "cie_onset" || kind == "extinction" {
			top = ""
		}
		w.Write([]string{fmt.Sprintf("Invented event %d (%s)", k+1, kind), kind, f(base, 2), top, "invented event of the large demo"})
	}
	return nil
}
