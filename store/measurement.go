package store

import (
	"context"
	"database/sql"
	"fmt"
	"io"
	"math"
	"regexp"
	"slices"
	"sort"
	"strconv"
	"strings"
)

// proxyUnit is one accepted way of writing a proxy's unit in a column name, with the factor that converts
// it to the proxy's canonical unit.
type proxyUnit struct {
	proxy  string // proxy code stored
	prefix string // column prefix as written (al2o3 for Al given as oxide)
	unit   string // unit suffix as written
	factor float64
}

// proxyUnits lists every accepted value column. The first entry of each proxy is its canonical form, the
// one exports write. Al₂O₃ → Al uses the mass fraction 0.5293 (REFERENCES §6, common practice).
func proxyUnits() []proxyUnit {
	return []proxyUnit{
		{"hg", "hg", "ppb", 1},
		{"hg", "hg", "ppm", 1000},
		{"toc", "toc", "wt_pct", 1},
		{"ts", "ts", "wt_pct", 1},
		{"al", "al", "wt_pct", 1},
		{"al", "al2o3", "wt_pct", 0.5293},
		{"d13c_org", "d13c_org", "permil", 1},
		{"d13c_carb", "d13c_carb", "permil", 1},
		{"os_initial", "os_initial", "ratio", 1},
		{"d202hg", "d202hg", "permil", 1},
		{"cap_d199hg", "cap_d199hg", "permil", 1},
	}
}

func canonicalUnit(proxy string) proxyUnit {
	for _, pu := range proxyUnits() {
		if pu.proxy == proxy {
			return pu
		}
	}
	return proxyUnit{}
}

func acceptedProxyColumns() string {
	var names []string
	for _, pu := range proxyUnits() {
		names = append(names, pu.prefix+"_"+pu.unit)
	}
	return strings.Join(names, ", ")
}

// proxyColumns is how one measurement file's header maps onto proxies.
type proxyColumns struct {
	value  map[string]proxyUnit // column → unit of a value column
	sigma  map[string]string    // proxy → its sigma column
	dl     map[string]string    // proxy → its detection-limit column
	method map[string]string    // proxy → its method column
	order  []string             // proxies in header order
}

var companionRE = regexp.MustCompile(`^([a-z0-9_]+?)_(sigma|dl)_([a-z_]+)$`)

