package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"io"
	"regexp"
	"strings"
)

// ImportResult says what one import added.
type ImportResult struct {
	Kind    string         `json:"kind"`
	File    string         `json:"file"`
	BatchID int64          `json:"batch_id"`
	Rows    int            `json:"rows"`
	Added   map[string]int `json:"added"`
	Notes   []string       `json:"notes,omitempty"`
}

var singular = map[string]string{"provinces": "province", "units": "unit", "sections": "section", "dates": "date",
	"samples": "sample", "measurements": "measurement", "tie points": "tie point", "events": "event", "hiatuses": "hiatus"}

func (r ImportResult) String() string {
	var parts []string
	for _, k := range []string{"provinces", "units", "sections", "dates", "samples", "measurements", "tie points", "events", "hiatuses"} {
		switch n := r.Added[k]; {
		case n == 1:
			parts = append(parts, "1 "+singular[k])
		case n > 1:
			parts = append(parts, fmt.Sprintf("%d %s", n, k))
		}
	}
	rows := "rows"
	if r.Rows == 1 {
		rows = "row"
	}
	s := fmt.Sprintf("%s: imported %d %s (%s)", r.File, r.Rows, rows, strings.Join(parts, ", "))
	for _, n := range r.Notes {
		s += "\n  " + n
	}
	return s
}

// Column lists of the import files, in the order exports write them: from the file formats (formats.go)
// that the help pages and templates show.
var (
	provinceColumns = mustFormat("provinces").ColumnNames()
	unitColumns     = mustFormat("units").ColumnNames()
	sectionColumns  = mustFormat("sections").ColumnNames()
	dateColumns     = mustFormat("dates").ColumnNames()
	tieColumns      = mustFormat("ties").ColumnNames()
	eventColumns    = mustFormat("events").ColumnNames()
)

// importFile is the shape shared by every import: read and check the file, then, in one transaction,
// resolve references, check against what is stored, and write. Nothing is written unless every row passes.
func (d *DB) importFile(ctx context.Context, kind, file string, r io.Reader, required, allowed []string,
	parse func(t *csvTable), write func(tx *sql.Tx, t *csvTable, batch int64, res *ImportResult) error) (ImportResult, error) {
	t, err := readCSV(file, r)
	if err != nil {
		return ImportResult{Kind: kind, File: file, Added: map[string]int{}}, err
	}
	t.requireColumns(required, allowed)
	if err := t.err(); err != nil {
		return ImportResult{Kind: kind, File: file, Added: map[string]int{}}, err
	}
	// Rows are checked against what is stored even when some have problems already, so that one run
	// lists every error; the transaction is then rolled back.
	parse(t)
	return d.importTable(ctx, kind, t, write)
}

// importFileRows is importFile for long files: each row is parsed as it is read (parseRow may drop its
// cells), so memory holds the records, not the file's cells too. Problems and results are importFile's.
func (d *DB) importFileRows(ctx context.Context, kind, file string, r io.Reader, required, allowed []string,
	parseRow func(t *csvTable, i int), write func(tx *sql.Tx, t *csvTable, batch int64, res *ImportResult) error) (ImportResult, error) {
	res := ImportResult{Kind: kind, File: file, Added: map[string]int{}}
	t, err := readCSVEach(file, r, required, allowed, parseRow)
	if err != nil {
		return res, err
	}
	return d.importTable(ctx, kind, t, write)
}

// importTable runs the write of an import of the read and parsed t in one transaction.
func (d *DB) importTable(ctx context.Context, kind string, t *csvTable,
	write func(tx *sql.Tx, t *csvTable, batch int64, res *ImportResult) error) (ImportResult, error) {
	file := t.file
	res := ImportResult{Kind: kind, File: file, Added: map[string]int{}}
	res.Rows = len(t.rows)
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		batch, err := d.newBatch(ctx, tx, "import "+kind, file)
		if err != nil {
			return err
		}
		res.BatchID = batch
		if err := recordMappingUse(ctx, tx, batch); err != nil {
			return err
		}
		if err := write(tx, t, batch, &res); err != nil {
			return err
		}
		if err := t.err(); err != nil {
			return err
		}
		if isDryRun(ctx) {
			return errDryRun
		}
		return setBatchSummary(ctx, tx, batch, res.String())
	})
	if errors.Is(err, errDryRun) {
		res.BatchID = 0
		return res, nil
	}
	if err != nil {
		if _, ok := AsValidation(err); ok {
			return res, err
		}
		return res, fmt.Errorf("import %s %s: %w", kind, file, err)
	}
	return res, nil
}

