package analysis

import (
	"context"
	"errors"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"sync"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"coeval/migrations"
	"coeval/stats"
	"coeval/store"
)

// demoDB opens a real SQLite file with the migrations applied and the demo compilation seeded.
func demoDB(t *testing.T) *store.DB {
	t.Helper()
	ctx := context.Background()
	db, err := store.Open(ctx, filepath.Join(t.TempDir(), "demo.db"))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	if _, err := db.Migrate(ctx, migrations.FS); err != nil {
		t.Fatal(err)
	}
	if _, _, err := db.SeedDemo(ctx, os.DirFS(filepath.Join("..", "..", "testdata", "demo")), "invented"); err != nil {
		t.Fatal(err)
	}
	return db
}

// demoUnit finds a unit of the demo's first province by name, with its accepted dates as stored.
func demoUnit(t *testing.T, db *store.DB, name string) (store.Unit, []store.Date) {
	t.Helper()
	ctx := context.Background()
	ps, err := db.Provinces(ctx)
	if err != nil {
		t.Fatal(err)
	}
	k := slices.IndexFunc(ps, func(p store.Province) bool { return p.Name == "Hvarn Plateau Basalts (invented)" })
	if k < 0 {
		t.Fatalf("no demo province Hvarn Plateau Basalts among %v", ps)
	}
	units, err := db.Units(ctx, ps[k].ID)
	if err != nil {
		t.Fatal(err)
	}
	i := slices.IndexFunc(units, func(u store.Unit) bool { return u.Name == name })
	if i < 0 {
		t.Fatalf("no unit %q in the demo", name)
	}
	ds, _, err := db.Dates(ctx, store.DateFilter{UnitID: units[i].ID})
	if err != nil {
		t.Fatal(err)
	}
	var acc []store.Date
	for _, d := range ds {
		if d.ReviewState == "accepted" {
			acc = append(acc, d)
		}
	}
	if len(acc) < 2 {
		t.Fatalf("unit %q has %d accepted dates, want at least 2", name, len(acc))
	}
	return units[i], acc
}

// weightedMean is the inverse-variance weighted mean of dates and its 1σ, 1/√Σw (the textbook formula,
// e.g. Taylor 1997 §7.2), from the stored ages and 1σ.
func weightedMean(ds []store.Date) (mean, sigma float64) {
	var sw, swx float64
	for _, d := range ds {
		w := 1 / (d.SigmaMa * d.SigmaMa)
		sw += w
		swx += w * d.AgeMa
	}
	return swx / sw, 1 / math.Sqrt(sw)
}

// The comparison on the demo, through LoadCompareData and Compare, against a closed form derived from the
// stored dates: two U–Pb units of the demo as rows, each its inverse-variance weighted mean (policy never,
// so no √MSWD inflation), and the order matrix' P(the first older than the second), which for two
// independent normal ages is Φ((μ₁ − μ₂)/√(σ₁² + σ₂²)) (gonum's normal CDF). At the analytical level only
// the random parts are drawn; at the as-needed level the two units share λ238 and their tracer whole, a
// common factor (1 + ε) of both ages, which leaves the sign of their difference and so P unchanged.
func TestCompareOnTheDemoEqualsTheClosedForm(t *testing.T) {
	db := demoDB(t)
	ctx := context.Background()
	u1, d1 := demoUnit(t, db, "Brennholt Flow Group")
	u2, d2 := demoUnit(t, db, "Ulvaskar Flow Group")
	m1, s1 := weightedMean(d1)
	m2, s2 := weightedMean(d2)
	want := distuv.UnitNormal.CDF((m1 - m2) / math.Hypot(s1, s2))
	t.Logf("%.4f ± %.4f vs %.4f ± %.4f Ma: P = %.4f", m1, s1, m2, s2, want)
	c1, c2 := "U"+strconv.FormatInt(u1.ID, 10), "U"+strconv.FormatInt(u2.ID, 10)
	for _, level := range []stats.ComparisonLevel{stats.LevelAnalytical, stats.LevelAsNeeded} {
		o := DefaultCompareOptions()
		o.Density.Summary.Policy = stats.PolicyNever
		o.Density.Reps = MinReps
		o.ModelDraws = MinSectionDraws
		o.Rows, o.UnitIDs, o.Order = RowsUnits, []int64{u1.ID, u2.ID}, []string{c1, c2}
		o.N, o.Level, o.Sensitivity = MaxCompareDraws, level, false
		d, err := LoadCompareData(ctx, db, o)
		if err != nil {
			t.Fatal(err)
		}
		res, err := Compare(ctx, d, o)
		if err != nil {
			t.Fatal(err)
		}
		if len(res.In.UnitRows) != 2 {
			t.Fatalf("%d unit rows, want 2", len(res.In.UnitRows))
		}
		for i, w := range [][2]float64{{m1, s1}, {m2, s2}} {
			r := res.In.UnitRows[i]
			near(t, r.Name+" mean", r.MeanMa, w[0], 1e-9)
			near(t, r.Name+" 1σ", r.Sigma1s, w[1], 1e-12)
		}
		se := math.Sqrt(want * (1 - want) / float64(o.N))
		near(t, level.String()+": P(first older)", res.Order.P[0][1], want, 4*se)
		near(t, level.String()+": P(second older)", res.Order.P[1][0], 1-want, 4*se)
	}
}

