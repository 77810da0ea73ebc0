// Command gen writes coeval's INVENTED demo scenario: a compilation of four fictional large igneous
// provinces at different ages — the Hvarn Plateau Basalts (two eruptive pulses, ≈155.4 and 154.7 Ma),
// the Korrovask Traps (≈167.6 Ma) and two provinces whose pulses overlap in age, the Veldrith
// Plateau Basalts and the Ymberlaine Sill Complex (≈196.4 Ma) — their dates under several ⁴⁰Ar/³⁹Ar
// calibrations, and five fictional sedimentary sections: three record the Hvarn event, one the
// Korrovask event and one an event that either of the two ≈196.4 Ma provinces could explain.
// Nothing in the output is real data.
//
// The first province, its units and dates and the first three sections were the whole scenario
// once; the later parts are appended after them with random streams of their own, so those first
// rows stay byte for byte as they were.
//
// Usage:
//
//	go run ./testdata/demo/gen -out testdata/demo [-seed 1554]
//
// The output is a pure function of the seed (for a given Go release): running the command twice
// writes byte-identical files. The file formats are those of coeval's CSV import (formats v1).
package main

import (
	"encoding/csv"
	"flag"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
)

const (
	defaultSeed = 1554

	provinceName = "Hvarn Plateau Basalts (invented)"

	// U–Pb systematic terms, relative 2σ: tracer calibration and λ238 (REFERENCES §1–2).
	relTracer2s = 0.0003
	relLambda2s = 0.00107
	tracerName  = "ET2535"

	// True (absolute-scale) timing of the sedimentary record, Ma.
	hgOnsetMa      = 155.40 // volcanic Hg starts reaching the basins
	hgEndMa        = 155.29 // Hg loading back to ≈ background
	cieOnsetMa     = 155.39 // negative δ¹³C shift begins
	cieEndMa       = 155.14 // δ¹³C recovered
	extinctionMa   = 155.37 // turnover horizon (Mornesk Cliffs only)
	oxKimBoundary  = 154.8  // base Kimmeridgian, ICS chart 2024/12
	oxKimBoundaryU = 0.8    // its ± on the chart (taken as 2σ)
)

// calibration is a ⁴⁰Ar/³⁹Ar calibration: monitor, monitor age and total ⁴⁰K decay constant.
// sigTs and sigLambda (1σ) are used only to write a full external uncertainty; zero means the
// publication did not report one.
type calibration struct {
	monitor   string
	tsMa      float64
	lambda    float64 // a⁻¹
	sigTsMa   float64
	sigLambda float64
}

// The calibration sets of REFERENCES §3. The absolute scale of the scenario is Renne et al. (2011).
func calAbsolute() calibration { return calibration{"FCs", 28.294, 5.5305e-10, 0, 0} }
func calSJ77() calibration     { return calibration{"FCs", 28.02, 5.543e-10, 0, 0} }
func calKuiper() calibration   { return calibration{"FCs", 28.201, 5.463e-10, 0.023, 0.0535e-10} }
func calRenne10() calibration  { return calibration{"FCs", 28.305, 5.5492e-10, 0, 0} }

// recalc moves a ⁴⁰Ar/³⁹Ar age from one calibration to another, keeping the sample/monitor ratio
// (REFERENCES §3): t' = (1/λ')·ln[1 + (e^{λ' t_s'} − 1)·(e^{λ t} − 1)/(e^{λ t_s} − 1)].
// The same expression with the calibrations swapped is its exact inverse.
func recalc(tMa float64, from, to calibration) float64 {
	ratio := math.Expm1(from.lambda*tMa*1e6) / math.Expm1(from.lambda*from.tsMa*1e6)
	return math.Log1p(math.Expm1(to.lambda*to.tsMa*1e6)*ratio) / to.lambda / 1e6
}

// fullExternal adds the monitor-age and decay-constant terms (1σ, independent) to a 1σ analytical
// uncertainty of an age published under calibration c (partial derivatives of REFERENCES §3).
func fullExternal(tMa, sigAn float64, c calibration) float64 {
	l, t, ts := c.lambda, tMa*1e6, c.tsMa*1e6
	e := math.Expm1(l * ts)
	r := math.Expm1(l*t) / e
	d := 1 + e*r
	dTs := r * math.Exp(l*ts) / d
	dL := -t/l + r*ts*math.Exp(l*ts)/(l*d) // a per a⁻¹
	a := dTs * c.sigTsMa
	b := dL * c.sigLambda / 1e6
	return math.Sqrt(sigAn*sigAn + a*a + b*b)
}

// publication is an invented paper: who, where, and how it reported its dates.
type publication struct {
	lab, journal string
	year         int
	doi          string
	method       string // upb_idtims or arar_plateau
	sigmaLevel   int
	cal          calibration // Ar/Ar: the calibration the ages were computed with
	noMonitor    bool        // Ar/Ar: monitor details not reported (dates "not recalculable")
	campaign     string      // sample-code prefix, e.g. "HV-12"
	pending      bool        // dates of this paper await review
}

func (p publication) citation() string {
	return fmt.Sprintf("Invented demo data: %s (%d), %s", p.lab, p.year, p.journal)
}

// Publication indices.
const (
	pubQ19 = iota // U–Pb zircon, pulse 1
	pubE22        // U–Pb baddeleyite, sills and dykes
	pubS06        // Ar/Ar, FCs 28.02 / SJ77, 1σ
	pubD16        // Ar/Ar, FCs 28.201 / Min 2000, with full external
	pubD21        // Ar/Ar, FCs 28.294 / Renne 2011
	pubM98        // Ar/Ar without monitor details
	pubQ24        // U–Pb zircon, pulse 2
	pubE23        // U–Pb zircon, ash beds in the sections
	// Appended for the later provinces and sections (indices continue; the first eight are unchanged).
	pubL20 // U–Pb zircon and baddeleyite, Korrovask Traps
	pubC15 // Ar/Ar, FCs 28.305 / Renne 2010, Korrovask and Veldrith
	pubC09 // Ar/Ar, FCs 28.02 / SJ77, 2σ
	pubK18 // Ar/Ar, FCs 28.201 / Min 2000, with full external (excess-argon unit)
	pubL22 // U–Pb zircon and baddeleyite, Veldrith and Ymberlaine
	pubT24 // Ar/Ar, FCs 28.201 / Min 2000, Ymberlaine sills, awaiting review
	pubL23 // U–Pb zircon, ash beds of the later sections
)

