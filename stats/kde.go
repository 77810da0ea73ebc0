package stats

import (
	"fmt"
	"math"
	"slices"
	"sync"

	"coeval/stats/internal/rfft"
)

// DefaultGridPoints is the number of grid points used when an AgeGrid leaves Points zero.
const DefaultGridPoints = 512

// autoPadBandwidths is how many (largest) bandwidths an automatic grid extends beyond the dates.
const autoPadBandwidths = 4

// binnedCutoff is the kernel's reach in bandwidths in the binned KDE: the transform is padded so
// that no wrapped image of a kernel comes nearer than this to a grid age, and dates farther than
// this outside the grid are left out. φ(8)/φ(0) = e^−32 ≈ 1.3e-14, so either changes the density
// by at most 1.3e-14·φ(0)/h, φ(0)/h being the peak of one kernel (TestBinnedPaddingBound).
const binnedCutoff = 8

// gridExactCutoff is the kernel's reach in bandwidths when a grid is evaluated term by term;
// φ(12)/φ(0) ≈ 5e-32, far below the rounding of any sum it joins.
const gridExactCutoff = 12

// minBinnedSteps is the smallest bandwidth, in steps of the (refined) grid, at which EvalGrid
// bins. Linear binning's error relative to the peak falls as (step/h)²; from 16 steps on it
// measured at most 1e-4 of the peak in TestBinnedMatchesExact.
const minBinnedSteps = 16

// maxRefine bounds the refinement of the grid for binning; past it EvalGrid sums directly,
// which is then cheap because each kernel covers few grid ages.
const maxRefine = 64

// maxDirectCost is the number of kernel terms up to which EvalGrid sums directly (exact to
// rounding) rather than binning: about 0.1–0.2 ms, where binning costs about as much.
const maxDirectCost = 1 << 13

// maxBinnedLen bounds the padded grid of the binned KDE (bandwidths far wider than the grid).
const maxBinnedLen = 1 << 22

// DensityKind says what a Density estimates.
type DensityKind int

const (
	// KindKDE is a Gaussian kernel density estimate with one bandwidth for all dates.
	KindKDE DensityKind = iota + 1
	// KindAdaptiveKDE is a Gaussian KDE with Abramson's per-date bandwidths.
	KindAdaptiveKDE
	// KindPDP is a probability density plot: each date spread by its own σ. It is not a KDE.
	KindPDP
)

// String returns "kde", "adaptive-kde" or "pdp".
func (k DensityKind) String() string {
	switch k {
	case KindKDE:
		return "kde"
	case KindAdaptiveKDE:
		return "adaptive-kde"
	case KindPDP:
		return "pdp"
	}
	return fmt.Sprintf("DensityKind(%d)", int(k))
}

// Density is a density of dates evaluated on a regular grid of ages.
type Density struct {
	GridMa []float64 // ascending ages (younger first), equally spaced
	// Density is per Ma, one value per grid age. Over a grid that covers all kernels it integrates
	// to 1; over a narrower window, to the weighted share of the kernels inside it.
	Density []float64
	// BandwidthMa is the fixed bandwidth of a KDE, the pilot bandwidth of an adaptive KDE, and 0
	// for a PDP.
	BandwidthMa float64
	// PointBandwidthsMa holds the per-date kernel widths (Abramson hᵢ, or σᵢ of a PDP) in the
	// order of the input dates; nil for a fixed-bandwidth KDE.
	PointBandwidthsMa []float64
	Rule              BandwidthRule // rule that produced BandwidthMa; 0 for a PDP
	Kind              DensityKind
	// Note is empty or says, fit for display, what fell back and why (see SelectBandwidth), or
	// carries PDPCaution for a PDP.
	Note string
}

// AgeGrid is a regular grid of Points ages from MinMa to MaxMa inclusive.
type AgeGrid struct {
	MinMa, MaxMa float64
	Points       int
}

// StepMa returns the grid spacing.
func (g AgeGrid) StepMa() float64 { return (g.MaxMa - g.MinMa) / float64(g.Points-1) }

// AgesMa returns the grid's ages, ascending, in a new slice.
func (g AgeGrid) AgesMa() []float64 {
	x := make([]float64, g.Points)
	dx := g.StepMa()
	for i := range x {
		x[i] = g.MinMa + float64(i)*dx
	}
	x[len(x)-1] = g.MaxMa
	return x
}