// ImportProvinces imports provinces.csv (province, description, an optional palaeomagnetic pole). A province that exists is an error.
func (d *DB) ImportProvinces(ctx context.Context, file string, r io.Reader) (ImportResult, error) {
	var recs []Province
	return d.importFile(ctx, "provinces", file, r, mustFormat("provinces").RequiredNames(), provinceColumns,
		func(t *csvTable) {
			seen := firstLines{}
			for i := range t.rows {
				rw := t.row(i)
				p := parseProvinceRow(rw)
				seen.note(rw, "province", p.Name)
				recs = append(recs, p)
			}
		},
		func(tx *sql.Tx, t *csvTable, batch int64, res *ImportResult) error {
			for i, p := range recs {
				if id, err := lookupID(ctx, tx, `SELECT id FROM provinces WHERE name = ?`, p.Name); err != nil {
					return err
				} else if id != 0 {
					t.row(i).problem("province", "%q is already in the compilation", p.Name)
				}
			}
			if t.err() != nil {
				return nil
			}
			for _, p := range recs {
				if _, err := d.insertProvince(ctx, tx, batch, p); err != nil {
					return err
				}
				res.Added["provinces"]++
			}
			return nil
		})
}

func (d *DB) insertProvince(ctx context.Context, tx *sql.Tx, batch int64, p Province) (int64, error) {
	out, err := provinceType().insert(ctx, d, tx, batch, p)
	return out.ID, err
}

// provinceID returns the id of the named province, creating it (and saying so in res) when absent.
func (d *DB) provinceID(ctx context.Context, tx *sql.Tx, batch int64, name string, res *ImportResult) (int64, error) {
	id, err := lookupID(ctx, tx, `SELECT id FROM provinces WHERE name = ?`, name)
	if err != nil || id != 0 {
		return id, err
	}
	id, err = d.insertProvince(ctx, tx, batch, Province{Name: name})
	if err == nil {
		res.Added["provinces"]++
		res.Notes = append(res.Notes, fmt.Sprintf("created province %q (no description yet)", name))
	}
	return id, err
}

// ImportUnits imports units.csv. Provinces not yet known are created; a unit that exists is an error.
func (d *DB) ImportUnits(ctx context.Context, file string, r io.Reader) (ImportResult, error) {
	var recs []Unit
	return d.importFile(ctx, "units", file, r, mustFormat("units").RequiredNames(), unitColumns,
		func(t *csvTable) {
			seen := map[[2]string]int{}
			for i := range t.rows {
				rw := t.row(i)
				u := parseUnitRow(rw)
				key := [2]string{u.Province, u.Name}
				if l, dup := seen[key]; dup && u.Name != "" {
					rw.problem("unit", "%q of %q already given on line %d", u.Name, u.Province, l)
				}
				seen[key] = rw.line()
				recs = append(recs, u)
			}
		},
		func(tx *sql.Tx, t *csvTable, batch int64, res *ImportResult) error {
			for i, u := range recs {
				pid, err := d.provinceID(ctx, tx, batch, u.Province, res)
				if err != nil {
					return err
				}
				recs[i].ProvinceID = pid
				if id, err := lookupID(ctx, tx, `SELECT id FROM units WHERE province_id = ? AND name = ?`, pid, u.Name); err != nil {
					return err
				} else if id != 0 {
					t.row(i).problem("unit", "%q of %q is already in the compilation", u.Name, u.Province)
				}
			}
			if t.err() != nil {
				return nil
			}
			for _, u := range recs {
				if _, err := d.insertUnit(ctx, tx, batch, u); err != nil {
					return err
				}
				res.Added["units"]++
			}
			return nil
		})
}

func (d *DB) insertUnit(ctx context.Context, tx *sql.Tx, batch int64, u Unit) (int64, error) {
	out, err := unitType().insert(ctx, d, tx, batch, u)
	return out.ID, err
}

// ImportSections imports sections.csv. A section that exists is an error.
func (d *DB) ImportSections(ctx context.Context, file string, r io.Reader) (ImportResult, error) {
	var recs []Section
	return d.importFile(ctx, "sections", file, r, mustFormat("sections").RequiredNames(), sectionColumns,
		func(t *csvTable) {
			seen := firstLines{}
			for i := range t.rows {
				rw := t.row(i)
				s := parseSectionRow(rw)
				seen.note(rw, "section", s.Name)
				recs = append(recs, s)
			}
		},
		func(tx *sql.Tx, t *csvTable, batch int64, res *ImportResult) error {
			for i, s := range recs {
				if id, err := lookupID(ctx, tx, `SELECT id FROM sections WHERE name = ?`, s.Name); err != nil {
					return err
				} else if id != 0 {
					t.row(i).problem("section", "%q is already in the compilation", s.Name)
				}
			}
			if t.err() != nil {
				return nil
			}
			for _, s := range recs {
				if _, err := sectionType().insert(ctx, d, tx, batch, s); err != nil {
					return err
				}
				res.Added["sections"]++
			}
			return nil
		})
}

