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

	"coeval/stats"
	"coeval/store"
	"coeval/web/analysis"
)

// Downloads of a comparison: the table as CSV, JSON and XLSX (with a sheet of settings and sources).
// All three are built from the same rows (compareRecords) in table order, so the same address gives
// the same bytes (CSV, JSON): nothing in them depends on the time or on the cache.

type ioWriter = io.Writer

// downloadColumn is one column of a download: its name (units in the name), the unit of its values and
// what it holds. The writers take their header from these lists and the help pages list them, so the
// column dictionary and the files cannot disagree (TestDownloadDictionary).
type downloadColumn struct {
	Name, Unit, Meaning string
}

func columnNames(cols []downloadColumn) []string {
	out := make([]string, len(cols))
	for i, c := range cols {
		out[i] = c.Name
	}
	return out
}

// compareColumnDefs are the columns of the comparison's table downloads (rows=pulses), in file order.
var compareColumnDefs = []downloadColumn{
	{"province", "", "The large igneous province whose pulses (or units) are compared."},
	{"pulse", "", "The eruptive pulse of the province's density, by its age: P and the age of its mode in Ma (P155.4 is the pulse at ~155.4 Ma), to the decimal of the first significant digit of half its mode's 95 % range. It names the same pulse after an edit or another setting for as long as the pulse still covers that age (the pulses= choice takes it); the rows' order is not its name."},
	{"event_code", "", "The event's code: E and the stored event's number, G: and a correlated group, A and a detected anomaly."},
	{"event", "", "The event's name."},
	{"section", "", "The section the event was recorded in (empty for an event dated directly)."},
	{"pulse_mode_ma", "Ma", "The age of the pulse's peak in the province's density (as on the timeline). Empty for a unit row."},
	{"pulse_onset_median_ma", "Ma", "The pulse's onset (its older edge): the median over the bootstrap replicates in which the pulse exists, as on the timeline with analytical unit means (the random part: the comparison adds the systematic components named in the settings, once per draw)."},
	{"pulse_onset_lo95_ma", "Ma", "Lower (younger) end of the 95 % interval of the pulse's onset: the 2.5 % quantile of the bootstrap replicates."},
	{"pulse_onset_hi95_ma", "Ma", "Upper (older) end of the 95 % interval of the pulse's onset: the 97.5 % quantile of the bootstrap replicates."},
	{"pulse_end_median_ma", "Ma", "The pulse's end (its younger edge): the median over the bootstrap replicates in which the pulse exists."},
	{"pulse_end_lo95_ma", "Ma", "Lower (younger) end of the 95 % interval of the pulse's end (2.5 % quantile)."},
	{"pulse_end_hi95_ma", "Ma", "Upper (older) end of the 95 % interval of the pulse's end (97.5 % quantile)."},
	{"event_age_median_ma", "Ma", "The event's age at the point compared (event_point): the median of its draws from its section's age–height model with the ties' random part (as the section page gives it with the ties at their analytical level), or its direct age. The comparison adds the shared systematic components once per draw."},
	{"event_age_lo95_ma", "Ma", "Lower (younger) end of the 95 % interval of the event's age (2.5 % quantile of its draws)."},
	{"event_age_hi95_ma", "Ma", "Upper (older) end of the 95 % interval of the event's age (97.5 % quantile of its draws)."},
	{"p_after_onset", "probability", "P(the event came after the pulse's onset), from the joint draws. Written to the decimals its Monte Carlo SE supports (the SE to 2 significant digits)."},
	{"p_after_onset_se", "probability", "Monte Carlo standard error of p_after_onset, sqrt(P(1 − P)/Neff) (see the settings). 0 when no draw (or every draw) was after: see p_after_onset_bound."},
	{"p_after_onset_bound", "", "Empty, or when p_after_onset is exactly 0 or 1 (no draw or every draw), the bound it stands for: <3/N or >1 − 3/N with N the joint draws (column n), as the page writes it."},
	{"p_within", "probability", "P(the event fell within the pulse, between its onset and its end). Empty for a unit row. Decimals as p_after_onset."},
	{"p_within_se", "probability", "Monte Carlo standard error of p_within."},
	{"p_within_bound", "", "Empty, or the bound p_within = 0 or 1 stands for (as p_after_onset_bound)."},
	{"lag_median_ma", "Ma", "Median of the lag, onset − event age (a unit row: unit mean − event age); positive: the event came after."},
	{"lag_lo95_ma", "Ma", "Lower end of the 95 % interval of the lag (2.5 % quantile of the draws)."},
	{"lag_hi95_ma", "Ma", "Upper end of the 95 % interval of the lag (97.5 % quantile of the draws)."},
	{"delta_ma", "Ma", "δ, the window of p_near, as chosen."},
	{"p_near", "probability", "P(|lag| < δ): the event within δ of the onset (a unit row: of the unit mean)."},
	{"p_near_se", "probability", "Monte Carlo standard error of p_near."},
	{"p_near_bound", "", "Empty, or the bound p_near = 0 or 1 stands for (as p_after_onset_bound)."},
	{"ovl", "fraction 0–1", "Overlap of the two age distributions (the area under the lower of the two densities): 0 apart, 1 identical."},
	{"volume_before_fraction_median", "fraction 0–1", "Median fraction of the province's dated volume erupted before the event (the page gives it as a percentage). Empty without volumes."},
	{"volume_before_fraction_lo95", "fraction 0–1", "Lower end of the 95 % interval of the volume fraction before the event."},
	{"volume_before_fraction_hi95", "fraction 0–1", "Upper end of the 95 % interval of the volume fraction before the event."},
	{"p_volume_majority", "probability", "P(more than half the dated volume was erupted before the event)."},
	{"p_volume_majority_se", "probability", "Monte Carlo standard error of p_volume_majority."},
	{"p_volume_majority_bound", "", "Empty, or the bound p_volume_majority = 0 or 1 stands for: <3/N or >1 − 3/N with N the volume's draws."},
	{"sens_after_min", "probability", "Sensitivity: the lowest p_after_onset over the sensitivity sets (the choices listed in the settings). Empty without sensitivity."},
	{"sens_after_max", "probability", "Sensitivity: the highest p_after_onset over the sensitivity sets."},
	{"sens_within_min", "probability", "Sensitivity: the lowest p_within over the sensitivity sets."},
	{"sens_within_max", "probability", "Sensitivity: the highest p_within over the sensitivity sets."},
	{"sens_volume_fraction_min", "fraction 0–1", "Sensitivity: the lowest median volume fraction before the event over the sensitivity sets."},
	{"sens_volume_fraction_max", "fraction 0–1", "Sensitivity: the highest median volume fraction before the event over the sensitivity sets."},
	{"sens_caution", "", "In words: a conclusion (P > 0.95) that holds under the choices made but not under every sensitivity set."},
	{"n", "draws", "N, the number of joint Monte Carlo draws."},
	{"seed", "", "The seed of the random draws: the same address and seed give the same file."},
	{"level", "", "The uncertainty level of the ages compared: analytical, tracer, full, or as-needed (the uncertainties each pair needs)."},
	{"calibration", "", "The ⁴⁰Ar/³⁹Ar calibration (monitor age and decay constant) the ages are on."},
	{"bandwidth_rule", "", "How the density's smoothing width was chosen (its rule), as used."},
	{"bandwidth_ma", "Ma", "The density's smoothing width (kernel bandwidth) used."},
	{"replicates", "", "The number of bootstrap replicates of the density, from which the pulse edges come."},
	{"data_stamp", "", "The compilation's change number the comparison was computed on."},
	{"event_point", "", "Which point of the event is compared: its base (onset), top or peak for an event with an extent, its height otherwise."},
}