func (g AgeGrid) validate() error {
	if g.Points < 2 {
		return fmt.Errorf("age grid: %d points, want at least 2", g.Points)
	}
	if math.IsNaN(g.MinMa) || math.IsInf(g.MinMa, 0) || math.IsNaN(g.MaxMa) || math.IsInf(g.MaxMa, 0) || !(g.MinMa < g.MaxMa) ||
		math.IsInf(g.MaxMa-g.MinMa, 0) {
		return fmt.Errorf("age grid [%g, %g] Ma: want finite bounds with min < max", g.MinMa, g.MaxMa)
	}
	return nil
}

// resolve fills an automatic grid: a zero window becomes [lo − pad, hi + pad], zero Points
// becomes DefaultGridPoints.
func (g AgeGrid) resolve(loMa, hiMa, padMa float64) (AgeGrid, error) {
	if g.Points == 0 {
		g.Points = DefaultGridPoints
	}
	if g.MinMa == 0 && g.MaxMa == 0 {
		g.MinMa, g.MaxMa = loMa-padMa, hiMa+padMa
	}
	return g, g.validate()
}

// Mixture is a weighted sum of Gaussian kernels, one per date:
//
//	f(x) = Σ wᵢ·φ((x − AgeMaᵢ)/hᵢ)/hᵢ / Σ wᵢ.
//
// It is a fixed-bandwidth KDE when BandwidthMa has one value, an adaptive KDE when it has one
// per date, and a PDP when BandwidthMa holds each date's 1σ. Weight nil means equal weights;
// otherwise weights are ≥ 0 with a positive finite sum (e.g. eruptive volumes of units), and f
// still integrates to 1.
type Mixture struct {
	AgeMa       []float64
	BandwidthMa []float64 // one shared value, or one per date; finite and > 0
	Weight      []float64 // nil or one per date
}

func (m Mixture) validate() (sumW float64, err error) {
	n := len(m.AgeMa)
	if n == 0 {
		return 0, ErrNoDates
	}
	if err := checkAges(m.AgeMa); err != nil {
		return 0, err
	}
	if len(m.BandwidthMa) != 1 && len(m.BandwidthMa) != n {
		return 0, fmt.Errorf("%d bandwidths for %d dates: want 1 or %d", len(m.BandwidthMa), n, n)
	}
	for i, h := range m.BandwidthMa {
		if !(h > 0) || math.IsInf(h, 0) {
			return 0, fmt.Errorf("bandwidth %d is %g Ma: want finite and > 0", i, h)
		}
	}
	if m.Weight == nil {
		return float64(n), nil
	}
	if len(m.Weight) != n {
		return 0, fmt.Errorf("%d weights for %d dates", len(m.Weight), n)
	}
	for i, w := range m.Weight {
		if !(w >= 0) || math.IsInf(w, 0) {
			return 0, fmt.Errorf("weight %d is %g: want finite and ≥ 0", i, w)
		}
		sumW += w
	}
	if !(sumW > 0) || math.IsInf(sumW, 0) {
		return 0, fmt.Errorf("weights sum to %g: want a finite positive sum", sumW)
	}
	return sumW, nil
}

func (m Mixture) weight(i int) float64 {
	if m.Weight == nil {
		return 1
	}
	return m.Weight[i]
}

func (m Mixture) bandwidth(i int) float64 {
	if len(m.BandwidthMa) == 1 {
		return m.BandwidthMa[0]
	}
	return m.BandwidthMa[i]
}

// invSqrt2Pi is 1/√(2π).
const invSqrt2Pi = 0.3989422804014327

