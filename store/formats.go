package store

import (
	"bytes"
	"fmt"
	"strings"
)

// FileColumn is one column of an import file. The importer reads its header with these definitions and
// the app's help pages and templates show them, so what the pages say and what the importer takes cannot
// drift apart.
type FileColumn struct {
	Name     string
	Required bool
	Meaning  string // plain words, with the unit and σ convention
	Values   []Term // the codes allowed, when the column holds a controlled vocabulary
	Example  string // the value the template's example row carries ("" = left empty)
	// Instead names the column this one replaces (hg_ppm instead of hg_ppb): a file has one or the other,
	// and the template carries the first.
	Instead string
}

// FileFormat describes one kind of import file.
type FileFormat struct {
	Kind       string // the kind as the command line and the upload name it ("dates", "ties", …)
	Title      string
	PerSection bool // one file per section: the section is named on upload, not in the file
	Intro      string
	Columns    []FileColumn
	Notes      []string
}

// ColumnNames lists the file's columns in the order exports write them.
func (f FileFormat) ColumnNames() []string {
	names := make([]string, len(f.Columns))
	for i, c := range f.Columns {
		names[i] = c.Name
	}
	return names
}

// RequiredNames lists the columns a file must have.
func (f FileFormat) RequiredNames() []string {
	var names []string
	for _, c := range f.Columns {
		if c.Required {
			names = append(names, c.Name)
		}
	}
	return names
}

// Template is a CSV file of the format: the header and one example row, written as exports write (so it
// imports as it is). Columns that replace another are left out.
func (f FileFormat) Template() []byte {
	var b bytes.Buffer
	w := NewCSVWriter(&b)
	var header, row []string
	for _, c := range f.Columns {
		if c.Instead == "" {
			header = append(header, c.Name)
			row = append(row, c.Example)
		}
	}
	_ = w.Write(header)
	_ = w.Write(row)
	w.Flush()
	return b.Bytes()
}

// FileFormatByKind returns the format of one kind of import file.
func FileFormatByKind(kind string) (FileFormat, bool) {
	for _, f := range FileFormats() {
		if f.Kind == kind {
			return f, true
		}
	}
	return FileFormat{}, false
}

func mustFormat(kind string) FileFormat {
	f, ok := FileFormatByKind(kind)
	if !ok {
		panic("store: no file format " + kind)
	}
	return f
}

// reviewColumn is the review state column shared by the contributed kinds of record.
func reviewColumn(what string) FileColumn {
	return FileColumn{Name: "review_state", Values: ReviewStates(), Example: "accepted",
		Meaning: "Review state of the " + what + ". Empty means accepted for a command-line import and a curator's upload; " +
			"a contributor's upload is always pending, whatever this column says."}
}

