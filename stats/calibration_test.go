package stats

import (
	"math"
	"testing"
)

// mustCalibration returns the calibration with code, failing the test if there is none.
func mustCalibration(tb testing.TB, code string) Calibration {
	tb.Helper()
	c, err := CalibrationByCode(code)
	if err != nil {
		tb.Fatal(err)
	}
	return c
}

// roundDecimals rounds x to the given number of decimals, to compare with values printed to that precision.
func roundDecimals(x float64, decimals int) float64 {
	p := math.Pow(10, float64(decimals))
	return math.Round(x*p) / p
}

func TestCalibrations(t *testing.T) {
	cals := Calibrations()
	if got, want := len(cals), 4; got != want {
		t.Fatalf("len(Calibrations()) = %d, want %d", got, want)
	}
	seen := map[string]bool{}
	for _, c := range cals {
		if err := c.Validate(); err != nil {
			t.Errorf("%s: %v", c.Code, err)
		}
		if c.Source == "" || c.Name == "" || c.MonitorName == "" {
			t.Errorf("%s: missing name, source or monitor", c.Code)
		}
		if seen[c.Code] {
			t.Errorf("duplicate code %q", c.Code)
		}
		seen[c.Code] = true
	}
	// A fresh slice each call: changing one must not change the next.
	cals[0].LambdaPerA = 1
	if got, want := Calibrations()[0].LambdaPerA, 5.543e-10; got != want {
		t.Errorf("Calibrations()[0].LambdaPerA after caller's edit = %g, want %g", got, want)
	}
	if _, err := CalibrationByCode("nope"); err == nil {
		t.Error("CalibrationByCode(\"nope\") returned no error")
	}
}

// TestRecalculateAgeMa checks the exact recalculation against REFERENCES §3 Check R, whose targets are
// (monitor age, λ) pairs; two of them mix a monitor age and λ of different calibrations.
func TestRecalculateAgeMa(t *testing.T) {
	sj77 := mustCalibration(t, "sj77")
	pair := func(monitorAgeMa, lambdaPerA float64) Calibration {
		return Calibration{Code: "test", LambdaPerA: lambdaPerA, MonitorName: "FCs", MonitorAgeMa: monitorAgeMa}
	}
	tests := []struct {
		name     string
		ageMa    float64
		to       Calibration
		decimals int
		want     float64
	}{
		{"199.0 to 28.201/5.543e-10", 199.0, pair(28.201, 5.543e-10), 6, 200.226235},   // REFERENCES §3 Check R [C]
		{"199.0 to 28.201/5.463e-10", 199.0, pair(28.201, 5.463e-10), 6, 200.359518},   // REFERENCES §3 Check R [C]
		{"199.0 to 28.294/5.5305e-10", 199.0, pair(28.294, 5.5305e-10), 6, 200.876950}, // REFERENCES §3 Check R [C]
		{"199.0 to 28.305/5.5492e-10", 199.0, pair(28.305, 5.5492e-10), 6, 200.920100}, // REFERENCES §3 Check R [C]
		{"199.0 to 28.02/5.463e-10", 199.0, pair(28.02, 5.463e-10), 6, 199.131689},     // REFERENCES §3 Check R [C]
		{"199.0 to kuiper08", 199.0, mustCalibration(t, "kuiper08"), 6, 200.359518},    // REFERENCES §3 Check R [C]
		{"199.0 to renne11", 199.0, mustCalibration(t, "renne11"), 6, 200.876950},      // REFERENCES §3 Check R [C]
		{"199.0 to renne10", 199.0, mustCalibration(t, "renne10"), 6, 200.920100},      // REFERENCES §3 Check R [C]
		{"66.0 to kuiper08", 66.0, mustCalibration(t, "kuiper08"), 3, 66.432},          // REFERENCES §3 Check R, more [C]
		{"66.0 to renne11", 66.0, mustCalibration(t, "renne11"), 3, 66.640},            // REFERENCES §3 Check R, more [C]
		{"252.0 to kuiper08", 252.0, mustCalibration(t, "kuiper08"), 3, 253.750},       // REFERENCES §3 Check R, more [C]
		{"252.0 to renne11", 252.0, mustCalibration(t, "renne11"), 3, 254.351},         // REFERENCES §3 Check R, more [C]
		{"identity", 199.0, sj77, 9, 199.0},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got, want := roundDecimals(RecalculateAgeMa(tt.ageMa, sj77, tt.to), tt.decimals), tt.want; got != want {
				t.Errorf("RecalculateAgeMa(%v) = %.*f, want %.*f", tt.ageMa, tt.decimals, got, tt.decimals, want)
			}
		})
	}
	// Linear scaling by t_s'/t_s gives 200.285475 (REFERENCES §3 Check R [C]); the exact relation must not.
	linear := 199.0 * 28.201 / 28.02
	if got, want := roundDecimals(linear, 6), 200.285475; got != want {
		t.Errorf("linear scaling = %.6f, want %.6f", got, want)
	}
	if got := RecalculateAgeMa(199.0, sj77, pair(28.201, 5.543e-10)); math.Abs(got-linear) < 0.05 {
		t.Errorf("RecalculateAgeMa = %.6f is within 0.05 Ma of linear scaling %.6f", got, linear)
	}
}