// Eval returns f at each age of atMa, summing every kernel (O(n·len(atMa))). It returns an error
// for an invalid mixture (see Mixture) or a non-finite point.
func (m Mixture) Eval(atMa []float64) ([]float64, error) {
	sumW, err := m.validate()
	if err != nil {
		return nil, fmt.Errorf("evaluate density: %w", err)
	}
	for _, x := range atMa {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return nil, fmt.Errorf("evaluate density: point %v: %w", x, ErrNonFinite)
		}
	}
	n := len(m.AgeMa)
	inv := make([]float64, n)
	coef := make([]float64, n)
	for i := range n {
		h := m.bandwidth(i)
		inv[i] = 1 / h
		coef[i] = m.weight(i) * invSqrt2Pi / (h * sumW)
	}
	out := make([]float64, len(atMa))
	for j, x := range atMa {
		var s float64
		for i, mu := range m.AgeMa {
			z := (x - mu) * inv[i]
			s += coef[i] * math.Exp(-0.5*z*z)
		}
		out[j] = s
	}
	return out, nil
}

// EvalGrid returns f on the grid g. When that costs at most 8192 kernel terms, or the
// bandwidths differ between dates, it sums each kernel over the grid ages within 12 bandwidths of
// its date (exact to rounding). Otherwise it bins the dates linearly onto the grid (refined, when
// needed, so that h spans at least 16 steps) and convolves with the sampled kernel by an FFT padded
// only as far as the kernel reaches (no wrapped image within 8 bandwidths of a grid age), which
// agrees with Eval to about 1e-4 of the peak (at most (dx/h)²/8 of one kernel's peak:
// TestBinnedMatchesClosedForm). Dates far outside the grid still count in Σwᵢ, so a window shows
// its share of the density.
func (m Mixture) EvalGrid(g AgeGrid) ([]float64, error) {
	sumW, err := m.validate()
	if err != nil {
		return nil, fmt.Errorf("evaluate density on grid: %w", err)
	}
	if err := g.validate(); err != nil {
		return nil, fmt.Errorf("evaluate density on grid: %w", err)
	}
	out := make([]float64, g.Points)
	sc := scratchPool.Get().(*kdeScratch)
	m.evalGrid(out, g, sumW, sc)
	if cap(sc.bins) <= maxPooledBins {
		scratchPool.Put(sc)
	}
	return out, nil
}

// evalGrid is EvalGrid into dst (len g.Points) for a validated mixture and grid, with the FFT plans
// and buffers of sc.
func (m Mixture) evalGrid(dst []float64, g AgeGrid, sumW float64, sc *kdeScratch) {
	if len(m.BandwidthMa) == 1 && m.directCost(g) > maxDirectCost && m.refinedBinned(dst, g, sumW, sc) {
		return
	}
	m.gridDirect(dst, g, sumW)
}

// kdeScratch is what repeated binned KDEs reuse: an FFT plan per padded length, the buffer, and
// the kernel's spectrum per padded length for the last bandwidth and step there. The results are the same
// as with fresh ones (a plan's twiddle factors depend on the length alone). Not safe for concurrent
// use: one per goroutine. The zero value is ready.
type kdeScratch struct {
	plans   map[int]*rfft.Plan
	bins    []float64
	kernels map[int]*kernelSpectrum
}

// maxScratchLengths bounds the padded lengths a kdeScratch keeps plans and spectra for; past it
// they are dropped and made afresh.
const maxScratchLengths = 8

// maxPooledBins is the longest buffer EvalGrid keeps in its pool of scratches.
const maxPooledBins = 1 << 17

// scratchPool holds the scratches of EvalGrid, so that repeated densities on the same grid do not
// compute their FFT plans and kernel spectra again.
var scratchPool = sync.Pool{New: func() any { return new(kdeScratch) }}

// plan returns the FFT plan for size, a length fastFFTLen gave.
func (sc *kdeScratch) plan(size int) *rfft.Plan {
	if p, ok := sc.plans[size]; ok {
		return p
	}
	if sc.plans == nil || len(sc.plans) >= maxScratchLengths {
		sc.plans = map[int]*rfft.Plan{}
	}
	p, err := rfft.New(size)
	if err != nil {
		panic(err) // fastFFTLen has only the factors 2, 3 and 5
	}
	sc.plans[size] = p
	return p
}

