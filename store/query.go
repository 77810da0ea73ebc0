package store

import (
	"context"
	"database/sql"
	"encoding/base64"
	"encoding/json"
	"errors"
	"fmt"
	"slices"
	"strings"
)

// Counts says how much the compilation holds.
type Counts struct {
	Provinces    int `json:"provinces"`
	Units        int `json:"units"`
	Dates        int `json:"dates"`
	DatesPending int `json:"dates_pending"`
	Sections     int `json:"sections"`
	Samples      int `json:"samples"`
	Measurements int `json:"measurements"`
	TiePoints    int `json:"tie_points"`
	Events       int `json:"events"`
	Hiatuses     int `json:"hiatuses"`
}

// Counts returns how many records of each kind the compilation holds.
func (d *DB) Counts(ctx context.Context) (Counts, error) {
	var c Counts
	err := d.reader().QueryRowContext(ctx, `SELECT
		(SELECT count(*) FROM provinces), (SELECT count(*) FROM units), (SELECT count(*) FROM dates),
		(SELECT count(*) FROM dates WHERE review_state = 'pending'), (SELECT count(*) FROM sections),
		(SELECT count(*) FROM (SELECT DISTINCT section_id, sample FROM measurements)), (SELECT count(*) FROM measurements),
		(SELECT count(*) FROM tie_points), (SELECT count(*) FROM events), (SELECT count(*) FROM hiatuses)`).Scan(&c.Provinces, &c.Units, &c.Dates,
		&c.DatesPending, &c.Sections, &c.Samples, &c.Measurements, &c.TiePoints, &c.Events, &c.Hiatuses)
	if err != nil {
		return c, fmt.Errorf("counts: %w", err)
	}
	return c, nil
}

// IsEmpty reports whether the compilation holds no province, section or date.
func (d *DB) IsEmpty(ctx context.Context) (bool, error) {
	c, err := d.Counts(ctx)
	return c.Provinces == 0 && c.Sections == 0 && c.Dates == 0, err
}

func notFound(err error, what string, id int64) error {
	if errors.Is(err, sql.ErrNoRows) {
		return fmt.Errorf("%s %d: %w", what, id, ErrNotFound)
	}
	return err
}

const provinceSelect = `SELECT p.id, p.name, p.description, p.pole_latitude, p.pole_longitude, p.pole_a95, p.pole_source, p.version, p.created_at, p.updated_at,
	(SELECT count(*) FROM units u WHERE u.province_id = p.id),
	(SELECT count(*) FROM dates d JOIN units u ON d.unit_id = u.id WHERE u.province_id = p.id)
	FROM provinces p`

func scanProvince(s interface{ Scan(...any) error }) (Province, error) {
	var p Province
	err := s.Scan(&p.ID, &p.Name, &p.Description, &p.PoleLatitude, &p.PoleLongitude, &p.PoleA95, &p.PoleSource, &p.Version, &p.CreatedAt, &p.UpdatedAt, &p.NUnits, &p.NDates)
	return p, err
}

// Provinces returns every province by name.
func (d *DB) Provinces(ctx context.Context) ([]Province, error) {
	return queryAll(ctx, d.reader(), provinceSelect+` ORDER BY p.name`, nil, scanProvince)
}

// Province returns one province, or ErrNotFound.
func (d *DB) Province(ctx context.Context, id int64) (Province, error) {
	p, err := scanProvince(d.reader().QueryRowContext(ctx, provinceSelect+` WHERE p.id = ?`, id))
	return p, notFound(err, "province", id)
}

const unitSelect = `SELECT u.id, u.province_id, p.name, u.name, u.kind, u.pile_position, u.volume_km3, u.volume_sigma_km3,
	u.latitude, u.longitude, u.notes, u.version, u.created_at, u.updated_at,
	(SELECT count(*) FROM dates d WHERE d.unit_id = u.id)
	FROM units u JOIN provinces p ON p.id = u.province_id`

func scanUnit(s interface{ Scan(...any) error }) (Unit, error) {
	var u Unit
	err := s.Scan(&u.ID, &u.ProvinceID, &u.Province, &u.Name, &u.Kind, &u.PilePosition, &u.VolumeKm3, &u.VolumeSigmaKm3,
		&u.Latitude, &u.Longitude, &u.Notes, &u.Version, &u.CreatedAt, &u.UpdatedAt, &u.NDates)
	return u, err
}

