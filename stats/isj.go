package stats

import (
	"fmt"
	"math"
	"math/bits"

	"gonum.org/v1/gonum/dsp/fourier"
)

// DefaultISJGridPoints is the ISJ grid size used when ISJBandwidth is given 0.
const DefaultISJGridPoints = 1 << 14

// ISJResult is the outcome of ISJBandwidth.
type ISJResult struct {
	BandwidthMa float64 // √TStar·(GridMaxMa − GridMinMa)
	// TStar is the root of ζ(t) in the unit of the squared grid span (the data scaled to [0, 1]).
	TStar       float64
	GridMinMa   float64 // min − range/10
	GridMaxMa   float64 // max + range/10
	GridPoints  int
	Distinct    int // N: the number of distinct ages, as the fixed point uses it
	Evaluations int // evaluations of ζ spent on the root
}

// ISJBandwidth returns the diffusion bandwidth of Botev, Grotowski & Kroese (2010, Ann. Stat.
// 38:2916) with these conventions: a grid of gridPoints (0 means DefaultISJGridPoints) ages over
// [min − range/10, max + range/10]; the ages counted into the cells [x_j, x_{j+1}) of that grid
// (the last grid age holds only ages equal to it) and divided by their total to proportions p_j;
// the DCT-II a_k = 2Σ p_j cos(πk(2j+1)/(2n)); ‖f⁽ˢ⁾‖² ≈ 2π^(2s) Σ_{k≥1} k^(2s)(a_k/2)² e^(−k²π²τ);
// the fixed-point function ζ(t) = t − (2N√π‖f″‖²)^(−2/5), the norms iterated from s = 7 down to
// 2 with τ_s = (2c_s K0_s/(N‖f⁽ˢ⁺¹⁾‖²))^(2/(3+2s)), K0_s = (2s−1)!!/√(2π),
// c_s = (1 + 2^(−(s+½)))/3; N the number of distinct ages; t* the smallest root of ζ on [0, 0.1],
// bracketed by a scan of t = 0.1·2^(−j) and refined by Brent's method; h = √t*·(grid span).
//
// It returns an error wrapping ErrNoRoot when ζ does not change sign on [0, 0.1] (usual for
// n ≲ 20: callers fall back, as SelectBandwidth does), and other errors for no dates, non-finite
// ages, fewer than two distinct ages or fewer than 16 grid points.
func ISJBandwidth(agesMa []float64, gridPoints int) (ISJResult, error) {
	if gridPoints == 0 {
		gridPoints = DefaultISJGridPoints
	}
	if gridPoints < 16 {
		return ISJResult{}, fmt.Errorf("isj: %d grid points, want at least 16", gridPoints)
	}
	if err := checkAges(agesMa); err != nil {
		return ISJResult{}, fmt.Errorf("isj: %w", err)
	}
	lo, hi := ageSpan(agesMa)
	r := hi - lo
	if math.IsInf(r, 0) {
		return ISJResult{}, fmt.Errorf("isj: the dates span more than the float64 range")
	}
	distinct := countDistinct(agesMa)
	if distinct < 2 {
		return ISJResult{}, fmt.Errorf("isj: %w", ErrNoSpread)
	}
	res := ISJResult{GridMinMa: lo - r/10, GridMaxMa: hi + r/10, GridPoints: gridPoints, Distinct: distinct}
	span := res.GridMaxMa - res.GridMinMa
	if math.IsInf(span, 0) || !(span > 0) {
		return ISJResult{}, fmt.Errorf("isj: the padded grid spans more than the float64 range")
	}

	p := isjHistogram(agesMa, res.GridMinMa, span, gridPoints)
	a := dct2(p)
	z := newISJZeta(a, float64(distinct))

	t, evals, err := z.root()
	res.Evaluations = evals
	if err != nil {
		return res, fmt.Errorf("isj: %w", err)
	}
	res.TStar = t
	res.BandwidthMa = math.Sqrt(t) * span
	return res, nil
}

// isjHistogram counts ages into the cells [x_j, x_{j+1}) of a grid of n ages starting at lo
// with span span and returns proportions.
func isjHistogram(ages []float64, lo, span float64, n int) []float64 {
	p := make([]float64, n)
	dx := span / float64(n-1)
	for _, x := range ages {
		j := int(math.Floor((x - lo) / dx))
		j = max(0, min(j, n-1))
		p[j]++
	}
	total := float64(len(ages))
	for j := range p {
		p[j] /= total
	}
	return p
}

// countDistinct counts the distinct values of x (no NaN; 0 and −0 are one value) with an
// open-addressing hash set, in O(n) where a sort would cost O(n log n).
func countDistinct(x []float64) int {
	size := 16
	for size < 2*len(x) {
		size <<= 1
	}
	shift := 64 - bits.TrailingZeros(uint(size))
	table := make([]uint64, size)
	used := make([]bool, size)
	count := 0
	for _, v := range x {
		if v == 0 {
			v = 0 // folds −0 into +0
		}
		key := math.Float64bits(v)
		i := int((key * 0x9E3779B97F4A7C15) >> shift)
		for used[i] && table[i] != key {
			i = (i + 1) & (size - 1)
		}
		if !used[i] {
			used[i], table[i] = true, key
			count++
		}
	}
	return count
}

// dct2 returns a_k = 2Σ_j p_j cos(πk(2j+1)/(2n)), k = 0..n−1. FFTPACK's backward quarter-wave
// cosine transform computes 4Σ_j p_j cos(πk(2j+1)/(2n)).
func dct2(p []float64) []float64 {
	q := fourier.NewQuarterWaveFFT(len(p))
	a := q.CosSequence(nil, p)
	for k := range a {
		a[k] *= 0.5
	}
	return a
}

