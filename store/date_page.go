package store

import (
	"cmp"
	"context"
	"database/sql"
	"errors"
	"fmt"
	"slices"
	"strings"
)

// DatesPage returns one page of f.Limit dates: the first page, the one after f.After or the one before
// f.Before, with how many match in all and the cursors of its neighbours.
//
// Every page is read through an index of its sort key (migration 012), so a page deep in the list costs
// what the first does. When the key and the id run the same way (ascending sorts, and the page before a
// cursor of a descending one) one query reads the page from the index of the key, whose entries are in
// (key, id) order. When they run opposite ways (a descending sort: newest key first, ties oldest id first)
// no index holds that order, so the page is read one key at a time (datesByGroups): the next key by the
// index, then its dates by id. The unit sort is read one unit at a time, units in the order of their
// province's and their own name, each unit's dates by id (index dates_unit_id).
func (d *DB) DatesPage(ctx context.Context, f DateFilter) (DatePage, error) {
	var pg DatePage
	cond, args := dateWhere(f)
	if err := d.reader().QueryRowContext(ctx, `SELECT count(*)`+keyFrom(f)+cond, args...).Scan(&pg.Total); err != nil {
		return pg, fmt.Errorf("count dates: %w", err)
	}
	cols, desc := dateOrder(f)
	reverse := f.Before != ""
	cur := f.After
	if reverse {
		cur = f.Before
	}
	var c *dateCursor
	if cur != "" {
		dc, err := decodeCursor(cur, len(cols))
		if err != nil {
			return pg, err
		}
		c = &dc
	}
	limit := max(f.Limit, 1)
	keyDesc, idDesc := desc != reverse, reverse
	if slices.Equal(cols, dateSorts["added"]) {
		idDesc = keyDesc // the key is the id: no ties to break
	}
	key, _ := strings.CutPrefix(f.Sort, "-")
	ix, ok := dateSortIndex[key]
	if !ok {
		ix = dateSortIndex["age"]
	}
	offset, first := 0, 0
	var rows []keyedDate
	var err error
	small := pg.Total <= cmp.Or(d.smallDates, smallDateSet)
	if c == nil && f.Offset > 0 { // rows skipped (old links)
		offset = f.Offset
		first = offset
		if !small && offset < pg.Total {
			// The date just before the page, found by counting along the index, becomes the page's cursor.
			if c, err = d.cursorAt(ctx, f, cols, ix, cond, args, keyDesc, idDesc, offset-1); err != nil {
				return pg, fmt.Errorf("dates page: %w", err)
			}
		}
	}
	switch {
	case small || (c == nil && offset > 0):
		// Few dates match (or the offset is past the end): one query, whichever index SQLite picks for the
		// filter, sorting what matches.
		q, qa := cond, args
		if c != nil {
			kc, ka := keysetCond(cols, desc, reverse, *c)
			q, qa = andCond(q, qa, kc, ka...)
		}
		q = `SELECT ` + strings.Join(cols, ", ") + `, ` + strings.TrimPrefix(dateSelect, "SELECT ") + q + orderBy(cols, desc, reverse) +
			fmt.Sprintf(" LIMIT %d", limit+1)
		if c == nil && offset > 0 {
			q += fmt.Sprintf(" OFFSET %d", offset)
		}
		rows, err = d.keyedDates(ctx, q, qa, len(cols))
	case len(cols) == 2: // the unit sort
		rows, err = d.datesByUnit(ctx, f, cond, args, keyDesc, idDesc, c, limit+1)
	case keyDesc == idDesc:
		if c != nil {
			op := ">"
			if keyDesc {
				op = "<"
			}
			cond, args = andCond(cond, args, "("+cols[0]+", d.id) "+op+" (?, ?)", c.Key[0], c.ID)
		}
		dir := " ASC"
		if keyDesc {
			dir = " DESC"
		}
		q := `SELECT ` + cols[0] + `, ` + strings.TrimPrefix(indexedBy(dateSelect, ix), "SELECT ") + cond +
			" ORDER BY " + cols[0] + dir + ", d.id" + dir + fmt.Sprintf(" LIMIT %d", limit+1)
		rows, err = d.keyedDates(ctx, q, args, 1)
	default:
		rows, err = d.datesByKey(ctx, f, cols[0], ix, cond, args, keyDesc, idDesc, c, limit+1)
	}
	if err != nil {
		return pg, fmt.Errorf("dates page: %w", err)
	}
	pg.fill(rows, limit, f, c, first, offset)
	return pg, nil
}

