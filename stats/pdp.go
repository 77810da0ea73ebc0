package stats

import (
	"fmt"
	"slices"
)

// PDPCaution is the warning to show with every probability density plot.
const PDPCaution = "This is a probability density plot (PDP), not a kernel density estimate: each date is drawn " +
	"as a normal curve of its own 1σ and the curves are summed. As dates get more precise a PDP breaks into " +
	"spikes, and it has no statistical basis as an estimate of the age distribution; prefer a KDE " +
	"(Vermeesch 2012, Chem. Geol. 312–313:190–194)."

// PDPOptions configures PDP.
type PDPOptions struct {
	// Weight is nil for equal weights or one weight ≥ 0 per date.
	Weight []float64
	// Grid is the age window. MinMa = MaxMa = 0 means the dates' range padded by 4 of the
	// largest σ; Points = 0 means DefaultGridPoints.
	Grid AgeGrid
}

// PDP returns the probability density plot PDP(x) = Σ wᵢ·φ((x − xᵢ)/σᵢ)/σᵢ / Σ wᵢ of dates
// agesMa with their own 1σ sigmaMa (finite, > 0; convert 2σ before calling). It is not a KDE:
// the Density has Kind KindPDP, Rule 0, BandwidthMa 0, PointBandwidthsMa = a copy of sigmaMa and
// Note = PDPCaution. It returns an error for mismatched lengths, non-finite values, σ ≤ 0, bad
// weights or a bad grid.
func PDP(agesMa, sigmaMa []float64, opts PDPOptions) (Density, error) {
	if len(sigmaMa) != len(agesMa) {
		return Density{}, fmt.Errorf("pdp: %d σ for %d dates: one σ per date is required", len(sigmaMa), len(agesMa))
	}
	m := Mixture{AgeMa: agesMa, BandwidthMa: sigmaMa, Weight: opts.Weight}
	if _, err := m.validate(); err != nil {
		return Density{}, fmt.Errorf("pdp: %w", err)
	}
	g, err := opts.Grid.resolve(slices.Min(agesMa), slices.Max(agesMa), autoPadBandwidths*slices.Max(sigmaMa))
	if err != nil {
		return Density{}, fmt.Errorf("pdp: %w", err)
	}
	dens, err := m.EvalGrid(g)
	if err != nil {
		return Density{}, fmt.Errorf("pdp: %w", err)
	}
	return Density{
		GridMa:            g.AgesMa(),
		Density:           dens,
		PointBandwidthsMa: slices.Clone(sigmaMa),
		Kind:              KindPDP,
		Note:              PDPCaution,
	}, nil
}
