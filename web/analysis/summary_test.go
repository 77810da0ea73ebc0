package analysis

import (
	"context"
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"coeval/migrations"
	"coeval/stats"
	"coeval/store"
)

// testDB opens a real SQLite file with the migrations applied and one invented province, "Testland",
// holding the unit "Flow A" with the dates given as rows of the dates CSV (the importer's own format).
func testDB(t *testing.T, dateRows []string) *store.DB {
	t.Helper()
	ctx := context.Background()
	db, err := store.Open(ctx, filepath.Join(t.TempDir(), "analysis.db"))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	if _, err := db.Migrate(ctx, migrations.FS); err != nil {
		t.Fatal(err)
	}
	files := []struct{ kind, name, body string }{
		{"provinces", "provinces.csv", "province,description\nTestland,invented for a test\n"},
		{"units", "units.csv", "province,unit,kind,pile_position,volume_km3,volume_sigma_km3,latitude,longitude,notes\n" +
			"Testland,Flow A,flow,1,100,10,,,\nTestland,Flow B,flow,2,300,10,,,\n"},
		{"dates", "dates.csv", "province,unit,section,height_m,sample_code,method,material,interpretation,age_ma,sigma_ma,sigma_y_ma,sigma_z_ma,sigma_level,tracer,monitor,monitor_age_ma,lambda_per_a,laboratory,citation,doi,latitude,longitude,review_state,notes\n" +
			strings.Join(dateRows, "\n") + "\n"},
	}
	for _, f := range files {
		if _, err := db.ImportReader(ctx, f.kind, "", f.name, strings.NewReader(f.body)); err != nil {
			t.Fatalf("import %s: %v", f.name, err)
		}
	}
	return db
}

// upbRow is a dates CSV row of a CA-ID-TIMS U–Pb date of unit with its 2σ analytical uncertainty.
func upbRow(unit, sample string, ageMa, sigma2 float64, review string) string {
	return fmt.Sprintf("Testland,%s,,,%s,upb_idtims,zircon,eruption,%.3f,%.3f,,,2,,,,,,test,,,,%s,", unit, sample, ageMa, sigma2, review)
}

// Check A of REFERENCES §1 ([C]: numpy/scipy from the formulas of Wendt & Carl 1991), 2σ inputs.
var checkA = []struct{ age, sigma2 float64 }{
	{201.512, 0.046}, {201.558, 0.040}, {201.530, 0.060}, {201.601, 0.050}, {201.489, 0.070}, {201.566, 0.036}, {201.545, 0.044},
}

func checkARows(extraPending bool) []string {
	var rows []string
	for i, d := range checkA {
		rows = append(rows, upbRow("Flow A", fmt.Sprintf("A-%d", i+1), d.age, d.sigma2, "accepted"))
	}
	if extraPending { // Check B's eighth date, left pending: in only with Include pending or all
		rows = append(rows, upbRow("Flow A", "B-8", 201.700, 0.040, "pending"))
	}
	return rows
}

func near(t *testing.T, what string, got, want, tol float64) {
	t.Helper()
	if !(math.Abs(got-want) <= tol) {
		t.Errorf("%s = %.9g, want %.9g (±%g)", what, got, want, tol)
	}
}

// flowA summarises the province of db and returns the U–Pb system of "Flow A".
func flowA(t *testing.T, db *store.DB, o SummaryOptions) SystemSummary {
	t.Helper()
	data, sums, err := SummarizeProvince(context.Background(), db, provinceID(t, db), o)
	if err != nil {
		t.Fatal(err)
	}
	if data.Province.Name != "Testland" || len(sums) != 2 {
		t.Fatalf("province %q with %d summaries", data.Province.Name, len(sums))
	}
	for _, us := range sums {
		if us.Unit.Name == "Flow A" && len(us.Systems) == 1 && us.Systems[0].Key == "upb" {
			return us.Systems[0]
		}
	}
	t.Fatalf("no U–Pb summary of Flow A in %+v", sums)
	return SystemSummary{}
}

func provinceID(t *testing.T, db *store.DB) int64 {
	t.Helper()
	ps, err := db.Provinces(context.Background())
	if err != nil || len(ps) != 1 {
		t.Fatalf("provinces %v: %v", ps, err)
	}
	return ps[0].ID
}

