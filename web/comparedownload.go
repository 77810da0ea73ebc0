package web

import (
	"bytes"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"

	"github.com/xuri/excelize/v2"

	"coeval/store"
)

// Downloads of a comparison: the table as CSV, JSON and XLSX (with a sheet of settings and sources).
// All three are built from the same rows (compareRecords) in table order, so the same address gives
// the same bytes (CSV, JSON): nothing in them depends on the time or on the cache.

type ioWriter = io.Writer

// compareColumns are the columns of the table downloads, units in the names.
var compareColumns = []string{"province", "pulse", "event_code", "event", "section",
	"p_after_onset", "p_after_onset_se", "p_within", "p_within_se",
	"lag_median_ma", "lag_lo95_ma", "lag_hi95_ma", "delta_ma", "p_near", "p_near_se", "ovl",
	"volume_before_median", "volume_before_lo95", "volume_before_hi95", "p_volume_majority", "p_volume_majority_se",
	"sens_after_min", "sens_after_max", "sens_within_min", "sens_within_max", "sens_volume_min", "sens_volume_max", "sens_caution",
	"n", "seed", "level", "data_stamp", "event_point"}

// compareUnitColumns are the columns that rows=units|both adds after the province: what kind of row it is
// and, for a unit row, the unit and its mean. The default (rows=pulses) keeps the columns above, so its
// downloads are what they were.
var compareUnitColumns = []string{"row_kind", "pulse", "unit_code", "unit", "unit_system", "unit_mean_ma", "unit_sigma_ma_1s"}

// compareTextColumns are the download columns that hold text (the rest are numbers in the workbook).
var compareTextColumns = []string{"province", "row_kind", "pulse", "unit_code", "unit", "unit_system", "event_code", "event",
	"section", "sens_caution", "seed", "level", "event_point"}

// compareColumnsFor returns the download columns for the choice of rows.
func compareColumnsFor(ch compareChoice) []string {
	if !ch.unitRows() {
		return compareColumns
	}
	return slices.Concat(compareColumns[:1], compareUnitColumns, compareColumns[2:])
}

