package store

import (
	"context"
	"fmt"
	"slices"
	"strings"
	"testing"
)

// Every query a page of the dates list runs, under every sort, both ways, first page and after a cursor,
// before a cursor, reads the index of its sort key (migration 012) and sorts nothing in a temporary
// b-tree: a query that sorted would read every matching date for each page (issue 13: a deep page took
// 343 ms at 100,000 dates).
func TestDatesPageQueriesUseTheSortIndexes(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	exec := func(q string, args ...any) {
		t.Helper()
		if _, err := db.db.ExecContext(ctx, q, args...); err != nil {
			t.Fatal(err)
		}
	}
	at := "2026-01-02T03:04:05Z"
	exec(`INSERT INTO provinces (id, name, created_at, updated_at) VALUES (1, 'Invented Province', ?, ?)`, at, at)
	exec(`INSERT INTO units (id, province_id, name, created_at, updated_at) VALUES (1, 1, 'Flow A', ?, ?), (2, 1, 'Flow B', ?, ?)`, at, at, at, at)
	exec(`INSERT INTO sections (id, name, created_at, updated_at) VALUES (1, 'Invented Section', ?, ?)`, at, at)
	for i := 1; i <= 40; i++ {
		var unit, section, height any = 1 + i%2, nil, nil
		if i%5 == 0 {
			unit, section, height = nil, 1, float64(i)
		}
		exec(`INSERT INTO dates (id, unit_id, section_id, height_m, sample_code, method, material, interpretation, age_ma,
			sigma_ma, sigma_level, laboratory, review_state, created_at, updated_at) VALUES (?,?,?,?,?,?,?,'eruption',?,?,1,?,'accepted',?,?)`,
			i, unit, section, height, fmt.Sprintf("S-%03d", i), []string{"upb_idtims", "arar_plateau"}[i%2],
			[]string{"zircon", "sanidine", "glass"}[i%3], 180+float64(i%7), 0.01+float64(i%4)/100, []string{"Lab A", "Lab B"}[i%2], at, at)
	}
	want := map[string]string{"age": "INDEX dates_age", "sigma": "INDEX dates_sigma_rel", "sample": "INDEX dates_sample",
		"method": "INDEX dates_method", "material": "INDEX dates_material", "lab": "INDEX dates_laboratory",
		"added": "INTEGER PRIMARY KEY", "unit": "INDEX dates_unit_id"}
	if len(want) != len(DateSortKeys()) {
		t.Fatalf("want an index for each of %v", DateSortKeys())
	}
	var queries []string
	var qargs [][]any
	db.smallDates = 1 // every page along the index, as for a large compilation
	db.traceQuery = func(q string, args []any) { queries, qargs = append(queries, q), append(qargs, args) }
	for _, key := range DateSortKeys() {
		for _, sort := range []string{key, "-" + key} {
			queries, qargs = nil, nil
			f := DateFilter{Sort: sort, Limit: 7}
			pg, err := db.DatesPage(ctx, f)
			if err != nil || pg.Next == "" {
				t.Fatalf("%s: %v (next %q)", sort, err, pg.Next)
			}
			f.After = pg.Next
			if pg, err = db.DatesPage(ctx, f); err != nil || pg.Prev == "" {
				t.Fatalf("%s: %v", sort, err)
			}
			f.After, f.Before = "", pg.Next
			if _, err := db.DatesPage(ctx, f); err != nil {
				t.Fatal(err)
			}
			f.Before, f.Offset = "", 9 // an old link by rows skipped: the cursor found along the index
			if _, err := db.DatesPage(ctx, f); err != nil {
				t.Fatal(err)
			}
			for i, q := range queries {
				plan := explain(t, db, q, qargs[i])
				if !strings.Contains(plan, want[key]) || strings.Contains(plan, "TEMP B-TREE") {
					t.Errorf("sort %s: %s\nplan %q: want %s and no sorting in a temporary b-tree", sort, q, plan, want[key])
				}
			}
		}
	}
}