// FileFormats lists every kind of import file, in the order a compilation is best loaded.
func FileFormats() []FileFormat {
	notes := FileColumn{Name: "notes", Meaning: "Free text."}
	lat := FileColumn{Name: "latitude", Meaning: "Latitude in decimal degrees, −90 to 90 (north positive).", Example: "-45.2"}
	lon := FileColumn{Name: "longitude", Meaning: "Longitude in decimal degrees, −180 to 180 (east positive).", Example: "-12.8"}
	sigmaLevel := func(ex string) FileColumn {
		return FileColumn{Name: "sigma_level", Required: true, Example: ex,
			Values:  []Term{{"1", "1σ"}, {"2", "2σ"}},
			Meaning: "The σ level of every uncertainty in the row, as published (1s, 2s and 2σ are also read). Stored as 1σ."}
	}
	return []FileFormat{
		{
			Kind: "provinces", Title: "Provinces",
			Intro: "One row per large igneous province.",
			Columns: []FileColumn{
				{Name: "province", Required: true, Meaning: "The province's name, unique in the compilation.", Example: "Example Province (invented)"},
				{Name: "description", Meaning: "Free text.", Example: "An invented province for the template."},
				{Name: "pole_latitude", Meaning: "Latitude of a palaeomagnetic pole of the province in decimal degrees, −90 to 90 (north pole convention). Optional; a pole is given with all four pole columns or none. The map computes the palaeolatitudes of the province's units from it.", Example: "62.5"},
				{Name: "pole_longitude", Meaning: "Longitude of the pole in decimal degrees, east positive, −180 to 180 (0 to 360 is read too and stored as −180 to 180).", Example: "215.0"},
				{Name: "pole_a95", Meaning: "The pole's A95 in degrees: the radius of its 95 % confidence circle, greater than 0 and at most 30.", Example: "5.5"},
				{Name: "pole_source", Meaning: "Where the pole comes from (publication, or how it was derived): required with a pole.", Example: "invented pole for the template"},
			},
		},
		{
			Kind: "units", Title: "Units (flows, sills, dykes, formations)",
			Intro: "One row per unit of a province.",
			Columns: []FileColumn{
				{Name: "province", Required: true, Meaning: "The province the unit belongs to. A province not yet in the compilation is created, and the import says so.", Example: "Example Province (invented)"},
				{Name: "unit", Required: true, Meaning: "The unit's name, unique within its province.", Example: "Example Flow 1"},
				{Name: "kind", Values: UnitKinds(), Meaning: "What the unit is.", Example: "flow"},
				{Name: "pile_position", Meaning: "Whole number, 1 = lowest (oldest) in the pile. Optional.", Example: "1"},
				{Name: "volume_km3", Meaning: "Erupted volume in km³. Optional.", Example: "1200"},
				{Name: "volume_sigma_km3", Meaning: "1σ uncertainty of the volume in km³.", Example: "300"},
				lat, lon, notes,
			},
		},
		{
			Kind: "sections", Title: "Sections (outcrops and cores)",
			Intro: "One row per sedimentary section.",
			Columns: []FileColumn{
				{Name: "section", Required: true, Meaning: "The section's name, unique in the compilation.", Example: "Example Section (invented)"},
				{Name: "kind", Values: SectionKinds(), Meaning: "Outcrop or core.", Example: "outcrop"},
				lat, lon,
				{Name: "palaeolatitude", Meaning: "Palaeolatitude in decimal degrees at the time of deposition.", Example: "-30"},
				{Name: "thermal_maturity", Meaning: "Free text, for example “immature (Tmax 425 °C)”.", Example: "immature"},
				{Name: "toc_threshold_wt_pct", Meaning: "TOC (wt %) below which Hg/TOC is not computed. 0.2 when empty.", Example: "0.2"},
				notes,
			},
		},
		{
			Kind: "dates", Title: "Dates",
			Intro: "One row per published date. A date belongs either to a unit (province and unit given; a unit not yet known is created, and the import says so) " +
				"or to a horizon of a known section (section and height given, for example an ash bed).",
			Columns: []FileColumn{
				{Name: "province", Meaning: "The province of the unit dated (with unit).", Example: "Example Province (invented)"},
				{Name: "unit", Meaning: "The unit dated (with province).", Example: "Example Flow 1"},
				{Name: "section", Meaning: "A known section, for a date of a horizon in it (with height_m)."},
				{Name: "height_m", Meaning: "Height of the dated horizon in metres above the section's base."},
				{Name: "sample_code", Required: true, Meaning: "The sample's code as published. With the method, unique in the compilation.", Example: "EX-001"},
				{Name: "method", Required: true, Values: methodTerms(), Meaning: "The dating method.", Example: "upb_idtims"},
				{Name: "material", Meaning: "What was dated, for example zircon, plagioclase, groundmass.", Example: "zircon"},
				{Name: "interpretation", Required: true, Values: Interpretations(), Meaning: "What the date is taken to date.", Example: "eruption"},
				{Name: "age_ma", Required: true, Meaning: "The age in Ma, as published. An age over 4600 is taken for years and refused.", Example: "155.46"},
				{Name: "sigma_ma", Required: true, Meaning: "Analytical uncertainty in Ma (U–Pb: X; ⁴⁰Ar/³⁹Ar: analytical), at sigma_level. Larger than zero and smaller than the age.", Example: "0.05"},
				{Name: "sigma_y_ma", Meaning: "U–Pb only: X and the tracer calibration (Y), in Ma, at sigma_level. At least sigma_ma. Optional.", Example: "0.06"},
				{Name: "sigma_z_ma", Meaning: "Full external uncertainty in Ma, at sigma_level (U–Pb: Y and the decay constants; ⁴⁰Ar/³⁹Ar: with the monitor age and λ). At least sigma_y_ma. Optional.", Example: "0.17"},
				sigmaLevel("2"),
				{Name: "tracer", Meaning: "U–Pb isotope tracer, for example ET2535. Dates sharing a tracer share its uncertainty.", Example: "ET2535"},
				{Name: "monitor", Meaning: "⁴⁰Ar/³⁹Ar only: the neutron-fluence monitor, for example FCs."},
				{Name: "monitor_age_ma", Meaning: "⁴⁰Ar/³⁹Ar only: the monitor's age in Ma the authors used (with lambda_per_a)."},
				{Name: "lambda_per_a", Meaning: "The total ⁴⁰K decay constant in a⁻¹ the authors used, for example 5.543e-10 (between 1e-11 and 1e-8). Without it and the monitor age a ⁴⁰Ar/³⁹Ar date cannot be recalculated, and is listed so."},
				{Name: "laboratory", Meaning: "The laboratory that measured the date.", Example: "Invented Laboratory A"},
				{Name: "citation", Meaning: "The publication, as free text.", Example: "Invented et al. (2026)"},
				{Name: "doi", Meaning: "The publication's DOI, written 10.xxxx/…"},
				lat, lon,
				reviewColumn("date"),
				notes,
			},
			Notes: []string{
				"A table as a paper publishes it (its own column names, ages in ka or years, uncertainties at 2σ or as a percentage of the age, a header over two rows, notes under it, on any sheet of a workbook) " +
					"need not be reshaped: on the Import page choose “a table as a paper publishes it” and say which of its columns is which; the converted values are shown beside the file's cells before anything is imported. " +
					"The mapping can be saved under a name and is offered again for the next file with the same columns; the change it imports says how each column was read.",
			},
		},
		{
			Kind: "measurements", Title: "Measurements of a section", PerSection: true,
			Intro: "Wide form, one row per sample: sample, height, then one column per proxy named with its unit. " +
				"Units are converted on import to each proxy's canonical unit (Hg ppm × 1000 → ppb; Al₂O₃ wt % × 0.5293 → Al wt %). " +
				"Each proxy may have companions: <proxy>_sigma_<unit> (1σ, same unit), <proxy>_dl_<unit> (detection limit) and <proxy>_method (text). " +
				"A value below detection is written “<DL” (with the detection-limit column) or “<2.5” (the limit itself).",
			Columns: measurementColumns(),
			Notes: []string{
				"Unit confusion is caught where the header states the unit: an hg_ppb column whose median is below 1 looks like ppm, and an hg_ppm value above 50 looks like ppb; both are refused with the reason.",
				"Two columns for one proxy (hg_ppb and hg_ppm) are refused; wt % above 100 is refused.",
				"Every proxy column is optional; the file needs sample, height_m and at least one of them.",
			},
		},
		{
			Kind: "ties", Title: "Tie points of a section", PerSection: true,
			Intro: "One row per tie point: a height of the section with an age, used by the section's age models.",
			Columns: []FileColumn{
				{Name: "label", Required: true, Meaning: "A name for the tie point, for example the ash bed's name.", Example: "Example ash 1"},
				{Name: "height_m", Required: true, Meaning: "Height in metres above the section's base.", Example: "12.5"},
				{Name: "kind", Required: true, Values: TieKinds(), Meaning: "Where the age comes from.", Example: "radiometric"},
				{Name: "distribution", Required: true, Values: []Term{{"normal", "normal: age ± σ"}, {"uniform", "uniform between two ages"}}, Meaning: "The shape of the age's uncertainty.", Example: "normal"},
				{Name: "age_ma", Meaning: "For a normal tie: the age in Ma.", Example: "155.46"},
				{Name: "sigma_ma", Meaning: "For a normal tie: its uncertainty in Ma, at sigma_level.", Example: "0.05"},
				{Name: "sigma_level", Values: []Term{{"1", "1σ"}, {"2", "2σ"}}, Meaning: "For a normal tie: the σ level of sigma_ma.", Example: "2"},
				{Name: "age_min_ma", Meaning: "For a uniform tie: the youngest age in Ma."},
				{Name: "age_max_ma", Meaning: "For a uniform tie: the oldest age in Ma."},
				{Name: "date_sample_code", Meaning: "Optional link to a date already in the compilation (for example the ash bed's U–Pb date); the tie then carries that date's shared uncertainties."},
				{Name: "date_method", Meaning: "The linked date's method, when the sample has dates by several methods."},
				reviewColumn("tie point"),
				notes,
			},
		},
		{
			Kind: "events", Title: "Events of a section", PerSection: true,
			Intro: "One row per sedimentary event: a horizon, or an interval from a base to a top.",
			Columns: []FileColumn{
				{Name: "name", Required: true, Meaning: "The event's name.", Example: "Example Hg anomaly"},
				{Name: "kind", Required: true, Values: EventKinds(), Meaning: "What the event is.", Example: "hg_anomaly"},
				{Name: "base_height_m", Required: true, Meaning: "Height of the event's base in metres above the section's base.", Example: "14"},
				{Name: "top_height_m", Meaning: "Height of its top; empty for a single horizon.", Example: "15.5"},
				notes,
			},
		},
		{
			Kind: "hiatuses", Title: "Hiatuses of a section", PerSection: true,
			Intro: "One row per surface where time is missing. The Monte Carlo age model adds at least the stated duration between the tie points around it; the straight-line model ignores hiatuses.",
			Columns: []FileColumn{
				{Name: "height_m", Required: true, Meaning: "Height of the surface in metres above the section's base; one hiatus per height.", Example: "20"},
				{Name: "min_duration_ma", Required: true, Meaning: "The least time missing at the surface, in Ma, from 0 (only the surface is known) to 4600.", Example: "0.1"},
				reviewColumn("hiatus"),
				notes,
			},
		},
	}
}

