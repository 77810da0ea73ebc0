package stats

import (
	"math"
	"math/rand/v2"
	"strings"
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

// fullSigmaClosedForm is the first-order full external σ of an age ageMa ± anaMa (1σ analytical, already
// on calibration c), built from c's constants alone: the partial derivatives of the age with respect to
// λ and the monitor age by central differences of the exact recalculation (REFERENCES §3 Check R), then
// σ² = σ_a² + a² + b² + 2ρab (common practice for two correlated inputs).
func fullSigmaClosedForm(ageMa, anaMa float64, c Calibration) float64 {
	moved := func(dLambda, dMonitor float64) float64 {
		to := c
		to.LambdaPerA += dLambda
		to.MonitorAgeMa += dMonitor
		return RecalculateAgeMa(ageMa, c, to)
	}
	hl, hm := c.LambdaPerA*1e-5, c.MonitorAgeMa*1e-5
	a := (moved(0, hm) - moved(0, -hm)) / (2 * hm) * c.MonitorSigmaMa
	b := (moved(hl, 0) - moved(-hl, 0)) / (2 * hl) * c.LambdaSigmaPerA
	return math.Sqrt(anaMa*anaMa + a*a + b*b + 2*c.LambdaMonitorCorrelation*a*b)
}

// TestRenne11KPgFullSigma: the K–Pg sanidine age on the Renne et al. (2011) calibration, 66.043 ± 0.010 Ma
// analytical, has the published full uncertainty ± 0.043 Ma with systematics (Sprain et al. 2015, GSAB
// 127:393; REFERENCES §8 [P]; 1σ, the level from memory, as in Renne et al. 2013, Science 339:684). The
// monitor σ alone (± 0.036 Ma as 1σ, the old setting) gave 0.084 Ma.
func TestRenne11KPgFullSigma(t *testing.T) {
	r11 := mustCalibration(t, "renne11")
	got, err := Recalculate(66.043, 0.010, r11, r11)
	if err != nil {
		t.Fatal(err)
	}
	if g, want := roundDecimals(got.FullSigmaMa, 3), 0.043; g != want { // Sprain et al. 2015, REFERENCES §8 [P]
		t.Errorf("full σ of 66.043 ± 0.010 Ma on renne11 = %.4f Ma, want %.3f (published, 1σ)", got.FullSigmaMa, want)
	}
	if g, want := got.FullSigmaMa, fullSigmaClosedForm(66.043, 0.010, r11); math.Abs(g-want) > 1e-6 {
		t.Errorf("full σ = %.7f Ma, closed form from the calibration's constants %.7f", g, want)
	}
	// A 66 Ma age with no analytical σ: the calibration's own systematic part, about 0.040 Ma (1σ) —
	// half of what the monitor σ alone gave.
	sys, err := Recalculate(66.0, 0, r11, r11)
	if err != nil {
		t.Fatal(err)
	}
	if sys.FullSigmaMa < 0.038 || sys.FullSigmaMa > 0.042 {
		t.Errorf("systematic σ at 66 Ma on renne11 = %.4f Ma, want 0.038–0.042", sys.FullSigmaMa)
	}
	// The correlation term is in: the same calibration with ρ = 0 gives a different (larger) σ.
	indep := r11
	indep.LambdaMonitorCorrelation = 0
	if u, _ := Recalculate(66.0, 0, indep, indep); !(u.FullSigmaMa > sys.FullSigmaMa+1e-4) {
		t.Errorf("ρ = 0 gives %.5f Ma, ρ = %.2f gives %.5f: the covariance term is missing", u.FullSigmaMa, r11.LambdaMonitorCorrelation, sys.FullSigmaMa)
	}
	// The Monte Carlo of the exact formula, drawing λ and the monitor age jointly, agrees within 4 SE.
	mc, err := RecalculateMC(66.043, 0.010, r11, r11, 200_000, 11)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(mc.FullSigmaMa-got.FullSigmaMa) > 4*mc.SigmaSEMa {
		t.Errorf("MC full σ %.5f ± %.5f, first order %.5f", mc.FullSigmaMa, mc.SigmaSEMa, got.FullSigmaMa)
	}
	// Older ages, where λ weighs: first order against the closed form from the constants.
	for _, age := range []float64{1, 252, 1000, 2500} {
		rc, err := Recalculate(age, 0.1, r11, r11)
		if err != nil {
			t.Fatal(err)
		}
		if want := fullSigmaClosedForm(age, 0.1, r11); math.Abs(rc.FullSigmaMa-want) > 1e-6*math.Max(1, want) {
			t.Errorf("%g Ma: full σ %.7f, closed form %.7f", age, rc.FullSigmaMa, want)
		}
	}
}

// renneReduction reduces a published covariance of (κ, λε, λβ) to (λ, t_s): λ = λε + λβ,
// t_s = ln(1 + λκ/λε)/λ, first order with central differences. It returns σ(λ) in a⁻¹, σ(t_s) in Ma
// (NaN when the rounded matrix is not positive there) and cov(λ, t_s) in Ma·a⁻¹.
func renneReduction(k, le, lb, sk, se, sb, cKe, cKb, cEb float64) (sigmaLambda, sigmaTsMa, covMa float64) {
	ts := func(x [3]float64) float64 { l := x[1] + x[2]; return math.Log1p(l*x[0]/x[1]) / l / yearsPerMa }
	x := [3]float64{k, le, lb}
	var g [3]float64
	for i := range x {
		h := x[i] * 1e-6
		xp, xm := x, x
		xp[i] += h
		xm[i] -= h
		g[i] = (ts(xp) - ts(xm)) / (2 * h)
	}
	s := [3][3]float64{{sk * sk, cKe, cKb}, {cKe, se * se, cEb}, {cKb, cEb, sb * sb}}
	gl := [3]float64{0, 1, 1}
	q := func(a, b [3]float64) float64 {
		var sum float64
		for i := range 3 {
			for j := range 3 {
				sum += a[i] * s[i][j] * b[j]
			}
		}
		return sum
	}
	return math.Sqrt(q(gl, gl)), math.Sqrt(q(g, g)), q(gl, g)
}

// TestRenne10FromPublishedCovariance derives the stored joint uncertainty of "renne10" from the values
// of the Renne et al. (2010) abstract (GCA 74:5349): κ = (1.6418 ± 0.0045)e-3, λε = (0.5755 ± 0.0016)e-10,
// λβ = (4.9737 ± 0.0093)e-10, cov(κ, λε) = 7.1889e-19, cov(κ, λβ) = −7.1390e-19, cov(λε, λβ) = −3.4497e-26,
// FCs 28.305 ± 0.036 Ma. Over the rounding of the printed σ (± half a unit of the last digit):
// σ(λ) and cov(λ, t_s) are stable, σ(t_s) is not and never reaches 0.036 Ma (so ± 0.036 is not a 1σ on
// the covariance's footing; the stored 0.018 must lie in the range it allows).
func TestRenne10FromPublishedCovariance(t *testing.T) {
	r10 := mustCalibration(t, "renne10")
	const k, le, lb = 1.6418e-3, 0.5755e-10, 4.9737e-10           // Renne et al. 2010 [P]
	const cKe, cKb, cEb = 7.1889e-19, -7.1390e-19, -3.4497e-26    // Renne et al. 2010 [P]
	l, tsMa := le+lb, math.Log1p((le+lb)*k/le)/(le+lb)/yearsPerMa // λ and t_s the constants imply
	if math.Abs(l-r10.LambdaPerA) > 1e-14 || math.Abs(tsMa-r10.MonitorAgeMa) > 0.001 {
		t.Errorf("λ %.5g, t_s %.4f Ma from κ, λε, λβ; stored %.5g, %.3f", l, tsMa, r10.LambdaPerA, r10.MonitorAgeMa)
	}
	minTs, maxTs, minCov, maxCov := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	for _, sk := range []float64{4.45e-6, 4.5e-6, 4.55e-6} {
		for _, se := range []float64{1.55e-13, 1.6e-13, 1.65e-13} {
			for _, sb := range []float64{9.25e-13, 9.3e-13, 9.35e-13} {
				sl, sts, c := renneReduction(k, le, lb, sk, se, sb, cKe, cKb, cEb)
				if sk == 4.5e-6 && se == 1.6e-13 && sb == 9.3e-13 {
					if got, want := roundDecimals(sl*1e10, 5), r10.LambdaSigmaPerA*1e10; got != want {
						t.Errorf("σ(λ) from the published values = %.5fe-10, stored %.5fe-10", got, want)
					}
				}
				if math.IsNaN(sts) {
					continue // the rounded matrix is not a covariance here
				}
				minTs, maxTs = math.Min(minTs, sts), math.Max(maxTs, sts)
				minCov, maxCov = math.Min(minCov, c), math.Max(maxCov, c)
			}
		}
	}
	t.Logf("σ(t_s) %.4f–%.4f Ma, cov(λ, t_s) %.3g–%.3g Ma·a⁻¹", minTs, maxTs, minCov, maxCov)
	if maxTs >= 0.036 {
		t.Errorf("σ(t_s) reaches %.4f Ma: the 2σ reading of ± 0.036 is not forced", maxTs)
	}
	if s := r10.MonitorSigmaMa; s < minTs || s > maxTs {
		t.Errorf("stored σ(t_s) %.4f Ma outside %.4f–%.4f", s, minTs, maxTs)
	}
	rhoLo := minCov / (r10.LambdaSigmaPerA * r10.MonitorSigmaMa)
	rhoHi := maxCov / (r10.LambdaSigmaPerA * r10.MonitorSigmaMa)
	if rho := r10.LambdaMonitorCorrelation; rho < rhoLo-0.005 || rho > rhoHi+0.005 {
		t.Errorf("stored ρ %.3f outside %.3f–%.3f implied by the published covariance", rho, rhoLo, rhoHi)
	}
}

// TestCalibrationDraw: Draw turns independent standard normal deviates into (λ, t_s) with the stated σ
// and ρ — sample σ within 4 SE (σ/√(2(N−1)), normal theory), sample ρ within 4 SE ((1 − ρ²)/√(N−1)), and
// the share of draws inside the 95 % ellipse (Mahalanobis distance² ≤ χ²₂(0.95) = −2 ln 0.05) within the
// binomial band 0.95 ± 4√(0.95·0.05/N). With ρ = 0 it is bit for bit the independent draw.
func TestCalibrationDraw(t *testing.T) {
	strong := Calibration{Code: "strong", LambdaPerA: 5.5e-10, LambdaSigmaPerA: 0.02e-10, MonitorAgeMa: 28.3,
		MonitorSigmaMa: 0.05, LambdaMonitorCorrelation: -0.8}
	const n = 200_000
	for _, c := range []Calibration{mustCalibration(t, "renne11"), mustCalibration(t, "renne10"), strong} {
		t.Run(c.Code, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(5, 0))
			var sl, sm, slm, sll, smm float64
			inside := 0
			r := c.LambdaMonitorCorrelation
			for range n {
				z1 := rng.NormFloat64()
				lam, mon := c.Draw(z1, rng.NormFloat64())
				dl, dm := lam-c.LambdaPerA, mon-c.MonitorAgeMa
				sl += dl
				sm += dm
				sll += dl * dl
				smm += dm * dm
				slm += dl * dm
				u, v := dl/c.LambdaSigmaPerA, dm/c.MonitorSigmaMa
				if (u*u-2*r*u*v+v*v)/(1-r*r) <= -2*math.Log(0.05) {
					inside++
				}
			}
			nf := float64(n)
			vl := (sll - sl*sl/nf) / (nf - 1)
			vm := (smm - sm*sm/nf) / (nf - 1)
			cov := (slm - sl*sm/nf) / (nf - 1)
			gotSL, gotSM, gotR := math.Sqrt(vl), math.Sqrt(vm), cov/math.Sqrt(vl*vm)
			if se := c.LambdaSigmaPerA / math.Sqrt(2*(nf-1)); math.Abs(gotSL-c.LambdaSigmaPerA) > 4*se {
				t.Errorf("σ(λ) %.5g, want %.5g ± %.2g", gotSL, c.LambdaSigmaPerA, 4*se)
			}
			if se := c.MonitorSigmaMa / math.Sqrt(2*(nf-1)); math.Abs(gotSM-c.MonitorSigmaMa) > 4*se {
				t.Errorf("σ(t_s) %.5g, want %.5g ± %.2g", gotSM, c.MonitorSigmaMa, 4*se)
			}
			if se := (1 - r*r) / math.Sqrt(nf-1); math.Abs(gotR-r) > 4*se {
				t.Errorf("ρ %.4f, want %.4f ± %.4f", gotR, r, 4*se)
			}
			share, band := float64(inside)/nf, 4*math.Sqrt(0.95*0.05/nf)
			if math.Abs(share-0.95) > band {
				t.Errorf("share inside the 95 %% ellipse %.4f, want 0.95 ± %.4f", share, band)
			}
		})
	}
	k08 := mustCalibration(t, "kuiper08")
	for _, z := range [][2]float64{{0.3, -1.7}, {-2.2, 0.4}, {0, 0}} {
		lam, mon := k08.Draw(z[0], z[1])
		if lam != k08.LambdaPerA+k08.LambdaSigmaPerA*z[0] || mon != k08.MonitorAgeMa+k08.MonitorSigmaMa*z[1] {
			t.Errorf("kuiper08 Draw(%v) = %v, %v: not the independent draw", z, lam, mon)
		}
	}
}

