package web

import (
	"bytes"
	"context"
	"database/sql"
	"encoding/csv"
	"fmt"
	"html"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"regexp"
	"slices"
	"strings"
	"testing"

	"coeval/static"
	"coeval/store"
)

// Paging the dates by keyset, in every sort order both ways and under a filter, gives every matching
// date exactly once and in the order of the whole sorted list (store.Dates without a limit, the query the
// list used before); walking back from the end by the previous-page cursors gives the same pages. The
// invented ages repeat every 2,000 dates and materials every 5, so pages break many ties by id.
func TestDatesKeysetPagingGivesEveryDateOnceInOrder(t *testing.T) {
	s := newScaleDB(t, 2_500)
	ctx := context.Background()
	filters := map[string]store.DateFilter{"all": {}, "province 3": {ProvinceID: 3}, "ar/ar": {Method: "arar_plateau"},
		"unit 17": {UnitID: 17}, "section 4": {SectionID: 4}, "text": {Text: "lab b"}, "province 3 and unit 25": {ProvinceID: 3, UnitID: 25}}
	for name, base := range filters {
		for _, key := range store.DateSortKeys() {
			for _, sort := range []string{key, "-" + key} {
				f := base
				f.Sort = sort
				want, total, err := s.db.Dates(ctx, f)
				if err != nil {
					t.Fatal(err)
				}
				f.Limit = 97
				var got []int64
				pages, cur := 0, ""
				for {
					f.After = cur
					pg, err := s.db.DatesPage(ctx, f)
					if err != nil {
						t.Fatalf("%s %s: %v", name, sort, err)
					}
					if pg.Total != total || pg.First != len(got) {
						t.Fatalf("%s %s page %d: total %d first %d, want %d and %d", name, sort, pages, pg.Total, pg.First, total, len(got))
					}
					for _, d := range pg.Dates {
						got = append(got, d.ID)
					}
					pages++
					if pg.Next == "" {
						break
					}
					cur = pg.Next
				}
				if !slices.Equal(got, ids(want)) {
					t.Fatalf("%s sorted %s: keyset pages (%d) give %d dates, not the %d of the sorted list in its order", name, sort, pages, len(got), len(want))
				}
				// Back from the last page to the first by the previous-page cursors.
				f.After = ""
				f.Offset = (pages - 1) * 97
				pg, err := s.db.DatesPage(ctx, f)
				if err != nil {
					t.Fatal(err)
				}
				f.Offset = 0
				back := ids(pg.Dates)
				for pg.Prev != "" {
					f.Before = pg.Prev
					if pg, err = s.db.DatesPage(ctx, f); err != nil {
						t.Fatal(err)
					}
					if len(pg.Dates) != 97 || pg.First != len(got)-len(back)-97 {
						t.Fatalf("%s %s: a page back holds %d dates from place %d", name, sort, len(pg.Dates), pg.First)
					}
					back = append(ids(pg.Dates), back...)
				}
				f.Before = ""
				if !slices.Equal(back, got) {
					t.Fatalf("%s sorted %s: walking back gives %d dates, not the %d walking forward", name, sort, len(back), len(got))
				}
			}
		}
	}
}

func ids(ds []store.Date) []int64 {
	out := make([]int64, len(ds))
	for i, d := range ds {
		out[i] = d.ID
	}
	return out
}

var (
	nextLink  = regexp.MustCompile(`<a href="([^"]+)" rel="next">`)
	sampleRef = regexp.MustCompile(`<a href="/dates/(\d+)">`)
)