// Units returns the units of a province (all provinces when provinceID is 0), lowest in the pile first.
func (d *DB) Units(ctx context.Context, provinceID int64) ([]Unit, error) {
	q, args := unitSelect, []any{}
	if provinceID != 0 {
		q += ` WHERE u.province_id = ?`
		args = append(args, provinceID)
	}
	q += ` ORDER BY p.name, u.pile_position IS NULL, u.pile_position, u.name`
	return queryAll(ctx, d.reader(), q, args, scanUnit)
}

// Unit returns one unit, or ErrNotFound.
func (d *DB) Unit(ctx context.Context, id int64) (Unit, error) {
	u, err := scanUnit(d.reader().QueryRowContext(ctx, unitSelect+` WHERE u.id = ?`, id))
	return u, notFound(err, "unit", id)
}

const dateSelect = `SELECT d.id, d.unit_id, coalesce(u.name, ''), u.province_id, coalesce(p.name, ''), d.section_id,
	coalesce(s.name, ''), d.height_m, d.sample_code, d.method, d.material, d.interpretation, d.age_ma, d.sigma_ma,
	d.sigma_y_ma, d.sigma_z_ma, d.sigma_level, d.tracer, d.monitor, d.monitor_age_ma, d.lambda_per_a, d.laboratory,
	d.citation, d.doi, d.latitude, d.longitude, d.review_state, d.review_note, d.notes, d.version, d.created_at, d.updated_at
	FROM dates d LEFT JOIN units u ON u.id = d.unit_id LEFT JOIN provinces p ON p.id = u.province_id
	LEFT JOIN sections s ON s.id = d.section_id`

func scanDate(s interface{ Scan(...any) error }) (Date, error) {
	var x Date
	err := s.Scan(&x.ID, &x.UnitID, &x.Unit, &x.ProvinceID, &x.Province, &x.SectionID, &x.Section, &x.HeightM,
		&x.SampleCode, &x.Method, &x.Material, &x.Interpretation, &x.AgeMa, &x.SigmaMa, &x.SigmaYMa, &x.SigmaZMa,
		&x.SigmaLevel, &x.Tracer, &x.Monitor, &x.MonitorAgeMa, &x.LambdaPerA, &x.Laboratory, &x.Citation, &x.DOI,
		&x.Latitude, &x.Longitude, &x.ReviewState, &x.ReviewNote, &x.Notes, &x.Version, &x.CreatedAt, &x.UpdatedAt)
	return x, err
}

// Date returns one date, or ErrNotFound.
func (d *DB) Date(ctx context.Context, id int64) (Date, error) {
	x, err := scanDate(d.reader().QueryRowContext(ctx, dateSelect+` WHERE d.id = ?`, id))
	return x, notFound(err, "date", id)
}

// DateFilter selects, sorts and pages dates. Zero values select everything.
type DateFilter struct {
	ProvinceID  int64
	UnitID      int64
	SectionID   int64
	Method      string
	Material    string // exact, case-insensitive
	MinAgeMa    *float64
	MaxAgeMa    *float64
	Text        string // in sample code, unit, laboratory, citation, DOI, notes
	ReviewState ReviewState
	Sort        string // one of DateSorts; "-" prefix for descending
	Limit       int    // 0 = no limit
	Offset      int    // rows skipped (ignored with After or Before)
	// After and Before are keyset cursors (DatePage.Next, DatePage.Prev): the page of Limit dates just
	// after, or just before, the date the cursor was taken from, in the order of Sort. Each page costs the
	// same however deep it is, unlike Offset.
	After, Before string
}

// dateSorts gives the SQL sort key of each key of DateFilter.Sort; the keyset pages on (key…, d.id). The
// keys are never NULL, so that row values compare: a date of a section has no unit or province (the empty name sorts
// where NULL did, unit and province names are never empty), and an age of 0 gives σ/age the smallest
// number (where NULL sorted).
var dateSorts = map[string][]string{
	"age": {"d.age_ma"}, "sample": {"d.sample_code"}, "method": {"d.method"},
	"unit":     {"coalesce(p.name, '')", "coalesce(u.name, '')"},
	"material": {"d.material"}, "sigma": {"coalesce(d.sigma_ma / d.age_ma, -1e308)"}, "lab": {"d.laboratory"}, "added": {"d.id"},
}

