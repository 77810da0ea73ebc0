package web

import (
	"context"
	"database/sql"
	"encoding/json"
	"fmt"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"golang.org/x/crypto/bcrypt"

	"coeval/migrations"
	"coeval/static"
	"coeval/store"
)

// scaleDB is an invented compilation of a real group's size, written straight into a migrated SQLite
// file in one transaction (the importers are measured elsewhere): 40 provinces of 10 units, n dates (one
// in ten on a horizon of one of 30 sections, the rest in units), U–Pb and ⁴⁰Ar/³⁹Ar mixed, ages with many
// ties (0.01 Ma steps) so that paging must break them by id. One change ("import dates") added them all
// and holds n revisions; the last pending dates (one in a hundred) came in a second change, an upload
// waiting for review; 300 one-record edits follow, so the feed of changes has pages. Names are invented
// and labelled so.
type scaleDB struct {
	db                  *store.DB
	path                string
	importBatch         int64 // the change that added the accepted dates
	uploadBatch         int64 // the change that added the pending dates
	dates, pendingDates int
}

func newScaleDB(tb testing.TB, n int) scaleDB {
	tb.Helper()
	ctx := context.Background()
	path := filepath.Join(tb.TempDir(), "scale.db")
	db, err := store.Open(ctx, path)
	if err != nil {
		tb.Fatal(err)
	}
	tb.Cleanup(func() { db.Close() })
	if _, err := db.Migrate(ctx, migrations.FS); err != nil {
		tb.Fatal(err)
	}
	db.SetPasswordCost(bcrypt.MinCost)
	raw, err := sql.Open("sqlite", "file:"+path+"?_pragma=foreign_keys(1)&_pragma=busy_timeout(5000)")
	if err != nil {
		tb.Fatal(err)
	}
	defer raw.Close()
	s := scaleDB{db: db, path: path, dates: n, pendingDates: n / 100}
	must := func(err error) {
		if err != nil {
			tb.Fatal(err)
		}
	}
	tx, err := raw.BeginTx(ctx, nil)
	must(err)
	defer tx.Rollback()
	at := "2026-01-02T03:04:05Z"
	exec := func(q string, args ...any) sql.Result {
		res, err := tx.ExecContext(ctx, q, args...)
		must(err)
		return res
	}
	for p := 1; p <= 40; p++ {
		exec(`INSERT INTO provinces (id, name, description, created_at, updated_at) VALUES (?, ?, 'invented for benchmarks', ?, ?)`,
			p, fmt.Sprintf("Invented Province %02d", p), at, at)
		for u := 1; u <= 10; u++ {
			exec(`INSERT INTO units (id, province_id, name, kind, created_at, updated_at) VALUES (?, ?, ?, 'flow', ?, ?)`,
				(p-1)*10+u, p, fmt.Sprintf("Invented Flow %02d-%02d", p, u), at, at)
		}
	}
	for sc := 1; sc <= 30; sc++ {
		exec(`INSERT INTO sections (id, name, created_at, updated_at) VALUES (?, ?, ?, ?)`, sc, fmt.Sprintf("Invented Section %02d", sc), at, at)
	}
	newBatch := func(kind string) int64 {
		id, err := exec(`INSERT INTO change_batches (kind, source, at, summary) VALUES (?, 'invented.csv', ?, 'invented')`, kind, at).LastInsertId()
		must(err)
		return id
	}
	s.importBatch = newBatch("import dates")
	ins, err := tx.PrepareContext(ctx, `INSERT INTO dates (id, unit_id, section_id, height_m, sample_code, method, material,
		interpretation, age_ma, sigma_ma, sigma_level, monitor, monitor_age_ma, lambda_per_a, laboratory, citation,
		review_state, created_at, updated_at) VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)`)
	must(err)
	rev, err := tx.PrepareContext(ctx, `INSERT INTO revisions (batch_id, record_type, record_id, after_json) VALUES (?, 'date', ?, ?)`)
	must(err)
	materials := []string{"zircon", "sanidine", "plagioclase", "baddeleyite", "groundmass"}
	labs := []string{"Invented Lab A", "Invented Lab B", "Invented Lab C", ""}
	for i := 1; i <= n; i++ {
		batch, state := s.importBatch, store.ReviewAccepted
		if i == n-s.pendingDates+1 {
			s.uploadBatch = newBatch("upload dates")
		}
		if i > n-s.pendingDates {
			batch, state = s.uploadBatch, store.ReviewPending
		}
		d := store.Date{ID: int64(i), SampleCode: fmt.Sprintf("INV-%06d", i), Material: materials[i%len(materials)],
			Interpretation: "eruption", AgeMa: 180 + float64(i%2000)/100, SigmaMa: 0.02 + float64(i%7)/100, SigmaLevel: 1 + i%2,
			Laboratory: labs[i%len(labs)], Citation: "Invented et al. 2026", ReviewState: state, CreatedAt: at, UpdatedAt: at}
		var unit, section, height any
		if i%10 == 0 {
			sid, h := int64(1+i%30), float64(i%500)/10
			d.SectionID, d.HeightM, section, height = &sid, &h, sid, h
		} else {
			uid := int64(1 + i%400)
			d.UnitID, unit = &uid, uid
		}
		var monitor, monAge, lambda any = "", nil, nil
		switch i % 3 {
		case 0:
			d.Method = "upb_idtims"
		case 1:
			d.Method = "arar_plateau"
			if i%11 != 0 { // a few without calibration details
				m, l := 28.201, 5.463e-10
				d.Monitor, d.MonitorAgeMa, d.LambdaPerA = "FCs", &m, &l
				monitor, monAge, lambda = "FCs", m, l
			}
		default:
			d.Method = "upb_laicpms"
		}
		_, err := ins.ExecContext(ctx, d.ID, unit, section, height, d.SampleCode, d.Method, d.Material, d.Interpretation,
			d.AgeMa, d.SigmaMa, d.SigmaLevel, monitor, monAge, lambda, d.Laboratory, d.Citation, d.ReviewState, at, at)
		must(err)
		j, err := json.Marshal(d)
		must(err)
		_, err = rev.ExecContext(ctx, batch, d.ID, string(j))
		must(err)
	}
	for e := 0; e < 300; e++ {
		b := newBatch("edit date")
		exec(`INSERT INTO revisions (batch_id, record_type, record_id, before_json, after_json) VALUES (?, 'date', ?, '{}', '{}')`, b, 1+e%n)
	}
	must(tx.Commit())
	return s
}