// kernelSpectrum returns exp(−½(hθ_k/dx)²) for θ_k = 2πk/size, k = 0..size/2.
func (sc *kdeScratch) kernelSpectrum(h, dx float64, size int) []float64 {
	e, ok := sc.kernels[size]
	if ok && e.h == h && e.dx == dx {
		return e.k
	}
	if !ok {
		if sc.kernels == nil || len(sc.kernels) >= maxScratchLengths {
			sc.kernels = map[int]*kernelSpectrum{}
		}
		e = &kernelSpectrum{k: make([]float64, size/2+1)}
		sc.kernels[size] = e
	}
	e.h, e.dx = h, dx
	a := 2 * math.Pi * h / (dx * float64(size))
	for i := range e.k {
		z := a * float64(i)
		e.k[i] = math.Exp(-0.5 * z * z)
	}
	return e.k
}

// kernelSpectrum is the kernel's spectrum for one padded length: k[i] = exp(−½(2πhi/(dx·len))²).
type kernelSpectrum struct {
	h, dx float64
	k     []float64
}

// ageSpan returns the smallest and largest of the finite, non-empty agesMa in one pass with plain
// comparisons (slices.Min and slices.Max also look for NaN, which checkAges has ruled out).
func ageSpan(agesMa []float64) (lo, hi float64) {
	lo, hi = agesMa[0], agesMa[0]
	for _, x := range agesMa[1:] {
		if x < lo {
			lo = x
		}
		if x > hi {
			hi = x
		}
	}
	return lo, hi
}

// resize returns s with length n, reusing its array when it is large enough; the contents are not
// cleared.
func resize[T any](s []T, n int) []T {
	if cap(s) < n {
		return make([]T, n)
	}
	return s[:n]
}

// directCost is the number of kernel terms gridDirect would evaluate (an upper bound).
func (m Mixture) directCost(g AgeGrid) float64 {
	reach := 2*gridExactCutoff*slices.Max(m.BandwidthMa)/g.StepMa() + 1
	return float64(len(m.AgeMa)) * math.Min(reach, float64(g.Points))
}

// refinedBinned bins on a grid refined so that h spans at least minBinnedSteps steps and writes
// every refine-th value to dst (len g.Points). It reports false, leaving dst as it was, when the
// refined grid would be too long.
func (m Mixture) refinedBinned(dst []float64, g AgeGrid, sumW float64, sc *kdeScratch) bool {
	refine := max(int(math.Ceil(minBinnedSteps*g.StepMa()/m.BandwidthMa[0])), 1)
	if refine > maxRefine || (g.Points-1)*refine >= maxBinnedLen {
		return false
	}
	fine := AgeGrid{MinMa: g.MinMa, MaxMa: g.MaxMa, Points: (g.Points-1)*refine + 1}
	return m.binned(dst, refine, fine, sumW, sc)
}

// gridDirect sets dst (len g.Points) to the sum of each kernel over the grid points within
// gridExactCutoff bandwidths.
func (m Mixture) gridDirect(dst []float64, g AgeGrid, sumW float64) {
	clear(dst)
	dx := g.StepMa()
	for i, mu := range m.AgeMa {
		w := m.weight(i)
		if w == 0 {
			continue
		}
		h := m.bandwidth(i)
		lo := math.Ceil((mu - gridExactCutoff*h - g.MinMa) / dx)
		hi := math.Floor((mu + gridExactCutoff*h - g.MinMa) / dx)
		if hi < 0 || lo > float64(g.Points-1) {
			continue
		}
		j0, j1 := int(math.Max(lo, 0)), int(math.Min(hi, float64(g.Points-1)))
		c := w * invSqrt2Pi / (h * sumW)
		inv := 1 / h
		for j := j0; j <= j1; j++ {
			z := (g.MinMa + float64(j)*dx - mu) * inv
			dst[j] += c * math.Exp(-0.5*z*z)
		}
	}
}