// gs formats a number for a download: shortest round-trip form, "" for NaN.
func gs(v float64) string {
	if math.IsNaN(v) {
		return ""
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

// compareRecords returns the table's rows as download values, in table order (pulses oldest first,
// events oldest first).
func compareRecords(res *compareResult) [][]string {
	ch := res.Choice
	var out [][]string
	sets := 0
	if res.Sens != nil {
		sets = len(res.Sens.Sets)
	}
	for _, row := range compareRows(res) {
		c := row.Cell
		rec := []string{res.Province.Name, row.Pulse}
		if ch.unitRows() {
			rec = []string{res.Province.Name, row.Kind, "", "", "", "", "", ""}
			if u := row.Unit; u != nil {
				copy(rec[3:], []string{u.Code, u.Name, u.System, gs(u.MeanMa), gs(u.Sigma1s)})
			} else {
				rec[2] = row.Pulse
			}
		}
		rec = append(rec, row.Event.Code, row.Event.Name, row.Event.Section,
			gs(c.AfterOnset.P), gs(c.AfterOnset.SE), gs(c.Within.P), gs(c.Within.SE),
			gs(c.LagMa.Median), gs(c.LagMa.Lo95), gs(c.LagMa.Hi95), gs(ch.DeltaMa), gs(c.Near.P), gs(c.Near.SE), gs(c.OVL))
		if row.Vol != nil {
			f := row.Vol.Fraction
			rec = append(rec, gs(f.Median), gs(f.Lo95), gs(f.Hi95), gs(row.Vol.Majority.P), gs(row.Vol.Majority.SE))
		} else {
			rec = append(rec, "", "", "", "", "")
		}
		if len(row.Sens) > 0 && row.Sens[0] != nil {
			_, caution, _ := sensText(row, sets)
			rec = append(rec, gs(row.Sens[0].MinP), gs(row.Sens[0].MaxP))
			if w := row.Sens[1]; w != nil {
				rec = append(rec, gs(w.MinP), gs(w.MaxP))
			} else {
				rec = append(rec, "", "")
			}
			if row.VolSens != nil {
				rec = append(rec, gs(row.VolMin), gs(row.VolMax))
			} else {
				rec = append(rec, "", "")
			}
			rec = append(rec, caution)
		} else {
			rec = append(rec, "", "", "", "", "", "", "")
		}
		rec = append(rec, strconv.Itoa(ch.N), strconv.FormatUint(ch.Dens.Seed, 10), ch.Level.String(), strconv.FormatInt(res.Stamp, 10), orDash(row.Event.Point))
		out = append(out, rec)
	}
	return out
}

func writeCompareCSV(w io.Writer, res *compareResult) error {
	cw := store.NewCSVWriter(w)
	cw.Write(compareColumnsFor(res.Choice))
	for _, rec := range compareRecords(res) {
		cw.Write(rec)
	}
	cw.Flush()
	return cw.Error()
}

// compareSettings are the settings and sources of a comparison, as label–value pairs.
func compareSettings(res *compareResult) [][2]string {
	ch := res.Choice
	d := ch.Dens
	bw := res.Density.Bandwidth
	s := [][2]string{
		{"province", res.Province.Name},
		{"seed", strconv.FormatUint(d.Seed, 10)},
		{"joint draws N", strconv.Itoa(ch.N)},
		{"level", ch.Level.String()},
		{"delta_ma", gs(ch.DeltaMa)},
		{"calibration (⁴⁰Ar/³⁹Ar)", d.Sum.Cal.Cal.Code + ": " + d.Sum.Cal.Cal.Name},
		{"calibrations available", calCodes(res)},
		{"density counts", d.Count + ", weight " + d.Weight},
		{"bandwidth rule", d.Rule.String()},
		{"bandwidth used (Ma)", gs(bw.Ma) + " (" + bw.Rule.String() + ")"},
		{"bandwidth note", bw.Note},
		{"adaptive", strconv.FormatBool(d.Adaptive)},
		{"bootstrap replicates", strconv.Itoa(d.Reps)},
		{"unit means", "analytical σ, policy " + d.Sum.PolicyCode + ", outlier rule " + d.Sum.Rule.String() + ", MSWD judged against the " + mswdRangeName(d.Sum.Range) + ", " + includeLabel(d.Sum.Include)},
		{"pulse edge systematics", res.In.EdgeNote},
		{"age model", ch.Model},
		{"tie points in the age models", tieIncludeLabel(d.Sum.Include) + " (include=" + d.Sum.Include + ")"},
		{"age-model draws", strconv.Itoa(ch.ModelDraws)},
		{"TOC threshold (wt%)", tocText(ch.TocMinWtPct)},
		{"detected anomalies compared", strconv.FormatBool(ch.Anomalies)},
		{"event point compared", pointLabel(ch.Point)},
		{"correlated groups", strings.Join(ch.Groups, ", ")},
		{"shared systematic keys", strings.Join(res.Keys, ", ")},
		{"sensitivity sets", sensSets(res)},
		{"Monte Carlo SE", seRuleText},
		{"data stamp", strconv.FormatInt(res.Stamp, 10)},
	}
	if d.BWEach {
		s = append(s, [2]string{"bandwidth in the replicates", "re-estimated by the rule in each (bw_each=1)"})
	}
	if ch.unitRows() {
		s = append(s, [2]string{"table rows", ch.Rows + " (unit rows: a unit's weighted mean, a point-like age, against each event; p_within does not apply and is empty)"})
		for _, u := range res.In.UnitRows {
			s = append(s, [2]string{"unit " + u.Code, u.Name + ": " + u.How + "; systematic components: " + u.Syst})
		}
	}
	for _, e := range res.In.Events {
		s = append(s, [2]string{"event " + e.Code, e.Name + " (" + orDash(e.Section) + "): " + e.How})
	}
	var cites []string
	for _, u := range res.Sums {
		for _, sys := range u.Systems {
			for _, e := range sys.Entries {
				if c := e.D.Citation; c != "" && !slices.Contains(cites, c) {
					cites = append(cites, c)
				}
			}
		}
	}
	slices.Sort(cites)
	for _, c := range cites {
		s = append(s, [2]string{"source", c})
	}
	s = append(s, [2]string{"timescale", timescaleCredit})
	return s
}

// pointLabel says which point of an event with an extent is compared.
func pointLabel(point string) string {
	switch point {
	case "top":
		return "top: an event with an extent (an excursion, an anomaly's run of samples) is compared at its top (its end)"
	case "peak":
		return "peak: an event with an extent is compared at its peak (detected anomalies: the highest sample; entered events record no peak and are compared at their base)"
	}
	return "base: an event with an extent (an excursion, an anomaly's run of samples) is compared at its base (its onset)"
}

func calCodes(res *compareResult) string {
	var out []string
	for _, c := range res.Choice.Dens.Sum.Cal.All {
		out = append(out, c.Code)
	}
	return strings.Join(out, ", ")
}

func tocText(t *float64) string {
	if t == nil {
		return "each section's own (stored) threshold"
	}
	return gs(*t)
}

func sensSets(res *compareResult) string {
	if res.Sens == nil {
		return "not computed (sens=0)"
	}
	return strings.Join(res.Sens.Sets, "; ")
}

// compareJSON is the comparison as JSON: settings, rows (with the columns of the CSV), and the order
// matrix.
func compareJSON(res *compareResult) map[string]any {
	settings := map[string]string{}
	var sources []string
	for _, kv := range compareSettings(res) {
		if kv[0] == "source" {
			sources = append(sources, kv[1])
			continue
		}
		settings[kv[0]] = kv[1]
	}
	var rows []map[string]string
	cols := compareColumnsFor(res.Choice)
	for _, rec := range compareRecords(res) {
		m := map[string]string{}
		for i, c := range cols {
			m[c] = rec[i]
		}
		rows = append(rows, m)
	}
	o := res.Order
	matrix := map[string]any{"items": res.OrderCodes, "names": o.Names, "p_row_older": nanNull(o.P), "se": nanNull(o.SE)}
	return map[string]any{"settings": settings, "sources": sources, "rows": rows, "order": matrix}
}

// nanNull replaces NaN (the diagonal) by nil so the matrix is valid JSON.
func nanNull(m [][]float64) [][]any {
	out := make([][]any, len(m))
	for i, r := range m {
		out[i] = make([]any, len(r))
		for k, v := range r {
			if !math.IsNaN(v) {
				out[i][k] = v
			}
		}
	}
	return out
}

// compareXLSX writes the workbook: the table, the order matrix and a sheet of settings and sources.
func compareXLSX(res *compareResult) ([]byte, error) {
	f := excelize.NewFile()
	defer f.Close()
	const table, order, settings = "Comparison", "Order", "Settings"
	if err := f.SetSheetName("Sheet1", table); err != nil {
		return nil, err
	}
	for _, s := range []string{order, settings} {
		if _, err := f.NewSheet(s); err != nil {
			return nil, err
		}
	}
	row := func(sheet string, r int, vals []any) error {
		cell, err := excelize.CoordinatesToCellName(1, r)
		if err != nil {
			return err
		}
		return f.SetSheetRow(sheet, cell, &vals)
	}
	cols := compareColumnsFor(res.Choice)
	hdr := make([]any, len(cols))
	for i, c := range cols {
		hdr[i] = c
	}
	if err := row(table, 1, hdr); err != nil {
		return nil, err
	}
	for r, rec := range compareRecords(res) {
		vals := make([]any, len(rec))
		for i, v := range rec {
			if x, err := strconv.ParseFloat(v, 64); err == nil && !slices.Contains(compareTextColumns, cols[i]) {
				vals[i] = x
			} else {
				vals[i] = v
			}
		}
		if err := row(table, r+2, vals); err != nil {
			return nil, err
		}
	}
	o := res.Order
	top := []any{"P(row older than column)"}
	for _, c := range res.OrderCodes {
		top = append(top, c)
	}
	if err := row(order, 1, top); err != nil {
		return nil, err
	}
	for i := range o.Names {
		vals := []any{res.OrderCodes[i] + " · " + o.Names[i]}
		for k := range o.Names {
			if i == k {
				vals = append(vals, "")
			} else {
				vals = append(vals, o.P[i][k])
			}
		}
		if err := row(order, i+2, vals); err != nil {
			return nil, err
		}
	}
	if err := row(settings, 1, []any{"setting", "value"}); err != nil {
		return nil, err
	}
	for i, kv := range compareSettings(res) {
		if err := row(settings, i+2, []any{kv[0], kv[1]}); err != nil {
			return nil, err
		}
	}
	for i, c := range cols {
		if c == "event" || c == "section" || c == "unit" {
			if col, err := excelize.ColumnNumberToName(i + 1); err == nil {
				f.SetColWidth(table, col, col, 28)
			}
		}
	}
	f.SetColWidth(settings, "A", "A", 30)
	f.SetColWidth(settings, "B", "B", 100)
	var buf bytes.Buffer
	if err := f.Write(&buf); err != nil {
		return nil, fmt.Errorf("comparison workbook: %w", err)
	}
	return buf.Bytes(), nil
}