var doiRE = regexp.MustCompile(`^10\.\d{4,9}/\S+$`)

// ImportDates imports dates.csv. A date belongs to a unit (province and unit given; both created when not
// yet known, and the result says so) or to a horizon of a known section (section and height_m). Sample
// codes must be unique per method across the compilation. Uncertainties are read at sigma_level and stored
// as 1σ.
func (d *DB) ImportDates(ctx context.Context, file string, r io.Reader) (ImportResult, error) {
	var recs []*Date // one allocation each: no copy of every record when the slice grows
	seen := map[[2]string]int{}
	return d.importFileRows(ctx, "dates", file, r,
		mustFormat("dates").RequiredNames(),
		append(dateColumns[:len(dateColumns):len(dateColumns)], DerivedDateColumns...),
		func(t *csvTable, i int) {
			dt := parseDateRow(t.row(i), seen)
			recs = append(recs, &dt)
			t.rows[i] = nil // the record holds what it needs; let the row's cells go
		},
		func(tx *sql.Tx, t *csvTable, batch int64, res *ImportResult) error {
			if ignored := ignoredDerived(t); ignored != "" {
				res.Notes = append(res.Notes, ignored)
			}
			pendingNote(ctx, res, len(recs), "dates", func(i int) *ReviewState { return &recs[i].ReviewState })
			w, err := d.newDateWriter(ctx, tx, batch)
			if err != nil {
				return err
			}
			defer w.close()
			sections := map[string]int64{}
			for i := range recs {
				dt := recs[i]
				rw := t.row(i)
				if id, err := w.lookup(ctx, w.bySample, dt.SampleCode, dt.Method); err != nil {
					return err
				} else if id != 0 {
					rw.problem("sample_code", "a %s date of sample %q is already in the compilation (date %d)",
						Label(methodTerms(), dt.Method), dt.SampleCode, id)
				}
				if dt.Section != "" {
					sid, known := sections[dt.Section]
					if !known {
						if sid, err = w.lookup(ctx, w.section, dt.Section); err != nil {
							return err
						}
						sections[dt.Section] = sid
					}
					if sid == 0 {
						rw.problem("section", "unknown section %q; import it with the sections file first", dt.Section)
						continue
					}
					dt.SectionID = &sid
				}
			}
			if t.err() != nil {
				return nil
			}
			units := map[[2]string]int64{}
			for i := range recs {
				dt := recs[i]
				if dt.Unit != "" {
					key := [2]string{dt.Province, dt.Unit}
					uid, known := units[key]
					if !known {
						pid, err := d.provinceID(ctx, tx, batch, dt.Province, res)
						if err != nil {
							return err
						}
						uid, err = w.lookup(ctx, w.unit, pid, dt.Unit)
						if err != nil {
							return err
						}
						if uid == 0 {
							uid, err = d.insertUnit(ctx, tx, batch, Unit{ProvinceID: pid, Name: dt.Unit, Kind: "other"})
							if err != nil {
								return err
							}
							res.Added["units"]++
							res.Notes = append(res.Notes, fmt.Sprintf("created unit %q of %q (kind other; import units to describe it)", dt.Unit, dt.Province))
						}
						units[key] = uid
					}
					dt.UnitID = &uid
					// A likely duplicate: the unit already has a date by the same method at the same age
					// (a republished date under another sample code). Kept, and said.
					if other, err := w.likelyDuplicate(ctx, uid, dt.Method, dt.AgeMa); err != nil {
						return err
					} else if other != 0 {
						res.Notes = append(res.Notes, fmt.Sprintf("line %d: likely a duplicate of date %d (same unit, method and age %s Ma); check before committing", t.lines[i], other, formatNumber(dt.AgeMa)))
					}
				}
				if IsArAr(dt.Method) && (dt.MonitorAgeMa == nil || dt.LambdaPerA == nil) {
					res.Notes = append(res.Notes, fmt.Sprintf("line %d: ⁴⁰Ar/³⁹Ar date %s has no monitor age or decay constant: it will be listed as not recalculable", t.lines[i], dt.SampleCode))
				}
				if err := w.insert(ctx, dt); err != nil {
					return err
				}
				res.Added["dates"]++
			}
			return nil
		})
}