// compareUnitColumnDefs are the columns that rows=units|both adds after the province: what kind of row
// it is and, for a unit row, the unit and its mean. The default (rows=pulses) leaves them out.
var compareUnitColumnDefs = []downloadColumn{
	{"row_kind", "", "pulse or unit: what the row compares with the event. Only with rows of units."},
	{"pulse", "", "The eruptive pulse of the province's density, by its age: P and the age of its mode in Ma (P155.4 is the pulse at ~155.4 Ma); empty for a unit row."},
	{"unit_code", "", "The unit's code (U and its number). Only with rows of units."},
	{"unit", "", "The eruptive unit's name. Only with rows of units."},
	{"unit_system", "", "The decay system of the unit's weighted mean. Only with rows of units."},
	{"unit_mean_ma", "Ma", "The unit's weighted mean age. Only with rows of units."},
	{"unit_sigma_ma_1s", "Ma (1σ)", "The 1σ uncertainty of the unit's weighted mean (analytical). Only with rows of units."},
}

// compareColumns are the column names of the default (rows=pulses) download.
var compareColumns = columnNames(compareColumnDefs)

// compareTextColumns are the download columns that hold text (the rest are numbers in the workbook).
var compareTextColumns = []string{"province", "row_kind", "pulse", "unit_code", "unit", "unit_system", "event_code", "event",
	"section", "p_after_onset_bound", "p_within_bound", "p_near_bound", "p_volume_majority_bound", "sens_caution", "seed", "level",
	"calibration", "bandwidth_rule", "event_point"}

