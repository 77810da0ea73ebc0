package analysis

import (
	"context"
	"fmt"
	"math"
	"strings"
	"testing"

	"coeval/stats"
)

// Check K10 of REFERENCES §4 ([C]: scipy 1.10 gaussian_kde), with the PDP's σᵢ (1σ).
var k10 = []struct{ age, sigma float64 }{
	{201.20, 0.05}, {201.35, 0.04}, {201.41, 0.06}, {201.48, 0.03}, {201.52, 0.05},
	{201.55, 0.04}, {201.61, 0.08}, {201.90, 0.06}, {202.05, 0.07}, {202.30, 0.10},
}

// k10DB stores K10 as U–Pb dates at 1σ: the first six in "Flow A" (100 km³), the others in "Flow B" (300 km³).
func k10DB(t *testing.T) func(DensityOptions) Timeline {
	var rows []string
	for i, d := range k10 {
		unit := "Flow A"
		if i >= 6 {
			unit = "Flow B"
		}
		rows = append(rows, fmt.Sprintf("Testland,%s,,,K-%02d,upb_idtims,zircon,eruption,%.2f,%.2f,,,1,,,,,,test,,,,accepted,", unit, i+1, d.age, d.sigma))
	}
	db := testDB(t, rows)
	id := provinceID(t, db)
	return func(o DensityOptions) Timeline {
		tl, err := ProvinceDensity(context.Background(), db, id, o)
		if err != nil {
			t.Fatal(err)
		}
		return tl
	}
}

func gauss(z float64) float64 { return math.Exp(-z*z/2) / math.Sqrt(2*math.Pi) }

// The density the pipeline computes from the stored dates is the Gaussian KDE written out here term by
// term, f(x) = Σ wᵢ φ((x−xᵢ)/h)/h / Σ wᵢ, with Scott's h of K10 (REFERENCES §4 Check K10 [C]); the PDP
// is Σ wᵢ φ((x−xᵢ)/σᵢ)/σᵢ / Σ wᵢ. Checked on every grid age, with equal weights and with the units'
// volumes shared among their dates.
func TestDensityOfK10IsTheKDEWrittenOut(t *testing.T) {
	run := k10DB(t)
	for _, weight := range []string{WeightNone, WeightVolume} {
		o := DefaultDensityOptions(stats.Calibration{})
		o.Summary.Level = stats.Analytical
		o.Count, o.Weight, o.Rule, o.PDP, o.Reps = CountDate, weight, stats.RuleScott, true, MinReps
		d := run(o).Density
		if d.Band == nil || d.PDP == nil || len(d.Values) != len(k10) {
			t.Fatalf("%s: no density (%s), %d values", weight, d.Message, len(d.Values))
		}
		near(t, weight+": Scott's h (Ma)", d.Bandwidth.Ma, 0.2155960719, 1e-9)
		w := make([]float64, len(k10))
		for i := range k10 {
			w[i] = 1
			if weight == WeightVolume {
				w[i] = map[bool]float64{true: 100.0 / 6, false: 300.0 / 4}[i < 6]
			}
		}
		worst, worstPDP := 0.0, 0.0
		for j, x := range d.Band.GridMa {
			var kde, pdp, sw float64
			for i, v := range k10 {
				kde += w[i] * gauss((x-v.age)/d.Bandwidth.Ma) / d.Bandwidth.Ma
				pdp += w[i] * gauss((x-v.age)/v.sigma) / v.sigma
				sw += w[i]
			}
			worst = math.Max(worst, math.Abs(d.Band.Reference.Density[j]-kde/sw))
			worstPDP = math.Max(worstPDP, math.Abs(d.PDP.Density[j]-pdp/sw))
		}
		if worst > 1e-9 || worstPDP > 1e-9 {
			t.Errorf("%s: largest difference from the written-out KDE %.3g, PDP %.3g per Ma (want ≤ 1e-9)", weight, worst, worstPDP)
		}
	}
}

// With one value per unit the density counts each unit's weighted mean, with the unit's own σ.
func TestDensityCountsUnitMeans(t *testing.T) {
	run := k10DB(t)
	o := DefaultDensityOptions(stats.Calibration{})
	o.Summary.Level, o.Summary.Policy, o.Reps = stats.Analytical, stats.PolicyNever, MinReps
	tl := run(o)
	if len(tl.Density.Values) != 2 {
		t.Fatalf("%d values, want one per unit", len(tl.Density.Values))
	}
	// The weighted mean of Flow B's four dates, written out: Σ(xᵢ/σᵢ²)/Σ(1/σᵢ²).
	var sw, swx float64
	for _, v := range k10[6:] {
		sw += 1 / (v.sigma * v.sigma)
		swx += v.age / (v.sigma * v.sigma)
	}
	b := tl.Density.Values[1]
	near(t, "Flow B's value (Ma)", b.AgeMa, swx/sw, 1e-9)
	near(t, "Flow B's 1σ (Ma)", b.Sigma1s, 1/math.Sqrt(sw), 1e-9)
	if b.Unit != "Flow B" || b.N != 4 || len(b.DateIDs) != 4 {
		t.Errorf("Flow B's value: %+v", b)
	}
}

// Unusable options are refused by name, before anything is read.
func TestDensityOptionsNameWhatIsWrong(t *testing.T) {
	def := DefaultDensityOptions(stats.Calibration{})
	if err := def.Validate(); err != nil {
		t.Fatalf("the defaults are refused: %v", err)
	}
	f := func(v float64) *float64 { return &v }
	for _, c := range []struct {
		change func(*DensityOptions)
		option string
		says   string
	}{
		{func(o *DensityOptions) { o.Rule, o.UserHMa = stats.RuleUser, 0 }, "UserHMa", "> 0, got 0"},
		{func(o *DensityOptions) { o.FromMa, o.ToMa = f(160), f(160) }, "Window", "two different ages"},
		{func(o *DensityOptions) { o.ToMa = f(5000) }, "ToMa", "from 0 to 4600, got 5000"},
		{func(o *DensityOptions) { o.BWEach = true }, "BWEach", "not isj"},
		{func(o *DensityOptions) { o.Reps = 5 }, "Reps", "from 100 to 10000, got 5"},
		{func(o *DensityOptions) { o.Count = "sample" }, "Count", `"sample"`},
		{func(o *DensityOptions) { o.Summary.Include = "" }, "Include", `""`},
	} {
		o := def
		c.change(&o)
		_, err := ProvinceDensity(context.Background(), nil, 1, o) // a nil source: must not be reached
		es := AsOptionErrors(err)
		if len(es) != 1 || es[0].Option != c.option || !strings.Contains(es[0].Problem, c.says) {
			t.Errorf("got %v, want one problem of %s saying %q", err, c.option, c.says)
		}
	}
}