// DateSortKeys returns the accepted sort keys.
func DateSortKeys() []string {
	return []string{"age", "sigma", "sample", "unit", "method", "material", "lab", "added"}
}

const dateFrom = ` FROM dates d LEFT JOIN units u ON u.id = d.unit_id
		LEFT JOIN provinces p ON p.id = u.province_id LEFT JOIN sections s ON s.id = d.section_id`

// dateWhere gives the WHERE clause (with its leading space, or empty) and its arguments of f's filters.
func dateWhere(f DateFilter) (string, []any) {
	var where []string
	var args []any
	add := func(cond string, a ...any) { where = append(where, cond); args = append(args, a...) }
	if f.ProvinceID != 0 {
		// By the province's units (not u.province_id of the joined unit), so SQLite can read the dates by
		// their unit's index instead of reading every date to look at its unit: 100 ms for a province's
		// 10,000 dates among 100,000.
		add("d.unit_id IN (SELECT id FROM units WHERE province_id = ?)", f.ProvinceID)
	}
	if f.UnitID != 0 {
		add("d.unit_id = ?", f.UnitID)
	}
	if f.SectionID != 0 {
		add("d.section_id = ?", f.SectionID)
	}
	if f.Method != "" {
		add("d.method = ?", f.Method)
	}
	if f.Material != "" {
		add("lower(d.material) = lower(?)", f.Material)
	}
	if f.MinAgeMa != nil {
		add("d.age_ma >= ?", *f.MinAgeMa)
	}
	if f.MaxAgeMa != nil {
		add("d.age_ma <= ?", *f.MaxAgeMa)
	}
	if f.ReviewState != "" {
		add("d.review_state = ?", f.ReviewState)
	}
	if t := strings.TrimSpace(f.Text); t != "" {
		like := "%" + escapeLike(strings.ToLower(t)) + "%"
		add(`(lower(d.sample_code) LIKE ? ESCAPE '\' OR lower(coalesce(u.name, '')) LIKE ? ESCAPE '\'
			OR lower(d.laboratory) LIKE ? ESCAPE '\' OR lower(d.citation) LIKE ? ESCAPE '\'
			OR lower(d.doi) LIKE ? ESCAPE '\' OR lower(d.notes) LIKE ? ESCAPE '\' OR lower(coalesce(s.name, '')) LIKE ? ESCAPE '\')`,
			like, like, like, like, like, like, like)
	}
	if len(where) == 0 {
		return "", nil
	}
	return " WHERE " + strings.Join(where, " AND "), args
}

// dateOrder gives f's sort key expressions and whether it is descending (default: age, oldest first).
func dateOrder(f DateFilter) ([]string, bool) {
	key, desc := strings.CutPrefix(f.Sort, "-")
	cols, ok := dateSorts[key]
	if !ok {
		return dateSorts["age"], true
	}
	return cols, desc
}

// orderBy is the ORDER BY clause of sort keys cols (descending if desc), ties by id ascending; reverse
// turns the whole order around (to read the page before a cursor).
func orderBy(cols []string, desc, reverse bool) string {
	dir, idDir := " ASC", " ASC"
	if desc != reverse {
		dir = " DESC"
	}
	if reverse {
		idDir = " DESC"
	}
	var parts []string
	for _, c := range cols {
		parts = append(parts, c+dir)
	}
	return " ORDER BY " + strings.Join(append(parts, "d.id"+idDir), ", ")
}

// ErrBadCursor is returned for a paging cursor the app did not make (DateFilter.After or Before).
var ErrBadCursor = errors.New("not a page position this list gave")

// dateCursor is a keyset position: the sort key values, the id and the place (0 = first) of one date.
type dateCursor struct {
	Key []any `json:"k"`
	ID  int64 `json:"i"`
	Pos int   `json:"n"`
}

func encodeCursor(c dateCursor) string {
	b, _ := json.Marshal(c)
	return base64.RawURLEncoding.EncodeToString(b)
}