func publications() []publication {
	doi := func(n int) string { return fmt.Sprintf("10.5555/coeval-demo.%04d", n) }
	return []publication{
		pubQ19: {lab: "Quartzline U-Pb Laboratory", journal: "Demo Geochronology 4:101–118", year: 2019,
			doi: doi(1), method: "upb_idtims", sigmaLevel: 2, campaign: "HV-12"},
		pubE22: {lab: "Ember Ridge Isotope Group", journal: "Journal of Invented Volcanology 12:7–29", year: 2022,
			doi: doi(2), method: "upb_idtims", sigmaLevel: 2, campaign: "HV-17"},
		pubS06: {lab: "Sable Argon Facility", journal: "Demo Geochronology 1:1–12", year: 2006,
			doi: doi(3), method: "arar_plateau", sigmaLevel: 1, cal: calSJ77(), campaign: "HV-03"},
		pubD16: {lab: "Driftglass Argon Laboratory", journal: "Bulletin of Demo Geoscience 88:230–251", year: 2016,
			doi: doi(4), method: "arar_plateau", sigmaLevel: 2, cal: calKuiper(), campaign: "HV-14"},
		pubD21: {lab: "Driftglass Argon Laboratory", journal: "Demo Geochronology 9:77–90", year: 2021,
			doi: doi(5), method: "arar_plateau", sigmaLevel: 2, cal: calAbsolute(), campaign: "HV-19"},
		pubM98: {lab: "Hvarn Mapping Consortium", journal: "Invented Survey Reports 31:1–40", year: 1998,
			doi: doi(6), method: "arar_plateau", sigmaLevel: 2, cal: calSJ77(), noMonitor: true, campaign: "HV-95", pending: true},
		pubQ24: {lab: "Quartzline U-Pb Laboratory", journal: "Demo Geochronology 12:1–19", year: 2024,
			doi: doi(7), method: "upb_idtims", sigmaLevel: 2, campaign: "HV-21"},
		pubE23: {lab: "Ember Ridge Isotope Group", journal: "Invented Stratigraphy Letters 5:12–20", year: 2023,
			doi: doi(8), method: "upb_idtims", sigmaLevel: 2},
		pubL20: {lab: "Larchmere Geochronology Centre", journal: "Demo Geochronology 10:40–61", year: 2020,
			doi: doi(9), method: "upb_idtims", sigmaLevel: 2, campaign: "KV-18"},
		pubC15: {lab: "Cindervale Noble Gas Laboratory", journal: "Journal of Invented Volcanology 15:88–104", year: 2015,
			doi: doi(10), method: "arar_plateau", sigmaLevel: 2, cal: calRenne10(), campaign: "CV-13"},
		pubC09: {lab: "Cindervale Noble Gas Laboratory", journal: "Invented Survey Reports 42:5–33", year: 2009,
			doi: doi(11), method: "arar_plateau", sigmaLevel: 2, cal: calSJ77(), campaign: "CV-07"},
		pubK18: {lab: "Driftglass Argon Laboratory", journal: "Bulletin of Demo Geoscience 91:14–30", year: 2018,
			doi: doi(12), method: "arar_plateau", sigmaLevel: 2, cal: calKuiper(), campaign: "KV-16"},
		pubL22: {lab: "Larchmere Geochronology Centre", journal: "Demo Geochronology 11:203–226", year: 2022,
			doi: doi(13), method: "upb_idtims", sigmaLevel: 2, campaign: "CY-20"},
		pubT24: {lab: "Tallowmere Argon Group", journal: "Invented Stratigraphy Letters 8:1–15", year: 2024,
			doi: doi(14), method: "arar_plateau", sigmaLevel: 2, cal: calKuiper(), campaign: "YS-23"},
		pubL23: {lab: "Larchmere Geochronology Centre", journal: "Invented Stratigraphy Letters 7:55–70", year: 2023,
			doi: doi(15), method: "upb_idtims", sigmaLevel: 2},
	}
}

// group is a set of dates of one unit from one publication.
type group struct {
	pub      int
	material string
	n        int
	tail     int // dates given an older tail (inherited zircon for U–Pb, excess argon for Ar/Ar)
	reuse    bool
	pending  int // the first `pending` dates of the group await review
}

// unit is an invented eruptive or intrusive unit with its true (absolute-scale) age.
type unit struct {
	province     string  // set by provinceUnits
	cLat, cLon   float64 // the province's reference point, set by provinceUnits
	name, kind   string
	pos          int     // 0 = no pile position (intrusions)
	trueMa       float64 // eruption/emplacement age on the U–Pb (absolute) scale
	vol, volSig  float64 // km³, 1σ; 0 = unknown
	notes        string
	groups       []group
	highScatter  bool
	interpretAs  string
	latOff, lonO float64
}

func units() []unit {
	z, bd, pl, gm := "zircon", "baddeleyite", "plagioclase", "groundmass"
	return []unit{
		// Pulse 1 (≈155.40 Ma, Oxfordian).
		{name: "Ulvaskar Flow Group", kind: "flow_group", pos: 1, trueMa: 155.480, vol: 1800, volSig: 350,
			notes:  "Invented unit: basal tholeiitic flows resting on the invented Hvarn sandstone.",
			groups: []group{{pub: pubQ19, material: z, n: 3}}},
		{name: "Merrowind Flow", kind: "flow", pos: 2, trueMa: 155.455, vol: 420, volSig: 90,
			notes:  "Invented unit: single compound pahoehoe flow.",
			groups: []group{{pub: pubS06, material: pl, n: 2}}},
		{name: "Brennholt Flow Group", kind: "flow_group", pos: 3, trueMa: 155.430, vol: 2600, volSig: 500,
			notes:  "Invented unit: thick sheet flows with pegmatoidal segregations (zircon-bearing).",
			groups: []group{{pub: pubQ19, material: z, n: 6, tail: 2}}, highScatter: true},
		{name: "Kvastrel Flow", kind: "flow", pos: 4, trueMa: 155.410, vol: 350, volSig: 70,
			notes:  "Invented unit.",
			groups: []group{{pub: pubD16, material: gm, n: 3}}},
		{name: "Tindravik Flow Group", kind: "flow_group", pos: 5, trueMa: 155.395, vol: 3100, volSig: 600,
			notes: "Invented unit: the most voluminous flow group of the first pulse; dated by U-Pb and Ar/Ar.",
			groups: []group{{pub: pubQ19, material: z, n: 3}, {pub: pubS06, material: pl, n: 1},
				{pub: pubD16, material: pl, n: 2, reuse: true}}},
		{name: "Lommerset Flows", kind: "flow_group", pos: 6, trueMa: 155.370, vol: 900, volSig: 200,
			notes:  "Invented unit.",
			groups: []group{{pub: pubS06, material: gm, n: 2}, {pub: pubM98, material: gm, n: 1, pending: 1}}},
		{name: "Haldruna Flow", kind: "flow", pos: 7, trueMa: 155.345, vol: 260, volSig: 60,
			notes:  "Invented unit: last flow of the first pulse, capped by a red bole.",
			groups: []group{{pub: pubQ19, material: z, n: 1}}},
		{name: "Myrskel Sill", kind: "sill", trueMa: 155.420, vol: 150, volSig: 40,
			notes:  "Invented unit: dolerite sill in the pre-volcanic sediments.",
			groups: []group{{pub: pubE22, material: bd, n: 4}}, interpretAs: "crystallisation"},
		{name: "Vardrupel Dyke Swarm", kind: "dyke", trueMa: 155.385,
			notes:  "Invented unit: feeder dykes of the first pulse; volume not estimated.",
			groups: []group{{pub: pubE22, material: bd, n: 3}}, interpretAs: "crystallisation"},
		// Pulse 2 (≈154.70 Ma, across the Oxfordian–Kimmeridgian boundary).
		{name: "Rimhallow Flow Group", kind: "flow_group", pos: 8, trueMa: 154.810, vol: 2200, volSig: 450,
			notes:  "Invented unit: first flows after the quiet interval, above a weathering horizon.",
			groups: []group{{pub: pubQ24, material: z, n: 4}}},
		{name: "Seltravik Flow", kind: "flow", pos: 9, trueMa: 154.770, vol: 380, volSig: 80,
			notes:  "Invented unit.",
			groups: []group{{pub: pubD21, material: pl, n: 2, pending: 1}, {pub: pubS06, material: pl, n: 1}}},
		{name: "Gorsknes Flow Group", kind: "flow_group", pos: 10, trueMa: 154.735, vol: 2900, volSig: 550,
			notes:  "Invented unit.",
			groups: []group{{pub: pubQ24, material: z, n: 5, pending: 1}}},
		{name: "Nordhaltern Flow", kind: "flow", pos: 11, trueMa: 154.700, vol: 310, volSig: 70,
			notes:  "Invented unit.",
			groups: []group{{pub: pubD16, material: gm, n: 3}}},
		{name: "Krakstenvik Flows", kind: "flow_group", pos: 12, trueMa: 154.665, vol: 1200, volSig: 250,
			notes: "Invented unit.",
			groups: []group{{pub: pubD16, material: pl, n: 2}, {pub: pubS06, material: pl, n: 1},
				{pub: pubM98, material: gm, n: 1, pending: 1}}},
		{name: "Toppvarden Flow", kind: "flow", pos: 13, trueMa: 154.620, vol: 500, volSig: 110,
			notes:  "Invented unit: youngest preserved flow; top eroded.",
			groups: []group{{pub: pubQ24, material: z, n: 3}}},
		{name: "Ulvhamar Sill", kind: "sill", trueMa: 154.720, vol: 180, volSig: 50,
			notes:  "Invented unit.",
			groups: []group{{pub: pubE22, material: bd, n: 4}}, interpretAs: "crystallisation"},
		{name: "Brattgangel Dyke", kind: "dyke", trueMa: 154.680,
			notes:  "Invented unit: single feeder dyke; volume not estimated.",
			groups: []group{{pub: pubE22, material: bd, n: 3}}, interpretAs: "crystallisation"},
	}
}

