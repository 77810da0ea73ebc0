package store

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"golang.org/x/crypto/bcrypt"

	"coeval/migrations"
)

// mustOpenDB opens a migrated database in a fresh file under t.TempDir().
func mustOpenDB(t testing.TB) *DB {
	t.Helper()
	ctx := context.Background()
	db, err := Open(ctx, filepath.Join(t.TempDir(), "test.db"))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	if _, err := db.Migrate(ctx, migrations.FS); err != nil {
		t.Fatal(err)
	}
	db.SetClock(func() time.Time { return time.Date(2026, 1, 2, 3, 4, 5, 0, time.UTC) })
	db.SetPasswordCost(bcrypt.MinCost)
	return db
}

func TestMigrateIsIdempotentAndForeignKeysAreOn(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "m.db")
	db, err := Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	applied, err := db.Migrate(ctx, migrations.FS)
	if err != nil {
		t.Fatal(err)
	}
	if len(applied) < 2 || applied[0] != 1 {
		t.Fatalf("first migrate applied %v, want 1, 2, …", applied)
	}
	again, err := db.Migrate(ctx, migrations.FS)
	if err != nil {
		t.Fatal(err)
	}
	if len(again) != 0 {
		t.Fatalf("second migrate applied %v, want nothing", again)
	}
	_, err = db.db.ExecContext(ctx, `INSERT INTO units (province_id, name, created_at, updated_at) VALUES (999, 'x', '', '')`)
	if err == nil || !strings.Contains(err.Error(), "787") {
		t.Fatalf("insert with a dangling province: got %v, want a FOREIGN KEY error (787)", err)
	}
	cals, err := db.Calibrations(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if len(cals) != 4 || !cals[0].IsTarget {
		t.Fatalf("calibrations: got %d with target first %v, want 4 seeded with the target first", len(cals), len(cals) > 0 && cals[0].IsTarget)
	}
}

// importString runs one import on an in-memory file.
func importString(t testing.TB, db *DB, kind, section, body string) (ImportResult, error) {
	t.Helper()
	ctx := context.Background()
	r := strings.NewReader(body)
	switch kind {
	case "provinces":
		return db.ImportProvinces(ctx, "in.csv", r)
	case "units":
		return db.ImportUnits(ctx, "in.csv", r)
	case "sections":
		return db.ImportSections(ctx, "in.csv", r)
	case "dates":
		return db.ImportDates(ctx, "in.csv", r)
	case "measurements":
		return db.ImportMeasurements(ctx, section, "in.csv", r)
	case "ties":
		return db.ImportTies(ctx, section, "in.csv", r)
	case "events":
		return db.ImportEvents(ctx, section, "in.csv", r)
	}
	t.Fatalf("unknown kind %s", kind)
	return ImportResult{}, nil
}

const dateHeader = "province,unit,sample_code,method,material,interpretation,age_ma,sigma_ma,sigma_level,monitor,monitor_age_ma,lambda_per_a\n"
const goodDate = "P,U1,S-1,upb_idtims,zircon,eruption,155.4,0.06,2,,,\n"

