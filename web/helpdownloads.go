package web

import (
	"fmt"
	"net/http"
	"slices"

	"github.com/go-chi/chi/v5"

	"coeval/views"
)

// The column dictionaries of the downloads (/help/downloads/{kind}): every column with its unit and
// meaning, from the very lists the writers take their header from (downloadColumn), so a page and its
// file cannot disagree (TestDownloadDictionary).

// downloadKind is one kind of download with its columns.
type downloadKind struct {
	Kind, Title, Intro string
	Columns            []downloadColumn
	Notes              []string
	Sheets             []downloadSheet // further sheets of the workbook, each with its own columns
}

// downloadSheet is a further sheet of a workbook (and its part of the JSON), with its columns.
type downloadSheet struct {
	ID, Title, Intro string
	Columns          []downloadColumn
}

func downloadKinds() []downloadKind {
	return []downloadKind{
		{Kind: "comparison", Title: "Comparison table (CSV, XLSX, JSON)",
			Intro:   "One row per pulse (or unit) and event, in the order of the comparison's table: what is compared, the ages of both, the probabilities with their Monte Carlo standard errors, the lag, the volume erupted before the event, the sensitivity and the choices the row was made with. The same columns in the CSV, in the workbook's Comparison sheet and in the rows of the JSON; the workbook adds a sheet of which came first between every pair of items and a sheet of every setting and the sources, the JSON the same settings and pairs.",
			Columns: compareColumnDefsFor(true),
			Notes: []string{
				"The columns about units (row_kind, unit_code, unit, unit_system, unit_mean_ma, unit_sigma_ma_1s) are in the file only when the comparison has rows of single units; otherwise the file starts province, pulse, event_code.",
				"Digits: in the CSV and the workbook a probability and its standard error are written to the decimals that give the standard error two significant digits (SE 0.0017: four decimals), ages in Ma to 0.001 Ma (more when a 95 % interval is narrower than 0.01 Ma), fractions of the volume and the overlap to 0.001. The JSON keeps every digit of the computation.",
				"A probability of exactly 0 or 1 (no draw, or every draw) keeps its number, with standard error 0, and its _bound column says what it stands for: below 3/N or above 1 − 3/N for N draws (about the 95 % bound when nothing was seen in N tries), as the page writes it.",
				"Ages are in millions of years before present (Ma), older = larger; a 95 % interval is lo95 (younger end) to hi95 (older end).",
			},
			Sheets: []downloadSheet{{ID: "columns-precedence", Title: "Sheet “Which came first” (and which_came_first.pairs in the JSON)",
				Intro:   "Every pair of the comparison's items (pulse onsets and ends, units, events; a pulse's onset and its own end left out), once, in its likelier order: eruptions against the sedimentary record first, then the others, the most certain first. The JSON adds the items' codes and words and the full grid: p_row_before_column[i][k] = P(item i came before item k), with its standard errors.",
				Columns: precedenceColumnDefs}}},
		{Kind: "compilation", Title: "Compilation view: events and nearest pulses (CSV, XLSX, JSON)",
			Intro:   "One row per event and province compared with it, in the order of the compilation view's table: the event and its age, the nearest pulse of the province with its ages, P(within) with its Monte Carlo standard error, the lag from the pulse's onset, the sensitivity, and the settings. An event no province was compared with has one row without a province, its note saying why. The same columns in the CSV, in the workbook's first sheet and in the rows of the JSON; the workbook adds a sheet of the settings, the JSON the settings, the cautions and each province's pulses.",
			Columns: compilationColumns,
			Notes: []string{
				"The numbers are those of the event's page and of the comparison page with its default choices; they depend on those choices (the density's smoothing, the ⁴⁰Ar/³⁹Ar calibration, the section's age–height model).",
				"Events of one section share its age model: their rows are not independent.",
				"Digits: in the CSV and the workbook a probability and its standard error are written to the decimals that give the standard error two significant digits, ages in Ma to 0.001 Ma (more when a 95 % interval is narrower than 0.01 Ma); the JSON keeps every digit.",
				"Ages are in millions of years before present (Ma), older = larger.",
			}},
		{Kind: "timeline-pulses", Title: "Timeline pulses (CSV)",
			Intro:   "One row per pulse of the province's density, oldest first, with its bootstrap intervals; the first columns are the choices the density was made with, repeated on every row, so that a row copied out of the file still says how it was made.",
			Columns: timelinePulseColumns,
			Notes: []string{
				"Intervals are the 2.5 and 97.5 % quantiles of the bootstrap replicates in which the pulse exists (a 95 % interval), whatever σ level the page shows.",
				"Ages are in millions of years before present (Ma), older = larger.",
			}},
		{Kind: "unit-summaries", Title: "Unit summaries (CSV)",
			Intro:   "One row per unit and decay system, as the province's and the unit's tables: the weighted mean of the unit's dates with its ± at the chosen σ level and uncertainty level, the MSWD and its acceptable range, the dates an outlier rule flags and the mean without them. The first seven columns are the choices the rows were made with, repeated on every row, so that a row copied out of the file still says how it was made. The JSON download holds the same rows, with the choices once in its envelope.",
			Columns: summaryColumnDefs,
			Notes: []string{
				"A unit without dates has one row with its name and the note “no dates”; the numbers are empty.",
				"Ages and their ± in Ma, rounded to 0.000001 Ma; MSWD, p and the factors to six significant digits.",
				"Lists inside a cell (flagged, excluded, cautions, notes) are separated by “ | ”.",
			}},
		{Kind: "section-age-model", Title: "Section: model ages (CSV)",
			Intro:   "One row per sample of the section, from the base up: its height and its age from the section's age–height model (median and 95 % interval of the model's draws), with the model, seed and draws it was computed with on every row.",
			Columns: ageModelColumnDefs,
			Notes: []string{
				"Ages are in millions of years before present (Ma), older = larger; the interval is lo95 (younger end) to hi95 (older end), whatever σ level the page shows.",
				"The intervals carry the tie points' uncertainties at the level chosen on the section page (analytical, with the tracer, or full: the default); the JSON download names it among its settings.",
			}},
		{Kind: "section-anomalies", Title: "Section: Hg anomalies (CSV)",
			Intro:   "One row per Hg anomaly the section's rule detects: where it lies, how far it stands above the background, whether raw Hg rises with the ratio, how it reads, its model age, and what a contributor decided about it.",
			Columns: anomalyColumnDefs,
			Notes: []string{
				"Robust z-scores use the median and the median absolute deviation of the background samples, on log10 values.",
				"Ages are in Ma, older = larger; the interval is a 95 % interval whatever σ level the page shows.",
			}},
		{Kind: "section-ratios", Title: "Section: samples with ratios and flags (CSV)",
			Intro:   "Every sample of the section, none dropped: its measurements, the Hg/host ratio with its status under the low-host rule, the robust z-scores and flags of the ratio and of raw Hg, the residual of the host regression, and the anomaly it belongs to.",
			Columns: ratioColumnDefs,
			Notes: []string{
				"A cell is empty where the sample has no measurement.",
			}},
		{Kind: "sections-aligned", Title: "Sections on a common age axis (CSV)",
			Intro:   "Every dated sample of every section at its model age, its value divided by its section's background median so that sections with different Hg levels share one scale, as the aligned sections' figure draws them.",
			Columns: alignedColumnDefs,
			Notes: []string{
				"Each section uses its suggested host and its stored low-host threshold.",
				"Ages are in Ma, older = larger; intervals are 95 % intervals.",
			}},
		{Kind: "coincidence", Title: "Coincidence test (CSV: result, events, onsets)",
			Intro:   "Three files: the result of the test (one row, with its choices), the events with the pulse onset nearest to each, and the onsets that entered. The JSON download holds all three.",
			Columns: slices.Concat(coincidenceResultColumnDefs, coincidenceEventColumnDefs, coincidenceOnsetColumnDefs),
			Notes: []string{
				"The columns are listed file by file: first the result's (statistic_ma to onset_draws), then the events' (event_code to distance_ma), then the onsets' (province to frequency).",
				"Ages are in Ma, older = larger; intervals are 95 % intervals.",
			}},
		{Kind: "map-places", Title: "Map places (CSV)",
			Intro:   "One row per place the map draws: each eruptive unit with coordinates (with its distance from its province's centre and whether it lies implausibly far) and each section with coordinates, with its palaeolatitude: a unit's computed from the palaeomagnetic pole recorded for its province, a section's as entered.",
			Columns: mapColumnDefs,
			Notes:   []string{palaeolatitudeMethod, palaeolatitudeCaution},
		},
	}
}

