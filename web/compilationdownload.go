package web

import (
	"bytes"
	"fmt"
	"io"
	"slices"
	"strconv"

	"github.com/xuri/excelize/v2"

	"coeval/stats"
	"coeval/store"
)

// The compilation view's table as CSV, JSON and XLSX: one row per event and province compared with it
// (the nearest pulse), the event's and the pulse's ages beside the probabilities, and the settings on
// every row. The columns (compilationColumns) make the header and the Help page's dictionary.

var compilationColumns = []downloadColumn{
	{"event_id", "", "The event's record number (its page is /events/{id})."},
	{"event", "", "The event's name."},
	{"section", "", "The section the event lies in."},
	{"event_age_median_ma", "Ma", "The event's age: median of its section's age–height model draws at the event's base."},
	{"event_age_lo95_ma", "Ma", "2.5 % quantile of the event's age (younger end of its 95 % interval)."},
	{"event_age_hi95_ma", "Ma", "97.5 % quantile of the event's age (older end of its 95 % interval)."},
	{"event_age_model", "", "The model the event's age comes from (age–height model, draws, seed)."},
	{"province_id", "", "The province's record number; empty when no province was compared with the event."},
	{"province", "", "The province compared with the event."},
	{"pulse", "", "The nearest pulse of the province's density (P1 the oldest): the one whose span lies nearest the event's median age, the one holding it when one does."},
	{"pulse_mode_ma", "Ma", "The pulse's mode on the province's timeline (default choices)."},
	{"pulse_start_ma", "Ma", "The pulse's start (older edge) on the province's timeline."},
	{"pulse_end_ma", "Ma", "The pulse's end (younger edge) on the province's timeline."},
	{"p_within", "probability", "P(the event fell within the pulse, between its onset and its end), from the comparison with its default choices."},
	{"p_within_se", "probability", "Monte Carlo standard error of p_within."},
	{"p_within_bound", "", "For p_within exactly 0 or 1: the bound it stands for (<3/N or >1 − 3/N for N draws); else empty."},
	{"lag_median_ma", "Ma", "Median of the lag, the pulse's onset − the event's age; positive: the event came after the onset."},
	{"lag_lo95_ma", "Ma", "2.5 % quantile of the lag."},
	{"lag_hi95_ma", "Ma", "97.5 % quantile of the lag."},
	{"sens_within_min", "probability", "Smallest p_within over the sensitivity set (other calibrations, bandwidth rules, age model)."},
	{"sens_within_max", "probability", "Largest p_within over the sensitivity set."},
	{"holds", "", "Whether p_within stays on the same side of 0.5 under every alternative of the sensitivity set."},
	{"draws", "", "Joint Monte Carlo draws of the comparison."},
	{"note", "", "Why a row has no province or pulse."},
	{"window_old_ma", "Ma", "Older end of the window of the view."},
	{"window_young_ma", "Ma", "Younger end of the window of the view."},
	{"window", "", "automatic (the whole record) or chosen."},
	{"densities", "", "The choices every province's density was made with (its timeline's defaults)."},
	{"comparison", "", "The choices the probabilities were computed with (the comparison page's defaults)."},
}

// compilationSettings are the view's settings as name–value pairs (the workbook's Settings sheet, the
// JSON's settings; the CSV repeats the window and the choices on every row).
func compilationSettings(c *compilation) [][2]string {
	window := "chosen"
	if c.Auto {
		window = "automatic"
	}
	return [][2]string{
		{"window_old_ma", windowEnd(c.MaxMa, c.Auto)}, {"window_young_ma", windowEnd(c.MinMa, c.Auto)}, {"window", window},
		{"densities", compilationDensityWords(c)}, {"comparison", compilationCompareWords()},
		{"event_ages", "each section's Monte Carlo age–height model with its default choices (draws and seed in event_age_model)"},
		{"provinces_compared", fmt.Sprintf("those with accepted dates within %g Ma of the event's 95 %% interval, at most %d per event (most such dates first)", answerReachMa, maxAnswerProvinces)},
		{"nearest_pulse", "the pulse whose span (start to end) lies nearest the event's median age; the one holding it when one does; a tie to the larger p_within"},
		{"cautions", "probabilities depend on the smoothing, the calibration and the age model; events of one section share its age model and are not independent"},
		{"timescale", timescaleVersion},
	}
}

// windowEnd writes an end of the window: to 0.001 Ma when automatic, as chosen otherwise.
func windowEnd(v float64, auto bool) string {
	if auto {
		return ma3(v)
	}
	return gs(v)
}

func compilationDensityWords(c *compilation) string {
	dc := c.Dens
	return fmt.Sprintf("%s, %s values, %s level, %d bootstrap replicates (seed %d), 40Ar/39Ar on %s, records %s",
		densityRuleWords(dc), dc.Count, dc.Sum.Level, dc.Reps, dc.Seed, dc.Sum.Cal.Cal.Name, includeLabel(dc.Sum.Include))
}

