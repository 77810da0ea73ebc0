package store

import (
	"context"
	"database/sql"
	"fmt"
	"math"
	"strings"
	"testing"
)

// The likely-duplicate check answers by an index range yet keeps the rule it had as a scan of the unit,
// |a − age| ≤ 10⁻⁹·a: probes at and just beyond the rule's edges (one float step apart) find exactly the
// dates the rule's own SQL finds.
func TestLikelyDuplicateKeepsTheRule(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	stored := []float64{0.001, 1, 66.05, 155.4, 201.564, 4599.99}
	var body strings.Builder
	body.WriteString(dateHeader)
	for i, a := range stored {
		fmt.Fprintf(&body, "P,U1,S-%d,upb_idtims,zircon,eruption,%v,%v,1,,,\n", i, a, a/100)
		fmt.Fprintf(&body, "P,U2,T-%d,upb_idtims,zircon,eruption,%v,%v,1,,,\n", i, a, a/100)
	}
	if _, err := importString(t, db, "dates", "", body.String()); err != nil {
		t.Fatal(err)
	}
	var uid int64
	if err := db.db.QueryRowContext(ctx, `SELECT id FROM units WHERE name = 'U1'`).Scan(&uid); err != nil {
		t.Fatal(err)
	}
	err := db.inTx(ctx, func(tx *sql.Tx) error {
		w, err := db.newDateWriter(ctx, tx, 0)
		if err != nil {
			return err
		}
		defer w.close()
		for _, a := range stored {
			// The rule's edges: a·(1 ± 10⁻⁹) solved for the probe, and the float steps around them.
			var probes []float64
			for _, edge := range []float64{a, a * (1 - 1e-9), a * (1 + 1e-9), a / (1 + 1e-9), a / (1 - 1e-9), a * (1 - 2e-9), a * (1 + 2e-9)} {
				probes = append(probes, edge, math.Nextafter(edge, 0), math.Nextafter(edge, math.Inf(1)))
			}
			for _, p := range probes {
				for _, method := range []string{"upb_idtims", "arar_plateau"} {
					var want int64
					if err := tx.QueryRowContext(ctx, `SELECT coalesce(min(id), 0) FROM dates NOT INDEXED WHERE unit_id = ? AND method = ?
						AND abs(age_ma - ?) <= 1e-9 * age_ma`, uid, method, p).Scan(&want); err != nil {
						return err
					}
					got, err := w.likelyDuplicate(ctx, uid, method, p)
					if err != nil {
						return err
					}
					if got != want {
						t.Errorf("age %v, method %s: found date %d, the rule finds %d", p, method, got, want)
					}
				}
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
}

// The likely-duplicate check reads an index range (unit, method, age), not every date of the unit: the
// cause of a dates import quadratic in dates per unit (issue 13: 20,000 dates of one unit took 78 s).
func TestLikelyDuplicateUsesTheIndexRange(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	err := db.inTx(ctx, func(tx *sql.Tx) error {
		rows, err := tx.QueryContext(ctx, "EXPLAIN QUERY PLAN "+likelyDuplicateQuery, 1, "upb_idtims", 1.0, 1.0, 1.0)
		if err != nil {
			return err
		}
		defer rows.Close()
		var plan []string
		for rows.Next() {
			var id, parent, unused int
			var detail string
			if err := rows.Scan(&id, &parent, &unused, &detail); err != nil {
				return err
			}
			plan = append(plan, detail)
		}
		all := strings.Join(plan, "; ")
		if !strings.Contains(all, "dates_unit_method_age (unit_id=? AND method=? AND age_ma>? AND age_ma<?)") {
			t.Errorf("query plan %q: want a range of the index dates_unit_method_age", all)
		}
		return rows.Err()
	})
	if err != nil {
		t.Fatal(err)
	}
}

// A file that gives the same unit, method and age twice warns on the second line (the first is in the
// compilation by then), as it did before the import was made linear; ids run on from what is stored.
func TestImportDatesWarnsAboutDuplicatesWithinTheFile(t *testing.T) {
	db := mustOpenDB(t)
	if _, err := importString(t, db, "dates", "", dateHeader+goodDate); err != nil {
		t.Fatal(err)
	}
	body := dateHeader + "P,U2,S-8,upb_idtims,zircon,eruption,150.1,0.06,2,,,\n" +
		"P,U2,S-9,upb_idtims,zircon,eruption,150.1,0.06,2,,,\n" +
		"P,U2,S-10,upb_sims,zircon,eruption,150.1,0.06,2,,,\n"
	res, err := importString(t, db, "dates", "", body)
	if err != nil {
		t.Fatal(err)
	}
	notes := strings.Join(res.Notes, "\n")
	if !strings.Contains(notes, "line 3: likely a duplicate of date 2") || strings.Contains(notes, "line 2: likely") || strings.Contains(notes, "line 4: likely") {
		t.Errorf("notes %q", notes)
	}
	var ids []int64
	rows, err := db.db.Query(`SELECT id FROM dates ORDER BY id`)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	for rows.Next() {
		var id int64
		rows.Scan(&id)
		ids = append(ids, id)
	}
	if fmt.Sprint(ids) != "[1 2 3 4]" {
		t.Errorf("date ids %v, want 1 to 4", ids)
	}
}

// Dates are parsed while the file is read; the problems an import lists are still those of reading the
// whole file, checking its header and then parsing every row: a problem of reading or of the header alone
// when there is one (wherever it is in the file), else every problem of every row, in order.
func TestImportDatesStreamingListsTheProblemsOfAWholeRead(t *testing.T) {
	bad := "P,U1,S-2,upb_idtims,zircon,eruption,-3,0.06,2,,,\n"
	files := map[string]string{
		"row problems only":          dateHeader + goodDate + bad + "P,U1,S-1,upb_idtims,zircon,eruption,155.4,0.06,2,,,\n",
		"short row after a bad row":  dateHeader + bad + goodDate + "P,U1,S-3,upb_idtims\n",
		"short row before a bad row": dateHeader + "P,U1,S-3,upb_idtims\n" + bad,
		"control character late":     dateHeader + bad + "P,U1,S-4,upb_idtims,zir\x01con,eruption,155.4,0.06,2,,,\n",
		"missing column":             "province,unit,sample_code,method,age_ma,sigma_ma,sigma_level\nP,U1,S-1,upb_idtims,-1,0.06,2\n",
		"unknown column":             "colour," + dateHeader + "red," + bad,
		"header only":                dateHeader,
	}
	for name, body := range files {
		// The reference: read the whole file, check the header, then parse every row.
		var want []Problem
		tb, err := readCSV("in.csv", strings.NewReader(body))
		if err != nil {
			t.Fatal(err)
		}
		tb.requireColumns([]string{"sample_code", "method", "interpretation", "age_ma", "sigma_ma", "sigma_level"},
			append(dateColumns[:len(dateColumns):len(dateColumns)], DerivedDateColumns...))
		if tb.err() == nil {
			seen := map[[2]string]int{}
			for i := range tb.rows {
				parseDateRow(tb.row(i), seen)
			}
		}
		want = tb.problems
		db := mustOpenDB(t)
		_, err = importString(t, db, "dates", "", body)
		ve, ok := AsValidation(err)
		if !ok {
			t.Fatalf("%s: %v, want problems", name, err)
		}
		if fmt.Sprint(ve.Problems) != fmt.Sprint(want) {
			t.Errorf("%s: problems\n%v\nwant\n%v", name, ve.Problems, want)
		}
		if n, _ := db.Counts(context.Background()); n.Dates != 0 {
			t.Errorf("%s: %d dates written", name, n.Dates)
		}
	}
}

// A dates import enlarges its connection's page cache and puts it back: the pooled connection that ran it
// (the only one here) has SQLite's default again afterwards, whether the import was taken or refused.
func TestImportDatesPutsThePageCacheBack(t *testing.T) {
	db := mustOpenDB(t)
	db.db.SetMaxOpenConns(1)
	ctx := context.Background()
	var before int64
	if err := db.db.QueryRowContext(ctx, `PRAGMA cache_size`).Scan(&before); err != nil {
		t.Fatal(err)
	}
	if before == importCacheKiB {
		t.Fatalf("the default cache (%d) is the import's: the test cannot tell", before)
	}
	for _, body := range []string{dateHeader + goodDate, dateHeader + goodDate /* refused: already stored */} {
		importString(t, db, "dates", "", body)
		var after int64
		if err := db.db.QueryRowContext(ctx, `PRAGMA cache_size`).Scan(&after); err != nil {
			t.Fatal(err)
		}
		if after != before {
			t.Errorf("cache_size %d after an import, want %d as before", after, before)
		}
	}
}
