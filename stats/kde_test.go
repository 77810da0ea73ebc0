package stats

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"
)

// k10PointsMa are the evaluation ages of check K10.
var k10PointsMa = []float64{201.0, 201.4, 201.6, 201.8, 202.2}

func TestKDEK10(t *testing.T) {
	tests := []struct {
		name string
		opts KDEOptions
		want []float64
	}{
		// REFERENCES §4 K10 [C]: scipy 1.10 gaussian_kde(bw_method='scott').
		{"scott", KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleScott}},
			[]float64{0.2363905760, 1.0915072357, 1.0414364536, 0.6951289955, 0.3903395808}},
		// REFERENCES §4 K10 [C]: scipy 1.10 gaussian_kde(bw_method='silverman').
		{"silverman", KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleSilverman}},
			[]float64{0.2547619330, 1.0548705726, 1.0191311361, 0.7091789357, 0.3863907368}},
		// REFERENCES §4 K10 [C]: fixed KDE with h = 0.9·min(σ̂, IQR/1.34)·n^-1/5, type-7 IQR.
		{"silverman-robust", KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleSilvermanRobust}},
			[]float64{0.1658674537, 1.2428801765, 1.1295775581, 0.6088493061, 0.4068292005}},
		// REFERENCES §4 K10 [C]: Abramson (1982) hᵢ with pilot = scipy 'silverman'.
		{"abramson", KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleSilverman}, Adaptive: true},
			[]float64{0.2042888536, 1.1810312574, 1.1577413270, 0.6719494117, 0.3098112447}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			// The grid 201.0, 201.2, …, 202.2 holds the five check ages.
			tt.opts.Grid = AgeGrid{MinMa: 201.0, MaxMa: 202.2, Points: 7}
			d, err := KDE(k10AgesMa, tt.opts)
			if err != nil {
				t.Fatal(err)
			}
			for k, x := range k10PointsMa {
				j := slices.IndexFunc(d.GridMa, func(g float64) bool { return math.Abs(g-x) < 1e-9 })
				if j < 0 {
					t.Fatalf("grid %v lacks %v", d.GridMa, x)
				}
				if got, want := d.Density[j], tt.want[k]; !relClose(got, want, 1e-9) {
					t.Errorf("f(%v) = %.10f, want %.10f", x, got, want)
				}
			}
			// The exact evaluator agrees at the check ages too.
			m := Mixture{AgeMa: k10AgesMa, BandwidthMa: []float64{d.BandwidthMa}}
			if d.PointBandwidthsMa != nil {
				m.BandwidthMa = d.PointBandwidthsMa
			}
			got, err := m.Eval(k10PointsMa)
			if err != nil {
				t.Fatal(err)
			}
			for k := range got {
				if !relClose(got[k], tt.want[k], 1e-9) {
					t.Errorf("Eval f(%v) = %.10f, want %.10f", k10PointsMa[k], got[k], tt.want[k])
				}
			}
		})
	}
}

// TestKDEISJD50 checks the KDE of check D50 with its ISJ bandwidth at the five ages.
func TestKDEISJD50(t *testing.T) {
	d, err := KDE(d50AgesMa(), KDEOptions{
		Bandwidth: BandwidthOptions{Rule: RuleISJ},
		Grid:      AgeGrid{MinMa: 201.2, MaxMa: 202.7, Points: 16}, // step 0.1 holds the five ages
	})
	if err != nil {
		t.Fatal(err)
	}
	if d.Note != "" || d.Rule != RuleISJ {
		t.Fatalf("unexpected fallback: %q", d.Note)
	}
	// REFERENCES §4 D50 [C]: scipy-style Gaussian KDE with h = 0.1014637131; tolerance there 5e-4.
	want := map[float64]float64{201.2: 0.3431046833, 201.5: 1.3217827227, 201.9: 0.1152095827, 202.4: 1.1223595765, 202.7: 0.1179800112}
	for x, w := range want {
		j := slices.IndexFunc(d.GridMa, func(g float64) bool { return math.Abs(g-x) < 1e-9 })
		if got := d.Density[j]; !relClose(got, w, 5e-4) {
			t.Errorf("f(%v) = %.10f, want %.10f", x, got, w)
		}
	}
}

