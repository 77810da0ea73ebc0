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

var summaryColumns = []string{"calibration", "level", "sigma_level", "policy", "rule", "mswd_range", "include",
	"province", "unit_id", "unit", "pile_position", "system", "decay_system", "n", "mean_ma", "sigma_ma", "sigma_is",
	"mswd", "dof", "mswd_low", "mswd_high", "mswd_in_range", "p", "age_min_ma", "age_max_ma", "flagged",
	"n_kept", "mean_kept_ma", "sigma_kept_ma", "inflated", "inflation_factor", "excluded", "cautions", "notes"}

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
	return []linkSpec{{"CSV (unit summaries)", path + sep + enc + "format=csv"}, {"JSON (unit summaries)", path + sep + enc + "format=json"}}
}
