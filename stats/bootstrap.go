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

	band := DensityBand{
		Reference:           ref,
		GridMa:              ref.GridMa,
		Replicates:          make([][]float64, nRep),
		BandwidthsMa:        make([]float64, nRep),
		Seed:                opts.Seed,
		ReestimateBandwidth: opts.ReestimateBandwidth,
	}
	fellBack := make([]bool, nRep)
	errs := make([]error, nRep)

	// Replicates are independent; each draws from its own stream, so the split over workers
	// changes nothing in the result.
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
			for r := w; r < nRep; r += workers {
				rng := rand.New(rand.NewPCG(opts.Seed, uint64(r)))
				for i := range ages {
					k := rng.IntN(n)
					ages[i] = agesMa[k]
					if sigmaMa != nil {
						ages[i] += sigmaMa[k] * rng.NormFloat64()
					}
					if weight != nil {
						weight[i] = opts.KDE.Weight[k]
					}
				}
				ko := opts.KDE
				ko.Weight = weight
				rbw := bw
				if opts.ReestimateBandwidth {
					var err error
					if rbw, err = SelectBandwidth(ages, opts.KDE.Bandwidth); err != nil {
						errs[r] = err
						continue
					}
					fellBack[r] = rbw.Fallback()
				}
				d, err := kdeWithBandwidth(ages, ko, rbw, &grid)
				if err != nil {
					errs[r] = err
					continue
				}
				band.Replicates[r] = d.Density
				band.BandwidthsMa[r] = rbw.Ma
			}
		}()
	}
	wg.Wait()
	for r, err := range errs {
		if err != nil {
			// Only zero resampled weights can get here (every drawn unit has weight 0).
			return DensityBand{}, fmt.Errorf("bootstrap band: replicate %d: %w", r, err)
		}
		if fellBack[r] {
			band.Fallbacks++
		}
	}

	m := grid.Points
	band.Lower, band.Median, band.Upper = make([]float64, m), make([]float64, m), make([]float64, m)
	col := make([]float64, nRep)
	for j := range m {
		for r := range col {
			col[r] = band.Replicates[r][j]
		}
		slices.Sort(col)
		band.Lower[j] = sortedQuantile7(col, 0.025)
		band.Median[j] = sortedQuantile7(col, 0.5)
		band.Upper[j] = sortedQuantile7(col, 0.975)
	}
	return band, nil
}