func downloadKindByName(kind string) (downloadKind, bool) {
	for _, k := range downloadKinds() {
		if k.Kind == kind {
			return k, true
		}
	}
	return downloadKind{}, false
}

func (s *Server) handleDownloadFormat(w http.ResponseWriter, r *http.Request) error {
	kind := chi.URLParam(r, "kind")
	k, ok := downloadKindByName(kind)
	if !ok {
		return notFoundError{what: "download kind " + fmt.Sprintf("%q", kind)}
	}
	v := views.Detail{Page: s.page(r.Context(), "Download: "+k.Title, "Help")}
	v.Crumbs = []views.Link{{Label: "Help", URL: "/help"}}
	v.Intro = k.Intro
	v.Notes = k.Notes
	t := views.Table{ID: "columns", Caption: "Columns", Columns: []views.Column{{Label: "Column"}, {Label: "Unit"}, {Label: "What it holds"}}}
	for _, c := range k.Columns {
		t.Rows = append(t.Rows, []views.Cell{{Text: c.Name, Class: "code"}, {Text: c.Unit}, {Text: c.Meaning}})
	}
	v.Tables = []views.Table{t}
	for _, sh := range k.Sheets {
		st := views.Table{ID: sh.ID, Caption: sh.Title, Columns: t.Columns}
		for _, c := range sh.Columns {
			st.Rows = append(st.Rows, []views.Cell{{Text: c.Name, Class: "code"}, {Text: c.Unit}, {Text: c.Meaning}})
		}
		st.Notes = []string{sh.Intro}
		v.Tables = append(v.Tables, st)
	}
	v.Links = []views.Link{{Label: "Help", URL: "/help"}}
	s.render(w, r, http.StatusOK, views.DetailPage(v))
	return nil
}