func methodTerms() []Term {
	ms := Methods()
	out := make([]Term, len(ms))
	for i, m := range ms {
		out[i] = m.Term
	}
	return out
}

// parseDateRow reads and checks one row of a dates file; seen tracks (sample_code, method) pairs.
func parseDateRow(rw row, seen map[[2]string]int) Date {
	dt := Date{Province: rw.str("province"), Unit: rw.str("unit"), Section: rw.str("section"),
		HeightM: rw.optFloat("height_m"), SampleCode: rw.requiredStr("sample_code"),
		Method: rw.enum("method", methodCodes(), ""), Material: rw.str("material"),
		Interpretation: rw.enum("interpretation", codes(Interpretations()), ""),
		Tracer:         rw.str("tracer"), Monitor: rw.str("monitor"), MonitorAgeMa: rw.optFloat("monitor_age_ma"),
		LambdaPerA: rw.optFloat("lambda_per_a"), Laboratory: rw.str("laboratory"), Citation: rw.str("citation"),
		DOI: rw.str("doi"), Latitude: rw.optFloat("latitude"), Longitude: rw.optFloat("longitude"),
		ReviewState: reviewStateCell(rw, ReviewAccepted), Notes: rw.str("notes")}
	switch {
	case dt.Unit != "" && dt.Section != "":
		rw.problem("section", "a date belongs to a unit or to a section horizon, not both (unit %q given too)", dt.Unit)
	case dt.Unit != "":
		if dt.Province == "" {
			rw.problem("province", "is empty; a unit's date needs its province")
		}
		if dt.HeightM != nil {
			rw.problem("height_m", "is for horizon dates of a section; this date is of unit %q", dt.Unit)
		}
	case dt.Section != "":
		if dt.HeightM == nil {
			rw.problem("height_m", "is empty; a horizon date of section %q needs its height in metres", dt.Section)
		}
	default:
		rw.problem("unit", "is empty; give province and unit, or section and height_m")
	}
	level := rw.sigmaLevel("sigma_level")
	age, okAge := rw.float("age_ma")
	sigma, okSigma := rw.float("sigma_ma")
	sy, sz := rw.optFloat("sigma_y_ma"), rw.optFloat("sigma_z_ma")
	if okAge {
		switch {
		case age <= 0:
			rw.problem("age_ma", "want an age in Ma greater than 0, got %s", formatNumber(age))
		case age > 4600:
			rw.problem("age_ma", "%s Ma is older than the Earth; ages are in Ma (millions of years), not years or ka", formatNumber(age))
		}
	}
	if okSigma && sigma <= 0 {
		rw.problem("sigma_ma", "want an uncertainty greater than 0, got %s", formatNumber(sigma))
		okSigma = false
	}
	if okSigma && okAge && age > 0 && sigma >= age {
		rw.problem("sigma_ma", "uncertainty %s is not smaller than the age %s; both must be in Ma", formatNumber(sigma), formatNumber(age))
	}
	if okSigma && okAge && age > 0 {
		rw.plausibleSigma("sigma_ma", age, sigma, level)
	}
	if sy != nil && okSigma && *sy < sigma {
		rw.problem("sigma_y_ma", "want X ⊕ tracer ≥ the analytical sigma_ma %s, got %s", formatNumber(sigma), formatNumber(*sy))
	}
	if sz != nil && okSigma {
		lo := sigma
		if sy != nil {
			lo = *sy
		}
		if *sz < lo {
			rw.problem("sigma_z_ma", "want the full external uncertainty ≥ %s (sigma_y_ma or sigma_ma), got %s", formatNumber(lo), formatNumber(*sz))
		}
	}
	if sy != nil && dt.Method != "" && !strings.HasPrefix(dt.Method, "upb_") {
		rw.problem("sigma_y_ma", "X ⊕ tracer is for U–Pb dates; this is a %s date", Label(methodTerms(), dt.Method))
	}
	if level > 0 {
		k := float64(level)
		dt.SigmaLevel = level
		dt.AgeMa, dt.SigmaMa = age, sigma/k
		if sy != nil {
			v := *sy / k
			dt.SigmaYMa = &v
		}
		if sz != nil {
			v := *sz / k
			dt.SigmaZMa = &v
		}
	}
	if dt.LambdaPerA != nil && (*dt.LambdaPerA < 1e-11 || *dt.LambdaPerA > 1e-8) {
		rw.problem("lambda_per_a", "want the total decay constant in a⁻¹ (e.g. 5.463e-10), got %s", formatNumber(*dt.LambdaPerA))
	}
	rw.positive("monitor_age_ma", dt.MonitorAgeMa, false)
	if dt.MonitorAgeMa != nil && *dt.MonitorAgeMa > 4600 {
		rw.problem("monitor_age_ma", "want the monitor age in Ma (e.g. 28.201), got %s", formatNumber(*dt.MonitorAgeMa))
	}
	if IsArAr(dt.Method) {
		if (dt.MonitorAgeMa == nil) != (dt.LambdaPerA == nil) {
			rw.problem("monitor_age_ma", "give monitor_age_ma and lambda_per_a together, or neither (the date is then listed as not recalculable)")
		}
	} else if dt.Method != "" && (dt.Monitor != "" || dt.MonitorAgeMa != nil) {
		rw.problem("monitor", "a fluence monitor is for ⁴⁰Ar/³⁹Ar dates; this is a %s date", Label(methodTerms(), dt.Method))
	}
	if dt.DOI != "" && !doiRE.MatchString(dt.DOI) {
		rw.problem("doi", "want a DOI such as 10.1016/j.epsl.2020.116333 (without https://doi.org/), got %q", dt.DOI)
	}
	rw.within("latitude", dt.Latitude, -90, 90)
	rw.within("longitude", dt.Longitude, -180, 180)
	if dt.SampleCode != "" && dt.Method != "" {
		key := [2]string{dt.SampleCode, dt.Method}
		if l, dup := seen[key]; dup {
			rw.problem("sample_code", "duplicate: sample %q with method %s is already on line %d", dt.SampleCode, dt.Method, l)
		}
		seen[key] = rw.line()
	}
	return dt
}