// fill makes a page of the rows read (limit+1 at most: one more says there is a next page), in the
// list's order, with the place of its first date and the cursors of the pages either side.
func (pg *DatePage) fill(rows []keyedDate, limit int, f DateFilter, c *dateCursor, first, offset int) {
	reverse := f.Before != ""
	more := len(rows) > limit
	if more {
		rows = rows[:limit]
	}
	if reverse {
		slices.Reverse(rows)
	}
	for _, r := range rows {
		pg.Dates = append(pg.Dates, r.date)
	}
	// The place of the first date shown (0 = first of all).
	switch {
	case f.After != "":
		pg.First = c.Pos + 1
	case reverse:
		pg.First = c.Pos - len(pg.Dates)
	default:
		pg.First = first
	}
	pg.First = max(pg.First, 0)
	n := len(pg.Dates)
	if n == 0 {
		return
	}
	at := func(i int) string {
		return encodeCursor(dateCursor{Key: rows[i].key, ID: pg.Dates[i].ID, Pos: pg.First + i})
	}
	if (!reverse && more) || reverse {
		pg.Next = at(n - 1)
	}
	if (reverse && more) || (!reverse && (f.After != "" || offset > 0)) {
		pg.Prev = at(0)
	}
}

// keyFrom is the FROM clause of the queries of f's dates that read no column but the dates' own: without
// the joins when no condition of f reads a unit, province or section. SQLite keeps a LEFT JOIN it is not
// asked about, at a row look-up per date: 45 ms to count 100,000 dates, where the table alone is counted
// from its b-tree.
func keyFrom(f DateFilter) string {
	if strings.TrimSpace(f.Text) == "" {
		return ` FROM dates d `
	}
	return dateFrom + " "
}

// smallDateSet is the most matching dates a page reads in one query that sorts them all, letting SQLite
// choose its index by the filter; above it, pages are read along the index of the sort key, which the
// query is then held to (INDEXED BY): with a filter SQLite would otherwise choose the filter's index and
// sort every match for each page (a third of 100,000 dates for a method).
const smallDateSet = 5000

// dateSortIndex is the index each sort key is read by (the unit sort reads dates_unit_id by unit; added,
// the id, reads the table itself).
var dateSortIndex = map[string]string{"age": "dates_age", "sigma": "dates_sigma_rel", "sample": "dates_sample",
	"method": "dates_method", "material": "dates_material", "lab": "dates_laboratory", "added": "", "unit": ""}

// indexedBy holds q's dates table to index ix (the table itself, by id, when ix is "").
func indexedBy(q, ix string) string {
	by := "NOT INDEXED"
	if ix != "" {
		by = "INDEXED BY " + ix
	}
	return strings.Replace(q, "FROM dates d ", "FROM dates d "+by+" ", 1)
}