// Province reference point (deliberately open South Atlantic: not a real locality).
const provLat, provLon = -47.60, -26.40

// provinceSpec is one of the provinces appended after the Hvarn Plateau Basalts.
type provinceSpec struct {
	name, description string
	lat, lon          float64  // reference point, in open ocean
	pole              []string // pole_latitude, pole_longitude, pole_a95, pole_source; nil: no pole
	units             []unit
}

// Invented palaeomagnetic poles (not real data), placed so that the units' palaeolatitudes computed from
// them agree with those entered for the sections that record the province. The Ymberlaine Sill Complex has
// none, so the map shows a province without a pole.
var (
	hvarnPole     = []string{"9.8", "-47.0", "6.2", "Invented pole for the demo (not real data), placed to agree with the palaeolatitudes entered for the Vedholmen-1, Skarfell and Mornesk sections"}
	korrovaskPole = []string{"87.5", "14.0", "4.1", "Invented pole for the demo (not real data), placed to agree with the palaeolatitude entered for Quennard Gill"}
	veldrithPole  = []string{"82.5", "-62.5", "8.5", "Invented pole for the demo (not real data), placed to agree with the palaeolatitude entered for Brisvane-3 Core"}
)

// laterProvinces are the provinces appended after the first. Their ages avoid every well-known real
// large igneous province and major event (see README): the Korrovask Traps lie in the Bathonian
// (≈167.6 Ma), the Veldrith Plateau Basalts and the Ymberlaine Sill Complex in the Sinemurian
// (≈196.4 Ma), their pulses overlapping on purpose.
func laterProvinces() []provinceSpec {
	z, bd, pl, gm := "zircon", "baddeleyite", "plagioclase", "groundmass"
	return []provinceSpec{
		{name: "Korrovask Traps (invented)", lat: -40.20, lon: -128.60, pole: korrovaskPole,
			description: "INVENTED demo province (not real data): a fictional flood-basalt province with one eruptive pulse " +
				"at about 167.6 Ma (Bathonian), recorded by the Quennard Gill section. Coordinates deliberately point at open ocean " +
				"(South Pacific).",
			units: []unit{
				{name: "Eskelvar Flow Group", kind: "flow_group", pos: 1, trueMa: 167.720, vol: 1500, volSig: 300,
					notes:  "Invented unit: basal flows of the Korrovask Traps.",
					groups: []group{{pub: pubL20, material: z, n: 3}}},
				{name: "Tarrowdune Flow", kind: "flow", pos: 2, trueMa: 167.660, vol: 380, volSig: 80,
					notes:  "Invented unit: dated in one laboratory under two Ar/Ar calibrations.",
					groups: []group{{pub: pubC15, material: pl, n: 2}, {pub: pubC09, material: pl, n: 1}}},
				{name: "Hollinvask Flow Group", kind: "flow_group", pos: 3, trueMa: 167.600, vol: 2700, volSig: 500,
					notes:  "Invented unit: the most voluminous flow group of the Korrovask Traps; dated by U-Pb and Ar/Ar.",
					groups: []group{{pub: pubL20, material: z, n: 3}, {pub: pubC15, material: pl, n: 2, reuse: true}}},
				{name: "Gravenmere Flows", kind: "flow_group", pos: 4, trueMa: 167.540, vol: 900, volSig: 200,
					notes:  "Invented unit: two plateaus with excess argon (older than the rest).",
					groups: []group{{pub: pubK18, material: gm, n: 4, tail: 2}}, highScatter: true},
				{name: "Sundrell Flow", kind: "flow", pos: 5, trueMa: 167.470, vol: 300, volSig: 70,
					notes:  "Invented unit: youngest flow of the Korrovask Traps.",
					groups: []group{{pub: pubL20, material: z, n: 2}}},
				{name: "Vossmark Sill", kind: "sill", trueMa: 167.650, vol: 120, volSig: 30,
					notes:  "Invented unit: dolerite sill below the lava pile.",
					groups: []group{{pub: pubL20, material: bd, n: 3}}, interpretAs: "crystallisation"},
			}},
		{name: "Veldrith Plateau Basalts (invented)", lat: -31.50, lon: 78.20, pole: veldrithPole,
			description: "INVENTED demo province (not real data): a fictional flood-basalt province with one eruptive pulse " +
				"at about 196.45 Ma (Sinemurian) that overlaps the pulse of the invented Ymberlaine Sill Complex, so an event " +
				"of that age has two candidate provinces. Coordinates deliberately point at open ocean (Indian Ocean).",
			units: []unit{
				{name: "Aldercrag Flow Group", kind: "flow_group", pos: 1, trueMa: 196.580, vol: 2100, volSig: 400,
					notes:  "Invented unit: basal flows of the Veldrith Plateau Basalts.",
					groups: []group{{pub: pubL22, material: z, n: 3}}},
				{name: "Merrivane Flow", kind: "flow", pos: 2, trueMa: 196.510, vol: 450, volSig: 90,
					notes:  "Invented unit.",
					groups: []group{{pub: pubC15, material: pl, n: 2}}},
				{name: "Fennick Flow Group", kind: "flow_group", pos: 3, trueMa: 196.450, vol: 2400, volSig: 450,
					notes:  "Invented unit.",
					groups: []group{{pub: pubL22, material: z, n: 3}}},
				{name: "Thessrow Flow", kind: "flow", pos: 4, trueMa: 196.380, vol: 400, volSig: 90,
					notes:  "Invented unit: Ar/Ar dates under two calibrations that agree only after recalculation.",
					groups: []group{{pub: pubC09, material: pl, n: 2}, {pub: pubK18, material: gm, n: 1}}},
				{name: "Wrenhallow Flows", kind: "flow_group", pos: 5, trueMa: 196.320, vol: 800, volSig: 180,
					notes:  "Invented unit: youngest flows of the Veldrith Plateau Basalts.",
					groups: []group{{pub: pubL22, material: z, n: 2}}},
				{name: "Brimlock Dyke", kind: "dyke", trueMa: 196.470,
					notes:  "Invented unit: feeder dyke; volume not estimated.",
					groups: []group{{pub: pubL22, material: bd, n: 2}}, interpretAs: "crystallisation"},
			}},
		{name: "Ymberlaine Sill Complex (invented)", lat: -23.80, lon: 90.60,
			description: "INVENTED demo province (not real data): a fictional sill province with one pulse of intrusion " +
				"at about 196.35 Ma (Sinemurian), overlapping the pulse of the invented Veldrith Plateau Basalts. " +
				"Coordinates deliberately point at open ocean (Indian Ocean).",
			units: []unit{
				{name: "Glaswick Sill", kind: "sill", trueMa: 196.460, vol: 300, volSig: 70,
					notes:  "Invented unit: deepest sill of the complex.",
					groups: []group{{pub: pubL22, material: bd, n: 3}}, interpretAs: "crystallisation"},
				{name: "Orrenfall Sill", kind: "sill", trueMa: 196.400, vol: 650, volSig: 140,
					notes:  "Invented unit: zircon-bearing differentiated sill.",
					groups: []group{{pub: pubL22, material: z, n: 3}}, interpretAs: "crystallisation"},
				{name: "Pellacombe Sill", kind: "sill", trueMa: 196.340, vol: 420, volSig: 100,
					notes:  "Invented unit: dated by U-Pb and Ar/Ar.",
					groups: []group{{pub: pubL22, material: bd, n: 2}, {pub: pubC15, material: pl, n: 2}}, interpretAs: "crystallisation"},
				{name: "Hathermoss Sill", kind: "sill", trueMa: 196.280, vol: 380, volSig: 90,
					notes:  "Invented unit.",
					groups: []group{{pub: pubL22, material: bd, n: 3}}, interpretAs: "crystallisation"},
				{name: "Quarrendyke Sill", kind: "sill", trueMa: 196.220, vol: 200, volSig: 50,
					notes:  "Invented unit: shallowest sill; one date awaits review.",
					groups: []group{{pub: pubT24, material: pl, n: 2, pending: 1}}, interpretAs: "crystallisation"},
			}},
	}
}