// snapshotWriter is the real store with a real write committed once its snapshot is open.
type snapshotWriter struct {
	*store.DB
	t    *testing.T
	once sync.Once
}

func (w *snapshotWriter) ReadSnapshot(ctx context.Context, fn func(*store.Snapshot) error) error {
	return w.DB.ReadSnapshot(ctx, func(s *store.Snapshot) error {
		w.once.Do(func() {
			body := "province,unit,sample_code,method,interpretation,age_ma,sigma_ma,sigma_level\n" +
				"Hvarn Plateau Basalts (invented),Haldruna Flow,RACE-1,upb_idtims,eruption,154.10,0.05,2\n"
			if _, err := w.DB.ImportDates(ctx, "race.csv", strings.NewReader(body)); err != nil {
				w.t.Errorf("the write during the load failed: %v", err)
			}
		})
		return fn(s)
	})
}

// LoadCompareData reads one state: a date committed while its snapshot is open is not among the data, and
// the data stamp is the one before the write; the next load sees both.
func TestLoadCompareDataReadsOneSnapshot(t *testing.T) {
	db := demoDB(t)
	ctx := context.Background()
	stamp, err := db.DataStamp(ctx)
	if err != nil {
		t.Fatal(err)
	}
	o := DefaultCompareOptions()
	w := &snapshotWriter{DB: db, t: t}
	d, err := LoadCompareData(ctx, w, o)
	if err != nil {
		t.Fatal(err)
	}
	has := func(d *CompareData) bool {
		return slices.ContainsFunc(d.Dates, func(x store.Date) bool { return x.SampleCode == "RACE-1" })
	}
	if has(d) || d.Stamp != stamp {
		t.Errorf("the load saw the write made during it (RACE-1 read: %v, stamp %d, before %d)", has(d), d.Stamp, stamp)
	}
	d2, err := LoadCompareData(ctx, w, o)
	if err != nil {
		t.Fatal(err)
	}
	if !has(d2) || d2.Stamp == stamp {
		t.Errorf("the next load misses the write (RACE-1 read: %v, stamp %d)", has(d2), d2.Stamp)
	}
}

// optionNames are the options named by err's problems.
func optionNames(err error) []string {
	var out []string
	for _, e := range AsOptionErrors(err) {
		out = append(out, e.Option)
	}
	return out
}