// cursorAt is the cursor of the date at place p (0 = first) of the dates selected by cond in the order
// (key in keyDesc's direction, id in idDesc's), found by counting along the index: the key at place p
// (the order of the keys alone is the same whichever way ties go), how many dates come before that key,
// and so the place of the date within the key's own dates. For the unit sort, the units' counts.
func (d *DB) cursorAt(ctx context.Context, f DateFilter, cols []string, ix, cond string, args []any, keyDesc, idDesc bool, p int) (*dateCursor, error) {
	keyDir, idDir := " ASC", " ASC"
	if keyDesc {
		keyDir = " DESC"
	}
	if idDesc {
		idDir = " DESC"
	}
	var key []any
	var within int
	var gc string
	var ga []any
	if len(cols) == 2 {
		groups, err := d.unitGroups(ctx, f, keyDesc)
		if err != nil {
			return nil, err
		}
		counts := map[int64]int{}
		rows, err := d.reader().QueryContext(ctx, `SELECT coalesce(d.unit_id, 0), count(*)`+indexedBy(keyFrom(f), "dates_unit_id")+cond+` GROUP BY d.unit_id`, args...)
		if err != nil {
			return nil, err
		}
		for rows.Next() {
			var id int64
			var n int
			if err := rows.Scan(&id, &n); err != nil {
				rows.Close()
				return nil, err
			}
			counts[id] = n
		}
		rows.Close()
		if err := rows.Err(); err != nil {
			return nil, err
		}
		at := 0
		for _, g := range groups {
			if n := counts[g.id]; p < at+n {
				key, within = []any{g.key[0], g.key[1]}, p-at
				gc, ga = andCond(cond, args, "d.unit_id = ?", g.id)
				if g.id == 0 {
					gc, ga = andCond(cond, args, "d.unit_id IS NULL")
				}
				break
			} else {
				at += n
			}
		}
		if key == nil {
			return nil, nil
		}
	} else {
		// The key at place p and how many dates come before that key, in one walk along the index: rank()
		// is one more than the number of rows before the row's key in the order (half the time of a
		// second walk counting them: 50 against 105 ms at place 15,000 of a filter's 33,000 dates).
		expr := cols[0]
		var k any
		var rank int
		err := d.reader().QueryRowContext(ctx, `SELECT `+expr+`, rank() OVER (ORDER BY `+expr+keyDir+`)`+indexedBy(keyFrom(f), ix)+cond+
			` ORDER BY `+expr+keyDir+fmt.Sprintf(` LIMIT 1 OFFSET %d`, p), args...).Scan(&k, &rank)
		if errors.Is(err, sql.ErrNoRows) {
			return nil, nil
		}
		if err != nil {
			return nil, err
		}
		k = cursorValue(k)
		n := rank - 1
		key, within = []any{k}, p-n
		gc, ga = andCond(cond, args, expr+" = ?", k)
	}
	var id int64
	err := d.reader().QueryRowContext(ctx, `SELECT d.id`+keyFrom(f)+gc+` ORDER BY d.id`+idDir+fmt.Sprintf(` LIMIT 1 OFFSET %d`, within), ga...).Scan(&id)
	if err != nil {
		return nil, err
	}
	return &dateCursor{Key: key, ID: id, Pos: p}, nil
}

// keyedDate is a date with the values of its sort key, as a cursor keeps them.
type keyedDate struct {
	key  []any
	date Date
}

// keyedDates runs q, whose first keys columns are the sort key and the rest dateSelect's.
func (d *DB) keyedDates(ctx context.Context, q string, args []any, keys int) ([]keyedDate, error) {
	if d.traceQuery != nil {
		d.traceQuery(q, args)
	}
	rows, err := d.reader().QueryContext(ctx, q, args...)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []keyedDate
	for rows.Next() {
		k := make([]any, keys)
		pre := make([]any, keys)
		for i := range k {
			pre[i] = &k[i]
		}
		dt, err := scanDate(prefixScan{rows, pre})
		if err != nil {
			return nil, err
		}
		for i, v := range k {
			k[i] = cursorValue(v)
		}
		out = append(out, keyedDate{k, dt})
	}
	return out, rows.Err()
}

// cursorValue is a key value as a cursor holds it (text or a number).
func cursorValue(v any) any {
	switch x := v.(type) {
	case []byte:
		return string(x)
	case int64:
		return float64(x)
	}
	return v
}

func andCond(cond string, args []any, more string, a ...any) (string, []any) {
	out := append(append([]any{}, args...), a...)
	if cond == "" {
		return " WHERE " + more, out
	}
	return cond + " AND " + more, out
}

// datesByKey reads up to want dates one key value at a time, keys in the direction keyDesc says, the dates
// of one key by id in the direction idDesc says, starting after cursor c (nil: from the first key). Each
// step is two look-ups by the index of expr: the next key, then its dates from the id reached.
func (d *DB) datesByKey(ctx context.Context, f DateFilter, expr, ix, cond string, args []any, keyDesc, idDesc bool, c *dateCursor, want int) ([]keyedDate, error) {
	keyOp, keyDir, idOp, idDir := ">", " ASC", ">", " ASC"
	if keyDesc {
		keyOp, keyDir = "<", " DESC"
	}
	if idDesc {
		idOp, idDir = "<", " DESC"
	}
	var out []keyedDate
	var key any
	var afterID *int64
	if c != nil {
		key, afterID = c.Key[0], &c.ID
	}
	for len(out) < want {
		if afterID == nil { // the next key value
			kc, ka := cond, args
			if key != nil {
				kc, ka = andCond(cond, args, expr+" "+keyOp+" ?", key)
			}
			var next any
			q := `SELECT ` + expr + indexedBy(keyFrom(f), ix) + kc + ` ORDER BY ` + expr + keyDir + ` LIMIT 1`
			if d.traceQuery != nil {
				d.traceQuery(q, ka)
			}
			err := d.reader().QueryRowContext(ctx, q, ka...).Scan(&next)
			if errors.Is(err, sql.ErrNoRows) {
				break
			}
			if err != nil {
				return nil, err
			}
			key = cursorValue(next)
		}
		gc, ga := andCond(cond, args, expr+" = ?", key)
		if afterID != nil {
			gc, ga = andCond(gc, ga, "d.id "+idOp+" ?", *afterID)
		}
		got, err := d.keyedDates(ctx, `SELECT `+expr+`, `+strings.TrimPrefix(indexedBy(dateSelect, ix), "SELECT ")+gc+
			` ORDER BY d.id`+idDir+fmt.Sprintf(" LIMIT %d", want-len(out)), ga, 1)
		if err != nil {
			return nil, err
		}
		out = append(out, got...)
		afterID = nil
	}
	return out, nil
}

