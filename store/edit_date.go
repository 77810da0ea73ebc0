package store

import (
	"context"
	"database/sql"
	"fmt"
	"io"
	"sort"
	"strconv"
	"strings"
)

// dateType is how a date is written, reviewed, deleted and restored. The import writes dates in bulk
// through insertDate; a form goes through save like every other record.
func dateType() recordType[Date] {
	return recordType[Date]{
		name:  "date",
		table: "dates",
		cols: []string{"unit_id", "section_id", "height_m", "sample_code", "method", "material", "interpretation",
			"age_ma", "sigma_ma", "sigma_y_ma", "sigma_z_ma", "sigma_level", "tracer", "monitor", "monitor_age_ma",
			"lambda_per_a", "laboratory", "citation", "doi", "latitude", "longitude", "review_state", "review_note", "notes"},
		vals: func(dt Date) []any {
			return []any{dt.UnitID, dt.SectionID, dt.HeightM, dt.SampleCode, dt.Method, dt.Material, dt.Interpretation,
				dt.AgeMa, dt.SigmaMa, dt.SigmaYMa, dt.SigmaZMa, dt.SigmaLevel, dt.Tracer, dt.Monitor, dt.MonitorAgeMa,
				dt.LambdaPerA, dt.Laboratory, dt.Citation, dt.DOI, dt.Latitude, dt.Longitude, dt.ReviewState, dt.ReviewNote, dt.Notes}
		},
		meta:  func(dt Date) (int64, int, string) { return dt.ID, dt.Version, dt.CreatedAt },
		label: dateLabel,
		load:  dateInTx,
		form:  FormOfDate,
		review: &reviewing[Date]{
			of:    func(dt *Date) (*ReviewState, *string) { return &dt.ReviewState, &dt.ReviewNote },
			what:  func(dt Date) string { return dt.SampleCode },
			title: dateLabel,
		},
	}
}

func dateLabel(dt Date) string { return "date " + dt.SampleCode }

func dateInTx(ctx context.Context, tx *sql.Tx, id int64) (Date, error) {
	x, err := scanDate(tx.QueryRowContext(ctx, dateSelect+` WHERE d.id = ?`, id))
	return x, notFound(err, "date", id)
}

// FormOfDate gives the form cells of a stored date: the columns of the dates import format (uncertainties
// at its published level), review state included.
func FormOfDate(d Date) Form {
	return formOf(func(w io.Writer) error { return WriteDatesCSV(w, []Date{d}) })
}

// parseDateForm checks a form with exactly the rules of the dates importer (a contributor's date is
// pending whatever the form says). Problems name fields.
func parseDateForm(f Form, asCurator bool) (Date, []Problem) {
	rw, t := formRow(dateColumns, f)
	d := parseDateRow(rw, map[[2]string]int{})
	if !asCurator {
		d.ReviewState = ReviewPending
	}
	return d, t.problems
}

// FormNewUnit is the form cell ("1") by which a date's form creates its unit, and the unit's province,
// when they are new; without it an unknown province or unit is a problem naming the nearest known names,
// so a typo cannot make a new unit.
const FormNewUnit = "new_unit"

// prepareDateOwner checks that no other date has the sample code and method, and fills UnitID/SectionID;
// with newUnit it creates a missing province or unit (as an import would, in the same change), without it
// an unknown one is a problem. An edit keeps the review note.
func (d *DB) prepareDateOwner(ctx context.Context, tx *sql.Tx, batch int64, before *Date, dt *Date, problems []Problem, newUnit bool) ([]Problem, error) {
	if len(problems) > 0 {
		return problems, nil
	}
	if before == nil {
		if id, err := lookupID(ctx, tx, `SELECT id FROM dates WHERE sample_code = ? AND method = ?`, dt.SampleCode, dt.Method); err != nil || id != 0 {
			return []Problem{{Column: "sample_code", Message: fmt.Sprintf("a date of sample %q by this method exists (date %d)", dt.SampleCode, id)}}, err
		}
	} else {
		if other, err := lookupID(ctx, tx, `SELECT id FROM dates WHERE sample_code = ? AND method = ? AND id <> ?`, dt.SampleCode, dt.Method, before.ID); err != nil || other != 0 {
			return []Problem{{Column: "sample_code", Message: fmt.Sprintf("another date (%d) has this sample code and method", other)}}, err
		}
		dt.ID, dt.ReviewNote = before.ID, before.ReviewNote
	}
	return d.resolveDateOwner(ctx, tx, batch, dt, newUnit)
}

// resolveDateOwner fills UnitID/SectionID of a parsed date, creating a missing province or unit (as an
// import would) when newUnit is set, and records problems for unknown sections, and for an unknown
// province or unit when it is not.
func (d *DB) resolveDateOwner(ctx context.Context, tx *sql.Tx, batch int64, dt *Date, newUnit bool) ([]Problem, error) {
	res := &ImportResult{Added: map[string]int{}}
	switch {
	case dt.Section != "":
		sid, err := lookupID(ctx, tx, `SELECT id FROM sections WHERE name = ?`, dt.Section)
		if err != nil {
			return nil, err
		}
		if sid == 0 {
			return []Problem{{Column: "section", Message: fmt.Sprintf("unknown section %q", dt.Section)}}, nil
		}
		dt.SectionID, dt.UnitID = &sid, nil
	case dt.Unit != "":
		if !newUnit {
			if probs, err := knownOwner(ctx, tx, dt.Province, dt.Unit); err != nil || len(probs) > 0 {
				return probs, err
			}
		}
		pid, err := d.provinceID(ctx, tx, batch, dt.Province, res)
		if err != nil {
			return nil, err
		}
		uid, err := lookupID(ctx, tx, `SELECT id FROM units WHERE province_id = ? AND name = ?`, pid, dt.Unit)
		if err != nil {
			return nil, err
		}
		if uid == 0 {
			if uid, err = d.insertUnit(ctx, tx, batch, Unit{ProvinceID: pid, Name: dt.Unit, Kind: "other"}); err != nil {
				return nil, err
			}
		}
		dt.UnitID, dt.SectionID = &uid, nil
	}
	return nil, nil
}

