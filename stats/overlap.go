package stats

import (
	"fmt"
	"math"
)

// Closed forms for two normal age distributions (project REFERENCES §5). They check the Monte Carlo
// comparison engine and give quick answers when both ages are plain normals.

func checkNormalPair(mu1, sigma1, mu2, sigma2 float64) error {
	for _, v := range []float64{mu1, sigma1, mu2, sigma2} {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("%w: %g", ErrNonFinite, v)
		}
	}
	if !(sigma1 > 0 && sigma2 > 0) {
		return fmt.Errorf("σ %g and %g: want both > 0", sigma1, sigma2)
	}
	return nil
}

// OverlapNormal returns the overlapping coefficient OVL = ∫ min(f₁, f₂) of N(mu1, sigma1²) and
// N(mu2, sigma2²) (Inman & Bradley 1989, Commun. Stat. Theory Methods 18:3851). With equal σ it is
// 2Φ(−|Δμ|/(2σ)); otherwise the densities cross at the two roots x± of a quadratic and
//
//	OVL = [F_w(x₊) − F_w(x₋)] + [F_n(x₋) + 1 − F_n(x₊)],
//
// w the wider and n the narrower normal (between the crossings the wider one is the lower). The roots
// are found relative to mu1 and by the cancellation-free form of the quadratic formula, so nearly
// equal σ and ages of 200 Ma lose no digits. σ are 1σ and must be > 0. OVL measures how alike two
// distributions are; it is not a probability that two events were synchronous (use P(|Δ| < δ)).
func OverlapNormal(mu1, sigma1, mu2, sigma2 float64) (float64, error) {
	if err := checkNormalPair(mu1, sigma1, mu2, sigma2); err != nil {
		return math.NaN(), fmt.Errorf("overlap: %w", err)
	}
	if sigma1 == sigma2 {
		return 2 * stdNormalCDF(-math.Abs(mu2-mu1)/(2*sigma1)), nil
	}
	// Make 1 the narrower; work in x − mu1, so mu1 → 0 and mu2 → d.
	if sigma1 > sigma2 {
		mu1, sigma1, mu2, sigma2 = mu2, sigma2, mu1, sigma1
	}
	d := mu2 - mu1
	s1, s2 := sigma1*sigma1, sigma2*sigma2
	// ln f₁ = ln f₂ ⇔ a x² + b x + c = 0 with
	a := s1 - s2
	b := -2 * s1 * d
	c := s1*d*d + 2*s1*s2*math.Log(sigma2/sigma1)
	disc := b*b - 4*a*c // ≥ 0: the narrower density is higher at its own mode
	q := -0.5 * (b + math.Copysign(math.Sqrt(math.Max(disc, 0)), b))
	x1, x2 := q/a, c/q
	if q == 0 { // b = 0 and c = 0 cannot both hold with σ₁ < σ₂; keep the guard for safety
		x1, x2 = 0, 0
	}
	if x1 > x2 {
		x1, x2 = x2, x1
	}
	// Wider (2): mass between the crossings; narrower (1): mass outside them.
	wide := stdNormalCDF((x2-d)/sigma2) - stdNormalCDF((x1-d)/sigma2)
	narrow := stdNormalCDF(x1/sigma1) + stdNormalCDF(-x2/sigma1)
	return wide + narrow, nil
}

// BhattacharyyaNormal returns the Bhattacharyya coefficient ∫ sqrt(f₁f₂) of two normals,
// sqrt(2σ₁σ₂/(σ₁² + σ₂²))·exp(−Δμ²/(4(σ₁² + σ₂²))) (Bhattacharyya 1943). σ are 1σ and must be > 0.
func BhattacharyyaNormal(mu1, sigma1, mu2, sigma2 float64) (float64, error) {
	if err := checkNormalPair(mu1, sigma1, mu2, sigma2); err != nil {
		return math.NaN(), fmt.Errorf("bhattacharyya: %w", err)
	}
	v := sigma1*sigma1 + sigma2*sigma2
	d := mu1 - mu2
	return math.Sqrt(2*sigma1*sigma2/v) * math.Exp(-d*d/(4*v)), nil
}

// POlderNormal returns P(A older than B) = P(A > B) = Φ((μA − μB)/sqrt(σA² + σB² − 2ρσAσB)) for jointly
// normal ages with correlation rho (REFERENCES §5). σ are 1σ (≥ 0) and rho lies in [−1, 1]. When the
// difference has no spread the answer is 1, 0 or ½ as μA is above, below or equal to μB.
func POlderNormal(muA, sigmaA, muB, sigmaB, rho float64) (float64, error) {
	for _, v := range []float64{muA, sigmaA, muB, sigmaB, rho} {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return math.NaN(), fmt.Errorf("p older: %w: %g", ErrNonFinite, v)
		}
	}
	if sigmaA < 0 || sigmaB < 0 || rho < -1 || rho > 1 {
		return math.NaN(), fmt.Errorf("p older: σ %g, %g and ρ %g: want σ ≥ 0 and ρ in [−1, 1]", sigmaA, sigmaB, rho)
	}
	v := sigmaA*sigmaA + sigmaB*sigmaB - 2*rho*sigmaA*sigmaB
	d := muA - muB
	if !(v > 0) {
		switch {
		case d > 0:
			return 1, nil
		case d < 0:
			return 0, nil
		}
		return 0.5, nil
	}
	return stdNormalCDF(d / math.Sqrt(v)), nil
}