// unitGroup is one unit's dates in the unit sort (id 0: the dates of sections, which have no unit and sort
// first), with its key: its province's name and its own.
type unitGroup struct {
	id  int64
	key [2]string
}

// unitGroups lists the units the dates selected by f can belong to (and the group of dates without a
// unit, the sections'), in the order of the unit sort, reversed when keyDesc.
func (d *DB) unitGroups(ctx context.Context, f DateFilter, keyDesc bool) ([]unitGroup, error) {
	var groups []unitGroup
	if f.SectionID != 0 || (f.ProvinceID == 0 && f.UnitID == 0) {
		groups = append(groups, unitGroup{})
	}
	if f.SectionID == 0 {
		q, qa := `SELECT u.id, p.name, u.name FROM units u JOIN provinces p ON p.id = u.province_id WHERE 1 = 1`, []any{}
		if f.ProvinceID != 0 {
			q, qa = q+` AND u.province_id = ?`, append(qa, f.ProvinceID)
		}
		if f.UnitID != 0 {
			q, qa = q+` AND u.id = ?`, append(qa, f.UnitID)
		}
		us, err := queryAll(ctx, d.reader(), q, qa, func(s interface{ Scan(...any) error }) (unitGroup, error) {
			var g unitGroup
			return g, s.Scan(&g.id, &g.key[0], &g.key[1])
		})
		if err != nil {
			return nil, err
		}
		groups = append(groups, us...)
	}
	slices.SortFunc(groups, func(a, b unitGroup) int {
		return cmp.Or(cmp.Compare(a.key[0], b.key[0]), cmp.Compare(a.key[1], b.key[1]), cmp.Compare(a.id, b.id))
	})
	if keyDesc {
		slices.Reverse(groups)
	}
	return groups, nil
}

// datesByUnit reads up to want dates in the unit sort one unit at a time, as datesByKey does, the units
// (a few hundred) listed and ordered first.
func (d *DB) datesByUnit(ctx context.Context, f DateFilter, cond string, args []any, keyDesc, idDesc bool, c *dateCursor, want int) ([]keyedDate, error) {
	groups, err := d.unitGroups(ctx, f, keyDesc)
	if err != nil {
		return nil, err
	}
	start := 0
	var afterID *int64
	if c != nil {
		ck, _ := c.Key[0].(string)
		cu, _ := c.Key[1].(string)
		// The first group at or beyond the cursor's key in the direction read.
		start = len(groups)
		for i, g := range groups {
			k := cmp.Or(cmp.Compare(g.key[0], ck), cmp.Compare(g.key[1], cu))
			if k == 0 {
				start, afterID = i, &c.ID
				break
			}
			if (k > 0) != keyDesc {
				start = i
				break
			}
		}
	}
	idOp, idDir := ">", " ASC"
	if idDesc {
		idOp, idDir = "<", " DESC"
	}
	var out []keyedDate
	for _, g := range groups[start:] {
		if len(out) >= want {
			break
		}
		gc, ga := andCond(cond, args, "d.unit_id = ?", g.id)
		if g.id == 0 {
			gc, ga = andCond(cond, args, "d.unit_id IS NULL")
		}
		if afterID != nil {
			gc, ga = andCond(gc, ga, "d.id "+idOp+" ?", *afterID)
			afterID = nil
		}
		got, err := d.keyedDates(ctx, `SELECT coalesce(p.name, ''), coalesce(u.name, ''), `+strings.TrimPrefix(dateSelect, "SELECT ")+gc+
			` ORDER BY d.id`+idDir+fmt.Sprintf(" LIMIT %d", want-len(out)), ga, 2)
		if err != nil {
			return nil, err
		}
		out = append(out, got...)
	}
	return out, nil
}
