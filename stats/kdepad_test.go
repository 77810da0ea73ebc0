package stats

import (
	"fmt"
	"math"
	"slices"
	"testing"
	"time"
)

// quantileAges returns n ages of the two-pulse sample of benchAges (a third at 202.4 ± 0.10 Ma, the
// rest at 201.5 ± 0.15 Ma) drawn without a random generator: the i-th age is the normal quantile at
// frac((i + ½)·(√5 − 1)/2) of its pulse. The same arithmetic in any language gives the same ages
// (to the last digit of the inverse error function), so the side-by-side timing script
// (testdata/bench/kde_side_by_side.py) times the reference libraries on the very same values.
func quantileAges(n int) []float64 {
	const golden = 0.6180339887498949 // (√5 − 1)/2
	x := make([]float64, n)
	for i := range x {
		u := math.Mod((float64(i)+0.5)*golden, 1)
		z := math.Sqrt2 * math.Erfinv(2*u-1)
		if i%3 == 0 {
			x[i] = 202.4 + 0.10*z
		} else {
			x[i] = 201.5 + 0.15*z
		}
	}
	return x
}

// quantileAgesSD is the standard deviation of the two-pulse mixture quantileAges draws from:
// √(⅓·0.10² + ⅔·0.15² + ⅓·⅔·0.9²) Ma.
var quantileAgesSD = math.Sqrt(0.01/3 + 2*0.0225/3 + 2*0.81/9)

// scottMa is Scott's rule, 1.06·σ·n^(−1/5), with the mixture's own σ (not the sample's), so that
// every implementation compared uses the same bandwidth exactly.
func scottMa(n int) float64 { return 1.06 * quantileAgesSD * math.Pow(float64(n), -0.2) }

// BenchmarkKDEOn2048 is the fixed-bandwidth KDE (Scott's rule with the mixture's σ) of n ages on the
// automatic 2,048-point grid (the ages' range padded by 4h), from the ages to the density: the Go
// side of testdata/bench/kde_side_by_side.py, which times scipy and statsmodels on the same grid.
// Besides ns/op it reports cpu-ms/op, the process's CPU time per op, less disturbed by other jobs.
func BenchmarkKDEOn2048(b *testing.B) {
	for _, n := range []int{1_000, 10_000, 100_000, 1_000_000} {
		b.Run(fmt.Sprintf("n=%d", n), func(b *testing.B) {
			ages := quantileAges(n)
			opts := KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleUser, UserMa: scottMa(n)}, Grid: AgeGrid{Points: 2048}}
			cpu0, ops := processCPU(), 0
			for b.Loop() {
				if _, err := KDE(ages, opts); err != nil {
					b.Fatal(err)
				}
				ops++
			}
			if cpu := processCPU(); cpu0 > 0 && ops > 0 {
				b.ReportMetric(float64(cpu-cpu0)/float64(time.Millisecond)/float64(ops), "cpu-ms/op")
			}
		})
	}
}

// closedFormKDE is the Gaussian kernel sum f(x) = (1/n)·Σᵢ exp(−½((x − xᵢ)/h)²)/(h√(2π)) at each
// of at, term by term (REFERENCES §4): the exact value the binned KDE approximates.
func closedFormKDE(ages []float64, h float64, at []float64) []float64 {
	out := make([]float64, len(at))
	c := 1 / (float64(len(ages)) * h * math.Sqrt(2*math.Pi))
	for j, x := range at {
		var s float64
		for _, a := range ages {
			z := (x - a) / h
			s += math.Exp(-0.5 * z * z)
		}
		out[j] = c * s
	}
	return out
}

// TestBinnedMatchesClosedForm: the KDE on the automatic 2,048-point grid against the closed-form
// Gaussian kernel sum at the grid ages, for n = 10³…10⁶ and h = Scott's rule ×¼, ×1, ×4.
//
// The bound: linear binning replaces each kernel K(x − xᵢ) by its linear interpolant between the
// two grid ages around xᵢ, which is off by at most dx²/8·max|K”| = (dx/h)²/8·φ(0)/h (the
// interpolation error of a function with bounded second derivative; |K”| peaks at the kernel's
// centre, φ(0)/h³); EvalGrid refines the grid until dx ≤ h/16 (or sums directly). Dropping dates
// beyond the kernel's reach and the wrapped images of the circular convolution add at most
// 2·φ(8)/φ(0)·φ(0)/h, and the FFT's rounding is allowed 1e-12·φ(0)/h. So
//
//	max |f̂ − f| ≤ (min(dx/h, 1/16)²/8 + 2e^−32 + 1e-12) · φ(0)/h.
//
// The exact sum is taken at every grid age for n ≤ 10⁴ and at every ⌊2.5·10⁷/(2048·n)⌋-th age
// for larger n (its cost is n per age): 256 ages at 10⁵, 26 at 10⁶.
func TestBinnedMatchesClosedForm(t *testing.T) {
	for _, n := range []int{1_000, 10_000, 100_000, 1_000_000} {
		if testing.Short() && n > 10_000 {
			continue
		}
		ages := quantileAges(n)
		for _, scale := range []float64{0.25, 1, 4} {
			h := scale * scottMa(n)
			t.Run(fmt.Sprintf("n=%d/h=%.4g", n, h), func(t *testing.T) {
				d, err := KDE(ages, KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleUser, UserMa: h}, Grid: AgeGrid{Points: 2048}})
				if err != nil {
					t.Fatal(err)
				}
				stride := max(1, n*len(d.GridMa)/25_000_000)
				var at, got []float64
				for j := 0; j < len(d.GridMa); j += stride {
					at = append(at, d.GridMa[j])
					got = append(got, d.Density[j])
				}
				exact := closedFormKDE(ages, h, at)
				dx := d.GridMa[1] - d.GridMa[0]
				r := math.Min(dx/h, 1.0/16)
				kernelPeak := 1 / (h * math.Sqrt(2*math.Pi))
				bound := (r*r/8 + 2*math.Exp(-32) + 1e-12) * kernelPeak
				peak := slices.Max(exact)
				var worst, worstRel float64
				for j := range exact {
					e := math.Abs(got[j] - exact[j])
					worst = math.Max(worst, e)
					if exact[j] >= 1e-3*peak {
						worstRel = math.Max(worstRel, e/exact[j])
					}
				}
				if worst > bound {
					t.Errorf("max |f̂ − f| = %.3g, want ≤ %.3g ((dx/h)²/8 = %.3g of a kernel's peak, h = %.1f steps)",
						worst, bound, r*r/8, h/dx)
				}
				t.Logf("h = %.4g Ma = %.1f steps, %d ages checked: max |f̂ − f| = %.2e (%.2e of the peak %.4g; bound %.2e), max relative where f ≥ 1e-3·peak %.2e",
					h, h/dx, len(at), worst, worst/peak, peak, bound, worstRel)
			})
		}
	}
}