func compilationCompareWords() string {
	return "the comparison page's defaults: unit means analytical, shared systematic components drawn as needed, events at their base, with the sensitivity set"
}

// compilationRecords are the table's rows as text: exact keeps every digit (JSON); else ages to the
// decimals their interval supports and probabilities to those their SE supports.
func compilationRecords(c *compilation, exact bool) [][]string {
	set := map[string]string{}
	for _, kv := range compilationSettings(c) {
		set[kv[0]] = kv[1]
	}
	var out [][]string
	for _, row := range c.Rows {
		a := row.Age
		rec := []string{strconv.FormatInt(row.Event.ID, 10), row.Event.Name, row.Event.Section}
		rec = append(rec, intervalCells(a.Median, a.Lo95, a.Hi95, exact)...)
		rec = append(rec, a.Model)
		p := row.Pulse
		if p == nil {
			rec = append(rec, make([]string, 16)...)
		} else {
			rec = append(rec, strconv.FormatInt(row.Province.ID, 10), row.Province.Name, p.Pulse)
			if p.hasPulseAge {
				d := 3
				rec = append(rec, numCell(p.ModeMa, d, exact), numCell(p.StartMa, d, exact), numCell(p.EndMa, d, exact))
			} else {
				rec = append(rec, "", "", "")
			}
			rec = append(rec, probCells(stats.Probability{P: p.Within, SE: nanZero(p.WithinSE)}, p.N, exact)...)
			rec = append(rec, intervalCells(p.LagMed, p.LagLo, p.LagHi, exact)...)
			rec = append(rec, numCell(p.SensWithinMin, 3, exact), numCell(p.SensWithinMax, 3, exact), p.holds(), strconv.Itoa(p.N))
		}
		rec = append(rec, row.Note, set["window_old_ma"], set["window_young_ma"], set["window"], set["densities"], set["comparison"])
		out = append(out, rec)
	}
	return out
}

func writeCompilationCSV(w io.Writer, c *compilation) error {
	cw := store.NewCSVWriter(w)
	cw.Write(columnNames(compilationColumns))
	for _, rec := range compilationRecords(c, false) {
		cw.Write(rec)
	}
	cw.Flush()
	return cw.Error()
}

// compilationJSON is the JSON download: the settings, the cautions and the rows with every digit.
func compilationJSON(c *compilation) map[string]any {
	settings := map[string]string{}
	for _, kv := range compilationSettings(c) {
		settings[kv[0]] = kv[1]
	}
	cols := columnNames(compilationColumns)
	rows := []map[string]string{}
	for _, rec := range compilationRecords(c, true) {
		m := map[string]string{}
		for i, col := range cols {
			m[col] = rec[i]
		}
		rows = append(rows, m)
	}
	lanes := []map[string]any{}
	for _, l := range c.Lanes {
		m := map[string]any{"province_id": l.Province.ID, "province": l.Province.Name}
		if l.Density.Band == nil {
			m["message"] = l.Density.Message
		} else {
			var ps []map[string]any
			ids := pulseIDs(l.Density.Pulses)
			for i, p := range oldestFirst(l.Density.Pulses) {
				ps = append(ps, map[string]any{"pulse": ids[i].Code, "name": ids[i].Label, "mode_ma": p.ModeMa, "start_ma": p.StartMa, "end_ma": p.EndMa, "frequency": p.Frequency})
			}
			m["window_ma"] = []float64{l.Density.MinMa, l.Density.MaxMa}
			m["pulses"] = ps
		}
		lanes = append(lanes, m)
	}
	return map[string]any{"settings": settings, "cautions": compilationCautions(), "notes": c.Notes, "provinces": lanes, "rows": rows}
}

// compilationTextColumns stay text in the workbook even when they read as numbers.
var compilationTextColumns = []string{"event", "section", "province", "pulse", "p_within_bound", "note", "holds"}

// compilationXLSX writes the workbook: the table and a sheet of settings.
func compilationXLSX(c *compilation) ([]byte, error) {
	f := excelize.NewFile()
	defer f.Close()
	const table, settings = "Events and pulses", "Settings"
	if err := f.SetSheetName("Sheet1", table); err != nil {
		return nil, err
	}
	if _, err := f.NewSheet(settings); err != nil {
		return nil, err
	}
	cols := columnNames(compilationColumns)
	if err := sheetTable(f, table, cols, compilationRecords(c, false), func(i int) bool { return slices.Contains(compilationTextColumns, cols[i]) }); err != nil {
		return nil, err
	}
	if err := sheetSettings(f, settings, compilationSettings(c)); err != nil {
		return nil, err
	}
	f.SetColWidth(table, "B", "C", 28)
	f.SetColWidth(settings, "A", "A", 24)
	f.SetColWidth(settings, "B", "B", 100)
	var buf bytes.Buffer
	if err := f.Write(&buf); err != nil {
		return nil, fmt.Errorf("compilation workbook: %w", err)
	}
	return buf.Bytes(), nil
}