func (d *DB) insertDate(ctx context.Context, tx *sql.Tx, batch int64, dt *Date) error {
	now := d.stamp()
	id, err := nextID(ctx, tx, "dates", "date")
	if err != nil {
		return err
	}
	_, err = tx.ExecContext(ctx, `INSERT INTO dates (id, unit_id, section_id, height_m, sample_code, method, material,
		interpretation, age_ma, sigma_ma, sigma_y_ma, sigma_z_ma, sigma_level, tracer, monitor, monitor_age_ma,
		lambda_per_a, laboratory, citation, doi, latitude, longitude, review_state, notes, created_at, updated_at)
		VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)`,
		id, dt.UnitID, dt.SectionID, dt.HeightM, dt.SampleCode, dt.Method, dt.Material, dt.Interpretation, dt.AgeMa,
		dt.SigmaMa, dt.SigmaYMa, dt.SigmaZMa, dt.SigmaLevel, dt.Tracer, dt.Monitor, dt.MonitorAgeMa, dt.LambdaPerA,
		dt.Laboratory, dt.Citation, dt.DOI, dt.Latitude, dt.Longitude, dt.ReviewState, dt.Notes, now, now)
	if err != nil {
		return fmt.Errorf("insert date %q: %w", dt.SampleCode, err)
	}
	dt.ID = id
	dt.Version, dt.CreatedAt, dt.UpdatedAt = 1, now, now
	return addRevision(ctx, tx, batch, "date", dt.ID, nil, dt)
}

// sectionIDByName returns the id of a section, or a validation error naming the known sections.
func sectionIDByName(ctx context.Context, tx *sql.Tx, name, file string) (int64, error) {
	id, err := lookupID(ctx, tx, `SELECT id FROM sections WHERE name = ?`, name)
	if err != nil || id != 0 {
		return id, err
	}
	var names []string
	rows, err := tx.QueryContext(ctx, `SELECT name FROM sections ORDER BY name`)
	if err != nil {
		return 0, err
	}
	defer rows.Close()
	for rows.Next() {
		var n string
		if err := rows.Scan(&n); err != nil {
			return 0, err
		}
		names = append(names, fmt.Sprintf("%q", n))
	}
	known := "none yet"
	if len(names) > 0 {
		known = strings.Join(names, ", ")
	}
	return 0, &ValidationError{[]Problem{{File: file, Message: fmt.Sprintf("unknown section %q; import it with the sections file first (known sections: %s)", name, known)}}}
}