// mapProxyColumns reads a measurement header, recording a problem for each column it cannot place.
func mapProxyColumns(t *csvTable) proxyColumns {
	pc := proxyColumns{value: map[string]proxyUnit{}, sigma: map[string]string{}, dl: map[string]string{}, method: map[string]string{}}
	byProxy := map[string]string{}
	units := proxyUnits()
	find := func(prefix, unit string) (proxyUnit, bool) {
		for _, pu := range units {
			if pu.prefix == prefix && pu.unit == unit {
				return pu, true
			}
		}
		return proxyUnit{}, false
	}
	for _, h := range t.header {
		if h == "" || h == "sample" || h == "height_m" {
			continue
		}
		if m := companionRE.FindStringSubmatch(h); m != nil {
			if pu, ok := find(m[1], m[3]); ok {
				target := pc.sigma
				if m[2] == "dl" {
					target = pc.dl
				}
				target[pu.proxy] = h
				continue
			}
		}
		if prefix, ok := strings.CutSuffix(h, "_method"); ok {
			known := false
			for _, pu := range units {
				if pu.prefix == prefix {
					pc.method[pu.proxy] = h
					known = true
					break
				}
			}
			if known {
				continue
			}
		}
		placed := false
		for _, pu := range units {
			if h == pu.prefix+"_"+pu.unit {
				if prev, dup := byProxy[pu.proxy]; dup {
					t.problems = append(t.problems, Problem{File: t.file, Line: 1, Column: h,
						Message: fmt.Sprintf("gives %s a second time (also in %s); keep one column per proxy", pu.proxy, prev)})
				}
				byProxy[pu.proxy] = h
				pc.value[h] = pu
				pc.order = append(pc.order, pu.proxy)
				placed = true
				break
			}
		}
		if placed {
			continue
		}
		msg := "unknown column; want sample, height_m and proxy columns named proxy_unit: " + acceptedProxyColumns() +
			" (with optional proxy_sigma_unit, proxy_dl_unit, proxy_method)"
		if strings.HasPrefix(h, "hg_") {
			msg = "unknown unit for Hg; write hg_ppb (ng/g) or hg_ppm (µg/g)"
		} else if strings.HasPrefix(h, "toc") || strings.HasPrefix(h, "ts_") || strings.HasPrefix(h, "al") {
			msg = "unknown unit; TOC, TS, Al and Al₂O₃ are given in weight per cent: write toc_wt_pct, ts_wt_pct, al_wt_pct or al2o3_wt_pct"
		}
		t.problems = append(t.problems, Problem{File: t.file, Line: 1, Column: h, Message: msg})
	}
	for _, kind := range []map[string]string{pc.sigma, pc.dl, pc.method} {
		for proxy, col := range kind {
			if _, ok := byProxy[proxy]; !ok {
				t.problems = append(t.problems, Problem{File: t.file, Line: 1, Column: col,
					Message: fmt.Sprintf("there is no %s value column for it", proxy)})
			}
		}
	}
	if len(pc.value) == 0 {
		t.problems = append(t.problems, Problem{File: t.file, Line: 1, Message: "no proxy columns; want at least one of " + acceptedProxyColumns()})
	}
	return pc
}

// convert scales a value to the canonical unit, rounded to 12 significant digits so that a unit
// conversion does not leave binary noise (0.123 ppm → 123 ppb, not 123.00000000000001).
func convert(v, factor float64) float64 {
	if factor == 1 {
		return v
	}
	r, _ := strconv.ParseFloat(strconv.FormatFloat(v*factor, 'g', 12, 64), 64)
	return r
}

// Unit sanity limits that catch a column whose header names the wrong unit (REFERENCES §6: Hg in ppb;
// sedimentary Hg is rarely above a few thousand ppb). Common practice, chosen here, stated in the error.
const (
	hgPpbMedianFloor = 1.0  // a ppb column whose median is below 1 ppb is almost surely in ppm
	hgPpmCeiling     = 50.0 // a ppm column with a value above 50 ppm (50 000 ppb) is almost surely in ppb
)