// isjZeta holds what ζ(t) needs: for k = 1..n−1, k² and (a_k/2)²·k^(2s) for s = 2..7.
type isjZeta struct {
	k2    []float64
	terms [8][]float64 // terms[s][k−1] = k^(2s)·(a_k/2)²
	n     float64      // N, distinct ages
}

func newISJZeta(a []float64, distinct float64) *isjZeta {
	m := len(a) - 1
	z := &isjZeta{k2: make([]float64, m), n: distinct}
	for s := 2; s <= 7; s++ {
		z.terms[s] = make([]float64, m)
	}
	for i := range m {
		k := float64(i + 1)
		k2 := k * k
		z.k2[i] = k2
		v := (a[i+1] / 2) * (a[i+1] / 2) * k2 * k2 // s = 2
		z.terms[2][i] = v
		for s := 3; s <= 7; s++ {
			v *= k2
			z.terms[s][i] = v
		}
	}
	return z
}

// normSq returns 2π^(2s) Σ_k k^(2s)(a_k/2)² e^(−k²π²τ). The exponentials come from the
// recurrence e_{k+1} = e_k·e^(−(2k+1)c), re-anchored with math.Exp every 64 terms, and stop where
// e^(−k²c) underflows.
func (z *isjZeta) normSq(s int, tau float64) float64 {
	c := math.Pi * math.Pi * tau
	terms := z.terms[s]
	kMax := len(terms)
	if c > 0 {
		if lim := math.Sqrt(745 / c); lim < float64(kMax) {
			kMax = int(lim)
		}
	}
	e2c := math.Exp(-2 * c)
	var sum, e, r float64
	for i := 0; i < kMax; i++ {
		k := float64(i + 1)
		if i%64 == 0 {
			e = math.Exp(-k * k * c)
			r = math.Exp(-(2*k + 1) * c)
		}
		sum += terms[i] * e
		e *= r
		r *= e2c
	}
	return 2 * math.Pow(math.Pi, float64(2*s)) * sum
}

// zeta is ζ(t) = t − (2N√π‖f″‖²)^(−2/5) with ‖f″‖² from the s = 7…2 fixed-point chain.
func (z *isjZeta) zeta(t float64) float64 {
	f := z.normSq(7, t)
	for s := 6; s >= 2; s-- {
		k0 := 1.0
		for j := 1; j <= 2*s-1; j += 2 {
			k0 *= float64(j)
		}
		k0 /= math.Sqrt(2 * math.Pi)
		cs := (1 + math.Pow(2, -(float64(s)+0.5))) / 3
		tau := math.Pow(2*cs*k0/(z.n*f), 2/(3+2*float64(s)))
		f = z.normSq(s, tau)
	}
	return t - math.Pow(2*z.n*math.Sqrt(math.Pi)*f, -0.4)
}

// root brackets the smallest sign change of ζ on [0, 0.1] by scanning t = 0.1·2^(−j),
// j = 40…0, then refines it by Brent's method.
func (z *isjZeta) root() (t float64, evals int, err error) {
	f0 := z.zeta(0)
	evals++
	if math.IsNaN(f0) {
		return 0, evals, ErrNoRoot
	}
	if f0 == 0 {
		return 0, evals, ErrNoRoot // h = 0 is no bandwidth
	}
	a, fa := 0.0, f0
	for j := 40; j >= 0; j-- {
		b := 0.1 * math.Ldexp(1, -j)
		fb := z.zeta(b)
		evals++
		if math.IsNaN(fb) {
			return 0, evals, ErrNoRoot
		}
		if (fa < 0) != (fb < 0) || fb == 0 {
			t, n := brent(z.zeta, a, b, fa, fb)
			return t, evals + n, nil
		}
		a, fa = b, fb
	}
	return 0, evals, ErrNoRoot
}

// brent finds a root of f in [a, b] where f(a) and f(b) differ in sign (Brent 1973, "zeroin"),
// to an absolute tolerance of 4·ε·|t| + 1e-300. It returns the root and the evaluations used.
func brent(f func(float64) float64, a, b, fa, fb float64) (float64, int) {
	evals := 0
	if fb == 0 {
		return b, evals
	}
	c, fc := a, fa
	d := b - a
	e := d
	for iter := 0; iter < 200; iter++ {
		if (fb > 0) == (fc > 0) {
			c, fc = a, fa
			d = b - a
			e = d
		}
		if math.Abs(fc) < math.Abs(fb) {
			a, b, c = b, c, b
			fa, fb, fc = fb, fc, fb
		}
		tol := 4*2.220446049250313e-16*math.Abs(b) + 1e-300
		m := 0.5 * (c - b)
		if math.Abs(m) <= tol || fb == 0 {
			return b, evals
		}
		if math.Abs(e) >= tol && math.Abs(fa) > math.Abs(fb) {
			var p, q float64
			s := fb / fa
			if a == c {
				p = 2 * m * s
				q = 1 - s
			} else {
				q0 := fa / fc
				r := fb / fc
				p = s * (2*m*q0*(q0-r) - (b-a)*(r-1))
				q = (q0 - 1) * (r - 1) * (s - 1)
			}
			if p > 0 {
				q = -q
			} else {
				p = -p
			}
			if 2*p < math.Min(3*m*q-math.Abs(tol*q), math.Abs(e*q)) {
				e = d
				d = p / q
			} else {
				d = m
				e = d
			}
		} else {
			d = m
			e = d
		}
		a, fa = b, fb
		if math.Abs(d) > tol {
			b += d
		} else if m > 0 {
			b += tol
		} else {
			b -= tol
		}
		fb = f(b)
		evals++
	}
	return b, evals
}