func TestImportDatesRejectsBadFilesWhole(t *testing.T) {
	cases := []struct {
		name, body string
		line       int
		column     string
		message    string
	}{
		{"missing age", dateHeader + goodDate + "P,U1,S-2,upb_idtims,zircon,eruption,,0.06,2,,,\n", 3, "age_ma", "is empty"},
		{"non-numeric age", dateHeader + goodDate + "P,U1,S-2,upb_idtims,zircon,eruption,155.4a,0.06,2,,,\n", 3, "age_ma", `want a number, got "155.4a"`},
		{"negative uncertainty", dateHeader + goodDate + "P,U1,S-2,upb_idtims,zircon,eruption,155.4,-0.06,2,,,\n", 3, "sigma_ma", "greater than 0"},
		{"unknown sigma level", dateHeader + goodDate + "P,U1,S-2,upb_idtims,zircon,eruption,155.4,0.06,95%,,,\n", 3, "sigma_level", "unknown σ level"},
		{"unknown method", dateHeader + goodDate + "P,U1,S-2,U-Pb TIMS,zircon,eruption,155.4,0.06,2,,,\n", 3, "method", `unknown value "U-Pb TIMS"`},
		{"duplicate sample code", dateHeader + goodDate + "P,U2,S-1,upb_idtims,zircon,eruption,155.3,0.06,2,,,\n", 3, "sample_code", "already on line 2"},
		{"age in years", dateHeader + goodDate + "P,U1,S-2,upb_idtims,zircon,eruption,155400000,0.06,2,,,\n", 3, "age_ma", "not years"},
		{"decay constant in wrong unit", dateHeader + goodDate + "P,U1,S-2,arar_plateau,plagioclase,eruption,155.4,0.3,2,FCs,28.201,5.463\n", 3, "lambda_per_a", "a⁻¹"},
		{"half a calibration", dateHeader + goodDate + "P,U1,S-2,arar_plateau,plagioclase,eruption,155.4,0.3,2,FCs,28.201,\n", 3, "monitor_age_ma", "together"},
		{"unit and no province", dateHeader + goodDate + ",U1,S-2,upb_idtims,zircon,eruption,155.4,0.06,2,,,\n", 3, "province", "needs its province"},
		{"ragged row", dateHeader + goodDate + "P,U1,S-2\n", 3, "", "has 3 cells"},
		{"missing column", "province,unit,sample_code,method,interpretation,age_ma,sigma_level\nP,U,S,upb_idtims,eruption,1,2\n", 1, "sigma_ma", "required column is missing"},
		{"unknown column", strings.Replace(dateHeader, "material", "mineral", 1) + goodDate, 1, "mineral", "unknown column"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			db := mustOpenDB(t)
			_, err := importString(t, db, "dates", "", tc.body)
			ve, ok := AsValidation(err)
			if !ok {
				t.Fatalf("got %v, want a validation error", err)
			}
			found := false
			for _, p := range ve.Problems {
				if p.Line == tc.line && p.Column == tc.column && strings.Contains(p.Message, tc.message) {
					found = true
				}
			}
			if !found {
				t.Errorf("problems %v: want line %d column %q containing %q", ve.Problems, tc.line, tc.column, tc.message)
			}
			c, err := db.Counts(context.Background())
			if err != nil {
				t.Fatal(err)
			}
			if c.Dates != 0 || c.Units != 0 || c.Provinces != 0 {
				t.Errorf("after a rejected file: %+v, want nothing imported", c)
			}
		})
	}
}

func TestImportDatesListsEveryError(t *testing.T) {
	db := mustOpenDB(t)
	body := dateHeader +
		"P,U1,S-1,upb_idtims,zircon,eruption,abc,0.06,2,,,\n" +
		"P,U1,S-2,upb_idtims,zircon,eruption,155.4,0.06,3,,,\n" +
		"P,U1,S-3,upb_idtims,zircon,whatever,155.4,0,2,,,\n"
	_, err := importString(t, db, "dates", "", body)
	ve, ok := AsValidation(err)
	if !ok {
		t.Fatalf("got %v, want a validation error", err)
	}
	if got, want := len(ve.Problems), 4; got != want {
		t.Fatalf("got %d problems, want %d: %v", got, want, ve.Problems)
	}
	if !strings.Contains(err.Error(), "in.csv: line 4, column interpretation") {
		t.Errorf("error text %q does not name file, line and column", err.Error())
	}
}

func TestImportDatesAgainstStoredAndHalvesTwoSigma(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	res, err := importString(t, db, "dates", "", dateHeader+goodDate)
	if err != nil {
		t.Fatal(err)
	}
	if res.Added["dates"] != 1 || res.Added["units"] != 1 || res.Added["provinces"] != 1 {
		t.Errorf("added %v, want one date, unit, province", res.Added)
	}
	ds, _, err := db.Dates(ctx, DateFilter{})
	if err != nil {
		t.Fatal(err)
	}
	// 2σ published → stored 1σ (CONVENTIONS: store 1σ, keep the published level).
	if got, want := ds[0].SigmaMa, 0.03; got != want {
		t.Errorf("stored σ got %v, want %v", got, want)
	}
	_, err = importString(t, db, "dates", "", dateHeader+goodDate)
	ve, ok := AsValidation(err)
	if !ok || !strings.Contains(ve.Problems[0].Message, "already in the compilation") {
		t.Fatalf("re-import of the same date: got %v, want a duplicate error", err)
	}
}