// TestDensityIntegratesToOne: every kind of density integrates to 1 over a grid wide enough
// to hold all kernels (trapezoid rule; 1e-3 is the stated tolerance, far above the rule's error).
func TestDensityIntegratesToOne(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 0))
	sample := make([]float64, 300)
	sigma := make([]float64, len(sample))
	weight := make([]float64, len(sample))
	for i := range sample {
		sample[i] = 250 + 2*rng.NormFloat64()
		if i%3 == 0 {
			sample[i] += 8
		}
		sigma[i] = 0.05 + 0.3*rng.Float64()
		weight[i] = rng.ExpFloat64()
	}
	wide := AgeGrid{MinMa: 235, MaxMa: 275, Points: 4001}
	tests := []struct {
		name string
		f    func() (Density, error)
	}{
		{"scott binned", func() (Density, error) {
			return KDE(sample, KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleScott}, Grid: wide})
		}},
		{"isj weighted", func() (Density, error) {
			return KDE(sample, KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleISJ}, Weight: weight, Grid: wide})
		}},
		{"abramson", func() (Density, error) {
			return KDE(sample, KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleSilverman}, Adaptive: true, Grid: wide})
		}},
		{"k10 automatic grid", func() (Density, error) {
			return KDE(k10AgesMa, KDEOptions{Grid: AgeGrid{Points: 2001}})
		}},
		{"pdp", func() (Density, error) { return PDP(sample, sigma, PDPOptions{Grid: wide}) }},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			d, err := tt.f()
			if err != nil {
				t.Fatal(err)
			}
			if got := trapezoid(d.GridMa, d.Density); math.Abs(got-1) > 1e-3 {
				t.Errorf("∫f = %.6f, want 1 ± 1e-3", got)
			}
		})
	}
}

func trapezoid(x, y []float64) float64 {
	var s float64
	for i := 1; i < len(x); i++ {
		s += 0.5 * (y[i] + y[i-1]) * (x[i] - x[i-1])
	}
	return s
}

// TestBinnedMatchesExact: on the grid, the binned KDE is within 1e-3 of the peak of the exact
// KDE (brief's requirement), for samples of several shapes and sizes and grids of several sizes.
func TestBinnedMatchesExact(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 0))
	normal := func(n int) []float64 {
		x := make([]float64, n)
		for i := range x {
			x[i] = 201.5 + 0.3*rng.NormFloat64()
		}
		return x
	}
	skewed := func(n int) []float64 {
		x := make([]float64, n)
		for i := range x {
			x[i] = 66 + rng.ExpFloat64()
		}
		return x
	}
	tests := []struct {
		name   string
		ages   []float64
		rule   BandwidthRule
		points int
	}{
		{"k10 robust 512", k10AgesMa, RuleSilvermanRobust, 512},
		{"d50 isj 512", d50AgesMa(), RuleISJ, 512},
		{"d50 isj 64", d50AgesMa(), RuleISJ, 64},
		{"normal 1000 scott 256", normal(1000), RuleScott, 256},
		{"skewed 5000 isj 4096", skewed(5000), RuleISJ, 4096},
		{"skewed 20000 isj 512", skewed(20000), RuleISJ, 512},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			d, err := KDE(tt.ages, KDEOptions{Bandwidth: BandwidthOptions{Rule: tt.rule}, Grid: AgeGrid{Points: tt.points}})
			if err != nil {
				t.Fatal(err)
			}
			m := Mixture{AgeMa: tt.ages, BandwidthMa: []float64{d.BandwidthMa}}
			exact, err := m.Eval(d.GridMa)
			if err != nil {
				t.Fatal(err)
			}
			// Small samples are summed directly by EvalGrid: force the binned path.
			g := AgeGrid{MinMa: d.GridMa[0], MaxMa: d.GridMa[len(d.GridMa)-1], Points: len(d.GridMa)}
			binned := make([]float64, g.Points)
			ok := m.refinedBinned(binned, g, float64(len(tt.ages)), new(kdeScratch))
			if !ok {
				t.Fatal("binned path refused the grid")
			}
			peak := slices.Max(exact)
			var worst, worstKDE float64
			for j := range exact {
				worst = math.Max(worst, math.Abs(binned[j]-exact[j]))
				worstKDE = math.Max(worstKDE, math.Abs(d.Density[j]-exact[j]))
			}
			if worstKDE > 1e-3*peak {
				t.Errorf("KDE: max |f − exact| = %.3g of the peak, want ≤ 1e-3", worstKDE/peak)
			}
			if worst > 1e-3*peak {
				t.Errorf("max |binned − exact| = %.3g = %.3g of the peak, want ≤ 1e-3 (h = %.3g grid steps)",
					worst, worst/peak, d.BandwidthMa/(d.GridMa[1]-d.GridMa[0]))
			}
			t.Logf("max |binned − exact|/peak = %.2g, h = %.1f grid steps", worst/peak, d.BandwidthMa/(d.GridMa[1]-d.GridMa[0]))
		})
	}
}