// compareColumnDefsFor returns the download columns for the choice of rows (all of them: units=true).
func compareColumnDefsFor(units bool) []downloadColumn {
	if !units {
		return compareColumnDefs
	}
	return slices.Concat(compareColumnDefs[:1], compareUnitColumnDefs, compareColumnDefs[2:])
}

// compareColumnsFor returns the download columns for the choice of rows.
func compareColumnsFor(ch compareChoice) []string {
	return columnNames(compareColumnDefsFor(ch.unitRows()))
}

// gs formats a number for a download: shortest round-trip form, "" for NaN.
func gs(v float64) string {
	if math.IsNaN(v) {
		return ""
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

// probDecimals is the number of decimals a probability with Monte Carlo SE se is written with: those
// that give the SE two significant digits (se 0.0017 → 4, se 0.012 → 3, se 0.1 → 2), at most 6. An SE of
// 0 (P exactly 0 or 1) or not a number gives -1: the value is written as it is.
func probDecimals(se float64) int {
	if !(se > 0) || math.IsInf(se, 0) {
		return -1
	}
	return min(6, max(1, 1-int(math.Floor(math.Log10(se)))))
}

// probCells writes a probability, its SE and its bound for a CSV: exact (JSON) keeps every digit; else
// the probability and its SE go to the decimals the SE supports. The bound is "<0.0003" or ">0.9997"
// (3/N, as the page writes it) for P exactly 0 or 1, else empty.
func probCells(p stats.Probability, n int, exact bool) []string {
	if math.IsNaN(p.P) {
		return []string{"", "", ""}
	}
	bound := ""
	if p.P == 0 || p.P == 1 {
		bound = strings.ReplaceAll(probText(p, n), " ", "")
	}
	if exact {
		return []string{gs(p.P), gs(p.SE), bound}
	}
	d := probDecimals(p.SE)
	if d < 0 {
		return []string{gs(p.P), gs(p.SE), bound}
	}
	return []string{fixed(p.P, d), fixed(p.SE, d), bound}
}

// ageDecimals is the number of decimals of an age (Ma) with 95 % interval [lo, hi]: 3 (0.001 Ma), or
// more when the interval is narrower than 0.01 Ma, so that its width keeps two significant digits (at
// most 6).
func ageDecimals(lo, hi float64) int {
	w := math.Abs(hi - lo)
	if !(w > 0) || math.IsInf(w, 0) {
		return 3
	}
	return min(6, max(3, 1-int(math.Floor(math.Log10(w)))))
}

// numCell writes v to d decimals, or every digit (exact); "" for NaN.
func numCell(v float64, d int, exact bool) string {
	if math.IsNaN(v) {
		return ""
	}
	if exact {
		return gs(v)
	}
	return fixed(v, d)
}

// intervalCells writes a median with its 95 % interval, all to the decimals the interval supports.
func intervalCells(med, lo, hi float64, exact bool) []string {
	d := ageDecimals(lo, hi)
	return []string{numCell(med, d, exact), numCell(lo, d, exact), numCell(hi, d, exact)}
}

// rowPulse returns the pulse of a pulse row (nil for a unit row or a pulse not found).
func rowPulse(res *compareResult, row compareRow) *analysis.ComparePulse {
	if row.isUnit() {
		return nil
	}
	for i := range res.In.Pulses {
		if res.In.Pulses[i].Name == row.Pulse {
			return &res.In.Pulses[i]
		}
	}
	return nil
}

// compareRecords returns the table's rows as download values, in table order (pulses oldest first,
// events oldest first). exact (the JSON) writes every digit of a number; the CSV and the workbook write
// the digits the numbers support (probDecimals, ageDecimals).
func compareRecords(res *compareResult, exact bool) [][]string {
	ch := res.Choice
	var out [][]string
	sets := 0
	if res.Sens != nil {
		sets = len(res.Sens.Sets)
	}
	// Probabilities without an SE of their own (the sensitivity's) go to the decimals of 1/N; fractions
	// of the volume to 0.001 (0.1 %).
	pd := max(1, int(math.Ceil(math.Log10(float64(max(ch.N, 1))))))
	const fd = 3
	for _, row := range compareRows(res) {
		c := row.Cell
		rec := []string{res.Province.Name, row.Pulse}
		if ch.unitRows() {
			rec = []string{res.Province.Name, row.Kind, "", "", "", "", "", ""}
			if u := row.Unit; u != nil {
				copy(rec[3:], []string{u.Code, u.Name, u.System, micro(u.MeanMa), micro(u.Sigma1s)})
				if exact {
					copy(rec[6:], []string{gs(u.MeanMa), gs(u.Sigma1s)})
				}
			} else {
				rec[2] = row.Pulse
			}
		}
		rec = append(rec, row.Event.Code, row.Event.Name, row.Event.Section)
		if p := rowPulse(res, row); p != nil && p.Summary.Present > 0 {
			s := p.Summary
			rec = append(rec, numCell(s.ModeMa, ageDecimals(s.Mode.LowerMa, s.Mode.UpperMa), exact))
			rec = append(rec, intervalCells(s.Start.MedianMa, s.Start.LowerMa, s.Start.UpperMa, exact)...)
			rec = append(rec, intervalCells(s.End.MedianMa, s.End.LowerMa, s.End.UpperMa, exact)...)
		} else {
			rec = append(rec, "", "", "", "", "", "", "")
		}
		es := row.Event.Summary
		rec = append(rec, intervalCells(es.Median, es.Lo95, es.Hi95, exact)...)
		rec = append(rec, probCells(c.AfterOnset, c.N, exact)...)
		rec = append(rec, probCells(c.Within, c.N, exact)...)
		rec = append(rec, intervalCells(c.LagMa.Median, c.LagMa.Lo95, c.LagMa.Hi95, exact)...)
		rec = append(rec, gs(ch.DeltaMa))
		rec = append(rec, probCells(c.Near, c.N, exact)...)
		rec = append(rec, numCell(c.OVL, fd, exact))
		if row.Vol != nil {
			f := row.Vol.Fraction
			rec = append(rec, numCell(f.Median, fd, exact), numCell(f.Lo95, fd, exact), numCell(f.Hi95, fd, exact))
			rec = append(rec, probCells(row.Vol.Majority, row.Vol.N, exact)...)
		} else {
			rec = append(rec, "", "", "", "", "", "")
		}
		if len(row.Sens) > 0 && row.Sens[0] != nil {
			_, caution, _ := sensText(row, sets)
			rec = append(rec, numCell(row.Sens[0].MinP, pd, exact), numCell(row.Sens[0].MaxP, pd, exact))
			if w := row.Sens[1]; w != nil {
				rec = append(rec, numCell(w.MinP, pd, exact), numCell(w.MaxP, pd, exact))
			} else {
				rec = append(rec, "", "")
			}
			if row.VolSens != nil {
				rec = append(rec, numCell(row.VolMin, fd, exact), numCell(row.VolMax, fd, exact))
			} else {
				rec = append(rec, "", "")
			}
			rec = append(rec, caution)
		} else {
			rec = append(rec, "", "", "", "", "", "", "")
		}
		d := ch.Dens
		rec = append(rec, strconv.Itoa(ch.N), strconv.FormatUint(d.Seed, 10), ch.Level.String(), d.Sum.Cal.Cal.Code,
			res.Density.Bandwidth.Rule.String(), numCell(res.Density.Bandwidth.Ma, 6, exact), strconv.Itoa(d.Reps),
			strconv.FormatInt(res.Stamp, 10), orDash(row.Event.Point))
		out = append(out, rec)
	}
	return out
}

func writeCompareCSV(w io.Writer, res *compareResult) error {
	cw := store.NewCSVWriter(w)
	cw.Write(compareColumnsFor(res.Choice))
	for _, rec := range compareRecords(res, false) {
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
	for _, rec := range compareRecords(res, true) {
		m := map[string]string{}
		for i, c := range cols {
			m[c] = rec[i]
		}
		rows = append(rows, m)
	}
	o := res.Order
	var words []string
	for _, it := range precItems(res) {
		words = append(words, it.Words)
	}
	var pairs []map[string]string
	for _, rec := range precedenceRecords(res, true) {
		m := map[string]string{}
		for i, c := range columnNames(precedenceColumnDefs) {
			m[c] = rec[i]
		}
		pairs = append(pairs, m)
	}
	first := map[string]any{"items": res.OrderCodes, "names": words, "pairs": pairs,
		"p_row_before_column": nanNull(o.P), "p_row_before_column_se": nanNull(o.SE)}
	return map[string]any{"settings": settings, "sources": sources, "rows": rows, "which_came_first": first}
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

// precedenceSheet is the workbook's sheet of every pair's order.
const precedenceSheet = "Which came first"

// compareXLSX writes the workbook: the table, which came first (every pair) and a sheet of settings and
// sources.
func compareXLSX(res *compareResult) ([]byte, error) {
	f := excelize.NewFile()
	defer f.Close()
	const table, order, settings = "Comparison", precedenceSheet, "Settings"
	if err := f.SetSheetName("Sheet1", table); err != nil {
		return nil, err
	}
	for _, s := range []string{order, settings} {
		if _, err := f.NewSheet(s); err != nil {
			return nil, err
		}
	}
	cols := compareColumnsFor(res.Choice)
	if err := sheetTable(f, table, cols, compareRecords(res, false), func(i int) bool { return slices.Contains(compareTextColumns, cols[i]) }); err != nil {
		return nil, err
	}
	precedenceNumber := func(i int) bool {
		n := precedenceColumnDefs[i].Name
		return strings.HasPrefix(n, "p_") && !strings.HasSuffix(n, "_bound")
	}
	if err := sheetTable(f, order, columnNames(precedenceColumnDefs), precedenceRecords(res, false), func(i int) bool { return !precedenceNumber(i) }); err != nil {
		return nil, err
	}
	f.SetColWidth(order, "A", "A", 60)
	f.SetColWidth(order, "C", "C", 60)
	if err := sheetSettings(f, settings, compareSettings(res)); err != nil {
		return nil, err
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