// proxyMeanings gives each proxy's name in words, for the help page of the measurement file.
var proxyMeanings = map[string]string{
	"hg":         "Mercury concentration",
	"toc":        "Total organic carbon",
	"ts":         "Total sulfur",
	"al":         "Aluminium",
	"d13c_org":   "δ¹³C of organic carbon (‰ VPDB)",
	"d13c_carb":  "δ¹³C of carbonate (‰ VPDB)",
	"os_initial": "Initial ¹⁸⁷Os/¹⁸⁸Os",
	"d202hg":     "δ²⁰²Hg (‰)",
	"cap_d199hg": "Δ¹⁹⁹Hg (‰)",
}

var unitWords = map[string]string{"ppb": "ng/g", "ppm": "µg/g", "wt_pct": "wt %", "permil": "‰", "ratio": "ratio"}

// measurementColumns lists the measurement file's columns from the proxies the importer accepts.
func measurementColumns() []FileColumn {
	cols := []FileColumn{
		{Name: "sample", Required: true, Meaning: "The sample's code, unique within the section.", Example: "EX-S1"},
		{Name: "height_m", Required: true, Meaning: "Height in metres above the section's base (cores: converted to height, positive up).", Example: "14.2"},
	}
	examples := map[string]string{"hg_ppb": "85", "toc_wt_pct": "1.2", "d13c_org_permil": "-27.4"}
	seen := map[string]bool{}
	for _, pu := range proxyUnits() {
		name := pu.prefix + "_" + pu.unit
		m := fmt.Sprintf("%s, in %s.", proxyMeanings[pu.proxy], unitWords[pu.unit])
		instead := ""
		if seen[pu.proxy] {
			canon := canonicalUnit(pu.proxy)
			m = fmt.Sprintf("%s, in %s, instead of %s_%s (converted × %g).", proxyMeanings[pu.proxy], unitWords[pu.unit],
				canon.prefix, canon.unit, pu.factor)
			if pu.prefix != canon.prefix {
				m = fmt.Sprintf("%s given as %s, in %s, instead of %s_%s (converted × %g).", proxyMeanings[pu.proxy],
					strings.ToUpper(pu.prefix[:1])+pu.prefix[1:], unitWords[pu.unit], canon.prefix, canon.unit, pu.factor)
			}
			instead = canon.prefix + "_" + canon.unit
		}
		seen[pu.proxy] = true
		cols = append(cols, FileColumn{Name: name, Meaning: m, Example: examples[name], Instead: instead})
	}
	return cols
}