// CreateDate adds one date from a form, as the signed-in actor of ctx. A contributor's date starts
// pending (state is forced to pending unless asCurator).
func (d *DB) CreateDate(ctx context.Context, f Form, asCurator bool) (Date, error) {
	dt, problems := parseDateForm(f, asCurator)
	return dateType().save(ctx, d, 0, 0, dt, problems, d.prepareDateForm(f))
}

// prepareDateForm is prepareDateOwner for a form: its FormNewUnit cell says whether a new unit may be
// created.
func (d *DB) prepareDateForm(f Form) func(context.Context, *sql.Tx, int64, *Date, *Date, []Problem) ([]Problem, error) {
	newUnit := strings.TrimSpace(f[FormNewUnit]) == "1"
	return func(ctx context.Context, tx *sql.Tx, batch int64, before, dt *Date, problems []Problem) ([]Problem, error) {
		return d.prepareDateOwner(ctx, tx, batch, before, dt, problems, newUnit)
	}
}

// knownOwner checks that a form's province and unit exist; each that does not is a problem that names the
// nearest known names and how to create a new one.
func knownOwner(ctx context.Context, tx *sql.Tx, province, unit string) ([]Problem, error) {
	pid, err := lookupID(ctx, tx, `SELECT id FROM provinces WHERE name = ?`, province)
	if err != nil {
		return nil, err
	}
	how := "choose a known one, or answer yes to “Create a new unit” if it really is new"
	if pid == 0 {
		names, err := namesOf(ctx, tx, `SELECT name FROM provinces`)
		if err != nil {
			return nil, err
		}
		return []Problem{{Column: "province", Message: fmt.Sprintf("no province is named %q%s: %s", province, nearestNames(province, names), how)}}, nil
	}
	uid, err := lookupID(ctx, tx, `SELECT id FROM units WHERE province_id = ? AND name = ?`, pid, unit)
	if err != nil || uid != 0 {
		return nil, err
	}
	names, err := namesOf(ctx, tx, `SELECT name FROM units WHERE province_id = ?`, pid)
	if err != nil {
		return nil, err
	}
	return []Problem{{Column: "unit", Message: fmt.Sprintf("%q has no unit named %q%s: %s", province, unit, nearestNames(unit, names), how)}}, nil
}

func namesOf(ctx context.Context, tx *sql.Tx, query string, args ...any) ([]string, error) {
	rows, err := tx.QueryContext(ctx, query, args...)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []string
	for rows.Next() {
		var s string
		if err := rows.Scan(&s); err != nil {
			return nil, err
		}
		out = append(out, s)
	}
	return out, rows.Err()
}

// nearestNames is ` (nearest: "A", "B")` for the up to three known names closest to name by edit
// distance (case and spacing ignored), or "" when none is within half the name's length.
func nearestNames(name string, known []string) string {
	norm := func(s string) string { return strings.ToLower(strings.Join(strings.Fields(s), " ")) }
	n := norm(name)
	type cand struct {
		name string
		d    int
	}
	var cs []cand
	for _, k := range known {
		d := editDistance(n, norm(k))
		if d <= max(2, len([]rune(n))/2) {
			cs = append(cs, cand{k, d})
		}
	}
	sort.SliceStable(cs, func(i, j int) bool { return cs[i].d < cs[j].d || cs[i].d == cs[j].d && cs[i].name < cs[j].name })
	if len(cs) == 0 {
		return ""
	}
	var q []string
	for _, c := range cs[:min(3, len(cs))] {
		q = append(q, strconv.Quote(c.name))
	}
	return " (nearest: " + strings.Join(q, ", ") + ")"
}

// editDistance is the Levenshtein distance between a and b, by rune.
func editDistance(a, b string) int {
	ra, rb := []rune(a), []rune(b)
	prev := make([]int, len(rb)+1)
	cur := make([]int, len(rb)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(ra); i++ {
		cur[0] = i
		for j := 1; j <= len(rb); j++ {
			cost := 1
			if ra[i-1] == rb[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev, cur = cur, prev
	}
	return prev[len(rb)]
}

// UpdateDate replaces date id with the form's values when the stored version is still version;
// otherwise it returns ErrConflict and changes nothing. A contributor's edit makes the date pending.
func (d *DB) UpdateDate(ctx context.Context, id int64, version int, f Form, asCurator bool) (Date, error) {
	dt, problems := parseDateForm(f, asCurator)
	return dateType().save(ctx, d, id, version, dt, problems, d.prepareDateForm(f))
}

// ReviewDate accepts or rejects date id (at version) with a reason, as a curator.
func (d *DB) ReviewDate(ctx context.Context, id int64, version int, accept bool, note string) (Date, error) {
	return dateType().reviewRecord(ctx, d, id, version, accept, note)
}

// DeleteDate removes date id (at version), keeping its last state in the revision.
func (d *DB) DeleteDate(ctx context.Context, id int64, version int) error {
	return dateType().deleteRecord(ctx, d, id, version)
}