func datesHeader() []string {
	return []string{"province", "unit", "section", "height_m", "sample_code", "method", "material",
		"interpretation", "age_ma", "sigma_ma", "sigma_y_ma", "sigma_z_ma", "sigma_level", "tracer", "monitor",
		"monitor_age_ma", "lambda_per_a", "laboratory", "citation", "doi", "latitude", "longitude",
		"review_state", "notes"}
}

// dateRow is one row of dates.csv before formatting.
type dateRow struct {
	province          string
	unit, section     string
	heightM           float64
	sampleCode        string
	pub               publication
	material, interp  string
	ageMa, sig2       float64 // published age and 2σ analytical uncertainty
	sigZ1             float64 // Ar/Ar full external, 1σ (0 = not reported)
	lat, lon          float64
	pending           bool
	notes             string
	absMa, absSigma1  float64 // on the absolute scale, for the generator's own checks
	recalculable, upb bool
}

func (d dateRow) record() []string {
	level := d.pub.sigmaLevel
	k := 1.0
	if level == 1 {
		k = 0.5
	}
	r := map[string]string{
		"unit": d.unit, "section": d.section, "sample_code": d.sampleCode, "method": d.pub.method,
		"material": d.material, "interpretation": d.interp, "age_ma": f(d.ageMa, 3), "sigma_ma": f(d.sig2*k, 3),
		"sigma_level": strconv.Itoa(level), "laboratory": d.pub.lab + " (invented)", "citation": d.pub.citation(),
		"doi": d.pub.doi, "latitude": f(d.lat, 3), "longitude": f(d.lon, 3), "review_state": "accepted",
		"notes": d.notes,
	}
	if d.unit != "" {
		r["province"] = d.province
	} else {
		r["height_m"] = f(d.heightM, 2)
	}
	if d.pending {
		r["review_state"] = "pending"
	}
	if d.upb {
		y2 := math.Hypot(d.sig2, relTracer2s*d.ageMa)
		z2 := math.Hypot(y2, relLambda2s*d.ageMa)
		r["sigma_y_ma"], r["sigma_z_ma"], r["tracer"] = f(y2, 3), f(z2, 3), tracerName
	} else {
		if !d.pub.noMonitor {
			r["monitor"] = d.pub.cal.monitor
			r["monitor_age_ma"] = strconv.FormatFloat(d.pub.cal.tsMa, 'f', -1, 64)
			r["lambda_per_a"] = strconv.FormatFloat(d.pub.cal.lambda, 'g', -1, 64)
		}
		if d.sigZ1 > 0 {
			r["sigma_z_ma"] = f(d.sigZ1*float64(level), 3)
		}
	}
	hdr := datesHeader()
	out := make([]string, len(hdr))
	for i, h := range hdr {
		out[i] = r[h]
	}
	return out
}

// drawUPb returns one U–Pb ID-TIMS weighted-mean date of true age t.
func drawUPb(rng *rand.Rand, t float64, minRel, maxRel float64) (age, x2 float64) {
	x2 = round(t*uniform(rng, minRel, maxRel)/100, 3)
	age = round(t+rng.NormFloat64()*x2/2, 3)
	return age, x2
}

// drawUnit draws all dates of a unit (without sample codes). The draw is repeated until the unit
// behaves as designed: replicate units agree with their truth with an MSWD near 1, the
// high-scatter unit does not (MSWD > 5).
func drawUnit(rng *rand.Rand, u unit, pubs []publication) []dateRow {
	abs := calAbsolute()
	var rows []dateRow
	for try := 0; try < 2000; try++ {
		rows = rows[:0]
		for _, g := range u.groups {
			p := pubs[g.pub]
			for k := 0; k < g.n; k++ {
				d := dateRow{province: u.province, unit: u.name, pub: p, material: g.material, interp: "eruption",
					pending: k < g.pending || p.pending}
				if u.interpretAs != "" && p.method == "upb_idtims" {
					d.interp = u.interpretAs // an Ar/Ar plateau of an intrusion dates its emplacement
				}
				d.lat = u.cLat + u.latOff + rng.NormFloat64()*0.02
				d.lon = u.cLon + u.lonO + rng.NormFloat64()*0.03
				if p.method == "upb_idtims" {
					lo, hi := 0.03, 0.08
					if g.material == "baddeleyite" {
						lo = 0.05
					}
					d.upb = true
					d.ageMa, d.sig2 = drawUPb(rng, u.trueMa, lo, hi)
					if k < g.tail {
						d.ageMa = round(d.ageMa+uniform(rng, 0.08, 0.22), 3)
					}
					d.absMa, d.absSigma1, d.recalculable = d.ageMa, d.sig2/2, true
					nz := 4 + rng.IntN(5)
					d.notes = fmt.Sprintf("weighted mean of %d single-zircon CA-ID-TIMS 206Pb/238U dates", nz)
					if g.material == "baddeleyite" {
						d.notes = fmt.Sprintf("weighted mean of %d single-baddeleyite ID-TIMS 206Pb/238U dates", nz)
					}
				} else {
					pubAge := recalc(u.trueMa, abs, p.cal)
					s2 := round(pubAge*uniform(rng, 0.2, 0.6)/100, 3)
					if p.sigmaLevel == 1 {
						s2 = 2 * round(s2/2, 3) // published at 1σ with three decimals
					}
					d.ageMa, d.sig2 = round(pubAge+rng.NormFloat64()*s2/2, 3), s2
					if k < g.tail { // excess argon: an older plateau age
						d.ageMa = round(d.ageMa+pubAge*uniform(rng, 0.8, 1.6)/100, 3)
					}
					if p.cal.sigTsMa > 0 {
						d.sigZ1 = fullExternal(d.ageMa, s2/2, p.cal)
					}
					d.recalculable = !p.noMonitor
					d.absMa = recalc(d.ageMa, p.cal, abs)
					d.absSigma1 = (recalc(d.ageMa+s2/2, p.cal, abs) - recalc(d.ageMa-s2/2, p.cal, abs)) / 2
					d.notes = fmt.Sprintf("plateau of %d steps, %d %% of 39Ar released", 6+rng.IntN(7), 60+rng.IntN(36))
					if p.noMonitor {
						d.notes += "; monitor and decay constant not reported"
					}
				}
				rows = append(rows, d)
			}
		}
		if unitAsDesigned(u, rows) {
			return rows
		}
	}
	panic("gen: no acceptable draw for unit " + u.name)
}

