package stats

import (
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"sync"
)

// DefaultBootstrapReplicates is the number of replicates used when BandOptions leaves it zero.
const DefaultBootstrapReplicates = 1000

// BandOptions configures BootstrapBand.
type BandOptions struct {
	// KDE is the density to bootstrap: rule, adaptive or not, weights (resampled with their
	// dates) and grid. The grid of the reference density is kept for every replicate.
	KDE KDEOptions
	// Replicates is the number of bootstrap replicates; 0 means DefaultBootstrapReplicates.
	Replicates int
	// Seed seeds the replicates: replicate r draws from PCG(Seed, r), so a result depends only
	// on the inputs and Seed, not on scheduling.
	Seed uint64
	// ReestimateBandwidth applies the rule afresh to every replicate; false keeps the reference
	// bandwidth (for an adaptive KDE, the reference pilot; the per-date hᵢ are recomputed).
	ReestimateBandwidth bool
	// Shared are systematic components that some dates carry (Carries indexed like the dates): each is
	// drawn once per replicate, from the stream SharedComponent draws use with Seed, and moves every
	// resampled date that carries it together. Their terms must not also be in sigmaMa, which is then
	// each date's random part: a shared λ or tracer moves a whole density, it does not spread it.
	Shared []SharedComponent
	// Stop, when set, is asked before every replicate; a non-nil error ends the band with that error
	// (an abandoned request: pass its context's Err).
	Stop func() error
}

// DensityBand is a bootstrap band around a KDE.
type DensityBand struct {
	Reference Density   // KDE of the dates as given
	GridMa    []float64 // = Reference.GridMa
	// Lower, Median and Upper are the pointwise 2.5, 50 and 97.5 % (Hyndman & Fan type 7) of
	// the replicate densities, per Ma.
	Lower, Median, Upper []float64
	// Replicates holds each replicate's density on GridMa (Replicates[r][j]); BandwidthsMa each
	// replicate's bandwidth (its pilot, if adaptive).
	Replicates   [][]float64
	BandwidthsMa []float64
	// Fallbacks counts replicates whose rule fell back (only with ReestimateBandwidth).
	Fallbacks           int
	Seed                uint64
	ReestimateBandwidth bool
}

// BootstrapBand resamples the dates with replacement (n out of n, weights travelling with their
// dates), moves each resampled age by a normal draw of its own 1σ from sigmaMa (nil: no move),
// and recomputes the KDE on the reference grid, opts.Replicates times. It returns the pointwise
// 2.5/50/97.5 % curves and keeps every replicate for FindPulses and BootstrapPulses.
//
// The same inputs and Seed give the same result on any machine and with any GOMAXPROCS. It
// returns an error for what KDE rejects, for sigmaMa of the wrong length or with a σ that is
// negative or not finite, or for Replicates < 0.
func BootstrapBand(agesMa, sigmaMa []float64, opts BandOptions) (DensityBand, error) {
	if sigmaMa != nil {
		if len(sigmaMa) != len(agesMa) {
			return DensityBand{}, fmt.Errorf("bootstrap band: %d σ for %d dates", len(sigmaMa), len(agesMa))
		}
		for i, s := range sigmaMa {
			if !(s >= 0) || math.IsInf(s, 0) {
				return DensityBand{}, fmt.Errorf("bootstrap band: σ %d is %g Ma: want finite and ≥ 0", i, s)
			}
		}
	}
	nRep := opts.Replicates
	if nRep == 0 {
		nRep = DefaultBootstrapReplicates
	}
	if nRep < 0 {
		return DensityBand{}, fmt.Errorf("bootstrap band: %d replicates", nRep)
	}
	if opts.KDE.Weight != nil && len(opts.KDE.Weight) != len(agesMa) {
		return DensityBand{}, fmt.Errorf("bootstrap band: %d weights for %d dates", len(opts.KDE.Weight), len(agesMa))
	}
	bw, err := SelectBandwidth(agesMa, opts.KDE.Bandwidth)
	if err != nil {
		return DensityBand{}, fmt.Errorf("bootstrap band: %w", err)
	}
	ref, err := kdeWithBandwidth(agesMa, opts.KDE, bw, nil)
	if err != nil {
		return DensityBand{}, fmt.Errorf("bootstrap band: %w", err)
	}
	grid := AgeGrid{MinMa: ref.GridMa[0], MaxMa: ref.GridMa[len(ref.GridMa)-1], Points: len(ref.GridMa)}

	m := grid.Points
	band := DensityBand{
		Reference:           ref,
		GridMa:              ref.GridMa,
		Replicates:          make([][]float64, nRep),
		BandwidthsMa:        make([]float64, nRep),
		Seed:                opts.Seed,
		ReestimateBandwidth: opts.ReestimateBandwidth,
	}
	// One array holds every replicate's density.
	all := make([]float64, nRep*m)
	for r := range band.Replicates {
		band.Replicates[r] = all[r*m : (r+1)*m : (r+1)*m]
	}
	fellBack := make([]bool, nRep)
	errs := make([]error, nRep)
	shifts := make([][]func(float64) float64, len(opts.Shared))
	for c, comp := range opts.Shared {
		if len(comp.Carries) != len(agesMa) {
			return DensityBand{}, fmt.Errorf("bootstrap band: component %s flags %d of %d dates", comp.key(), len(comp.Carries), len(agesMa))
		}
		if shifts[c], err = comp.shifts(nRep, opts.Seed); err != nil {
			return DensityBand{}, fmt.Errorf("bootstrap band: %w", err)
		}
	}

	// Replicates are independent; each draws from its own stream, so the split over workers
	// changes nothing in the result. Each worker reuses its resample, FFT plans and buffers.
	workers := min(runtime.GOMAXPROCS(0), nRep)
	var wg sync.WaitGroup
	for w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			n := len(agesMa)
			ages := make([]float64, n)
			var weight []float64
			if opts.KDE.Weight != nil {
				weight = make([]float64, n)
			}
			var sc kdeScratch
			for r := w; r < nRep; r += workers {
				if opts.Stop != nil {
					if errs[r] = opts.Stop(); errs[r] != nil {
						return
					}
				}
				rng := rand.New(rand.NewPCG(opts.Seed, uint64(r)))
				for i := range ages {
					k := rng.IntN(n)
					ages[i] = agesMa[k]
					if sigmaMa != nil {
						ages[i] += sigmaMa[k] * rng.NormFloat64()
					}
					for c, comp := range opts.Shared {
						if comp.Carries[k] {
							ages[i] = shifts[c][r](ages[i])
						}
					}
					if weight != nil {
						weight[i] = opts.KDE.Weight[k]
					}
				}
				rbw := bw
				if opts.ReestimateBandwidth {
					var err error
					if rbw, err = SelectBandwidth(ages, opts.KDE.Bandwidth); err != nil {
						errs[r] = err
						continue
					}
					fellBack[r] = rbw.Fallback()
				}
				if errs[r] = replicateKDE(band.Replicates[r], ages, weight, opts.KDE.Adaptive, rbw.Ma, grid, &sc); errs[r] != nil {
					continue
				}
				band.BandwidthsMa[r] = rbw.Ma
			}
		}()
	}
	wg.Wait()
	if opts.Stop != nil {
		if err := opts.Stop(); err != nil {
			return DensityBand{}, fmt.Errorf("bootstrap band: %w", err)
		}
	}
	for r, err := range errs {
		if err != nil {
			// Only zero resampled weights can get here (every drawn unit has weight 0).
			return DensityBand{}, fmt.Errorf("bootstrap band: replicate %d: %w", r, err)
		}
		if fellBack[r] {
			band.Fallbacks++
		}
	}

	band.Lower, band.Median, band.Upper = make([]float64, m), make([]float64, m), make([]float64, m)
	// The grid points split into contiguous blocks over the workers; each column is its own.
	for w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			col := make([]float64, nRep)
			for j := w * m / workers; j < (w+1)*m/workers; j++ {
				for r := range col {
					col[r] = band.Replicates[r][j]
				}
				band.Lower[j], band.Median[j], band.Upper[j] = bandQuantiles(col)
			}
		}()
	}
	wg.Wait()
	return band, nil
}