func (s scaleDB) handler() http.Handler {
	return NewHandler(s.db, slog.New(slog.NewTextHandler(io.Discard, nil)), static.FS, WithSessionCleanup(0))
}

// The build time of the helper itself, so a benchmark's set-up is known.
func TestScaleDBBuilds(t *testing.T) {
	if testing.Short() {
		t.Skip("builds a 20,000-date database")
	}
	start := time.Now()
	s := newScaleDB(t, 20_000)
	c, err := s.db.Counts(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if c.Dates != 20_000 || c.DatesPending != 200 {
		t.Fatalf("counts %+v, want 20,000 dates of which 200 pending", c)
	}
	t.Logf("20,000 dates built in %v", time.Since(start))
}

// A timeline at size: each unit of more than figureDatesEach dates is drawn as one band linked to the list
// of its dates (not a bar per date), and the values table lists the first valuesShown values and says
// where the rest are; the counts come from the database, not from the page.
func TestTimelineAtSizeDrawsBandsAndListsTheFirstValues(t *testing.T) {
	if testing.Short() {
		t.Skip("builds a 10,000-date database")
	}
	s := newScaleDB(t, 10_000)
	srv := httptest.NewServer(s.handler())
	t.Cleanup(srv.Close)
	ctx := context.Background()
	pd, err := s.db.ProvinceDates(ctx, 1)
	if err != nil {
		t.Fatal(err)
	}
	perUnit := map[int64]int{}
	for _, d := range pd.Dates {
		perUnit[*d.UnitID]++
	}
	// Every value counted, from the JSON download.
	_, _, js := get(t, srv, "/provinces/1/timeline?count=date&format=json")
	var full struct{ Values []json.RawMessage }
	if err := json.Unmarshal([]byte(js), &full); err != nil {
		t.Fatal(err)
	}
	accepted := len(full.Values)
	if accepted <= valuesShown {
		t.Fatalf("%d values: the test needs more than %d", accepted, valuesShown)
	}
	code, _, body := get(t, srv, "/provinces/1/timeline?count=date")
	if code != http.StatusOK {
		t.Fatalf("status %d", code)
	}
	for id, n := range perUnit {
		link := fmt.Sprintf(`href="/dates?unit=%d"`, id)
		if n > figureDatesEach && !strings.Contains(body, link) {
			t.Errorf("unit %d has %d dates and no band linked to its dates", id, n)
		}
	}
	if n := strings.Count(body, `href="/dates/`); n > 0 {
		t.Errorf("the figure links %d single dates; every unit here has more than %d and is drawn as a band", n, figureDatesEach)
	}
	i := strings.Index(body, `<table id="values"`)
	if i < 0 {
		t.Fatal("no values table")
	}
	table := body[i : i+strings.Index(body[i:], "</table>")]
	if rows := strings.Count(table, "<tr") - 1; rows != valuesShown {
		t.Errorf("values table has %d rows, want the first %d of %d", rows, valuesShown, accepted)
	}
	if !strings.Contains(body, fmt.Sprintf("The first %d of the %d values counted", valuesShown, accepted)) {
		t.Errorf("the page does not say that %d of the %d values are listed", valuesShown, accepted)
	}
}