// ImportTies imports the tie points of one section. Their review_state (optional column) defaults to
// accepted; a contribution (AsContribution) makes every one pending whatever the file says.
func (d *DB) ImportTies(ctx context.Context, section, file string, r io.Reader) (ImportResult, error) {
	var recs []TiePoint
	return d.importFile(ctx, "ties", file, r, mustFormat("ties").RequiredNames(), tieColumns,
		func(t *csvTable) {
			seen := firstLines{}
			for i := range t.rows {
				rw := t.row(i)
				tp := parseTieRow(rw)
				seen.note(rw, "label", tp.Label)
				recs = append(recs, tp)
			}
		},
		func(tx *sql.Tx, t *csvTable, batch int64, res *ImportResult) error {
			sid, err := sectionIDByName(ctx, tx, section, file)
			if err != nil {
				return err
			}
			pendingNote(ctx, res, len(recs), "tie points", func(i int) *ReviewState { return &recs[i].ReviewState })
			for i := range recs {
				tp := &recs[i]
				rw := t.row(i)
				tp.SectionID = sid
				if id, err := lookupID(ctx, tx, `SELECT id FROM tie_points WHERE section_id = ? AND label = ?`, sid, tp.Label); err != nil {
					return err
				} else if id != 0 {
					rw.problem("label", "tie %q of section %q is already in the compilation", tp.Label, section)
				}
				if tp.DateSampleCode != "" {
					id, err := d.dateBySample(ctx, tx, tp.DateSampleCode, tp.DateMethod)
					if err != nil {
						rw.problem("date_sample_code", "%v", err)
						continue
					}
					tp.DateID = &id
				}
			}
			if t.err() != nil {
				return nil
			}
			now := d.stamp()
			for _, tp := range recs {
				id, err := nextID(ctx, tx, "tie_points", "tie_point")
				if err != nil {
					return err
				}
				_, err = tx.ExecContext(ctx, `INSERT INTO tie_points (id, section_id, label, height_m, kind, distribution,
					age_ma, sigma_ma, sigma_level, age_min_ma, age_max_ma, date_id, review_state, notes, created_at, updated_at)
					VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)`, id, sid, tp.Label, tp.HeightM, tp.Kind, tp.Distribution, tp.AgeMa,
					tp.SigmaMa, tp.SigmaLevel, tp.AgeMinMa, tp.AgeMaxMa, tp.DateID, tp.ReviewState, tp.Notes, now, now)
				if err != nil {
					return fmt.Errorf("insert tie %q: %w", tp.Label, err)
				}
				tp.ID = id
				tp.Version = 1
				if err := addRevision(ctx, tx, batch, "tie_point", tp.ID, nil, tp); err != nil {
					return err
				}
				res.Added["tie points"]++
			}
			return nil
		})
}

// dateBySample finds the one date with a sample code (and method, when given).
func (d *DB) dateBySample(ctx context.Context, tx *sql.Tx, sample, method string) (int64, error) {
	q := `SELECT id FROM dates WHERE sample_code = ?`
	args := []any{sample}
	if method != "" {
		q += ` AND method = ?`
		args = append(args, method)
	}
	rows, err := tx.QueryContext(ctx, q, args...)
	if err != nil {
		return 0, err
	}
	defer rows.Close()
	var ids []int64
	for rows.Next() {
		var id int64
		if err := rows.Scan(&id); err != nil {
			return 0, err
		}
		ids = append(ids, id)
	}
	switch len(ids) {
	case 0:
		return 0, fmt.Errorf("no date with sample code %q%s in the compilation; import the dates first", sample, methodSuffix(method))
	case 1:
		return ids[0], nil
	default:
		return 0, fmt.Errorf("%d dates have sample code %q; add date_method to say which", len(ids), sample)
	}
}

func methodSuffix(m string) string {
	if m == "" {
		return ""
	}
	return " and method " + m
}

// ImportEvents imports the entered events of one section.
func (d *DB) ImportEvents(ctx context.Context, section, file string, r io.Reader) (ImportResult, error) {
	var recs []Event
	return d.importFile(ctx, "events", file, r, mustFormat("events").RequiredNames(), eventColumns,
		func(t *csvTable) {
			seen := firstLines{}
			for i := range t.rows {
				rw := t.row(i)
				ev := parseEventRow(rw)
				seen.note(rw, "name", ev.Name)
				recs = append(recs, ev)
			}
		},
		func(tx *sql.Tx, t *csvTable, batch int64, res *ImportResult) error {
			sid, err := sectionIDByName(ctx, tx, section, file)
			if err != nil {
				return err
			}
			pendingNote(ctx, res, len(recs), "events", func(i int) *ReviewState { return &recs[i].ReviewState })
			for i, ev := range recs {
				if id, err := lookupID(ctx, tx, `SELECT id FROM events WHERE section_id = ? AND name = ?`, sid, ev.Name); err != nil {
					return err
				} else if id != 0 {
					t.row(i).problem("name", "event %q of section %q is already in the compilation", ev.Name, section)
				}
			}
			if t.err() != nil {
				return nil
			}
			now := d.stamp()
			for _, ev := range recs {
				ev.SectionID = &sid
				id, err := nextID(ctx, tx, "events", "event")
				if err != nil {
					return err
				}
				_, err = tx.ExecContext(ctx, `INSERT INTO events (id, section_id, name, kind, base_height_m, top_height_m,
					origin, review_state, notes, created_at, updated_at) VALUES (?,?,?,?,?,?,?,?,?,?,?)`,
					id, sid, ev.Name, ev.Kind, ev.BaseHeightM, ev.TopHeightM, ev.Origin, ev.ReviewState, ev.Notes, now, now)
				if err != nil {
					return fmt.Errorf("insert event %q: %w", ev.Name, err)
				}
				ev.ID = id
				ev.Version = 1
				if err := addRevision(ctx, tx, batch, "event", ev.ID, nil, ev); err != nil {
					return err
				}
				res.Added["events"]++
			}
			return nil
		})
}