// Each unusable option is named by its field; records the options name that the data lack likewise.
func TestCompareOptionErrorsNameTheOption(t *testing.T) {
	if err := DefaultCompareOptions().Check(); err != nil {
		t.Fatalf("the defaults must be usable: %v", err)
	}
	toc := 150.0
	cases := []struct {
		option string
		edit   func(*CompareOptions)
	}{
		{"TocMinWtPct", func(o *CompareOptions) { o.TocMinWtPct = &toc }},
		{"DeltaMa", func(o *CompareOptions) { o.DeltaMa = -1 }},
		{"N", func(o *CompareOptions) { o.N = 10 }},
		{"Rows", func(o *CompareOptions) { o.Rows = "columns" }},
		{"Point", func(o *CompareOptions) { o.Point = "middle" }},
		{"Model", func(o *CompareOptions) { o.Model = "spline" }},
		{"ModelDraws", func(o *CompareOptions) { o.ModelDraws = 5 }},
		{"Groups", func(o *CompareOptions) { o.Groups = []string{"no_such_kind"} }},
		{"Pulses", func(o *CompareOptions) { o.Pulses = []string{"Q1"} }},
		{"Reps", func(o *CompareOptions) { o.Density.Reps = 1 }},
		{"Include", func(o *CompareOptions) { o.Density.Summary.Include = "some" }},
	}
	for _, c := range cases {
		o := DefaultCompareOptions()
		c.edit(&o)
		if got := optionNames(o.Check()); !slices.Equal(got, []string{c.option}) {
			t.Errorf("%s: Check names %v, want [%s]", c.option, got, c.option)
		}
	}
	db := demoDB(t)
	ctx := context.Background()
	for _, c := range []struct {
		option string
		edit   func(*CompareOptions)
	}{
		{"ProvinceID", func(o *CompareOptions) { o.ProvinceID = 999 }},
		{"SectionIDs", func(o *CompareOptions) { o.SectionIDs = []int64{998, 999} }},
		{"EventIDs", func(o *CompareOptions) { o.EventIDs = []int64{999} }},
		{"Calibration", func(o *CompareOptions) { o.Density.Summary.Calibration.Code = "NOPE" }},
	} {
		o := DefaultCompareOptions()
		c.edit(&o)
		_, err := LoadCompareData(ctx, db, o)
		got := optionNames(err)
		if len(got) == 0 || slices.ContainsFunc(got, func(s string) bool { return s != c.option }) {
			t.Errorf("%s: LoadCompareData names %v (%v), want %s", c.option, got, err, c.option)
		}
	}
	// A pulse, a unit and an order item the comparison does not have are named when it is computed.
	o := DefaultCompareOptions()
	o.Sensitivity, o.Density.Reps, o.ModelDraws, o.N = false, MinReps, MinSectionDraws, MinCompareDraws
	d, err := LoadCompareData(ctx, db, o)
	if err != nil {
		t.Fatal(err)
	}
	o.Pulses, o.UnitIDs, o.Rows = []string{"P99"}, []int64{999}, RowsBoth
	if got := optionNames(func() error { _, err := Compare(ctx, d, o); return err }()); !slices.Equal(got, []string{"Pulses"}) {
		t.Errorf("Compare names %v, want [Pulses]", got)
	}
	o.Pulses = nil
	if got := optionNames(func() error { _, err := Compare(ctx, d, o); return err }()); !slices.Equal(got, []string{"UnitIDs"}) {
		t.Errorf("Compare names %v, want [UnitIDs]", got)
	}
	o.UnitIDs, o.Order = nil, []string{"X1"}
	if got := optionNames(func() error { _, err := Compare(ctx, d, o); return err }()); !slices.Equal(got, []string{"Order"}) {
		t.Errorf("Compare names %v, want [Order]", got)
	}
	if _, err := LoadCompareData(ctx, db, o); err != nil && !errors.Is(err, ErrNoProvince) && AsOptionErrors(err) != nil {
		t.Errorf("an order item is checked against the comparison, not the data: %v", err)
	}
}