// TestRecalculateRoundTrip checks that moving an age to a calibration and back returns it to 1e-9 Ma.
func TestRecalculateRoundTrip(t *testing.T) {
	cals := Calibrations()
	cals = append(cals, Calibration{Code: "odd", LambdaPerA: 5.0e-10, MonitorAgeMa: 1.2}) // young monitor
	for _, ageMa := range []float64{0, 1e-3, 0.5, 10, 66, 201.5, 252, 1000, 2500, 4500} {
		for _, a := range cals {
			for _, b := range cals {
				there := RecalculateAgeMa(ageMa, a, b)
				back := RecalculateAgeMa(there, b, a)
				if got, want := back, ageMa; math.Abs(got-want) > 1e-9 {
					t.Errorf("%g Ma %s→%s→%s = %.12f, want %.12f", ageMa, a.Code, b.Code, a.Code, got, want)
				}
			}
		}
	}
}

// TestArArJ checks J and the age from J and R against REFERENCES §3 J check [C].
func TestArArJ(t *testing.T) {
	j := ArArJ(28.201, 8.0, 5.463e-10)
	if got, want := j, 1.9406867122e-03; math.Abs(got-want) > 5e-14 { // REFERENCES §3 J check [C]
		t.Errorf("ArArJ = %.13e, want %.10e", got, want)
	}
	if got, want := roundDecimals(ArArAgeMa(60.0, j, 5.463e-10), 6), 201.622055; got != want { // REFERENCES §3 J check [C]
		t.Errorf("ArArAgeMa = %.6f, want %.6f", got, want)
	}
	// The monitor itself must come back at its own age.
	if got, want := ArArAgeMa(8.0, j, 5.463e-10), 28.201; math.Abs(got-want) > 1e-12 {
		t.Errorf("ArArAgeMa(monitor) = %.12f, want %.12f", got, want)
	}
}