// lookupID returns the id selected by q, or 0 when there is none.
func lookupID(ctx context.Context, tx *sql.Tx, q string, args ...any) (int64, error) {
	var id int64
	err := tx.QueryRowContext(ctx, q, args...).Scan(&id)
	if errors.Is(err, sql.ErrNoRows) {
		return 0, nil
	}
	return id, err
}

// The row parsers below read and check one row of an import file; forms are checked with the same ones
// (store/edit_*.go), so a value refused in a file is refused in a form with the same words.

// parseProvinceRow reads one row of a provinces file.
func parseProvinceRow(rw row) Province {
	p := Province{Name: rw.requiredStr("province"), Description: rw.str("description"),
		PoleLatitude: rw.optFloat("pole_latitude"), PoleLongitude: rw.optFloat("pole_longitude"),
		PoleA95: rw.optFloat("pole_a95"), PoleSource: rw.str("pole_source")}
	checkPole(rw, &p)
	return p
}

// MaxPoleA95 is the largest A95 (degrees) a province's pole may carry. Poles used for palaeogeography are
// usually far better defined (A95 under about 10–15°, common practice); a larger one gives a palaeolatitude
// of little use (the map gives it ± A95), and a value above 30 is most likely a slip (95 typed for 9.5, or
// the number of sites typed into the wrong cell).
const MaxPoleA95 = 30.0

// checkPole checks a province's pole: all of pole_latitude, pole_longitude, pole_a95 and pole_source or
// none, each within its range; the longitude is normalised to -180..180 (0..360 is read too).
func checkPole(rw row, p *Province) {
	given := map[string]bool{"pole_latitude": p.PoleLatitude != nil, "pole_longitude": p.PoleLongitude != nil,
		"pole_a95": p.PoleA95 != nil, "pole_source": strings.TrimSpace(p.PoleSource) != ""}
	some := false
	for _, g := range given {
		some = some || g
	}
	if !some {
		return
	}
	for _, col := range []string{"pole_latitude", "pole_longitude", "pole_a95", "pole_source"} {
		if !given[col] && rw.str(col) == "" { // a cell that failed to parse has its own problem already
			rw.problem(col, "is empty; a pole needs its latitude, longitude, A95 and source together (leave all four empty for no pole)")
		}
	}
	rw.within("pole_latitude", p.PoleLatitude, -90, 90)
	rw.within("pole_longitude", p.PoleLongitude, -180, 360)
	if v := p.PoleLongitude; v != nil && *v > 180 && *v <= 360 {
		lon := *v - 360
		p.PoleLongitude = &lon
	}
	if v := p.PoleA95; v != nil && (*v <= 0 || *v > MaxPoleA95) {
		rw.problem("pole_a95", "want the pole's A95 in degrees, greater than 0 and at most %s, got %s", formatNumber(MaxPoleA95), formatNumber(*v))
	}
}

// parseUnitRow reads one row of a units file.
func parseUnitRow(rw row) Unit {
	u := Unit{Province: rw.requiredStr("province"), Name: rw.requiredStr("unit"),
		Kind: rw.enum("kind", codes(UnitKinds()), "other"), PilePosition: rw.optInt("pile_position"),
		VolumeKm3: rw.optFloat("volume_km3"), VolumeSigmaKm3: rw.optFloat("volume_sigma_km3"),
		Latitude: rw.optFloat("latitude"), Longitude: rw.optFloat("longitude"), Notes: rw.str("notes")}
	rw.positive("volume_km3", u.VolumeKm3, true)
	rw.positive("volume_sigma_km3", u.VolumeSigmaKm3, true)
	if u.VolumeSigmaKm3 != nil && u.VolumeKm3 == nil {
		rw.problem("volume_sigma_km3", "given without volume_km3")
	}
	rw.within("latitude", u.Latitude, -90, 90)
	rw.within("longitude", u.Longitude, -180, 180)
	return u
}