func unitAsDesigned(u unit, rows []dateRow) bool {
	var x, s []float64
	for _, d := range rows {
		if d.recalculable {
			x, s = append(x, d.absMa), append(s, d.absSigma1)
		}
	}
	mean, se, mswd := weightedMean(x, s)
	if u.highScatter {
		return mswd > 5
	}
	if math.Abs(mean-u.trueMa) > 2*se {
		return false
	}
	if len(x) < 2 {
		return true
	}
	f := float64(len(x) - 1)
	hi := math.Min(2.0, 1+2*math.Sqrt(2/f))
	lo := 0.15
	if f == 1 {
		lo = 0.02
	}
	return mswd >= lo && mswd <= hi
}

func weightedMean(x, s []float64) (mean, se, mswd float64) {
	var sw, swx float64
	for i := range x {
		w := 1 / (s[i] * s[i])
		sw += w
		swx += w * x[i]
	}
	mean = swx / sw
	var chi float64
	for i := range x {
		chi += (x[i] - mean) * (x[i] - mean) / (s[i] * s[i])
	}
	if len(x) > 1 {
		mswd = chi / float64(len(x)-1)
	}
	return mean, 1 / math.Sqrt(sw), mswd
}

// ageModel is a section's true age–height history: ages at the boundaries of 0.5-m cells.
type ageModel struct {
	cell float64
	ages []float64
}

type anchor struct{ h, ageMa float64 }

// buildAgeModel passes exactly through the anchors; within each segment the time is shared between
// cells with log-normal weights, so deposition is roughly linear with some variation.
func buildAgeModel(rng *rand.Rand, anchors []anchor) ageModel {
	m := ageModel{cell: 0.5, ages: []float64{anchors[0].ageMa}}
	for i := 1; i < len(anchors); i++ {
		n := int(math.Round((anchors[i].h - anchors[i-1].h) / m.cell))
		w := make([]float64, n)
		var sum float64
		for j := range w {
			w[j] = math.Exp(0.35 * rng.NormFloat64())
			sum += w[j]
		}
		span := anchors[i-1].ageMa - anchors[i].ageMa
		a := anchors[i-1].ageMa
		for j := range w {
			a -= span * w[j] / sum
			m.ages = append(m.ages, a)
		}
		m.ages[len(m.ages)-1] = anchors[i].ageMa
	}
	return m
}

func (m ageModel) at(h float64) float64 {
	i := int(h / m.cell)
	if i >= len(m.ages)-1 {
		i = len(m.ages) - 2
	}
	fr := (h - float64(i)*m.cell) / m.cell
	return m.ages[i] + fr*(m.ages[i+1]-m.ages[i])
}

// heightOf inverts the (monotone) model.
func (m ageModel) heightOf(ageMa float64) float64 {
	for i := 0; i+1 < len(m.ages); i++ {
		if m.ages[i] >= ageMa && ageMa >= m.ages[i+1] {
			return (float64(i) + (m.ages[i]-ageMa)/(m.ages[i]-m.ages[i+1])) * m.cell
		}
	}
	panic(fmt.Sprintf("gen: age %.3f outside the section", ageMa))
}

// hgLoading is the volcanic Hg supply through time (0 before the onset at hgOn, peak 1).
func hgLoading(t, hgOn float64) float64 {
	x := hgOn - t
	switch {
	case x < 0:
		return 0
	case x < 0.025:
		return x / 0.025
	default:
		return math.Exp(-(x - 0.025) / 0.04)
	}
}

// cieShape is the carbon-isotope excursion through time (0 = background, 1 = full shift), from its
// onset at cieOn to its recovery at cieEnd.
func cieShape(t, cieOn, cieEnd float64) float64 {
	y := cieOn - t
	switch {
	case y < 0:
		return 0
	case y < 0.02:
		return y / 0.02
	case y < 0.10:
		return 1
	case y < cieOn-cieEnd:
		return 1 - (y-0.10)/(cieOn-cieEnd-0.10)
	default:
		return 0
	}
}

// ar1 returns a smooth series with unit marginal variance.
func ar1(rng *rand.Rand, n int, phi float64) []float64 {
	x := make([]float64, n)
	x[0] = rng.NormFloat64()
	for i := 1; i < n; i++ {
		x[i] = phi*x[i-1] + math.Sqrt(1-phi*phi)*rng.NormFloat64()
	}
	return x
}

type sectionStyle int

const (
	clean     sectionStyle = iota // clear Hg/TOC anomaly
	carbonate                     // low-TOC carbonate beds with false Hg/TOC spikes
	organic                       // organic-rich interval masking the Hg rise in Hg/TOC
)

type tieSpec struct {
	label, kind string // kind: ash, biostratigraphic, boundary
	h           float64
	min, max    float64 // biostratigraphic range
	notes       string
}

type section struct {
	name, key, kind   string
	lat, lon, palaeo  float64
	maturity, tocThr  string
	notes             string
	anchors           []anchor
	n                 int
	h0, step, jitter  float64
	codePrefix        string
	hgMethod          string
	hgDL              float64
	style             sectionStyle
	cieShift          float64
	carbBeds          [][2]float64
	ties              []tieSpec
	extinction, bound bool
	// The event the section records (true ages, Ma) and the publication of its ash-bed dates.
	hgOn, hgEnd, cieOn, cieEnd float64
	ashPub                     int
	// tocDips are height intervals where TOC falls (still above the section's TOC threshold) while raw Hg
	// stays at background, so only Hg/TOC rises: an anomaly carried by the host alone.
	tocDips [][2]float64
}