// TestRecalculateUncertainty checks the first-order propagation against REFERENCES §3 uncertainty
// check [C] and against a seeded Monte Carlo of the same formula.
func TestRecalculateUncertainty(t *testing.T) {
	sj77, k08 := mustCalibration(t, "sj77"), mustCalibration(t, "kuiper08")
	got, err := Recalculate(199.0, 0.10, sj77, k08)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := roundDecimals(got.AgeMa, 6), 200.359518; got != want { // REFERENCES §3 Check R [C]
		t.Errorf("AgeMa = %.6f, want %.6f", got, want)
	}
	if got, want := roundDecimals(got.AnalyticalSigmaMa, 6), 0.100725; got != want { // REFERENCES §3 uncertainty [C]
		t.Errorf("AnalyticalSigmaMa = %.6f, want %.6f", got, want)
	}
	if got, want := roundDecimals(got.FullSigmaMa, 6), 0.205997; got != want { // REFERENCES §3 uncertainty [C]
		t.Errorf("FullSigmaMa = %.6f, want %.6f", got, want)
	}
	if got.From != "sj77" || got.To != "kuiper08" {
		t.Errorf("From, To = %q, %q", got.From, got.To)
	}

	// Monte Carlo of the exact formula: agreement within 4 standard errors of the MC estimates (the
	// first-order terms neglect curvature, which is far below the MC error at N = 200,000).
	const n, seed = 200_000, 20260101
	mc, err := RecalculateMC(199.0, 0.10, sj77, k08, n, seed)
	if err != nil {
		t.Fatal(err)
	}
	if mc.Seed != seed || mc.N != n {
		t.Errorf("MC records seed %d, N %d; want %d, %d", mc.Seed, mc.N, seed, n)
	}
	anaSE := mc.AnalyticalSigmaMa / math.Sqrt(2*float64(n-1))
	checks := []struct {
		name           string
		got, want, tol float64
	}{
		{"mean", mc.MeanAgeMa, got.AgeMa, 4 * mc.MeanSEMa},
		{"analytical σ", mc.AnalyticalSigmaMa, got.AnalyticalSigmaMa, 4 * anaSE},
		{"full σ", mc.FullSigmaMa, got.FullSigmaMa, 4 * mc.SigmaSEMa},
	}
	for _, c := range checks {
		if math.Abs(c.got-c.want) > c.tol {
			t.Errorf("MC %s = %.6f, first order %.6f, differ by more than %.6f", c.name, c.got, c.want, c.tol)
		}
	}
	t.Logf("MC (N=%d, seed %d): mean %.6f σ_analytical %.6f σ_full %.6f ± %.6f", n, seed, mc.MeanAgeMa, mc.AnalyticalSigmaMa, mc.FullSigmaMa, mc.SigmaSEMa)
	again, _ := RecalculateMC(199.0, 0.10, sj77, k08, n, seed)
	if again != mc {
		t.Error("RecalculateMC with the same seed gave a different result")
	}
}

// TestRecalculateSameCalibration: from == to keeps the age and analytical σ and adds the calibration's
// systematic terms, as for a weighted mean already on that calibration.
func TestRecalculateSameCalibration(t *testing.T) {
	sj77, k08 := mustCalibration(t, "sj77"), mustCalibration(t, "kuiper08")
	moved, err := Recalculate(199.0, 0.10, sj77, k08)
	if err != nil {
		t.Fatal(err)
	}
	got, err := Recalculate(moved.AgeMa, moved.AnalyticalSigmaMa, k08, k08)
	if err != nil {
		t.Fatal(err)
	}
	checks := []struct {
		name      string
		got, want float64
	}{
		{"age", got.AgeMa, moved.AgeMa},
		{"analytical σ", got.AnalyticalSigmaMa, moved.AnalyticalSigmaMa},
		{"full σ", got.FullSigmaMa, moved.FullSigmaMa}, // the full σ depends only on the target calibration
	}
	for _, c := range checks {
		if math.Abs(c.got-c.want) > 1e-9 {
			t.Errorf("%s = %.12f, want %.12f", c.name, c.got, c.want)
		}
	}
}

func TestRecalculateErrors(t *testing.T) {
	sj77, k08 := mustCalibration(t, "sj77"), mustCalibration(t, "kuiper08")
	bad := k08
	bad.LambdaPerA = 0
	tests := []struct {
		name         string
		ageMa, sigma float64
		from, to     Calibration
	}{
		{"negative age", -1, 0.1, sj77, k08},
		{"NaN age", math.NaN(), 0.1, sj77, k08},
		{"negative σ", 199, -0.1, sj77, k08},
		{"NaN σ", 199, math.NaN(), sj77, k08},
		{"bad to", 199, 0.1, sj77, bad},
		{"bad from", 199, 0.1, bad, k08},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if _, err := Recalculate(tt.ageMa, tt.sigma, tt.from, tt.to); err == nil {
				t.Error("Recalculate: no error")
			}
			if _, err := RecalculateMC(tt.ageMa, tt.sigma, tt.from, tt.to, 10, 1); err == nil {
				t.Error("RecalculateMC: no error")
			}
		})
	}
	if _, err := RecalculateMC(199, 0.1, sj77, k08, 1, 1); err == nil {
		t.Error("RecalculateMC with n = 1: no error")
	}
}

func BenchmarkRecalculate(b *testing.B) {
	sj77, r11 := mustCalibration(b, "sj77"), mustCalibration(b, "renne11")
	ages := make([]float64, 1000)
	for i := range ages {
		ages[i] = 1 + float64(i)*0.5
	}
	for b.Loop() {
		for _, a := range ages {
			if _, err := Recalculate(a, 0.1, sj77, r11); err != nil {
				b.Fatal(err)
			}
		}
	}
}