// The dates page links its next page by position (not by rows skipped), and following those links from
// the first page shows every date once in the list's order; an old page= address still answers.
func TestDatesPageLinksNextByPosition(t *testing.T) {
	s := newScaleDB(t, 600)
	srv := httptest.NewServer(s.handler())
	t.Cleanup(srv.Close)
	for _, sort := range []string{"-age", "unit", "-material"} {
		want, _, err := s.db.Dates(context.Background(), store.DateFilter{Sort: sort})
		if err != nil {
			t.Fatal(err)
		}
		var got []string
		path := "/dates?per=100&sort=" + sort
		for path != "" {
			code, _, body := get(t, srv, path)
			if code != http.StatusOK {
				t.Fatalf("%s: status %d", path, code)
			}
			for _, m := range sampleRef.FindAllStringSubmatch(body, -1) {
				got = append(got, m[1])
			}
			path = ""
			if m := nextLink.FindStringSubmatch(body); m != nil {
				path = html.UnescapeString(m[1])
				if !strings.Contains(path, "after=") || strings.Contains(path, "page=") {
					t.Fatalf("next link %q: want a position (after=), not a count of rows skipped", path)
				}
			}
		}
		var wantIDs []string
		for _, d := range want {
			wantIDs = append(wantIDs, fmt.Sprint(d.ID))
		}
		if !slices.Equal(got, wantIDs) {
			t.Fatalf("sort %s: the pages show %d dates, want the %d of the list once each in order", sort, len(got), len(wantIDs))
		}
	}
	code, _, body := get(t, srv, "/dates?per=100&page=3")
	if code != http.StatusOK || !strings.Contains(body, "201–300 of 600") {
		t.Fatalf("page=3: status %d, want dates 201–300 of 600", code)
	}
	code, _, body = get(t, srv, "/dates?after=not-a-position")
	if code != http.StatusBadRequest || !strings.Contains(body, "first page") {
		t.Fatalf("a made-up position: status %d, want 400 saying to start from the first page", code)
	}
}

var recordRef = regexp.MustCompile(`<a href="/dates/(\d+)/history">`)

// A large change's page lists its records a page at a time (not all at once), with a "next" link, and
// following the links shows each of its records once, in the order they were made.
func TestChangePageIsPagedByRecord(t *testing.T) {
	s := newScaleDB(t, 1_200)
	srv := httptest.NewServer(s.handler())
	t.Cleanup(srv.Close)
	path := fmt.Sprintf("/changes/%d", s.importBatch)
	var got []string
	pages := 0
	for path != "" {
		code, _, body := get(t, srv, path)
		if code != http.StatusOK {
			t.Fatalf("%s: status %d", path, code)
		}
		rows := recordRef.FindAllStringSubmatch(body, -1)
		if len(rows) > changePageSize {
			t.Fatalf("%s: %d records on one page, want at most %d", path, len(rows), changePageSize)
		}
		for _, m := range rows {
			got = append(got, m[1])
		}
		if pages == 0 && !strings.Contains(body, "1188") { // 1,200 dates less the 12 pending of the upload
			t.Fatalf("first page does not say the change holds 1188 records")
		}
		pages++
		path = ""
		if m := regexp.MustCompile(`<a href="([^"]+)">next \d+ records →</a>`).FindStringSubmatch(body); m != nil {
			path = html.UnescapeString(m[1])
		}
	}
	var want []string
	for i := 1; i <= 1_188; i++ {
		want = append(want, fmt.Sprint(i))
	}
	if wantPages := (1188 + changePageSize - 1) / changePageSize; pages != wantPages || !slices.Equal(got, want) {
		t.Fatalf("%d pages show %d records, want %d pages with each of the 1188 records once in order", pages, len(got), wantPages)
	}
	// The pending upload's page counts its pending records.
	_, _, body := get(t, srv, fmt.Sprintf("/changes/%d", s.uploadBatch))
	if !strings.Contains(body, "12 record(s) this change added wait") {
		t.Fatalf("the upload's page does not count its 12 pending dates")
	}
}

// The counts and pages of a change read the revisions of that change by the index on their change
// (revisions_batch), and the pending count starts from the pending dates by their partial index; without
// them each count scans every revision.
func TestChangeQueriesUseTheBatchIndex(t *testing.T) {
	s := newScaleDB(t, 200)
	raw, err := sql.Open("sqlite", s.path)
	if err != nil {
		t.Fatal(err)
	}
	defer raw.Close()
	for q, index := range map[string]string{
		`SELECT count(*) FROM revisions r WHERE r.batch_id = 1`:                                 "revisions_batch",
		`SELECT r.id FROM revisions r WHERE r.batch_id = 1 AND r.id > 5 ORDER BY r.id LIMIT 10`: "revisions_batch",
		`SELECT count(*) FROM dates WHERE review_state = 'pending'`:                             "dates_pending",
		`DELETE FROM measurements WHERE batch_id = 1`:                                           "measurements_batch",
	} {
		rows, err := raw.Query("EXPLAIN QUERY PLAN " + q)
		if err != nil {
			t.Fatal(err)
		}
		var plan []string
		for rows.Next() {
			var id, parent, notused int
			var detail string
			if err := rows.Scan(&id, &parent, &notused, &detail); err != nil {
				t.Fatal(err)
			}
			plan = append(plan, detail)
		}
		rows.Close()
		if !strings.Contains(strings.Join(plan, "; "), "INDEX "+index) {
			t.Errorf("%s: plan %q does not use index %s", q, plan, index)
		}
	}
}