func sections() []section {
	return []section{
		{name: "Vedholmen-1 Core", key: "vedholmen", kind: "core", lat: -45.90, lon: -24.10, palaeo: 31.5,
			maturity: "immature (Tmax 424 °C)",
			notes:    "Invented demo section (the clean one): laminated hemipelagic mudstone; heights = 412.30 m minus core depth.",
			anchors:  []anchor{{0, 155.98}, {25, 155.74}, {50, 155.47}, {70, 155.30}, {95, 155.05}, {120, 154.84}},
			n:        240, h0: 0.25, step: 0.5, codePrefix: "VH", style: clean, cieShift: 3.0,
			hgOn: hgOnsetMa, hgEnd: hgEndMa, cieOn: cieOnsetMa, cieEnd: cieEndMa, ashPub: pubE23,
			hgMethod: "thermal decomposition AAS", hgDL: 2.0,
			ties: []tieSpec{
				{label: "Invented ammonite subzone Hv-D3 (base)", kind: "biostratigraphic", h: 4.0, min: 155.80, max: 156.30,
					notes: "invented biozone; age range from the invented regional zonation"},
				{label: "Ash V-1", kind: "ash", h: 31.6},
				{label: "Ash V-2", kind: "ash", h: 76.4},
				{label: "Ash V-3", kind: "ash", h: 108.2},
			}},
		{name: "Skarfell Creek", key: "skarfell", kind: "outcrop", lat: -44.75, lon: -29.30, palaeo: 33.2,
			maturity: "early mature (Tmax 436 °C)", tocThr: "0.2",
			notes:   "Invented demo section: marl–limestone alternation with carbonate-rich beds (TOC < 0.2 wt%).",
			anchors: []anchor{{0, 155.86}, {30, 155.55}, {45, 155.41}, {60, 155.22}, {90, 154.70}},
			n:       180, h0: 0.25, step: 0.5, jitter: 0.1, codePrefix: "SK", style: carbonate, cieShift: 2.5,
			hgOn: hgOnsetMa, hgEnd: hgEndMa, cieOn: cieOnsetMa, cieEnd: cieEndMa, ashPub: pubE23,
			hgMethod: "direct mercury analyser (thermal decomposition, gold amalgamation, AAS)", hgDL: 2.0,
			carbBeds: [][2]float64{{8.0, 9.6}, {22.5, 24.1}, {35.0, 36.1}, {63.0, 64.6}, {77.0, 78.6}},
			ties: []tieSpec{
				{label: "Ash S-1", kind: "ash", h: 12.4},
				{label: "Ash S-2", kind: "ash", h: 52.7},
				{label: "Invented ammonite zone Hv-E1 (base)", kind: "biostratigraphic", h: 70.0, min: 154.90, max: 155.25,
					notes: "invented biozone; age range from the invented regional zonation"},
				{label: "Oxfordian–Kimmeridgian boundary", kind: "boundary",
					notes: "placed by the invented ammonite succession; age and ± from the ICS chart 2024/12 (± taken as 2σ)"},
			}, bound: true},
		{name: "Mornesk Cliffs", key: "mornesk", kind: "outcrop", lat: -49.20, lon: -21.80, palaeo: 28.9,
			maturity: "immature (Tmax 428 °C)", tocThr: "0.2",
			notes:   "Invented demo section: grey shales with an organic-rich black-shale interval (TOC 5–12 wt%).",
			anchors: []anchor{{0, 155.80}, {24, 155.44}, {34, 155.27}, {60, 154.98}},
			n:       150, h0: 0.2, step: 0.4, jitter: 0.05, codePrefix: "MC", style: organic, cieShift: 3.5,
			hgOn: hgOnsetMa, hgEnd: hgEndMa, cieOn: cieOnsetMa, cieEnd: cieEndMa, ashPub: pubE23,
			hgMethod: "cold-vapour AFS after acid digestion", hgDL: 2.0,
			ties: []tieSpec{
				{label: "Invented bivalve zone Hv-B2 (base)", kind: "biostratigraphic", h: 6.0, min: 155.55, max: 155.95,
					notes: "invented biozone; age range from the invented regional zonation"},
				{label: "Ash M-1", kind: "ash", h: 19.2},
				{label: "Ash M-2", kind: "ash", h: 44.8},
			}, extinction: true},
		// Appended: the sections of the later provinces.
		{name: "Quennard Gill", key: "quennard", kind: "outcrop", lat: -38.10, lon: -123.90, palaeo: -41.5,
			maturity: "immature (Tmax 426 °C)", tocThr: "0.2",
			notes: "Invented demo section: silty mudstone recording the invented Korrovask Traps event; a leaner interval " +
				"(TOC about 0.4–0.55 wt%) below it raises Hg/TOC without any more Hg.",
			anchors: []anchor{{0, 168.10}, {20, 167.86}, {40, 167.58}, {60, 167.33}, {80, 167.06}},
			n:       160, h0: 0.25, step: 0.5, jitter: 0.1, codePrefix: "QG", style: clean, cieShift: 2.2,
			hgOn: 167.62, hgEnd: 167.51, cieOn: 167.61, cieEnd: 167.38, ashPub: pubL23,
			tocDips:  [][2]float64{{12.0, 14.5}},
			hgMethod: "direct mercury analyser (thermal decomposition, gold amalgamation, AAS)", hgDL: 2.0,
			ties: []tieSpec{
				{label: "Invented ammonite zone Kv-A1 (base)", kind: "biostratigraphic", h: 3.0, min: 167.90, max: 168.30,
					notes: "invented biozone; age range from the invented regional zonation"},
				{label: "Ash Q-1", kind: "ash", h: 18.3},
				{label: "Ash Q-2", kind: "ash", h: 50.4},
				{label: "Ash Q-3", kind: "ash", h: 72.0},
			}},
		{name: "Brisvane-3 Core", key: "brisvane", kind: "core", lat: -27.60, lon: 84.70, palaeo: -38.0,
			maturity: "immature (Tmax 422 °C)",
			notes: "Invented demo section: laminated mudstone between the invented Veldrith and Ymberlaine provinces; " +
				"its Hg anomaly falls where both provinces' pulses overlap in age. Heights = 655.00 m minus core depth.",
			anchors: []anchor{{0, 196.95}, {30, 196.62}, {55, 196.33}, {90, 195.96}},
			n:       180, h0: 0.25, step: 0.5, codePrefix: "BV", style: clean, cieShift: 2.8,
			hgOn: 196.42, hgEnd: 196.31, cieOn: 196.41, cieEnd: 196.19, ashPub: pubL23,
			hgMethod: "thermal decomposition AAS", hgDL: 2.0,
			ties: []tieSpec{
				{label: "Invented ammonite subzone Cy-S4 (base)", kind: "biostratigraphic", h: 4.0, min: 196.75, max: 197.15,
					notes: "invented biozone; age range from the invented regional zonation"},
				{label: "Ash B-1", kind: "ash", h: 24.0},
				{label: "Ash B-2", kind: "ash", h: 59.5},
				{label: "Ash B-3", kind: "ash", h: 82.0},
			}},
	}
}

// nFirstSections is the number of sections of the first scenario (the Hvarn sections); their ash-bed
// dates come before the later provinces' dates in dates.csv.
const nFirstSections = 3

type sample struct {
	code string
	h, t float64
}

// sectionOut holds the rows of one section's files.
type sectionOut struct {
	ties, meas, events [][]string
	ashDates           []dateRow
}