// Read along the indexes (as for a large compilation, more than smallDateSet matches), every sort, both
// ways, under filters of every kind, gives the dates in the order of the plain sorted query (DB.Dates, which
// sorts all that match): walking forward by the next cursors, back by the previous ones, and from any place
// reached by rows skipped.
func TestDatesPageAlongTheIndexGivesTheSortedOrder(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	exec := func(q string, args ...any) {
		t.Helper()
		if _, err := db.db.ExecContext(ctx, q, args...); err != nil {
			t.Fatal(err)
		}
	}
	at := "2026-01-02T03:04:05Z"
	exec(`INSERT INTO provinces (id, name, created_at, updated_at) VALUES (1, 'Invented B', ?, ?), (2, 'Invented A', ?, ?)`, at, at, at, at)
	exec(`INSERT INTO units (id, province_id, name, created_at, updated_at) VALUES (1, 1, 'Flow Z', ?, ?), (2, 1, 'Flow A', ?, ?), (3, 2, 'Flow M', ?, ?)`,
		at, at, at, at, at, at)
	exec(`INSERT INTO sections (id, name, created_at, updated_at) VALUES (1, 'Invented Section', ?, ?)`, at, at)
	for i := 1; i <= 300; i++ {
		var unit, section, height any = 1 + i%3, nil, nil
		if i%7 == 0 {
			unit, section, height = nil, 1, float64(i)
		}
		exec(`INSERT INTO dates (id, unit_id, section_id, height_m, sample_code, method, material, interpretation, age_ma,
			sigma_ma, sigma_level, laboratory, review_state, created_at, updated_at) VALUES (?,?,?,?,?,?,?,'eruption',?,?,1,?,'accepted',?,?)`,
			i, unit, section, height, fmt.Sprintf("S-%03d", i%130), []string{"upb_idtims", "arar_plateau", "upb_laicpms"}[i%3],
			[]string{"zircon", "sanidine", "glass", "Zircon"}[i%4], 180+float64(i%11), 0.01+float64(i%5)/100, []string{"Lab A", "Lab B", ""}[i%3], at, at)
	}
	db.smallDates = 1
	filters := map[string]DateFilter{"all": {}, "province 1": {ProvinceID: 1}, "unit 3": {UnitID: 3}, "section 1": {SectionID: 1},
		"ar/ar": {Method: "arar_plateau"}, "text": {Text: "lab b"}, "age window": {MinAgeMa: ptr(182.0), MaxAgeMa: ptr(187.0)}}
	for name, base := range filters {
		for _, key := range DateSortKeys() {
			for _, sort := range []string{key, "-" + key} {
				f := base
				f.Sort = sort
				all, total, err := db.Dates(ctx, f)
				if err != nil {
					t.Fatal(err)
				}
				want := make([]int64, len(all))
				for i, d := range all {
					want[i] = d.ID
				}
				f.Limit = 13
				var got []int64
				var cursors []string
				for cur := ""; ; {
					f.After = cur
					pg, err := db.DatesPage(ctx, f)
					if err != nil || pg.Total != total || pg.First != len(got) {
						t.Fatalf("%s %s: %v, total %d first %d, want %d and %d", name, sort, err, pg.Total, pg.First, total, len(got))
					}
					for _, d := range pg.Dates {
						got = append(got, d.ID)
					}
					if cur = pg.Next; cur == "" {
						break
					}
					cursors = append(cursors, pg.Prev)
				}
				if !slices.Equal(got, want) {
					t.Fatalf("%s sorted %s: forward %v, want %v", name, sort, got, want)
				}
				f.After = ""
				for off := 1; off < total; off += 5 {
					f.Offset = off
					pg, err := db.DatesPage(ctx, f)
					if err != nil || pg.First != off || len(pg.Dates) == 0 || pg.Dates[0].ID != want[off] {
						t.Fatalf("%s %s: %d skipped: %v, first %d", name, sort, off, err, pg.First)
					}
					f.Offset, f.Before = 0, pg.Prev
					back, err := db.DatesPage(ctx, f)
					f.Before = ""
					if err != nil || len(back.Dates) == 0 || back.Dates[len(back.Dates)-1].ID != want[off-1] || back.First != max(off-13, 0) {
						t.Fatalf("%s %s: the page before place %d: %v, first %d", name, sort, off, err, back.First)
					}
				}
				f.Offset = 0
			}
		}
	}
}