// ImportMeasurements imports a wide measurement file (sample, height_m, one column per proxy with its
// unit) into the long measurement table of a known section, converting units to each proxy's canonical
// unit. Values below detection ("<DL" or "<limit") are kept as such, never as numbers.
func (d *DB) ImportMeasurements(ctx context.Context, section, file string, r io.Reader) (ImportResult, error) {
	var pc proxyColumns
	var recs []Measurement
	var samples int
	return d.importFile(ctx, "measurements", file, r, mustFormat("measurements").RequiredNames(), nil,
		func(t *csvTable) {
			pc = mapProxyColumns(t)
			if t.err() != nil {
				return
			}
			seen := map[string]int{}
			hgCols := map[string][]float64{}
			for i := range t.rows {
				rw := t.row(i)
				sample := rw.requiredStr("sample")
				height, okH := rw.float("height_m")
				if l, dup := seen[sample]; dup && sample != "" {
					rw.problem("sample", "duplicate sample code %q (also on line %d)", sample, l)
				}
				seen[sample] = rw.line()
				n := 0
				for _, col := range t.header {
					pu, isValue := pc.value[col]
					if !isValue {
						continue
					}
					m, ok := parseMeasurementCell(rw, pc, col, pu)
					if !ok {
						continue
					}
					n++
					if pu.proxy == "hg" && m.Value != nil {
						hgCols[col] = append(hgCols[col], *m.Value/pu.factor)
					}
					if okH && sample != "" {
						m.Sample, m.HeightM = sample, height
						recs = append(recs, m)
					}
				}
				if n == 0 {
					rw.problem("", "sample %q has no proxy value", sample)
				}
				samples++
			}
			checkHgUnits(t, pc, hgCols)
		},
		func(tx *sql.Tx, t *csvTable, batch int64, res *ImportResult) error {
			sid, err := sectionIDByName(ctx, tx, section, file)
			if err != nil {
				return err
			}
			var existing int
			if err := tx.QueryRowContext(ctx, `SELECT count(*) FROM measurements WHERE section_id = ?`, sid).Scan(&existing); err != nil {
				return err
			}
			if existing > 0 {
				dups, err := existingSamples(ctx, tx, sid)
				if err != nil {
					return err
				}
				for i := range t.rows {
					rw := t.row(i)
					if dups[rw.str("sample")] {
						rw.problem("sample", "sample %q of section %q is already in the compilation", rw.str("sample"), section)
					}
				}
				if t.err() != nil {
					return nil
				}
			}
			if t.err() != nil {
				return nil
			}
			stmt, err := tx.PrepareContext(ctx, `INSERT INTO measurements (section_id, sample, height_m, proxy_code, value,
				sigma, below_detection, detection_limit, method, batch_id) VALUES (?,?,?,?,?,?,?,?,?,?)`)
			if err != nil {
				return err
			}
			defer stmt.Close()
			for _, m := range recs {
				if _, err := stmt.ExecContext(ctx, sid, m.Sample, m.HeightM, m.Proxy, m.Value, m.Sigma, m.BelowDetection,
					m.DetectionLimit, m.Method, batch); err != nil {
					return fmt.Errorf("insert measurement %s/%s: %w", m.Sample, m.Proxy, err)
				}
			}
			res.Added["samples"] = samples
			res.Added["measurements"] = len(recs)
			return addRevision(ctx, tx, batch, "measurements", sid, nil,
				map[string]any{"section": section, "samples": samples, "values": len(recs), "file": file})
		})
}

// parseMeasurementCell reads one proxy cell of a row (and its companions); ok is false when the cell is
// empty (not measured) or wrong (a problem is recorded).
func parseMeasurementCell(rw row, pc proxyColumns, col string, pu proxyUnit) (Measurement, bool) {
	m := Measurement{Proxy: pu.proxy}
	cell := rw.str(col)
	if c := pc.method[pu.proxy]; c != "" {
		m.Method = rw.str(c)
	}
	if c := pc.dl[pu.proxy]; c != "" {
		if v := rw.optFloat(c); v != nil {
			rw.positive(c, v, true)
			x := convert(*v, pu.factor)
			m.DetectionLimit = &x
		}
	}
	if cell == "" {
		return m, false
	}
	if lim, ok := strings.CutPrefix(cell, "<"); ok {
		m.BelowDetection = true
		if !strings.EqualFold(strings.TrimSpace(lim), "dl") {
			v, err := parseNumber(strings.TrimSpace(lim))
			if err != nil || v < 0 {
				rw.problem(col, "want a number, \"<DL\" or \"<limit\" (e.g. <2.5), got %q", cell)
				return m, false
			}
			x := convert(v, pu.factor)
			if m.DetectionLimit != nil && *m.DetectionLimit != x {
				rw.problem(col, "below-detection limit %s contradicts the detection-limit column (%s)", formatNumber(v), formatNumber(*m.DetectionLimit/pu.factor))
				return m, false
			}
			m.DetectionLimit = &x
		}
		return m, true
	}
	v, err := parseNumber(cell)
	if err != nil {
		rw.problem(col, "want a number, \"<DL\" or \"<limit\" (e.g. <2.5), got %q", cell)
		return m, false
	}
	switch pu.proxy {
	case "hg", "toc", "ts", "al":
		if v < 0 {
			rw.problem(col, "want a concentration of 0 or more, got %s", formatNumber(v))
			return m, false
		}
	}
	if pu.unit == "wt_pct" && v > 100 {
		rw.problem(col, "%s wt%% is more than 100 wt%%; check the unit", formatNumber(v))
		return m, false
	}
	x := convert(v, pu.factor)
	m.Value = &x
	if c := pc.sigma[pu.proxy]; c != "" {
		if s := rw.optFloat(c); s != nil {
			rw.positive(c, s, true)
			y := convert(*s, pu.factor)
			m.Sigma = &y
		}
	}
	return m, true
}