func decodeCursor(s string, keys int) (dateCursor, error) {
	var c dateCursor
	b, err := base64.RawURLEncoding.DecodeString(s)
	if err != nil || json.Unmarshal(b, &c) != nil || len(c.Key) != keys {
		return c, ErrBadCursor
	}
	for _, k := range c.Key {
		switch k.(type) {
		case string, float64:
		default:
			return c, ErrBadCursor
		}
	}
	return c, nil
}

// keysetCond is the condition "after the cursor" (or before it, when reverse) in the order of cols.
func keysetCond(cols []string, desc, reverse bool, c dateCursor) (string, []any) {
	op := ">"
	if desc != reverse {
		op = "<"
	}
	idOp := ">"
	if reverse {
		idOp = "<"
	}
	tuple := "(" + strings.Join(cols, ", ") + ")"
	ph := "(" + strings.TrimSuffix(strings.Repeat("?, ", len(cols)), ", ") + ")"
	args := append(append(append([]any{}, c.Key...), c.Key...), c.ID)
	return "(" + tuple + " " + op + " " + ph + " OR (" + tuple + " = " + ph + " AND d.id " + idOp + " ?))", args
}

// DatePage is one page of dates with the cursors of the pages before and after it ("" at either end).
type DatePage struct {
	Dates      []Date
	Total      int
	First      int // the place of the first date shown among all that match (0 = first)
	Prev, Next string
}

// prefixScan scans the first columns of a row into pre and the rest into what Scan is given.
type prefixScan struct {
	rows *sql.Rows
	pre  []any
}

func (p prefixScan) Scan(dest ...any) error {
	return p.rows.Scan(append(append([]any{}, p.pre...), dest...)...)
}

// Dates returns the dates selected by f (a page of them when f.Limit > 0, from f.Offset) and how many match
// in all.
func (d *DB) Dates(ctx context.Context, f DateFilter) ([]Date, int, error) {
	cond, args := dateWhere(f)
	var total int
	if err := d.reader().QueryRowContext(ctx, `SELECT count(*)`+dateFrom+cond, args...).Scan(&total); err != nil {
		return nil, 0, fmt.Errorf("count dates: %w", err)
	}
	cols, desc := dateOrder(f)
	q := dateSelect + cond + orderBy(cols, desc, false)
	if f.Limit > 0 {
		q += fmt.Sprintf(" LIMIT %d OFFSET %d", f.Limit, max(f.Offset, 0))
	}
	out, err := queryAll(ctx, d.reader(), q, args, scanDate)
	return out, total, err
}

// EachDate calls fn with every date selected by f, in f's order, one row at a time (nothing is held but
// the row), and stops at fn's first error.
func (d *DB) EachDate(ctx context.Context, f DateFilter, fn func(Date) error) error {
	cond, args := dateWhere(f)
	cols, desc := dateOrder(f)
	rows, err := d.reader().QueryContext(ctx, dateSelect+cond+orderBy(cols, desc, false), args...)
	if err != nil {
		return fmt.Errorf("dates: %w", err)
	}
	defer rows.Close()
	for rows.Next() {
		dt, err := scanDate(rows)
		if err != nil {
			return err
		}
		if err := fn(dt); err != nil {
			return err
		}
	}
	return rows.Err()
}