func ptr[T any](v T) *T { return &v }

func explain(t *testing.T, db *DB, q string, args []any) string {
	t.Helper()
	rows, err := db.db.Query("EXPLAIN QUERY PLAN "+q, args...)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	var plan []string
	for rows.Next() {
		var id, parent, unused int
		var detail string
		if err := rows.Scan(&id, &parent, &unused, &detail); err != nil {
			t.Fatal(err)
		}
		plan = append(plan, detail)
	}
	return strings.Join(plan, "; ")
}

// A change's pending records are read from the shorter side, and each side by its index: from the pending
// dates (dates_pending) to their revisions by record (revisions_record) when the change holds more
// revisions than there are pending dates; else from the change's revisions (revisions_batch) to their
// dates. Reading the change's revisions once per pending date, as SQLite chose when free to, took minutes
// at 100,000 dates. The count agrees with a plain count of the same pairs on both sides.
func TestPendingInBatchReadsTheShorterSideByItsIndex(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	exec := func(q string, args ...any) {
		t.Helper()
		if _, err := db.db.ExecContext(ctx, q, args...); err != nil {
			t.Fatal(err)
		}
	}
	at := "2026-01-02T03:04:05Z"
	exec(`INSERT INTO provinces (id, name, created_at, updated_at) VALUES (1, 'Invented Province', ?, ?)`, at, at)
	exec(`INSERT INTO units (id, province_id, name, created_at, updated_at) VALUES (1, 1, 'Flow A', ?, ?)`, at, at)
	exec(`INSERT INTO change_batches (id, kind, source, at) VALUES (1, 'import dates', 'a.csv', ?), (2, 'upload dates', 'b.csv', ?)`, at, at)
	// Change 1 added dates 1–30, of which 1–4 wait for review; change 2 added dates 31–33, all waiting.
	for i := 1; i <= 33; i++ {
		state, batch := "accepted", 1
		if i <= 4 || i > 30 {
			state = "pending"
		}
		if i > 30 {
			batch = 2
		}
		exec(`INSERT INTO dates (id, unit_id, sample_code, method, interpretation, age_ma, sigma_ma, sigma_level, review_state,
			created_at, updated_at) VALUES (?, 1, ?, 'upb_idtims', 'eruption', 180, 0.1, 1, ?, ?, ?)`, i, fmt.Sprintf("S-%03d", i), state, at, at)
		exec(`INSERT INTO revisions (batch_id, record_type, record_id, after_json) VALUES (?, 'date', ?, '{}')`, batch, i)
	}
	for batch, want := range map[int64]struct {
		n     int
		index []string
	}{1: {4, []string{"dates_pending", "revisions_record"}}, 2: {3, []string{"revisions_batch"}}} {
		sides, args, err := pendingAdded(ctx, db.db, batch)
		if err != nil || len(sides) != 1 {
			t.Fatalf("change %d: %d sides, %v", batch, len(sides), err)
		}
		plan := explain(t, db, sides[0], args)
		for _, ix := range want.index {
			if !strings.Contains(plan, "INDEX "+ix) {
				t.Errorf("change %d: plan %q does not use %s", batch, plan, ix)
			}
		}
		if batch == 1 && strings.Contains(plan, "revisions_batch") {
			t.Errorf("change 1: plan %q reads the change's revisions for each pending date", plan)
		}
		n, err := db.PendingInBatch(ctx, batch)
		if err != nil || n != want.n {
			t.Errorf("change %d: %d pending, %v; want %d (counted above by hand)", batch, n, err, want.n)
		}
	}
}