// TestBinnedPaddingBound checks the padding alone: with every date on a grid age, linear binning is
// exact, so the binned KDE differs from the closed-form sum only by the kernels' truncation at 8
// bandwidths and the wrapped images of the circular convolution, at most 2·e^−32·φ(0)/h, and by
// rounding (allowed 1e-13·φ(0)/h). A transform shorter than the kernel's reach lets wrapped images
// closer (at 7h one adds e^−24.5 ≈ 2e-11 of a kernel's peak), which this would catch. Dates lie
// inside the grid, beyond either end within reach, and beyond reach. On an automatic grid (dates
// 4h inside either end) the transform is at most the grid plus 4h (rounded up to a fast length).
func TestBinnedPaddingBound(t *testing.T) {
	const points = 1000
	g := AgeGrid{MinMa: 100, MaxMa: 100 + float64(points-1)*0.01, Points: points} // step 0.01 Ma
	dx := g.StepMa()
	onGrid := func(steps ...int) []float64 {
		x := make([]float64, len(steps))
		for i, s := range steps {
			x[i] = g.MinMa + float64(s)*dx
		}
		return x
	}
	for _, tt := range []struct {
		name  string
		h     float64 // in steps
		steps []int   // dates, in steps from MinMa
	}{
		{"inside", 20, []int{60, 100, 101, 500, 930}},
		{"both ends", 20, []int{0, 999, 5, 990}},
		{"beyond both ends within reach", 20, []int{-150, -20, 1010, 1150, 400}},
		{"beyond reach", 20, []int{-161, -400, 1170, 500}},
		{"wide kernel", 200, []int{-1000, 300, 1200, 2500}},
		{"one end only", 30, []int{990, 1100, 1200}},
	} {
		t.Run(tt.name, func(t *testing.T) {
			ages := onGrid(tt.steps...)
			h := tt.h * dx
			m := Mixture{AgeMa: ages, BandwidthMa: []float64{h}}
			got := make([]float64, points)
			if !m.binned(got, 1, g, float64(len(ages)), new(kdeScratch)) {
				t.Fatal("binned refused the grid")
			}
			exact := closedFormKDE(ages, h, g.AgesMa())
			kernelPeak := 1 / (h * math.Sqrt(2*math.Pi))
			bound := (2*math.Exp(-32) + 1e-13) * kernelPeak
			var worst float64
			for j := range exact {
				worst = math.Max(worst, math.Abs(got[j]-exact[j]))
			}
			if worst > bound {
				t.Errorf("max |f̂ − f| = %.3g = %.3g of a kernel's peak, want ≤ %.3g", worst, worst/kernelPeak, bound/kernelPeak)
			}
		})
	}
	// The automatic grid's transform: the grid plus 4h (not 2·8h).
	for _, n := range []int{1_000, 100_000} {
		ages := quantileAges(n)
		h := scottMa(n)
		d, err := KDE(ages, KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleUser, UserMa: h}, Grid: AgeGrid{Points: 2048}})
		if err != nil {
			t.Fatal(err)
		}
		g := AgeGrid{MinMa: d.GridMa[0], MaxMa: d.GridMa[len(d.GridMa)-1], Points: len(d.GridMa)}
		lay, ok := Mixture{AgeMa: ages, BandwidthMa: []float64{h}}.binLayout(g, new(kdeScratch))
		if !ok {
			t.Fatal("binLayout refused the grid")
		}
		if want := fastFFTLen(g.Points + int(math.Ceil(4*h/g.StepMa())) + 2); lay.size > want {
			t.Errorf("n = %d: padded length %d for %d points and h = %.1f steps, want ≤ %d", n, lay.size, g.Points, h/g.StepMa(), want)
		}
	}
}