func escapeLike(s string) string {
	return strings.NewReplacer(`\`, `\\`, `%`, `\%`, `_`, `\_`).Replace(s)
}

// Materials returns the distinct materials of the dates, for filter menus, case-insensitively in
// alphabetical order. It steps from one material to the next by the index dates_material (one look-up per
// material) rather than reading every date.
func (d *DB) Materials(ctx context.Context) ([]string, error) {
	ms, err := queryAll(ctx, d.reader(), materialsQuery, nil, func(s interface{ Scan(...any) error }) (string, error) {
		var m string
		return m, s.Scan(&m)
	})
	slices.SortStableFunc(ms, func(a, b string) int { return strings.Compare(strings.ToLower(a), strings.ToLower(b)) })
	return ms, err
}

// materialsQuery lists the distinct non-empty materials in binary order, each the smallest above the last.
const materialsQuery = `WITH RECURSIVE m(v) AS (
	SELECT (SELECT min(material) FROM dates WHERE material > '')
	UNION ALL
	SELECT (SELECT min(material) FROM dates WHERE material > m.v) FROM m WHERE m.v IS NOT NULL
) SELECT v FROM m WHERE v IS NOT NULL`

// NamedID is a record's id and name, as a menu offers it.
type NamedID struct {
	ID   int64  `json:"id"`
	Name string `json:"name"`
}

// DateFilterChoices is what the dates list's filter form offers: the provinces, the units (of one
// province, or all when provinceID is 0), the sections, by name only (without the counts of dates and
// samples the lists of provinces, units and sections carry, which read every date), in the orders of
// Provinces, Units and Sections, and the materials.
type DateFilterChoices struct {
	Provinces, Units, Sections []NamedID
	Materials                  []string
}

// DateFilterChoices returns the choices of the dates list's filter form.
func (d *DB) DateFilterChoices(ctx context.Context, provinceID int64) (DateFilterChoices, error) {
	var c DateFilterChoices
	scan := func(s interface{ Scan(...any) error }) (NamedID, error) {
		var n NamedID
		return n, s.Scan(&n.ID, &n.Name)
	}
	var err error
	if c.Provinces, err = queryAll(ctx, d.reader(), `SELECT id, name FROM provinces p ORDER BY p.name`, nil, scan); err != nil {
		return c, err
	}
	q, args := `SELECT u.id, u.name FROM units u JOIN provinces p ON p.id = u.province_id`, []any{}
	if provinceID != 0 {
		q, args = q+` WHERE u.province_id = ?`, append(args, provinceID)
	}
	if c.Units, err = queryAll(ctx, d.reader(), q+` ORDER BY p.name, u.pile_position IS NULL, u.pile_position, u.name`, args, scan); err != nil {
		return c, err
	}
	if c.Sections, err = queryAll(ctx, d.reader(), `SELECT id, name FROM sections s ORDER BY s.name`, nil, scan); err != nil {
		return c, err
	}
	c.Materials, err = d.Materials(ctx)
	return c, err
}

// Calibrations returns the ⁴⁰Ar/³⁹Ar calibrations, the target first.
func (d *DB) Calibrations(ctx context.Context) ([]Calibration, error) {
	return queryAll(ctx, d.reader(), `SELECT id, code, name, lambda_per_a, lambda_sigma_per_a, monitor, monitor_age_ma,
		monitor_sigma_ma, lambda_monitor_correlation, source, is_target FROM calibrations ORDER BY is_target DESC, id`, nil,
		func(s interface{ Scan(...any) error }) (Calibration, error) {
			var c Calibration
			err := s.Scan(&c.ID, &c.Code, &c.Name, &c.LambdaPerA, &c.LambdaSigmaPerA, &c.Monitor, &c.MonitorAgeMa,
				&c.MonitorSigmaMa, &c.LambdaMonitorCorrelation, &c.Source, &c.IsTarget)
			return c, err
		})
}

const sectionSelect = `SELECT s.id, s.name, s.kind, s.latitude, s.longitude, s.palaeolatitude, s.thermal_maturity,
	s.toc_threshold_wt_pct, s.notes, s.version, s.created_at, s.updated_at,
	(SELECT count(DISTINCT sample) FROM measurements m WHERE m.section_id = s.id),
	(SELECT count(*) FROM tie_points t WHERE t.section_id = s.id),
	(SELECT count(*) FROM events e WHERE e.section_id = s.id),
	(SELECT min(height_m) FROM measurements m WHERE m.section_id = s.id),
	(SELECT max(height_m) FROM measurements m WHERE m.section_id = s.id)
	FROM sections s`

func scanSection(r interface{ Scan(...any) error }) (Section, error) {
	var s Section
	err := r.Scan(&s.ID, &s.Name, &s.Kind, &s.Latitude, &s.Longitude, &s.Palaeolatitude, &s.ThermalMaturity,
		&s.TocThresholdWtPct, &s.Notes, &s.Version, &s.CreatedAt, &s.UpdatedAt, &s.NSamples, &s.NTies, &s.NEvents,
		&s.MinHeightM, &s.MaxHeightM)
	return s, err
}

// Sections returns every section by name.
func (d *DB) Sections(ctx context.Context) ([]Section, error) {
	return queryAll(ctx, d.reader(), sectionSelect+` ORDER BY s.name`, nil, scanSection)
}

// Section returns one section, or ErrNotFound.
func (d *DB) Section(ctx context.Context, id int64) (Section, error) {
	s, err := scanSection(d.reader().QueryRowContext(ctx, sectionSelect+` WHERE s.id = ?`, id))
	return s, notFound(err, "section", id)
}

const tieSelect = `SELECT t.id, t.section_id, s.name, t.label, t.height_m, t.kind, t.distribution, t.age_ma, t.sigma_ma,
	t.sigma_level, t.age_min_ma, t.age_max_ma, t.date_id, coalesce(d.sample_code, ''), coalesce(d.method, ''),
	t.review_state, t.review_note, t.notes, t.version, t.created_at, t.updated_at
	FROM tie_points t JOIN sections s ON s.id = t.section_id LEFT JOIN dates d ON d.id = t.date_id`

func scanTie(r interface{ Scan(...any) error }) (TiePoint, error) {
	var t TiePoint
	err := r.Scan(&t.ID, &t.SectionID, &t.Section, &t.Label, &t.HeightM, &t.Kind, &t.Distribution, &t.AgeMa,
		&t.SigmaMa, &t.SigmaLevel, &t.AgeMinMa, &t.AgeMaxMa, &t.DateID, &t.DateSampleCode, &t.DateMethod, &t.ReviewState,
		&t.ReviewNote, &t.Notes,
		&t.Version, &t.CreatedAt, &t.UpdatedAt)
	return t, err
}

// TiePoints returns the tie points of a section (all sections when sectionID is 0), lowest first.
func (d *DB) TiePoints(ctx context.Context, sectionID int64) ([]TiePoint, error) {
	q := tieSelect
	var args []any
	if sectionID != 0 {
		q += ` WHERE t.section_id = ?`
		args = append(args, sectionID)
	}
	q += ` ORDER BY s.name, t.height_m, t.label`
	return queryAll(ctx, d.reader(), q, args, scanTie)
}

const eventSelect = `SELECT e.id, e.section_id, coalesce(s.name, ''), e.name, e.kind, e.base_height_m, e.top_height_m,
	e.age_ma, e.sigma_ma, e.date_id, e.group_id, e.origin, e.review_state, e.review_note, e.notes, e.version,
	e.created_at, e.updated_at FROM events e LEFT JOIN sections s ON s.id = e.section_id`

func scanEvent(r interface{ Scan(...any) error }) (Event, error) {
	var e Event
	err := r.Scan(&e.ID, &e.SectionID, &e.Section, &e.Name, &e.Kind, &e.BaseHeightM, &e.TopHeightM, &e.AgeMa,
		&e.SigmaMa, &e.DateID, &e.GroupID, &e.Origin, &e.ReviewState, &e.ReviewNote, &e.Notes, &e.Version,
		&e.CreatedAt, &e.UpdatedAt)
	return e, err
}

// Events returns the events of a section (all events when sectionID is 0), lowest first.
func (d *DB) Events(ctx context.Context, sectionID int64) ([]Event, error) {
	q := eventSelect
	var args []any
	if sectionID != 0 {
		q += ` WHERE e.section_id = ?`
		args = append(args, sectionID)
	}
	q += ` ORDER BY s.name, e.base_height_m, e.name`
	return queryAll(ctx, d.reader(), q, args, scanEvent)
}

// Proxies returns the proxies the compilation knows.
func (d *DB) Proxies(ctx context.Context) ([]Proxy, error) {
	return queryAll(ctx, d.reader(), `SELECT code, name, unit, description FROM proxies ORDER BY rowid`, nil,
		func(r interface{ Scan(...any) error }) (Proxy, error) {
			var p Proxy
			return p, r.Scan(&p.Code, &p.Name, &p.Unit, &p.Description)
		})
}

// queryAll runs q and scans every row with scan.
func queryAll[T any](ctx context.Context, db querier, q string, args []any, scan func(interface{ Scan(...any) error }) (T, error)) ([]T, error) {
	rows, err := db.QueryContext(ctx, q, args...)
	if err != nil {
		return nil, fmt.Errorf("query: %w", err)
	}
	defer rows.Close()
	var out []T
	for rows.Next() {
		v, err := scan(rows)
		if err != nil {
			return nil, fmt.Errorf("scan: %w", err)
		}
		out = append(out, v)
	}
	return out, rows.Err()
}
