package stats

import (
	"fmt"
	"math"
	"testing"
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
func BenchmarkKDEOn2048(b *testing.B) {
	for _, n := range []int{1_000, 10_000, 100_000, 1_000_000} {
		b.Run(fmt.Sprintf("n=%d", n), func(b *testing.B) {
			ages := quantileAges(n)
			opts := KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleUser, UserMa: scottMa(n)}, Grid: AgeGrid{Points: 2048}}
			for b.Loop() {
				if _, err := KDE(ages, opts); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
