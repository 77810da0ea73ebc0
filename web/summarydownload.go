package web

import (
	"fmt"
	"io"
	"net/http"
	"slices"
	"strconv"
	"strings"

	"coeval/store"
	"coeval/web/analysis"
)

// The unit summary downloads (/provinces/{id}/summary and /units/{id}/summary, format=csv or json) hold
// one row per unit and decay system, as the province page's table does.
//
// CSV: no comment lines (the import formats allow none, and spreadsheets mangle them). Instead the
// choices a row depends on are its first columns, repeated on every row, so a row copied out of the
// file still says how it was made: calibration, level, sigma_level, policy, rule, mswd_range, include. Every σ column
// (sigma_ma, sigma_kept_ma) is at sigma_level and at level (sigma_is says what that means for the row's
// system). Lists inside a cell (flagged, excluded, cautions, notes) are separated by " | ".
//
// JSON: the same rows as objects under "items"; the choices are fields of the envelope, not of each row.

// summaryColumnDefs are the columns of the unit summary CSV, in file order: the writer's header and the
// Help page's dictionary (/help/downloads/unit-summaries) both come from this list.
var summaryColumnDefs = []downloadColumn{
	{"calibration", "", "The ⁴⁰Ar/³⁹Ar calibration (its code; the calibrations page names it) the ⁴⁰Ar/³⁹Ar means are recalculated to. Repeated on every row."},
	{"level", "", "Which uncertainty components the ± includes: analytical, tracer (analytical and the U–Pb tracer) or full (also the decay constants, and for ⁴⁰Ar/³⁹Ar the calibration). sigma_is says what that is for the row's system."},
	{"sigma_level", "σ", "The σ level of sigma_ma and sigma_kept_ma: 1 or 2."},
	{"policy", "", "When a weighted mean's ± is enlarged by √MSWD: never, mswd-gt-1 (MSWD above 1) or p-lt-0.05 (MSWD above 1 and its p below 0.05)."},
	{"rule", "", "The rule that flags outlying dates: none, mswd, chauvenet or gesd. Flagged dates stay in the mean; the mean without them is in the _kept columns."},
	{"mswd_range", "", "How the acceptable MSWD range was found: chi2 (the 2.5 and 97.5 % quantiles of χ²/f) or wendt-carl (Wendt & Carl 1991)."},
	{"include", "", "Which dates entered, by review state: accepted, pending (accepted and pending) or all."},
	{"province", "", "The large igneous province of the unit."},
	{"unit_id", "", "The unit's number in the compilation (its page is /units/ and this number)."},
	{"unit", "", "The eruptive unit's name."},
	{"pile_position", "", "The unit's place in the lava pile, counted from the base (empty for intrusions and units without one)."},
	{"system", "", "The group of dates the row summarises: U–Pb, ⁴⁰Ar/³⁹Ar, K–Ar, Re–Os or another method. A unit dated by two systems has one row per system."},
	{"decay_system", "", "The decay system of those dates."},
	{"n", "dates", "How many dates of the unit in this system entered."},
	{"mean_ma", "Ma", "The inverse-variance weighted mean of the dates (⁴⁰Ar/³⁹Ar recalculated to the calibration first)."},
	{"sigma_ma", "Ma", "The ± of the weighted mean at sigma_level and level, enlarged by inflation_factor when inflated is true."},
	{"sigma_is", "", "In words, what sigma_ma holds for this system (for example X analytical, Y with the tracer, Z full external)."},
	{"mswd", "", "The mean square of weighted deviates of the dates about the mean (six significant digits). Empty with a single date."},
	{"dof", "", "Degrees of freedom of the MSWD: n − 1."},
	{"mswd_low", "", "The lower end of the acceptable MSWD range for dof (see mswd_range)."},
	{"mswd_high", "", "The upper end of the acceptable MSWD range for dof."},
	{"mswd_in_range", "", "true when the MSWD lies within mswd_low to mswd_high: the dates scatter as their errors allow."},
	{"p", "probability", "P(χ² ≥ MSWD·dof): the chance of a scatter at least this large from the stated errors alone."},
	{"age_min_ma", "Ma", "The youngest date of the unit in this system."},
	{"age_max_ma", "Ma", "The oldest date of the unit in this system."},
	{"flagged", "", "The sample codes of the dates the rule flagged as outlying, separated by \" | \"."},
	{"n_kept", "dates", "How many dates are left without the flagged ones."},
	{"mean_kept_ma", "Ma", "The weighted mean without the flagged dates."},
	{"sigma_kept_ma", "Ma", "Its ±, as sigma_ma."},
	{"inflated", "", "true when the policy enlarged the ± by √MSWD."},
	{"inflation_factor", "", "The factor the ± was multiplied by: √MSWD when inflated, otherwise 1."},
	{"excluded", "", "Dates of the unit left out of the mean, each as sample code: reason, separated by \" | \"."},
	{"cautions", "", "What to read with care in this row, in words, separated by \" | \"."},
	{"notes", "", "Other notes (for example how the tracer term was found), separated by \" | \"."},
}