// The weighted mean, its σ, MSWD, p and acceptable range of Check A, computed from the raw 2σ inputs as
// stored in a real database and read back by the pipeline (REFERENCES §1 Check A [C]).
func TestSummaryOfCheckAThroughTheStore(t *testing.T) {
	db := testDB(t, checkARows(false))
	o := DefaultSummaryOptions(stats.Calibration{})
	o.Level, o.Policy, o.Range = stats.Analytical, stats.PolicyNever, stats.RangeWendtCarl
	sys := flowA(t, db, o)
	a := sys.Report.All
	near(t, "mean (Ma)", sys.All.MeanMa, 201.549755197, 1e-8)
	near(t, "1σ of the mean (Ma)", sys.All.Sigma1s, 0.008746951, 1e-8)
	near(t, "S", a.S, 11.374267, 1e-5)
	near(t, "MSWD", a.MSWD, 1.895711, 1e-6)
	near(t, "p", a.P, 0.077475, 1e-6)
	near(t, "Wendt & Carl upper limit", a.MSWDHigh, 2.154701, 1e-6)
	if a.DoF != 6 || sys.All.N != 7 || !a.InRange || len(sys.Entries) != 7 {
		t.Errorf("f = %d, n = %d, in range %v, %d entries: want 6, 7, true, 7", a.DoF, sys.All.N, a.InRange, len(sys.Entries))
	}
	// Inflation by √MSWD when MSWD > 1: 2σ 0.024086449 (Check A [C]); never under the p < 0.05 policy,
	// as p = 0.077.
	o.Policy = stats.PolicyWhenMSWDAbove1
	near(t, "inflated 2σ (Ma)", 2*flowA(t, db, o).All.Sigma1s, 0.024086449, 1e-8)
	o.Policy = stats.PolicyWhenPBelow005
	near(t, "2σ under p < 0.05 (Ma)", 2*flowA(t, db, o).All.Sigma1s, 0.017493902, 1e-8)
}

// The systematic terms are added after averaging: Y and Z of Check A at 2σ with the tracer term
// 0.03 % (2σ) and λ238 0.10701 % (2σ) are 0.062945 and 0.224677 (REFERENCES §1 [C], Horstwood et al. 2016
// for the rule); adding λ to each date first would give the wrong 0.083710.
func TestSummaryLevelsAddSystematicsAfterAveraging(t *testing.T) {
	db := testDB(t, checkARows(false))
	o := DefaultSummaryOptions(stats.Calibration{})
	o.Policy = stats.PolicyNever
	o.Level = stats.WithTracer
	near(t, "Y 2σ (Ma)", 2*flowA(t, db, o).All.Sigma1s, 0.062945, 2e-6)
	o.Level = stats.FullExternal
	near(t, "Z 2σ (Ma)", 2*flowA(t, db, o).All.Sigma1s, 0.224677, 2e-6)
}

// The review policy decides which dates enter: the pending date of Check B is out by default, in with
// pending or all, and then the mean is Check B's (REFERENCES §1 Check B [C]) and the iterative rule
// flags it, its kept mean being Check A's.
func TestSummaryReviewPolicyDecidesWhichDatesEnter(t *testing.T) {
	db := testDB(t, checkARows(true))
	o := DefaultSummaryOptions(stats.Calibration{})
	o.Level, o.Policy = stats.Analytical, stats.PolicyNever
	sys := flowA(t, db, o)
	near(t, "accepted only: mean", sys.All.MeanMa, 201.549755197, 1e-8)
	if len(sys.Excluded) != 1 || !sys.Excluded[0].Review || len(sys.Notes) == 0 || !strings.Contains(sys.Notes[0], "B-8") {
		t.Errorf("the pending date must be listed as left out by review: %+v, notes %q", sys.Excluded, sys.Notes)
	}
	for _, inc := range []string{IncludePending, IncludeAll} {
		o.Include = inc
		sys := flowA(t, db, o)
		near(t, inc+": mean", sys.All.MeanMa, 201.573879, 1e-6)
		near(t, inc+": MSWD", sys.Report.All.MSWD, 8.392417, 1e-5)
		near(t, inc+": p", sys.Report.All.P, 2.684e-10, 1e-12)
		near(t, inc+": kept mean", sys.Kept.MeanMa, 201.549755197, 1e-8)
		if len(sys.Report.Flagged) != 1 || sys.Entries[sys.Report.Flagged[0]].D.SampleCode != "B-8" {
			t.Errorf("%s: flagged %v, want B-8 alone", inc, sys.Report.Flagged)
		}
	}
	for state, want := range map[string][3]bool{"accepted": {true, true, true}, "pending": {false, true, true}, "rejected": {false, false, true}} {
		for i, inc := range IncludeCodes() {
			if Included(inc, state) != want[i] {
				t.Errorf("Included(%s, %s) = %v", inc, state, !want[i])
			}
		}
	}
}

// Options that cannot be used are refused before anything is read, each by its name.
func TestSummaryOptionsNameWhatIsWrong(t *testing.T) {
	o := DefaultSummaryOptions(stats.Calibration{})
	if err := o.Validate(); err != nil {
		t.Fatalf("the defaults are refused: %v", err)
	}
	o.Include, o.Level = "maybe", stats.UncertaintyLevel(9)
	_, _, err := SummarizeProvince(context.Background(), nil, 1, o) // a nil source: must not be reached
	es := AsOptionErrors(err)
	if len(es) != 2 || es[0].Option != "Level" || es[1].Option != "Include" || !strings.Contains(es[1].Problem, `"maybe"`) {
		t.Errorf("got %v, want the problems of Level and Include", err)
	}
	db := testDB(t, checkARows(false))
	if _, _, err := SummarizeProvince(context.Background(), db, 999, DefaultSummaryOptions(stats.Calibration{})); !errors.Is(err, store.ErrNotFound) {
		t.Errorf("unknown province: %v, want store.ErrNotFound", err)
	}
}