// TestDrawJointArArCovariance: the joint draws of the comparison carry a renne11 date's full external σ
// with the covariance (its marginal sd against Recalculate's first-order full σ, within 4 SE).
func TestDrawJointArArCovariance(t *testing.T) {
	r11 := mustCalibration(t, "renne11")
	const n = 100_000
	j, err := DrawJoint([]Quantity{ArArDate("K–Pg", 66.043, 0.010, r11)}, DrawOptions{N: n, Seed: 9, Level: LevelFull})
	if err != nil {
		t.Fatal(err)
	}
	v, err := j.Draws(0)
	if err != nil {
		t.Fatal(err)
	}
	var s, ss float64
	for _, x := range v {
		s += x
		ss += x * x
	}
	sd := math.Sqrt((ss - s*s/n) / (n - 1))
	want, _ := Recalculate(66.043, 0.010, r11, r11)
	if se := sd / math.Sqrt(2*(n-1)); math.Abs(sd-want.FullSigmaMa) > 4*se {
		t.Errorf("sd of the joint draws %.5f Ma, first-order full σ %.5f ± %.5f", sd, want.FullSigmaMa, 4*se)
	}
}

func TestCalibrationValidateCorrelation(t *testing.T) {
	c := mustCalibration(t, "renne11")
	for _, rho := range []float64{1.01, -1.5, math.NaN(), math.Inf(1)} {
		c.LambdaMonitorCorrelation = rho
		if err := c.Validate(); err == nil || !strings.Contains(err.Error(), "correlation") {
			t.Errorf("ρ = %v: error %v, want one naming the correlation", rho, err)
		}
	}
}