var summaryColumns = columnNames(summaryColumnDefs)

// summaryRow is one row of the summary downloads.
type summaryRow struct {
	Province        string   `json:"province"`
	UnitID          int64    `json:"unit_id"`
	Unit            string   `json:"unit"`
	PilePosition    *int     `json:"pile_position"`
	System          string   `json:"system"`
	DecaySystem     string   `json:"decay_system"`
	N               int      `json:"n"`
	MeanMa          *float64 `json:"mean_ma"`
	SigmaMa         *float64 `json:"sigma_ma"`
	SigmaIs         string   `json:"sigma_is"`
	MSWD            *float64 `json:"mswd"`
	DoF             *int     `json:"dof"`
	MSWDLow         *float64 `json:"mswd_low"`
	MSWDHigh        *float64 `json:"mswd_high"`
	MSWDInRange     *bool    `json:"mswd_in_range"`
	P               *float64 `json:"p"`
	AgeMinMa        *float64 `json:"age_min_ma"`
	AgeMaxMa        *float64 `json:"age_max_ma"`
	Flagged         []string `json:"flagged"`
	NKept           *int     `json:"n_kept"`
	MeanKeptMa      *float64 `json:"mean_kept_ma"`
	SigmaKeptMa     *float64 `json:"sigma_kept_ma"`
	Inflated        bool     `json:"inflated"`
	InflationFactor *float64 `json:"inflation_factor"`
	Excluded        []string `json:"excluded"`
	Cautions        []string `json:"cautions"`
	Notes           []string `json:"notes"`
}

func ptr[T any](v T) *T { return &v }

// summaryRows flattens summaries to download rows, σ at the chosen σ level.
func summaryRows(sums []unitSummary, ch summaryChoice) []summaryRow {
	var out []summaryRow
	k := float64(ch.Sigma)
	for _, us := range sums {
		base := summaryRow{Province: us.Unit.Province, UnitID: us.Unit.ID, Unit: us.Unit.Name, PilePosition: us.Unit.PilePosition,
			Flagged: []string{}, Excluded: []string{}, Cautions: []string{}, Notes: []string{}}
		if len(us.Systems) == 0 {
			base.Notes = append(base.Notes, "no dates")
			out = append(out, base)
			continue
		}
		for _, s := range us.Systems {
			r := base
			r.Flagged, r.Excluded = []string{}, []string{}
			r.System, r.DecaySystem, r.N, r.SigmaIs = s.Label, s.DecaySystem, len(s.Entries), s.LevelLabel
			r.Cautions, r.Notes = append([]string{}, s.Cautions...), append([]string{}, s.Notes...)
			if s.TracerNote != "" && !slices.Contains(r.Notes, s.TracerNote) {
				r.Notes = append(r.Notes, s.TracerNote)
			}
			for _, x := range s.Excluded {
				r.Excluded = append(r.Excluded, x.D.SampleCode+": "+x.Reason)
			}
			if s.Computed {
				a := s.Report.All
				r.MeanMa, r.SigmaMa = ptr(s.All.MeanMa), ptr(s.All.Sigma1s*k)
				r.DoF = ptr(a.DoF)
				if a.MSWDDefined {
					r.MSWD, r.MSWDLow, r.MSWDHigh, r.MSWDInRange, r.P = ptr(a.MSWD), ptr(a.MSWDLow), ptr(a.MSWDHigh), ptr(a.InRange), ptr(a.P)
				}
				r.AgeMinMa, r.AgeMaxMa = ptr(s.MinMa), ptr(s.MaxMa)
				r.Flagged = flaggedCodes(s)
				if r.Flagged == nil {
					r.Flagged = []string{}
				}
				r.NKept, r.MeanKeptMa, r.SigmaKeptMa = ptr(s.Kept.N), ptr(s.Kept.MeanMa), ptr(s.Kept.Sigma1s*k)
				r.Inflated, r.InflationFactor = a.Inflated, ptr(a.Factor)
			}
			out = append(out, r)
		}
	}
	return out
}