func TestImportMeasurementsUnits(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	if _, err := importString(t, db, "sections", "", "section,kind\nS,outcrop\n"); err != nil {
		t.Fatal(err)
	}
	// 1 ppm = 1000 ppb; Al = 0.5293 × Al₂O₃ (REFERENCES §6, common practice).
	body := "sample,height_m,hg_ppm,hg_dl_ppm,toc_wt_pct,al2o3_wt_pct\n" +
		"a,0.5,0.123,0.002,1.5,10\n" +
		"b,1.0,<DL,0.002,0.1,12\n" +
		"c,1.5,0.050,,,\n"
	if _, err := importString(t, db, "measurements", "S", body); err != nil {
		t.Fatal(err)
	}
	sec, err := db.SectionByName(ctx, "S")
	if err != nil {
		t.Fatal(err)
	}
	samples, proxies, err := db.Samples(ctx, sec.ID)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := strings.Join(proxies, ","), "hg,toc,al"; got != want {
		t.Errorf("proxies got %s, want %s", got, want)
	}
	hg := samples[0].Values["hg"]
	if got, want := *hg.Value, 123.0; got != want {
		t.Errorf("0.123 ppm got %v ppb, want %v", got, want)
	}
	if got, want := *samples[0].Values["al"].Value, 5.293; got != want {
		t.Errorf("10 wt%% Al2O3 got %v wt%% Al, want %v", got, want)
	}
	b := samples[1].Values["hg"]
	if !b.BelowDetection || b.Value != nil || b.DetectionLimit == nil || *b.DetectionLimit != 2 {
		t.Errorf("<DL sample got %+v, want below detection with limit 2 ppb", b)
	}
}

func TestImportMeasurementsRejects(t *testing.T) {
	cases := []struct {
		name, section, body, column, message string
	}{
		{"ppb header, ppm values", "S", "sample,height_m,hg_ppb\na,1,0.05\nb,2,0.07\nc,3,0.04\n", "hg_ppb", "look like ppm"},
		{"ppm header, ppb values", "S", "sample,height_m,hg_ppm\na,1,45\nb,2,120\n", "hg_ppm", "look like ppb"},
		{"unknown Hg unit", "S", "sample,height_m,hg_ngg\na,1,45\n", "hg_ngg", "hg_ppb"},
		{"two Hg columns", "S", "sample,height_m,hg_ppb,hg_ppm\na,1,45,0.045\n", "hg_ppm", "second time"},
		{"TOC over 100", "S", "sample,height_m,toc_wt_pct\na,1,150\n", "toc_wt_pct", "more than 100"},
		{"negative Hg", "S", "sample,height_m,hg_ppb\na,1,-3\n", "hg_ppb", "0 or more"},
		{"duplicate sample", "S", "sample,height_m,hg_ppb\na,1,30\na,2,40\n", "sample", "duplicate sample"},
		{"non-numeric height", "S", "sample,height_m,hg_ppb\na,1 m,30\n", "height_m", "want a number"},
		{"bad below-detection", "S", "sample,height_m,hg_ppb\na,1,<abc\n", "hg_ppb", "<DL"},
		{"unknown section", "Nowhere", "sample,height_m,hg_ppb\na,1,30\n", "", "unknown section"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			db := mustOpenDB(t)
			if _, err := importString(t, db, "sections", "", "section\nS\n"); err != nil {
				t.Fatal(err)
			}
			_, err := importString(t, db, "measurements", tc.section, tc.body)
			ve, ok := AsValidation(err)
			if !ok {
				t.Fatalf("got %v, want a validation error", err)
			}
			found := false
			for _, p := range ve.Problems {
				if p.Column == tc.column && strings.Contains(p.Message, tc.message) {
					found = true
				}
			}
			if !found {
				t.Errorf("problems %v: want column %q containing %q", ve.Problems, tc.column, tc.message)
			}
			c, _ := db.Counts(context.Background())
			if c.Measurements != 0 {
				t.Errorf("%d measurements stored after a rejected file, want 0", c.Measurements)
			}
		})
	}
}