// oldWriteDatesCSV is the dates download as it was written before it streamed (kept here to compare
// bytes): the import format written, parsed back, and written again with the derived columns.
func oldWriteDatesCSV(w io.Writer, ds []store.Date, cal calChoice) error {
	var buf bytes.Buffer
	if err := store.WriteDatesCSV(&buf, ds); err != nil {
		return err
	}
	recs, err := csv.NewReader(&buf).ReadAll()
	if err != nil {
		return err
	}
	cw := store.NewCSVWriter(w)
	for i, rec := range recs {
		extra := store.DerivedDateColumns
		if i > 0 {
			extra = derivedCells(ds[i-1], cal)
		}
		if err := cw.Write(append(rec, extra...)); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// The streamed dates download gives the same bytes as the download did before, on the demo, under
// several filters, sorts and calibrations.
func TestDatesCSVStreamSameBytesAsBefore(t *testing.T) {
	db := mustDemoDB(t)
	h := NewHandler(db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS)
	srv := &Server{store: db}
	ctx := context.Background()
	for _, q := range []string{"", "sort=sample", "method=arar_plateau&cal=renne10-fcs28305", "province=1&sort=-unit", "q=nothing-matches", "per=5&page=2"} {
		req := httptest.NewRequest(http.MethodGet, "/dates?format=csv&"+q, nil)
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, req)
		if rec.Code != http.StatusOK || rec.Header().Get("Content-Type") != "text/csv; charset=utf-8" {
			t.Fatalf("%s: status %d, type %q", q, rec.Code, rec.Header().Get("Content-Type"))
		}
		p := newParams(req)
		cal, err := srv.calibration(ctx, p)
		if err != nil {
			t.Fatal(err)
		}
		f := store.DateFilter{ProvinceID: p.id("province"), Method: p.str("method"), Text: p.str("q"), Sort: p.str("sort")}
		if f.Sort == "" {
			f.Sort = "-age"
		}
		ds, _, err := db.Dates(ctx, f)
		if err != nil {
			t.Fatal(err)
		}
		var want bytes.Buffer
		if err := oldWriteDatesCSV(&want, ds, cal); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(rec.Body.Bytes(), want.Bytes()) {
			t.Fatalf("%s: streamed download (%d bytes) differs from the old one (%d bytes)", q, rec.Body.Len(), want.Len())
		}
		if q == "" && len(ds) < 60 {
			t.Fatalf("the demo download holds %d dates, want all of them", len(ds))
		}
	}
}

// A note that begins like a spreadsheet formula is written with one protecting quote, so the download
// re-imports as it was; the old download wrote it twice (writing, reading back and writing again added a
// second quote), and re-importing gave the note back with a quote in front.
func TestDatesCSVQuotesFormulaLikeCellsOnce(t *testing.T) {
	srv, db := mustServer(t)
	ctx := context.Background()
	ds, _, err := db.Dates(ctx, store.DateFilter{Sort: "added", Limit: 1})
	if err != nil {
		t.Fatal(err)
	}
	form := store.FormOfDate(ds[0])
	form["notes"] = "=1+1 checked"
	if _, err := db.UpdateDate(ctx, ds[0].ID, ds[0].Version, form, true); err != nil {
		t.Fatal(err)
	}
	_, _, body := get(t, srv, "/dates?format=csv&sort=added")
	recs, err := csv.NewReader(strings.NewReader(body)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	col := slices.Index(recs[0], "notes")
	if got := recs[1][col]; got != "'=1+1 checked" {
		t.Fatalf("notes cell %q, want one protecting quote: '=1+1 checked", got)
	}
}