// binned is the linear-binning + FFT convolution KDE for one shared bandwidth, which must span
// at least 4 grid steps (refinedBinned ensures 16). It writes the density at every stride-th point
// of g to dst (len(dst) = (g.Points−1)/stride + 1). It reports false, leaving dst as it was, when the
// padded grid would be unreasonably long (bandwidth ≫ grid span).
//
// The kernel's spectrum is taken in closed form: by Poisson summation the DFT of the Gaussian
// sampled at step dx is exp(−½(hθ/dx)²)/dx plus aliases of relative size exp(−2π²(h/dx)²), which
// vanish in float64 for h ≥ 4dx. The transform is only as long as the kernel's reach (binnedCutoff
// bandwidths) requires: see binLayout.
func (m Mixture) binned(dst []float64, stride int, g AgeGrid, sumW float64, sc *kdeScratch) bool {
	lay, ok := m.binLayout(g, sc)
	if !ok {
		return false
	}
	h := m.BandwidthMa[0]
	dx := g.StepMa()
	size := lay.size
	bins := sc.bins[:size]
	// A real FFT (gonum's FFTPACK, transcribed in rfft), the kernel's spectrum applied to the packed
	// coefficients as the complex products gonum's fourier.FFT would form, and the inverse.
	fft := sc.plan(size)
	fft.Forward(bins)
	// The 1/size undoes the unnormalised inverse transform.
	c := 1 / (dx * sumW * float64(size))
	kernel := sc.kernelSpectrum(h, dx, size)
	bins[0] = real(complex(bins[0], 0) * complex(c*kernel[0], 0))
	for k := 1; 2*k < size; k++ {
		v := complex(bins[2*k-1], bins[2*k]) * complex(c*kernel[k], 0)
		bins[2*k-1], bins[2*k] = real(v), imag(v)
	}
	if size%2 == 0 {
		bins[size-1] = real(complex(bins[size-1], 0) * complex(c*kernel[size/2], 0))
	}
	fft.Backward(bins)
	for j := range dst {
		dst[j] = max(bins[j*stride+lay.first], 0) // FFT rounding can dip below zero in the far tails
	}
	return true
}

// binnedLayout says where binLayout put the binned weights: sc.bins[:size] holds them, and grid
// age j is at index first + j.
type binnedLayout struct {
	size, first int
}

// binLayout bins the dates linearly onto g, extended by the kernel's reach l = ⌈binnedCutoff·h/dx⌉
// steps on both sides (a date farther out is more than binnedCutoff bandwidths from every grid age),
// into sc.bins, and chooses the length of the circular convolution.
//
// Only the occupied bins and the grid need room: with the occupied bins a…b and the grid ages
// 0…P−1 (in steps from MinMa), a weight and a grid age lie at most D = max(P−1−a, b) steps apart,
// so with a length N ≥ D + l every wrapped image of the kernel lies at least l steps, binnedCutoff
// bandwidths, away (φ(8)/φ(0) = e^−32 ≈ 1.3e-14). On the automatic grid, whose ends lie 4h beyond
// the dates, that is about P + 4h/dx rather than P + 2l. It reports false when the length would be
// unreasonably long (bandwidth ≫ grid span).
func (m Mixture) binLayout(g AgeGrid, sc *kdeScratch) (binnedLayout, bool) {
	h := m.BandwidthMa[0]
	dx := g.StepMa()
	lf := math.Ceil(binnedCutoff * h / dx)
	if lf > maxBinnedLen {
		return binnedLayout{}, false
	}
	l := int(lf)
	inner := g.Points + 2*l // grid padded by the kernel's reach on both sides
	if inner > maxBinnedLen {
		return binnedLayout{}, false
	}
	// The transform's length is at most fastFFTLen(inner) (see below): room for it up front.
	sc.bins = resize(sc.bins, max(fastFFTLen(inner), inner+1))
	// bins[inner] takes the zero share of a date exactly at the last bin, so no date needs a branch.
	bins := sc.bins[:inner+1]
	clear(bins)
	origin := g.MinMa - float64(l)*dx
	inv := 1 / dx
	last := float64(inner - 1)
	if m.Weight == nil {
		for _, x := range m.AgeMa {
			pos := (x - origin) * inv
			if !(pos >= 0 && pos <= last) {
				continue // beyond the reach of every grid point
			}
			j := int(pos)
			frac := pos - float64(j)
			bins[j] += 1 - frac
			bins[j+1] += frac
		}
	} else {
		for i, x := range m.AgeMa {
			pos := (x - origin) * inv
			if !(pos >= 0 && pos <= last) {
				continue
			}
			w := m.Weight[i]
			j := int(pos)
			frac := pos - float64(j)
			bins[j] += w * (1 - frac)
			bins[j+1] += w * frac
		}
	}
	// The occupied bins a…b (weights are ≥ 0, so a bin holding weight is not 0).
	a, b := 0, inner-1
	for a < inner && bins[a] == 0 {
		a++
	}
	for b > a && bins[b] == 0 {
		b--
	}
	if a == inner { // no weight within reach: the density is 0 on the grid
		a, b = l, l
	}
	// Keep the occupied bins and the grid: indices lo…hi of bins (the grid is l…l+P−1).
	lo, hi := min(a, l), max(b, l+g.Points-1)
	d := max(l+g.Points-1-a, b-l)
	size := fastFFTLen(max(hi-lo+1, d+l)) // both ≤ inner, as d ≤ inner − 1 − l

	if lo > 0 {
		copy(bins, bins[lo:hi+1])
	}
	clear(sc.bins[hi-lo+1 : size])
	return binnedLayout{size: size, first: l - lo}, true
}