// checkHgUnits catches a Hg column whose values contradict the unit in its header.
func checkHgUnits(t *csvTable, pc proxyColumns, byCol map[string][]float64) {
	for _, col := range t.header {
		vals, ok := byCol[col]
		if !ok {
			continue
		}
		pu := pc.value[col]
		switch pu.unit {
		case "ppb":
			if med := median(vals); len(vals) >= 3 && med < hgPpbMedianFloor {
				t.problems = append(t.problems, Problem{File: t.file, Column: col, Message: fmt.Sprintf(
					"median Hg is %s ppb, below %s ppb: the values look like ppm; rename the column hg_ppm or convert them",
					formatNumber(med), formatNumber(hgPpbMedianFloor))})
			}
		case "ppm":
			for i := range t.rows {
				if v, err := parseNumber(t.row(i).str(col)); err == nil && v > hgPpmCeiling {
					t.row(i).problem(col, "%s ppm Hg (%s ppb) is implausible for a sediment: the values look like ppb; rename the column hg_ppb",
						formatNumber(v), formatNumber(v*1000))
					break
				}
			}
		}
	}
}

func median(v []float64) float64 {
	if len(v) == 0 {
		return math.NaN()
	}
	s := slices.Clone(v)
	sort.Float64s(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}

func existingSamples(ctx context.Context, tx *sql.Tx, sid int64) (map[string]bool, error) {
	rows, err := tx.QueryContext(ctx, `SELECT DISTINCT sample FROM measurements WHERE section_id = ?`, sid)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	out := map[string]bool{}
	for rows.Next() {
		var s string
		if err := rows.Scan(&s); err != nil {
			return nil, err
		}
		out[s] = true
	}
	return out, rows.Err()
}

// Samples returns the samples of a section in wide form, ordered by height then sample code.
func (d *DB) Samples(ctx context.Context, sectionID int64) ([]Sample, []string, error) {
	rows, err := d.reader().QueryContext(ctx, `SELECT sample, height_m, proxy_code, value, sigma, below_detection,
		detection_limit, method FROM measurements WHERE section_id = ? ORDER BY height_m, sample, proxy_code`, sectionID)
	if err != nil {
		return nil, nil, fmt.Errorf("samples: %w", err)
	}
	defer rows.Close()
	var out []Sample
	present := map[string]bool{}
	index := map[string]int{}
	for rows.Next() {
		m := Measurement{SectionID: sectionID}
		if err := rows.Scan(&m.Sample, &m.HeightM, &m.Proxy, &m.Value, &m.Sigma, &m.BelowDetection, &m.DetectionLimit, &m.Method); err != nil {
			return nil, nil, err
		}
		i, ok := index[m.Sample]
		if !ok {
			i = len(out)
			index[m.Sample] = i
			out = append(out, Sample{Sample: m.Sample, HeightM: m.HeightM, Values: map[string]Measurement{}})
		}
		out[i].Values[m.Proxy] = m
		present[m.Proxy] = true
	}
	var proxies []string
	for _, pu := range proxyUnits() {
		if present[pu.proxy] && !slices.Contains(proxies, pu.proxy) {
			proxies = append(proxies, pu.proxy)
		}
	}
	return out, proxies, rows.Err()
}