// TestKDEWindow: a window shows the density of all dates inside it, not a renormalised one.
func TestKDEWindow(t *testing.T) {
	ages := append(slices.Clone(k10AgesMa), 250, 251, 252)
	opts := KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleUser, UserMa: 0.1}, Grid: AgeGrid{MinMa: 200, MaxMa: 203.5, Points: 701}}
	d, err := KDE(ages, opts)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := trapezoid(d.GridMa, d.Density), 10.0/13; math.Abs(got-want) > 1e-4 {
		t.Errorf("mass in window = %.6f, want %.6f (10 of 13 dates)", got, want)
	}
}

func TestMixtureErrors(t *testing.T) {
	tests := []struct {
		name string
		m    Mixture
	}{
		{"no dates", Mixture{BandwidthMa: []float64{1}}},
		{"bandwidth count", Mixture{AgeMa: []float64{1, 2, 3}, BandwidthMa: []float64{1, 1}}},
		{"zero bandwidth", Mixture{AgeMa: []float64{1}, BandwidthMa: []float64{0}}},
		{"NaN age", Mixture{AgeMa: []float64{math.NaN()}, BandwidthMa: []float64{1}}},
		{"weight count", Mixture{AgeMa: []float64{1, 2}, BandwidthMa: []float64{1}, Weight: []float64{1}}},
		{"negative weight", Mixture{AgeMa: []float64{1, 2}, BandwidthMa: []float64{1}, Weight: []float64{1, -1}}},
		{"zero weights", Mixture{AgeMa: []float64{1, 2}, BandwidthMa: []float64{1}, Weight: []float64{0, 0}}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if _, err := tt.m.Eval([]float64{1}); err == nil {
				t.Error("Eval: want an error")
			}
			if _, err := tt.m.EvalGrid(AgeGrid{MinMa: 0, MaxMa: 3, Points: 10}); err == nil {
				t.Error("EvalGrid: want an error")
			}
		})
	}
	m := Mixture{AgeMa: []float64{1}, BandwidthMa: []float64{1}}
	for _, g := range []AgeGrid{{0, 1, 1}, {1, 1, 10}, {2, 1, 10}, {math.Inf(-1), 1, 10}} {
		if _, err := m.EvalGrid(g); err == nil {
			t.Errorf("grid %+v: want an error", g)
		}
	}
}

// TestWeightsActAsRepeats: integer weights give the same density as repeated dates.
func TestWeightsActAsRepeats(t *testing.T) {
	ages := []float64{201.2, 201.5, 202.0}
	rep := []float64{201.2, 201.5, 201.5, 201.5, 202.0, 202.0}
	g := AgeGrid{MinMa: 200.5, MaxMa: 202.5, Points: 300}
	a, err := Mixture{AgeMa: ages, BandwidthMa: []float64{0.1}, Weight: []float64{1, 3, 2}}.EvalGrid(g)
	if err != nil {
		t.Fatal(err)
	}
	b, err := Mixture{AgeMa: rep, BandwidthMa: []float64{0.1}}.EvalGrid(g)
	if err != nil {
		t.Fatal(err)
	}
	for j := range a {
		if math.Abs(a[j]-b[j]) > 1e-12 {
			t.Fatalf("at %d: weighted %.15g, repeated %.15g", j, a[j], b[j])
		}
	}
}