func writeSummaryCSV(w io.Writer, rows []summaryRow, ch summaryChoice) error {
	cw := store.NewCSVWriter(w)
	if err := cw.Write(summaryColumns); err != nil {
		return err
	}
	f := func(v *float64) string {
		if v == nil {
			return ""
		}
		return micro(*v)
	}
	g := func(v *float64) string { // dimensionless statistics: six significant figures
		if v == nil {
			return ""
		}
		return strconv.FormatFloat(*v, 'g', 6, 64)
	}
	oi := func(v *int) string {
		if v == nil {
			return ""
		}
		return strconv.Itoa(*v)
	}
	ob := func(v *bool) string {
		if v == nil {
			return ""
		}
		return strconv.FormatBool(*v)
	}
	list := func(xs []string) string { return strings.Join(xs, " | ") }
	for _, r := range rows {
		rec := []string{ch.Cal.Cal.Code, ch.Level.String(), strconv.Itoa(ch.Sigma), ch.PolicyCode, ch.Rule.String(), ch.Range.String(), ch.Include,
			r.Province, strconv.FormatInt(r.UnitID, 10), r.Unit, oi(r.PilePosition), r.System, r.DecaySystem, strconv.Itoa(r.N),
			f(r.MeanMa), f(r.SigmaMa), r.SigmaIs, g(r.MSWD), oi(r.DoF), g(r.MSWDLow), g(r.MSWDHigh), ob(r.MSWDInRange), g(r.P),
			f(r.AgeMinMa), f(r.AgeMaxMa), list(r.Flagged), oi(r.NKept), f(r.MeanKeptMa), f(r.SigmaKeptMa),
			strconv.FormatBool(r.Inflated), g(r.InflationFactor), list(r.Excluded), list(r.Cautions), list(r.Notes)}
		if err := cw.Write(rec); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// summaryJSON is the envelope of the JSON summary download: the choices, then the rows.
type summaryJSON struct {
	Kind            string       `json:"kind"`
	Calibration     string       `json:"calibration"`
	CalibrationName string       `json:"calibration_name"`
	CalibrationNote string       `json:"calibration_note"`
	Level           string       `json:"level"`
	SigmaLevel      int          `json:"sigma_level"`
	Policy          string       `json:"policy"`
	Rule            string       `json:"rule"`
	MSWDRange       string       `json:"mswd_range"`
	Include         string       `json:"include"`
	Uncertainties   string       `json:"uncertainties"`
	Count           int          `json:"count"`
	Items           []summaryRow `json:"items"`
}

// writeSummary sends the summaries as CSV or JSON (format is "csv" or "json"); name names the file.
func writeSummary(w http.ResponseWriter, format, name string, sums []unitSummary, ch summaryChoice) error {
	rows := summaryRows(sums, ch)
	if format == "json" {
		writeJSON(w, http.StatusOK, summaryJSON{Kind: "unit summaries", Calibration: ch.Cal.Cal.Code, CalibrationName: ch.Cal.Cal.Name,
			CalibrationNote: ch.Cal.label(), Level: ch.Level.String(), SigmaLevel: ch.Sigma, Policy: ch.PolicyCode, Rule: ch.Rule.String(),
			MSWDRange: ch.Range.String(), Include: ch.Include, Count: len(rows), Items: rows,
			Uncertainties: fmt.Sprintf("sigma_ma and sigma_kept_ma are at %dσ and at level %s (sigma_is says what that is for each row's system); ⁴⁰Ar/³⁹Ar means are on calibration %s",
				ch.Sigma, ch.Level, ch.Cal.Cal.Code)})
		return nil
	}
	return writeDownload(w, name+".csv", func(w io.Writer) error { return writeSummaryCSV(w, rows, ch) })
}

func (s *Server) handleProvinceSummary(w http.ResponseWriter, r *http.Request) error {
	return summaryDownload{s.store}.province(w, r)
}

func (s *Server) handleUnitSummary(w http.ResponseWriter, r *http.Request) error {
	return summaryDownload{s.store}.unit(w, r)
}

// summaryDownload serves the summary downloads from what it reads of st alone.
type summaryDownload struct{ st summaryStore }

// choices reads the record's id and the download's choices (format=csv|json and the summary's).
func (d summaryDownload) choices(r *http.Request) (int64, string, summaryChoice, error) {
	id, err := pathID(r, "id")
	if err != nil {
		return 0, "", summaryChoice{}, err
	}
	p := newParams(r)
	format := p.oneOf("format", []string{"csv", "json"}, "csv")
	ch, err := readSummaryChoice(r.Context(), d.st, p)
	if err != nil {
		return 0, "", summaryChoice{}, err
	}
	return id, format, ch, p.err()
}

func (d summaryDownload) province(w http.ResponseWriter, r *http.Request) error {
	id, format, ch, err := d.choices(r)
	if err != nil {
		return err
	}
	_, sums, err := analysis.SummarizeProvince(r.Context(), d.st, id, ch.options())
	if err != nil {
		return err
	}
	return writeSummary(w, format, fmt.Sprintf("province-%d-unit-summaries", id), sums, ch)
}

func (d summaryDownload) unit(w http.ResponseWriter, r *http.Request) error {
	id, format, ch, err := d.choices(r)
	if err != nil {
		return err
	}
	_, us, err := analysis.SummarizeUnitByID(r.Context(), d.st, id, ch.options())
	if err != nil {
		return err
	}
	return writeSummary(w, format, fmt.Sprintf("unit-%d-summary", id), []unitSummary{us}, ch)
}

// summaryDownloads are the links to a page's summary downloads, with the page's choices kept.
func summaryDownloads(r *http.Request, path string) []linkSpec {
	q := r.URL.Query()
	q.Del("format")
	q.Del("page")
	sep := "?"
	enc := q.Encode()
	if enc != "" {
		enc += "&"
	}
	return []linkSpec{{"CSV (unit summaries)", path + sep + enc + "format=csv"}, {"JSON (unit summaries)", path + sep + enc + "format=json"},
		{"Columns explained (unit summaries)", "/help/downloads/unit-summaries"}}
}