// parseSectionRow reads one row of a sections file.
func parseSectionRow(rw row) Section {
	s := Section{Name: rw.requiredStr("section"), Kind: rw.enum("kind", codes(SectionKinds()), "outcrop"),
		Latitude: rw.optFloat("latitude"), Longitude: rw.optFloat("longitude"),
		Palaeolatitude: rw.optFloat("palaeolatitude"), ThermalMaturity: rw.str("thermal_maturity"),
		TocThresholdWtPct: 0.2, Notes: rw.str("notes")}
	if v := rw.optFloat("toc_threshold_wt_pct"); v != nil {
		rw.within("toc_threshold_wt_pct", v, 0, 5)
		s.TocThresholdWtPct = *v
	}
	rw.within("latitude", s.Latitude, -90, 90)
	rw.within("longitude", s.Longitude, -180, 180)
	rw.within("palaeolatitude", s.Palaeolatitude, -90, 90)
	return s
}

// parseTieRow reads one row of a ties file (the date it names is resolved against the store later).
func parseTieRow(rw row) TiePoint {
	tp := TiePoint{Label: rw.requiredStr("label"), Kind: rw.enum("kind", codes(TieKinds()), ""),
		Distribution:   rw.enum("distribution", []string{"normal", "uniform"}, ""),
		DateSampleCode: rw.str("date_sample_code"), DateMethod: rw.str("date_method"),
		ReviewState: reviewStateCell(rw, ReviewAccepted), Notes: rw.str("notes")}
	if h, ok := rw.float("height_m"); ok {
		tp.HeightM = h
	}
	switch tp.Distribution {
	case "normal":
		age, okA := rw.float("age_ma")
		sigma, okS := rw.float("sigma_ma")
		level := rw.sigmaLevel("sigma_level")
		if okS && sigma <= 0 {
			rw.problem("sigma_ma", "want an uncertainty greater than 0, got %s", formatNumber(sigma))
		}
		if okA && (age <= 0 || age > 4600) {
			rw.problem("age_ma", "want an age in Ma between 0 and 4600, got %s", formatNumber(age))
		}
		if okA && okS && age > 0 && sigma > 0 {
			rw.plausibleSigma("sigma_ma", age, sigma, level)
		}
		for _, c := range []string{"age_min_ma", "age_max_ma"} {
			if rw.str(c) != "" {
				rw.problem(c, "is for uniform ties; this tie is normal (age_ma ± sigma_ma)")
			}
		}
		if okA && okS && level > 0 {
			s := sigma / float64(level)
			tp.AgeMa, tp.SigmaMa, tp.SigmaLevel = &age, &s, &level
		}
	case "uniform":
		lo, okL := rw.float("age_min_ma")
		hi, okH := rw.float("age_max_ma")
		if okL && okH && hi <= lo {
			rw.problem("age_max_ma", "want age_max_ma (%s) greater than age_min_ma (%s)", formatNumber(hi), formatNumber(lo))
		}
		for _, c := range []string{"age_ma", "sigma_ma", "sigma_level"} {
			if rw.str(c) != "" {
				rw.problem(c, "is for normal ties; this tie is uniform (age_min_ma … age_max_ma)")
			}
		}
		tp.AgeMinMa, tp.AgeMaxMa = &lo, &hi
	}
	if tp.DateMethod != "" && tp.DateSampleCode == "" {
		rw.problem("date_method", "given without date_sample_code")
	}
	return tp
}

// parseEventRow reads one row of an events file; an imported event is entered and accepted.
func parseEventRow(rw row) Event {
	ev := Event{Name: rw.requiredStr("name"), Kind: rw.enum("kind", codes(EventKinds()), ""),
		TopHeightM: rw.optFloat("top_height_m"), Origin: "entered", ReviewState: ReviewAccepted, Notes: rw.str("notes")}
	if b, ok := rw.float("base_height_m"); ok {
		ev.BaseHeightM = &b
		if ev.TopHeightM != nil && *ev.TopHeightM < b {
			rw.problem("top_height_m", "want the top (%s m) at or above the base (%s m)", formatNumber(*ev.TopHeightM), formatNumber(b))
		}
	}
	return ev
}

// firstLines remembers the line each key of a file was first given on, to report repeats in one pass.
type firstLines map[string]int

// note records the key of row rw; when the file gave it before, it records a problem on col.
func (f firstLines) note(rw row, col, key string) {
	if key == "" {
		return
	}
	if l, dup := f[key]; dup {
		rw.problem(col, "%q already given on line %d", key, l)
		return
	}
	f[key] = rw.line()
}