// fastFFTLen returns the smallest n' ≥ n of the form 2^a·3^b·5^c, a length FFTPACK handles fast.
func fastFFTLen(n int) int {
	best := math.MaxInt
	for p5 := 1; p5 < best; p5 *= 5 {
		for p35 := p5; p35 < best; p35 *= 3 {
			p := p35
			for p < n {
				p *= 2
			}
			best = min(best, p)
			if p35 >= n {
				break
			}
		}
		if p5 >= n {
			break
		}
	}
	return best
}

// KDEOptions configures KDE.
type KDEOptions struct {
	Bandwidth BandwidthOptions
	// Adaptive uses Abramson's per-date bandwidths with the chosen bandwidth as the pilot.
	Adaptive bool
	// Weight is nil for equal weights or one weight ≥ 0 per date (e.g. eruptive volume of each
	// unit). Weights shape the density, not the bandwidth rule.
	Weight []float64
	// Grid is the age window. MinMa = MaxMa = 0 means the dates' range padded by 4 of the
	// largest bandwidth; Points = 0 means DefaultGridPoints.
	Grid AgeGrid
}

// KDE returns the Gaussian kernel density estimate of agesMa on a grid. A bandwidth rule that
// cannot apply falls back as SelectBandwidth describes, and the Density's Note says so. KDE
// returns an error for no dates, a non-finite age, bad weights, or a bad grid or bandwidth option.
func KDE(agesMa []float64, opts KDEOptions) (Density, error) {
	if opts.Weight != nil && len(opts.Weight) != len(agesMa) {
		return Density{}, fmt.Errorf("kde: %d weights for %d dates", len(opts.Weight), len(agesMa))
	}
	bw, err := SelectBandwidth(agesMa, opts.Bandwidth)
	if err != nil {
		return Density{}, fmt.Errorf("kde: %w", err)
	}
	return kdeWithBandwidth(agesMa, opts, bw, nil)
}

// kdeWithBandwidth builds the KDE for a chosen bandwidth; fixedGrid, when non-nil, overrides
// opts.Grid (the bootstrap keeps one grid for every replicate).
func kdeWithBandwidth(agesMa []float64, opts KDEOptions, bw Bandwidth, fixedGrid *AgeGrid) (Density, error) {
	d := Density{BandwidthMa: bw.Ma, Rule: bw.Rule, Kind: KindKDE, Note: bw.Note}
	m := Mixture{AgeMa: agesMa, BandwidthMa: []float64{bw.Ma}, Weight: opts.Weight}
	hMax := bw.Ma
	if opts.Adaptive {
		hs, _, err := AbramsonBandwidthsMa(agesMa, opts.Weight, bw.Ma)
		if err != nil {
			return Density{}, fmt.Errorf("kde: %w", err)
		}
		m.BandwidthMa = hs
		d.PointBandwidthsMa = hs
		d.Kind = KindAdaptiveKDE
		hMax = slices.Max(hs)
	}
	g := opts.Grid
	if fixedGrid != nil {
		g = *fixedGrid
	}
	lo, hi := ageSpan(agesMa)
	g, err := g.resolve(lo, hi, autoPadBandwidths*hMax)
	if err != nil {
		return Density{}, fmt.Errorf("kde: %w", err)
	}
	dens, err := m.EvalGrid(g)
	if err != nil {
		return Density{}, fmt.Errorf("kde: %w", err)
	}
	d.GridMa, d.Density = g.AgesMa(), dens
	return d, nil
}