// bandQuantiles returns the 2.5, 50 and 97.5 % points of x (Hyndman & Fan type 7), the values a sort
// and sortedQuantile7 give, by selection: the median first, then the lower point among the values
// below it and the upper among those above. It reorders x.
func bandQuantiles(x []float64) (lower, median, upper float64) {
	n := len(x)
	if n < 40 { // the three order statistics could share neighbours
		return quantile7(x, 0.025), quantile7(x, 0.5), quantile7(x, 0.975)
	}
	// interp is sortedQuantile7's step between the order statistics i and i+1.
	interp := func(p float64, lo, next float64) float64 {
		h := float64(n-1) * p
		return lo + (h-math.Floor(h))*(next-lo)
	}
	iMed := int(math.Floor(float64(n-1) * 0.5))
	selectKth(x, iMed)
	median = interp(0.5, x[iMed], slices.Min(x[iMed+1:]))
	below := x[:iMed] // the iMed smallest values
	iLo := int(math.Floor(float64(n-1) * 0.025))
	selectKth(below, iLo)
	lower = interp(0.025, below[iLo], slices.Min(below[iLo+1:]))
	above := x[iMed+1:] // the largest values; order statistic i is above[i−iMed−1]
	iUp := int(math.Floor(float64(n-1)*0.975)) - iMed - 1
	selectKth(above, iUp)
	upper = interp(0.975, above[iUp], slices.Min(above[iUp+1:]))
	return lower, median, upper
}

// replicateKDE writes the KDE of one resample (bandwidth h, or Abramson's per-date bandwidths with
// pilot h) on the validated grid g to dst, as kdeWithBandwidth would compute it, with the plans and
// buffers of sc.
func replicateKDE(dst, agesMa, weight []float64, adaptive bool, h float64, g AgeGrid, sc *kdeScratch) error {
	m := Mixture{AgeMa: agesMa, BandwidthMa: []float64{h}, Weight: weight}
	if adaptive {
		hs, _, err := AbramsonBandwidthsMa(agesMa, weight, h)
		if err != nil {
			return fmt.Errorf("kde: %w", err)
		}
		m.BandwidthMa = hs
	}
	sumW, err := m.validate()
	if err != nil {
		return fmt.Errorf("kde: evaluate density on grid: %w", err)
	}
	m.evalGrid(dst, g, sumW, sc)
	return nil
}