func BenchmarkKDEBinned100kOn4096(b *testing.B) {
	ages := benchAges(100_000)
	opts := KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleScott}, Grid: AgeGrid{Points: 4096}}
	b.ResetTimer()
	for b.Loop() {
		if _, err := KDE(ages, opts); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkKDEExactOn512(b *testing.B) {
	for _, n := range []int{1_000, 10_000, 100_000} {
		b.Run(fmt.Sprintf("n=%d", n), func(b *testing.B) {
			ages := benchAges(n)
			bw, err := SelectBandwidth(ages, BandwidthOptions{Rule: RuleScott})
			if err != nil {
				b.Fatal(err)
			}
			at := AgeGrid{MinMa: slices.Min(ages), MaxMa: slices.Max(ages), Points: 512}.AgesMa()
			m := Mixture{AgeMa: ages, BandwidthMa: []float64{bw.Ma}}
			b.ResetTimer()
			for b.Loop() {
				if _, err := m.Eval(at); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

func BenchmarkKDEBinnedOn512(b *testing.B) {
	for _, n := range []int{1_000, 10_000, 100_000, 1_000_000} {
		b.Run(fmt.Sprintf("n=%d", n), func(b *testing.B) {
			ages := benchAges(n)
			opts := KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleScott}}
			b.ResetTimer()
			for b.Loop() {
				if _, err := KDE(ages, opts); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// benchAges is a seeded two-pulse sample typical of a compilation.
func benchAges(n int) []float64 {
	rng := rand.New(rand.NewPCG(1, 2))
	x := make([]float64, n)
	for i := range x {
		if i%3 == 0 {
			x[i] = 202.4 + 0.10*rng.NormFloat64()
		} else {
			x[i] = 201.5 + 0.15*rng.NormFloat64()
		}
	}
	return x
}

func TestFastFFTLen(t *testing.T) {
	for _, tt := range []struct{ n, want int }{{1, 1}, {7, 8}, {11, 12}, {17, 18}, {1000, 1000}, {1001, 1024}, {4097, 4320}} {
		if got := fastFFTLen(tt.n); got != tt.want {
			t.Errorf("fastFFTLen(%d) = %d, want %d", tt.n, got, tt.want)
		}
	}
}

// binnedWithGonum is the binned KDE as it was computed with gonum's fourier.FFT (a fresh plan, the
// spectrum unpacked to complex values), on the bins and padded length of binLayout: the reference
// that binned must match bit for bit, so that a seeded band or page stays the same. It also returns
// the padded length.
func binnedWithGonum(m Mixture, g AgeGrid, sumW float64) ([]float64, int) {
	h := m.BandwidthMa[0]
	dx := g.StepMa()
	var sc kdeScratch
	lay, ok := m.binLayout(g, &sc)
	if !ok {
		panic("binLayout refused the grid")
	}
	size := lay.size
	bins := sc.bins[:size]
	fft := fourier.NewFFT(size)
	spec := fft.Coefficients(nil, bins)
	c := 1 / (dx * sumW * float64(size))
	a := 2 * math.Pi * h / (dx * float64(size))
	for k := range spec {
		z := a * float64(k)
		spec[k] *= complex(c*math.Exp(-0.5*z*z), 0)
	}
	conv := fft.Sequence(nil, spec)
	out := make([]float64, g.Points)
	for j := range out {
		out[j] = max(conv[j+lay.first], 0)
	}
	return out, size
}

// TestBinnedSameAsGonumFFT: the binned KDE through rfft, with a scratch reused across calls of
// different lengths and bandwidths, equals the one through gonum's fourier.FFT bit for bit, for
// padded lengths even and odd.
func TestBinnedSameAsGonumFFT(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	var sc kdeScratch
	sizes := map[bool]int{}
	for trial := range 300 {
		n := 2 + rng.IntN(80)
		ages, weight := make([]float64, n), make([]float64, n)
		for i := range ages {
			ages[i] = 150 + 3*rng.Float64()
			weight[i] = rng.Float64()
		}
		m := Mixture{AgeMa: ages, BandwidthMa: []float64{0.01 + 0.2*rng.Float64()}}
		if trial%2 == 1 {
			m.Weight = weight
		}
		sumW, err := m.validate()
		if err != nil {
			t.Fatal(err)
		}
		g := AgeGrid{MinMa: 149.5 + rng.Float64(), MaxMa: 152 + 2*rng.Float64(), Points: 16 + rng.IntN(1500)}
		if m.BandwidthMa[0] < 4*g.StepMa() {
			continue // binned needs h ≥ 4 steps (refinedBinned ensures 16)
		}
		want, size := binnedWithGonum(m, g, sumW)
		got := make([]float64, g.Points)
		if !m.binned(got, 1, g, sumW, &sc) {
			t.Fatalf("trial %d: binned refused the grid", trial)
		}
		for j := range want {
			if math.Float64bits(got[j]) != math.Float64bits(want[j]) {
				t.Fatalf("trial %d at %d: %v, with gonum's FFT %v", trial, j, got[j], want[j])
			}
		}
		sizes[size%2 == 1]++
	}
	if sizes[false] < 20 || sizes[true] < 5 {
		t.Errorf("padded lengths tried: %d even, %d odd; want more of each", sizes[false], sizes[true])
	}
}