// The sensitivity sets of the demo with the defaults: every stored calibration but the target (the
// province has ⁴⁰Ar/³⁹Ar dates), every bandwidth rule but ISJ, the other age model (an event has a
// model age); no TOC thresholds without anomalies.
func TestSensitivitySetsOfTheDemo(t *testing.T) {
	db := demoDB(t)
	ctx := context.Background()
	o := DefaultCompareOptions()
	d, err := LoadCompareData(ctx, db, o)
	if err != nil {
		t.Fatal(err)
	}
	target, _ := TargetCalibration(d.Cals)
	var want []string
	for _, c := range d.Cals {
		if c.Code != target.Code {
			want = append(want, "calibration "+c.Name)
		}
	}
	want = append(want, "smoothing: Scott's rule of thumb", "smoothing: Silverman's rule of thumb", "smoothing: Silverman's rule of thumb, robust to outliers", "age model linear")
	got := SensitivitySets(d, o, CompareInputs{Events: []CompareEvent{{Code: "E1", SectionID: 1}}})
	if !slices.Equal(got, want) {
		t.Errorf("sets %v, want %v", got, want)
	}
	o.Anomalies = true
	got = SensitivitySets(d, o, CompareInputs{})
	if n := len(got); n < 3 || !slices.Equal(got[n-3:], []string{"TOC threshold 0.2 wt%", "TOC threshold 0.5 wt%", "TOC threshold 1 wt%"}) || slices.Contains(got, "age model linear") {
		t.Errorf("with anomalies and no section event: %v", got)
	}
}

// With no section chosen, a province is compared with the sections that have a tie point whose age
// comes within SectionReachMa of its dates, and no other; the others are named in a note. Expected from
// the stored records, for every province of the demo (a compilation spanning 155–197 Ma, where comparing
// every section with every province would set 40-Ma-distant events beside each pulse).
func TestDefaultSectionsAreThoseNearTheProvinceInAge(t *testing.T) {
	db := demoDB(t)
	ctx := context.Background()
	provs, err := db.Provinces(ctx)
	if err != nil {
		t.Fatal(err)
	}
	secs, err := db.Sections(ctx)
	if err != nil {
		t.Fatal(err)
	}
	away := 0
	for _, p := range provs {
		ds, _, err := db.Dates(ctx, store.DateFilter{ProvinceID: p.ID})
		if err != nil {
			t.Fatal(err)
		}
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, d := range ds {
			lo, hi = math.Min(lo, d.AgeMa), math.Max(hi, d.AgeMa)
		}
		var want []string
		for _, s := range secs {
			ties, err := db.TiePoints(ctx, s.ID)
			if err != nil {
				t.Fatal(err)
			}
			for _, tp := range ties {
				a := math.NaN()
				switch {
				case tp.AgeMa != nil:
					a = *tp.AgeMa
				case tp.AgeMinMa != nil && tp.AgeMaxMa != nil:
					a = (*tp.AgeMinMa + *tp.AgeMaxMa) / 2
				}
				if a >= lo-5 && a <= hi+5 {
					want = append(want, s.Name)
					break
				}
			}
		}
		o := DefaultCompareOptions()
		o.ProvinceID = p.ID
		d, err := LoadCompareData(ctx, db, o)
		if err != nil {
			t.Fatal(err)
		}
		var got []string
		for _, s := range d.Sections {
			got = append(got, s.Name)
		}
		if !slices.Equal(got, want) {
			t.Errorf("%s (dates %.2f–%.2f Ma): sections %v, want %v", p.Name, lo, hi, got, want)
		}
		if len(got)+len(d.SectionsAway) != len(secs) {
			t.Errorf("%s: %d sections compared and %d left out, of %d", p.Name, len(got), len(d.SectionsAway), len(secs))
		}
		away += len(d.SectionsAway)
		if len(d.SectionsAway) > 0 {
			res, err := Compare(ctx, d, o)
			if err != nil {
				t.Fatal(err)
			}
			if !slices.ContainsFunc(res.Notes, func(n string) bool { return strings.Contains(n, d.SectionsAway[0].Name) }) {
				t.Errorf("%s: no note names the section left out, %s", p.Name, d.SectionsAway[0].Name)
			}
		}
	}
	if away == 0 {
		t.Fatal("no province left a section out: the demo does not exercise the rule")
	}
}