func TestImportTiesAndEvents(t *testing.T) {
	db := mustOpenDB(t)
	ctx := context.Background()
	if _, err := importString(t, db, "sections", "", "section\nS\n"); err != nil {
		t.Fatal(err)
	}
	if _, err := importString(t, db, "dates", "", "section,height_m,sample_code,method,interpretation,age_ma,sigma_ma,sigma_level\nS,12.5,ASH-1,upb_idtims,deposition,155.2,0.08,2\n"); err != nil {
		t.Fatal(err)
	}
	ties := "label,height_m,kind,distribution,age_ma,sigma_ma,sigma_level,age_min_ma,age_max_ma,date_sample_code\n" +
		"ash,12.5,radiometric,normal,155.2,0.08,2,,,ASH-1\n" +
		"ammonite zone,30,biostratigraphic,uniform,,,,154.6,155.0,\n"
	if _, err := importString(t, db, "ties", "S", ties); err != nil {
		t.Fatal(err)
	}
	tps, err := db.TiePoints(ctx, 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(tps) != 2 || tps[0].DateID == nil || *tps[0].SigmaMa != 0.04 {
		t.Fatalf("ties got %+v, want 2 with the ash linked to its date and σ 0.04 (1σ)", tps)
	}
	bad := "label,height_m,kind,distribution,age_ma,sigma_ma,sigma_level,age_min_ma,age_max_ma,date_sample_code\n" +
		"x,1,radiometric,normal,155.2,0.08,2,,,NOPE\n" +
		"y,2,biostratigraphic,uniform,,,,155.0,154.6,\n"
	_, err = importString(t, db, "ties", "S", bad)
	ve, ok := AsValidation(err)
	if !ok || len(ve.Problems) != 2 {
		t.Fatalf("got %v, want 2 problems (unknown date, reversed interval)", err)
	}
	events := "name,kind,base_height_m,top_height_m\nHg-1,hg_anomaly,20,24\nonset,cie_onset,19.5,\n"
	if _, err := importString(t, db, "events", "S", events); err != nil {
		t.Fatal(err)
	}
	_, err = importString(t, db, "events", "S", "name,kind,base_height_m,top_height_m\nz,hg_anomaly,20,10\n")
	if _, ok := AsValidation(err); !ok {
		t.Fatalf("an event with top below base: got %v, want a validation error", err)
	}
}

// A path with URI-special characters opens that exact file, not a truncated name.
func TestOpenEscapesThePath(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	path := filepath.Join(dir, "a#b?c%20d.db")
	db, err := Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := db.Migrate(ctx, migrations.FS); err != nil {
		t.Fatal(err)
	}
	db.Close()
	if _, err := os.Stat(path); err != nil {
		t.Fatalf("the database is not at %s: %v", path, err)
	}
	entries, _ := os.ReadDir(dir)
	for _, e := range entries {
		if !strings.HasPrefix(e.Name(), "a#b?c%20d.db") {
			t.Errorf("stray file %s", e.Name())
		}
	}
}

// The import report warns (without refusing) about likely duplicates and ⁴⁰Ar/³⁹Ar dates that cannot be
// recalculated, naming their lines.
func TestImportDatesWarnsAboutDuplicatesAndMissingCalibration(t *testing.T) {
	db := mustOpenDB(t)
	if _, err := importString(t, db, "dates", "", dateHeader+goodDate); err != nil {
		t.Fatal(err)
	}
	body := dateHeader + "P,U1,S-9,upb_idtims,zircon,eruption,155.4,0.06,2,,,\n" +
		"P,U1,A-1,arar_plateau,plagioclase,eruption,154.9,0.4,2,,,\n"
	res, err := importString(t, db, "dates", "", body)
	if err != nil {
		t.Fatal(err)
	}
	notes := strings.Join(res.Notes, "\n")
	if !strings.Contains(notes, "line 2: likely a duplicate of date 1") || !strings.Contains(notes, "line 3: ⁴⁰Ar/³⁹Ar date A-1 has no monitor age") {
		t.Errorf("notes %q", notes)
	}
}