func genSection(rng *rand.Rand, s section, pubs []publication) sectionOut {
	m := buildAgeModel(rng, s.anchors)
	var out sectionOut

	// Samples.
	smp := make([]sample, s.n)
	for i := range smp {
		h := s.h0 + float64(i)*s.step
		if s.jitter > 0 {
			h += uniform(rng, -s.jitter, s.jitter)
		}
		h = round(h, 2)
		smp[i] = sample{code: fmt.Sprintf("%s-%03d", s.codePrefix, i+1), h: h, t: m.at(h)}
	}

	// Ties (and the ash-bed dates they link to).
	out.ties = append(out.ties, []string{"label", "height_m", "kind", "distribution", "age_ma", "sigma_ma",
		"sigma_level", "age_min_ma", "age_max_ma", "date_sample_code", "notes"})
	ashN := 0
	prevAge := math.Inf(1)
	for _, ts := range s.ties {
		var rec []string
		var mid float64
		switch ts.kind {
		case "ash":
			ashN++
			code := fmt.Sprintf("%s-ASH%d", s.codePrefix, ashN)
			truth := m.at(ts.h)
			age, x2 := drawUPb(rng, truth, 0.03, 0.05)
			for math.Abs(age-truth) > x2 { // keep the ties within 2σ of the truth
				age, x2 = drawUPb(rng, truth, 0.03, 0.05)
			}
			d := dateRow{section: s.name, heightM: ts.h, sampleCode: code, pub: pubs[s.ashPub], material: "zircon",
				interp: "deposition", ageMa: age, sig2: x2, lat: s.lat, lon: s.lon, upb: true,
				notes: fmt.Sprintf("bentonite at %.2f m; weighted mean of %d single-zircon CA-ID-TIMS dates", ts.h, 5+rng.IntN(4))}
			out.ashDates = append(out.ashDates, d)
			rec = []string{ts.label + " (U-Pb zircon)", f(ts.h, 2), "radiometric", "normal", f(age, 3), f(x2, 3), "2", "", "",
				code, "sigma = X (analytical); Y and Z in the linked date"}
			mid = age
		case "biostratigraphic":
			if t := m.at(ts.h); t < ts.min || t > ts.max {
				panic(fmt.Sprintf("gen: %s: true age %.3f outside %v–%v", s.name, t, ts.min, ts.max))
			}
			rec = []string{ts.label, f(ts.h, 2), "biostratigraphic", "uniform", "", "", "", f(ts.min, 3), f(ts.max, 3), "", ts.notes}
			mid = (ts.min + ts.max) / 2
		case "boundary":
			h := m.heightOf(oxKimBoundary)
			rec = []string{ts.label, f(h, 2), "boundary", "normal", f(oxKimBoundary, 3), f(oxKimBoundaryU, 3), "2", "", "", "", ts.notes}
			mid = oxKimBoundary
		}
		if mid >= prevAge {
			panic("gen: ties of " + s.name + " out of superposition")
		}
		prevAge = mid
		out.ties = append(out.ties, rec)
	}

	// Measurements.
	n := len(smp)
	a1, a2, a3, a4, a5 := ar1(rng, n, 0.7), ar1(rng, n, 0.6), ar1(rng, n, 0.6), ar1(rng, n, 0.7), ar1(rng, n, 0.8)
	header := []string{"sample", "height_m", "hg_ppb", "hg_sigma_ppb", "hg_dl_ppb", "hg_method",
		"toc_wt_pct", "toc_sigma_wt_pct", "d13c_org_permil", "d13c_org_sigma_permil"}
	switch s.style {
	case carbonate:
		header = append(header, "d13c_carb_permil", "d13c_carb_sigma_permil")
	case organic:
		header = append(header, "ts_wt_pct", "al_wt_pct")
	}
	out.meas = append(out.meas, header)
	for i, p := range smp {
		v, c := hgLoading(p.t, s.hgOn), cieShape(p.t, s.cieOn, s.cieEnd)
		var toc, ratio, hg, d13c float64
		var extra []string
		switch s.style {
		case clean:
			toc = clamp(1.85*math.Exp(0.17*a1[i]), 0.6, 2.9)
			ratio = 24 * math.Exp(0.14*a2[i]) * (1 + 3.5*v)
			hg = toc * ratio
			if inBeds(p.h, s.tocDips) { // less organic matter, the same Hg: only the ratio rises
				hg = 1.85 * 24 * math.Exp(0.14*a2[i])
				toc = uniform(rng, 0.38, 0.55)
			}
			d13c = -26.9 + 0.22*a3[i] + 0.08*rng.NormFloat64() - s.cieShift*c
		case carbonate:
			toc = clamp(0.85*math.Exp(0.28*a1[i]), 0.5, 1.6)
			ratio = 31 * math.Exp(0.15*a2[i]) * (1 + 2.8*v)
			hg = toc * ratio
			noise := 0.1
			if inBeds(p.h, s.carbBeds) {
				toc = uniform(rng, 0.03, 0.12)
				hg = math.Exp(uniform(rng, 0, math.Log(9))) // host-poor: raw Hg low (1–9 ppb), not rising
				noise = 0.35
			}
			d13c = -26.3 + 0.25*a3[i] + noise*rng.NormFloat64() - s.cieShift*c
			carb := 2.1 + 0.2*a4[i] + 0.06*rng.NormFloat64() - 1.8*c
			extra = []string{f(carb, 2), "0.05"}
		case organic:
			var ts, al float64
			if p.t <= s.hgOn && p.t >= s.hgEnd { // black shale
				fr := (s.hgOn - p.t) / (s.hgOn - s.hgEnd)
				toc = clamp((5.3+6.2*math.Pow(math.Sin(math.Pi*fr), 0.6))*math.Exp(0.06*a1[i]), 5.1, 11.8)
				ts = 2.0 + 0.15*toc + 0.2*rng.NormFloat64()
				al = 8.3*(1-toc/22) + 0.15*rng.NormFloat64()
			} else {
				toc = clamp(1.45*math.Exp(0.22*a1[i]), 0.6, 2.8)
				ts = 0.55 * math.Exp(0.3*a4[i])
				al = 8.3 * math.Exp(0.04*a5[i])
			}
			ratio = 28 * math.Exp(0.13*a2[i]) * (1 + 0.10*v) // the masking: the ratio barely moves
			hg = toc * ratio
			d13c = -27.2 + 0.25*a3[i] + 0.1*rng.NormFloat64() - s.cieShift*c
			extra = []string{f(ts, 2), f(al, 2)}
		}
		hgM := hg * (1 + 0.05*rng.NormFloat64())
		tocM := math.Max(0.01, toc+0.02*rng.NormFloat64())
		hgS, hgSig := f(hgM, 1), f(0.05*hgM, 1)
		if hgM < s.hgDL {
			hgS, hgSig = "<DL", ""
		}
		row := []string{p.code, f(p.h, 2), hgS, hgSig, f(s.hgDL, 1), s.hgMethod,
			f(tocM, 3), "0.020", f(d13c, 2), "0.10"}
		out.meas = append(out.meas, append(row, extra...))
	}

	// Events, placed by the samples that carry them.
	first := func(age float64) float64 { // first sample (upwards) younger than or at age
		for _, p := range smp {
			if p.t <= age {
				return p.h
			}
		}
		panic("gen: event above the section")
	}
	last := func(age float64) float64 { // last sample older than or at age
		h := smp[0].h
		for _, p := range smp {
			if p.t >= age {
				h = p.h
			}
		}
		return h
	}
	out.events = append(out.events, []string{"name", "kind", "base_height_m", "top_height_m", "notes"})
	hgName, hgNote := "Hg anomaly", "raw Hg and Hg/TOC elevated"
	switch s.style {
	case carbonate:
		hgNote = "raw Hg and Hg/TOC elevated; Hg/TOC spikes in carbonate beds (TOC < 0.2 wt%) are not part of it"
	case organic:
		hgNote = "raw Hg elevated within the black shale; Hg/TOC stays flat (high-TOC masking), Hg/Al rises"
	}
	out.events = append(out.events,
		[]string{hgName, "hg_anomaly", f(first(s.hgOn), 2), f(last(s.hgEnd), 2), hgNote},
		[]string{"CIE onset", "cie_onset", f(first(s.cieOn), 2), "", fmt.Sprintf("negative δ13C_org shift of about %.1f ‰", s.cieShift)},
		[]string{"CIE", "cie", f(first(s.cieOn), 2), f(last(s.cieEnd), 2), "from onset to recovery of δ13C_org"},
	)
	if s.extinction {
		out.events = append(out.events, []string{"Invented bivalve–ammonite turnover", "extinction",
			f(m.heightOf(extinctionMa), 2), "", "last occurrence of most invented benthic taxa"})
	}
	if s.bound {
		out.events = append(out.events, []string{"Oxfordian–Kimmeridgian boundary", "boundary",
			f(m.heightOf(oxKimBoundary), 2), "", "base of the invented ammonite zone Hv-K1"})
	}
	return out
}