// OverlapMethod says how OverlapSamples turns draws into densities.
type OverlapMethod int

const (
	// OverlapKDE (the default) estimates each density by a Gaussian KDE with its own bandwidth
	// (Silverman's normal-reference rule, RuleSilverman) and integrates min(f₁, f₂) by the trapezoid
	// rule on one common grid over both sets of draws padded by 4 bandwidths.
	OverlapKDE OverlapMethod = iota
	// OverlapHistogram bins both sets on one common grid of equal bins over their joint range and
	// returns Σ min(p₁ᵢ, p₂ᵢ) of the bin proportions. It is biased upwards by the bin width and
	// downwards by sampling noise; use it where speed matters more than the third digit.
	OverlapHistogram
)

// String returns "kde" or "histogram".
func (m OverlapMethod) String() string {
	switch m {
	case OverlapKDE:
		return "kde"
	case OverlapHistogram:
		return "histogram"
	}
	return fmt.Sprintf("OverlapMethod(%d)", int(m))
}

// OverlapSampleOptions configures OverlapSamples.
type OverlapSampleOptions struct {
	Method OverlapMethod
	// Points is the number of grid points (KDE) or bins (histogram); 0 means 512 points or 100 bins.
	Points int
}

// OverlapEstimate is an overlapping coefficient estimated from draws, with how it was estimated.
type OverlapEstimate struct {
	OVL    float64
	Method OverlapMethod
	Points int
	// BandwidthsMa are the two KDE bandwidths (nil for a histogram); GridMa the common grid (KDE) or the
	// bin edges (histogram) as [min, max].
	BandwidthsMa []float64
	GridMinMa    float64
	GridMaxMa    float64
}

// OverlapSamples estimates OVL = ∫ min(f₁, f₂) from draws a and b of two ages (e.g. the Monte Carlo
// draws of two quantities), as opt.Method states. Both sets need at least two finite draws; the inputs
// are not modified. Identical constant sets give 1, disjoint constant sets 0.
func OverlapSamples(a, b []float64, opt OverlapSampleOptions) (OverlapEstimate, error) {
	if len(a) < 2 || len(b) < 2 {
		return OverlapEstimate{}, fmt.Errorf("overlap of draws: %d and %d draws: %w", len(a), len(b), ErrTooFewDates)
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, s := range [][]float64{a, b} {
		for _, x := range s {
			if math.IsNaN(x) || math.IsInf(x, 0) {
				return OverlapEstimate{}, fmt.Errorf("overlap of draws: %w", ErrNonFinite)
			}
			lo, hi = math.Min(lo, x), math.Max(hi, x)
		}
	}
	e := OverlapEstimate{Method: opt.Method, Points: opt.Points}
	switch opt.Method {
	case OverlapHistogram:
		if e.Points == 0 {
			e.Points = 100
		}
		if e.Points < 1 {
			return e, fmt.Errorf("overlap of draws: %d bins", e.Points)
		}
		e.GridMinMa, e.GridMaxMa = lo, hi
		if hi == lo {
			e.OVL = 1
			return e, nil
		}
		ca, cb := make([]float64, e.Points), make([]float64, e.Points)
		bin := func(x float64) int { return min(e.Points-1, int(float64(e.Points)*(x-lo)/(hi-lo))) }
		for _, x := range a {
			ca[bin(x)]++
		}
		for _, x := range b {
			cb[bin(x)]++
		}
		na, nb := float64(len(a)), float64(len(b))
		for i := range ca {
			e.OVL += math.Min(ca[i]/na, cb[i]/nb)
		}
		return e, nil
	case OverlapKDE:
		if e.Points == 0 {
			e.Points = DefaultGridPoints
		}
		if e.Points < 3 {
			return e, fmt.Errorf("overlap of draws: %d grid points, want at least 3", e.Points)
		}
		ha, err := SelectBandwidth(a, BandwidthOptions{Rule: RuleSilverman})
		if err != nil {
			return e, fmt.Errorf("overlap of draws: %w", err)
		}
		hb, err := SelectBandwidth(b, BandwidthOptions{Rule: RuleSilverman})
		if err != nil {
			return e, fmt.Errorf("overlap of draws: %w", err)
		}
		e.BandwidthsMa = []float64{ha.Ma, hb.Ma}
		pad := 4 * math.Max(ha.Ma, hb.Ma)
		g := AgeGrid{MinMa: lo - pad, MaxMa: hi + pad, Points: e.Points}
		e.GridMinMa, e.GridMaxMa = g.MinMa, g.MaxMa
		fa, err := Mixture{AgeMa: a, BandwidthMa: []float64{ha.Ma}}.EvalGrid(g)
		if err != nil {
			return e, fmt.Errorf("overlap of draws: %w", err)
		}
		fb, err := Mixture{AgeMa: b, BandwidthMa: []float64{hb.Ma}}.EvalGrid(g)
		if err != nil {
			return e, fmt.Errorf("overlap of draws: %w", err)
		}
		var sum float64 // trapezoid rule on the regular grid
		for i := range fa {
			w := 1.0
			if i == 0 || i == len(fa)-1 {
				w = 0.5
			}
			sum += w * math.Min(fa[i], fb[i])
		}
		e.OVL = math.Min(1, sum*g.StepMa())
		return e, nil
	}
	return e, fmt.Errorf("overlap of draws: unknown method %v", opt.Method)
}