func inBeds(h float64, beds [][2]float64) bool {
	for _, b := range beds {
		if h >= b[0] && h <= b[1] {
			return true
		}
	}
	return false
}

func main() {
	out := flag.String("out", "testdata/demo", "output folder")
	seed := flag.Uint64("seed", defaultSeed, "random seed of the scenario")
	flag.Parse()
	if err := run(*out, *seed); err != nil {
		fmt.Fprintln(os.Stderr, "gen:", err)
		os.Exit(1)
	}
}

// run writes every file of the scenario. Each part has its own random stream, so changing one
// part of the generator leaves the others' numbers unchanged.
func run(dir string, seed uint64) error {
	stream := func(id uint64) *rand.Rand { return rand.New(rand.NewPCG(seed, id)) }
	pubs := publications()
	us := units()
	for i := range us {
		us[i].province, us[i].cLat, us[i].cLon = provinceName, provLat, provLon
	}
	later := laterProvinces()
	var lus []unit // the later provinces' units, in province order
	for _, p := range later {
		for _, u := range p.units {
			u.province, u.cLat, u.cLon = p.name, p.lat, p.lon
			lus = append(lus, u)
		}
	}
	ss := sections()

	files := map[string][][]string{}
	var manifest [][]string
	manifest = append(manifest, []string{"kind", "section", "file"})
	add := func(kind, sec, name string, rows [][]string) {
		files[name] = rows
		manifest = append(manifest, []string{kind, sec, name})
	}

	poleCells := func(pole []string) []string {
		if pole == nil {
			return []string{"", "", "", ""}
		}
		return pole
	}
	add("provinces", "", "provinces.csv", [][]string{
		{"province", "description", "pole_latitude", "pole_longitude", "pole_a95", "pole_source"},
		append([]string{provinceName,
			"INVENTED demo province (not real data): a fictional continental flood-basalt province with two eruptive " +
				"pulses, about 155.40 Ma (Oxfordian) and 154.70 Ma (across the Oxfordian–Kimmeridgian boundary), " +
				"separated by a quiet interval of about 0.5 Myr. Coordinates deliberately point at open ocean."}, hvarnPole...)})
	for _, p := range later {
		files["provinces.csv"] = append(files["provinces.csv"], append([]string{p.name, p.description}, poleCells(p.pole)...))
	}

	rng := stream(1)
	uRows := [][]string{{"province", "unit", "kind", "pile_position", "volume_km3", "volume_sigma_km3",
		"latitude", "longitude", "notes"}}
	for i := range us {
		us[i].latOff, us[i].lonO = uniform(rng, -0.4, 0.4), uniform(rng, -0.6, 0.6)
		u := us[i]
		pos, vol, vs := "", "", ""
		if u.pos > 0 {
			pos = strconv.Itoa(u.pos)
		}
		if u.vol > 0 {
			vol, vs = f(u.vol, 0), f(u.volSig, 0)
		}
		uRows = append(uRows, []string{provinceName, u.name, u.kind, pos, vol, vs,
			f(provLat+u.latOff, 3), f(provLon+u.lonO, 3), u.notes})
	}
	rng = stream(3) // the later provinces' units
	for i := range lus {
		lus[i].latOff, lus[i].lonO = uniform(rng, -0.4, 0.4), uniform(rng, -0.6, 0.6)
		u := lus[i]
		pos, vol, vs := "", "", ""
		if u.pos > 0 {
			pos = strconv.Itoa(u.pos)
		}
		if u.vol > 0 {
			vol, vs = f(u.vol, 0), f(u.volSig, 0)
		}
		uRows = append(uRows, []string{u.province, u.name, u.kind, pos, vol, vs,
			f(u.cLat+u.latOff, 3), f(u.cLon+u.lonO, 3), u.notes})
	}
	add("units", "", "units.csv", uRows)

	sRows := [][]string{{"section", "kind", "latitude", "longitude", "palaeolatitude", "thermal_maturity",
		"toc_threshold_wt_pct", "notes"}}
	for _, s := range ss {
		sRows = append(sRows, []string{s.name, s.kind, f(s.lat, 3), f(s.lon, 3), f(s.palaeo, 1), s.maturity, s.tocThr, s.notes})
	}
	add("sections", "", "sections.csv", sRows)

	// Dates of units: sample codes are numbered per sampling campaign after every draw is final.
	next := map[string]int{}
	unitDates := func(rng *rand.Rand, us []unit) []dateRow {
		var dates []dateRow
		for _, u := range us {
			rows := drawUnit(rng, u, pubs)
			var reuse []string
			k := 0
			for _, g := range u.groups {
				p := pubs[g.pub]
				for j := 0; j < g.n; j++ {
					d := &rows[k]
					if g.reuse && j < len(reuse) {
						d.sampleCode = reuse[j]
						d.notes += "; same rock sample as the U-Pb date"
					} else {
						next[p.campaign]++
						d.sampleCode = fmt.Sprintf("%s-%02d", p.campaign, next[p.campaign])
					}
					if d.upb {
						reuse = append(reuse, d.sampleCode)
					}
					k++
				}
			}
			dates = append(dates, rows...)
		}
		return dates
	}
	// dates.csv: the Hvarn units, the ash beds of the first sections, then the later provinces' units
	// and the ash beds of the later sections.
	dates := unitDates(stream(2), us)
	secOut := make([]sectionOut, len(ss))
	for i, s := range ss {
		secOut[i] = genSection(stream(10+uint64(i)), s, pubs)
		if i < nFirstSections {
			dates = append(dates, secOut[i].ashDates...)
		}
	}
	dates = append(dates, unitDates(stream(4), lus)...)
	for i := nFirstSections; i < len(ss); i++ {
		dates = append(dates, secOut[i].ashDates...)
	}
	dRows := [][]string{datesHeader()}
	for _, d := range dates {
		dRows = append(dRows, d.record())
	}
	add("dates", "", "dates.csv", dRows)

	for i, s := range ss {
		add("ties", s.name, "ties-"+s.key+".csv", secOut[i].ties)
		add("measurements", s.name, "measurements-"+s.key+".csv", secOut[i].meas)
		add("events", s.name, "events-"+s.key+".csv", secOut[i].events)
	}
	files["manifest.csv"] = manifest

	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	for _, m := range append(manifest[1:], []string{"", "", "manifest.csv"}) {
		if err := writeCSV(filepath.Join(dir, m[2]), files[m[2]]); err != nil {
			return err
		}
	}
	return nil
}

func writeCSV(path string, rows [][]string) error {
	fh, err := os.Create(path)
	if err != nil {
		return err
	}
	w := csv.NewWriter(fh)
	if err := w.WriteAll(rows); err != nil {
		fh.Close()
		return fmt.Errorf("write %s: %w", path, err)
	}
	return fh.Close()
}

func uniform(rng *rand.Rand, lo, hi float64) float64 { return lo + (hi-lo)*rng.Float64() }

func clamp(x, lo, hi float64) float64 { return math.Max(lo, math.Min(hi, x)) }

func round(x float64, d int) float64 {
	p := math.Pow(10, float64(d))
	return math.Round(x*p) / p
}

// f formats with d fixed decimals and never writes a negative zero.
func f(x float64, d int) string {
	s := strconv.FormatFloat(x, 'f', d, 64)
	if strings.Trim(s, "-0.") == "" {
		return strings.TrimPrefix(s, "-")
	}
	return s
}
