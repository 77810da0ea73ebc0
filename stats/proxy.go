package stats

import (
	"fmt"
	"math"
	"slices"
	"strings"
)

// PpbPerPpm converts a mass fraction in ppm (µg/g) to ppb (ng/g).
const PpbPerPpm = 1000

// AlPerAl2O3 is the mass fraction of Al in Al₂O₃ (2·26.98/101.96), used to turn Al₂O₃ wt% into Al wt%.
const AlPerAl2O3 = 0.5293

// DefaultMinTocWtPct is the common low-TOC threshold: below 0.2 wt% TOC a Hg/TOC ratio is not evaluable
// (trade practice; 0.1–0.5 wt% is also used).
const DefaultMinTocWtPct = 0.2

// HgPpmToPpb converts a Hg concentration from ppm to ppb.
func HgPpmToPpb(hgPpm float64) float64 { return hgPpm * PpbPerPpm }

// Al2O3ToAlWtPct converts Al₂O₃ in wt% to Al in wt%.
func Al2O3ToAlWtPct(al2o3WtPct float64) float64 { return al2o3WtPct * AlPerAl2O3 }

// Host is a host phase of mercury that Hg can be normalised to.
type Host int

const (
	HostTOC Host = iota // organic matter: Hg/TOC
	HostTS              // sulfide: Hg/TS
	HostAl              // clay: Hg/Al
)

// String returns the trade name of the host (TOC, TS, Al).
func (h Host) String() string {
	switch h {
	case HostTOC:
		return "TOC"
	case HostTS:
		return "TS"
	case HostAl:
		return "Al"
	}
	return fmt.Sprintf("Host(%d)", int(h))
}

// RatioStatus says whether a host-normalised ratio can be used.
type RatioStatus int

const (
	// RatioOK: the ratio is evaluable.
	RatioOK RatioStatus = iota
	// RatioLowHost: the host is below the threshold, so its error dominates and a host minimum would make a
	// false spike. The sample is kept (raw Hg remains usable); the ratio is not evaluable.
	RatioLowHost
	// RatioMissing: Hg or the host is missing (NaN) or not positive.
	RatioMissing
)

// String returns a short label for the status.
func (s RatioStatus) String() string {
	switch s {
	case RatioOK:
		return "ok"
	case RatioLowHost:
		return "not evaluable (low host)"
	case RatioMissing:
		return "missing"
	}
	return fmt.Sprintf("RatioStatus(%d)", int(s))
}

// HgRatio is Hg normalised to a host phase, in ppb per wt%, with its 1σ.
type HgRatio struct {
	// Value and Sigma (1σ, absolute) are NaN unless Status is RatioOK.
	Value, Sigma float64
	// RelSigma is the relative 1σ of the ratio by first-order propagation. It is given whenever Hg and host
	// are positive, also for RatioLowHost, so the reason for the status can be shown.
	RelSigma float64
	Status   RatioStatus
}

// HgHostRatio returns Hg/host (e.g. Hg/TOC in ppb/wt%). Errors are 1σ; the relative errors of Hg and host
// are added in quadrature (first-order propagation, independent errors): σ_r/r = sqrt((σ_Hg/Hg)² +
// (σ_h/h)²). When hostWtPct < minHostWtPct the ratio is not evaluable (Status RatioLowHost); pass
// DefaultMinTocWtPct for TOC, or 0 for no threshold. NaN or non-positive Hg or host gives RatioMissing.
func HgHostRatio(hgPpb, hgSigmaPpb, hostWtPct, hostSigmaWtPct, minHostWtPct float64) HgRatio {
	r := HgRatio{Value: math.NaN(), Sigma: math.NaN(), RelSigma: math.NaN(), Status: RatioMissing}
	if !(hgPpb > 0) || !(hostWtPct > 0) || math.IsInf(hgPpb, 0) || math.IsInf(hostWtPct, 0) {
		return r
	}
	r.RelSigma = math.Hypot(hgSigmaPpb/hgPpb, hostSigmaWtPct/hostWtPct)
	if hostWtPct < minHostWtPct {
		r.Status = RatioLowHost
		return r
	}
	r.Status = RatioOK
	r.Value = hgPpb / hostWtPct
	r.Sigma = r.Value * r.RelSigma
	return r
}

// HgHostRatios applies HgHostRatio sample by sample. Sigma slices may be nil (zero errors). Every sample
// gets an entry; none is dropped. It returns an error when lengths differ.
func HgHostRatios(hgPpb, hgSigmaPpb, hostWtPct, hostSigmaWtPct []float64, minHostWtPct float64) ([]HgRatio, error) {
	n := len(hgPpb)
	if len(hostWtPct) != n || (hgSigmaPpb != nil && len(hgSigmaPpb) != n) || (hostSigmaWtPct != nil && len(hostSigmaWtPct) != n) {
		return nil, fmt.Errorf("hg ratios: slices of different lengths")
	}
	out := make([]HgRatio, n)
	for i := range n {
		var sh, sx float64
		if hgSigmaPpb != nil {
			sh = hgSigmaPpb[i]
		}
		if hostSigmaWtPct != nil {
			sx = hostSigmaWtPct[i]
		}
		out[i] = HgHostRatio(hgPpb[i], sh, hostWtPct[i], sx, minHostWtPct)
	}
	return out, nil
}

// Pearson returns Pearson's correlation coefficient of x and y over the pairs where both are finite, and
// the number n of such pairs. r is NaN when n < 2 or either variable is constant over those pairs. It
// returns an error when the lengths differ.
func Pearson(x, y []float64) (r float64, n int, err error) {
	if len(x) != len(y) {
		return math.NaN(), 0, fmt.Errorf("pearson: %d and %d values", len(x), len(y))
	}
	var mx, my float64
	for i := range x {
		if proxyFinite(x[i]) && proxyFinite(y[i]) {
			n++
			mx += (x[i] - mx) / float64(n)
			my += (y[i] - my) / float64(n)
		}
	}
	if n < 2 {
		return math.NaN(), n, nil
	}
	var sxy, sxx, syy float64
	for i := range x {
		if proxyFinite(x[i]) && proxyFinite(y[i]) {
			dx, dy := x[i]-mx, y[i]-my
			sxy += dx * dy
			sxx += dx * dx
			syy += dy * dy
		}
	}
	if sxx == 0 || syy == 0 {
		return math.NaN(), n, nil
	}
	r = sxy / math.Sqrt(sxx*syy)
	return math.Max(-1, math.Min(1, r)), n, nil
}

func proxyFinite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// HostCorrelation is the correlation of Hg with one host over the n samples where both are measured.
type HostCorrelation struct {
	Host Host
	R    float64 // Pearson r; NaN when it cannot be computed
	N    int
}

// HostSuggestion is the suggested dominant host phase of Hg and why.
type HostSuggestion struct {
	Host Host
	// OK is false when no host qualifies (no positive correlation from at least MinPairs samples); Host is
	// then meaningless.
	OK           bool
	Correlations []HostCorrelation // every host that was given, in the order TOC, TS, Al
	Reason       string
}

// MinHostPairs is the least number of paired samples SuggestHost needs before it trusts a correlation.
const MinHostPairs = 5

// SuggestHost suggests the dominant host of Hg as the host with the strongest positive Pearson correlation
// with Hg (Shen et al. 2020, EPSL 543:116333), from at least MinHostPairs paired samples. A nil host slice
// means that host was not measured; NaN entries are missing values. The reason names r and n of the
// chosen host and of the runner-up. It is a suggestion for the user to confirm, not a decision. It returns
// an error when a given host slice has a different length from hgPpb.
func SuggestHost(hgPpb, tocWtPct, tsWtPct, alWtPct []float64) (HostSuggestion, error) {
	var s HostSuggestion
	for _, h := range []struct {
		host Host
		x    []float64
	}{{HostTOC, tocWtPct}, {HostTS, tsWtPct}, {HostAl, alWtPct}} {
		if h.x == nil {
			continue
		}
		r, n, err := Pearson(hgPpb, h.x)
		if err != nil {
			return HostSuggestion{}, fmt.Errorf("suggest host: %v: %w", h.host, err)
		}
		s.Correlations = append(s.Correlations, HostCorrelation{Host: h.host, R: r, N: n})
	}
	ranked := slices.Clone(s.Correlations)
	ranked = slices.DeleteFunc(ranked, func(c HostCorrelation) bool { return !(c.R > 0) || c.N < MinHostPairs })
	slices.SortStableFunc(ranked, func(a, b HostCorrelation) int {
		switch {
		case a.R > b.R:
			return -1
		case a.R < b.R:
			return 1
		}
		return 0
	})
	if len(ranked) == 0 {
		var parts []string
		for _, c := range s.Correlations {
			parts = append(parts, fmt.Sprintf("%v r = %.2f, n = %d", c.Host, c.R, c.N))
		}
		s.Reason = fmt.Sprintf("no host correlates positively with Hg over at least %d samples", MinHostPairs)
		if len(parts) > 0 {
			s.Reason += " (" + strings.Join(parts, "; ") + ")"
		}
		return s, nil
	}
	best := ranked[0]
	s.Host, s.OK = best.Host, true
	s.Reason = fmt.Sprintf("Hg correlates most strongly with %v (r = %.2f, n = %d)", best.Host, best.R, best.N)
	if len(ranked) > 1 {
		s.Reason += fmt.Sprintf("; next %v (r = %.2f, n = %d)", ranked[1].Host, ranked[1].R, ranked[1].N)
	}
	return s, nil
}

// BackgroundOptions configures FitBackground.
type BackgroundOptions struct {
	// Window marks the background samples used for the fit; nil means all samples with both values.
	Window []bool
	// K is the multiple of σ̂ beyond which a positive residual is flagged; 0 means 3.
	K float64
}

// BackgroundFit is an ordinary least-squares line Hg = Intercept + Slope·host fitted to background
// samples, with the residuals of every sample.
type BackgroundFit struct {
	InterceptPpb  float64 // ppb
	SlopePpbPerWt float64 // ppb per wt% of host
	// ResidualsPpb has one entry per input sample (observed − fitted); NaN where Hg or host is missing.
	ResidualsPpb []float64
	// SigmaHatPpb is 1.4826·MAD of the background residuals: a robust σ that the excursion cannot inflate.
	SigmaHatPpb float64
	K           float64
	// Excess flags samples whose residual exceeds K·SigmaHatPpb: more Hg than the host explains, which
	// catches an Hg rise hidden by a flat Hg/TOC in organic-rich beds.
	Excess []bool
	N      int // background samples used in the fit
}

// FitBackground fits Hg on its host by ordinary least squares over the background window and flags
// positive residuals beyond K·σ̂ in every sample (and beyond 1e-9 of the Hg scale, so that rounding is not
// flagged when the background fits exactly). It returns an error when the lengths differ, when fewer
// than 3 background samples have both values, or when the host does not vary over the window.
func FitBackground(hgPpb, hostWtPct []float64, opt BackgroundOptions) (BackgroundFit, error) {
	n := len(hgPpb)
	if len(hostWtPct) != n {
		return BackgroundFit{}, fmt.Errorf("background fit: %d Hg and %d host values", n, len(hostWtPct))
	}
	if opt.Window != nil && len(opt.Window) != n {
		return BackgroundFit{}, fmt.Errorf("background fit: window of %d for %d samples", len(opt.Window), n)
	}
	k := opt.K
	if k == 0 {
		k = 3
	}
	if k < 0 {
		return BackgroundFit{}, fmt.Errorf("background fit: negative K %g", opt.K)
	}
	use := func(i int) bool {
		return proxyFinite(hgPpb[i]) && proxyFinite(hostWtPct[i]) && (opt.Window == nil || opt.Window[i])
	}
	var mx, my float64
	var m int
	for i := range n {
		if use(i) {
			m++
			mx += (hostWtPct[i] - mx) / float64(m)
			my += (hgPpb[i] - my) / float64(m)
		}
	}
	if m < 3 {
		return BackgroundFit{}, fmt.Errorf("background fit: %d background samples, need 3", m)
	}
	var sxx, sxy float64
	for i := range n {
		if use(i) {
			dx := hostWtPct[i] - mx
			sxx += dx * dx
			sxy += dx * (hgPpb[i] - my)
		}
	}
	if !(sxx > 0) {
		return BackgroundFit{}, fmt.Errorf("background fit: host does not vary over the window")
	}
	f := BackgroundFit{K: k, N: m}
	f.SlopePpbPerWt = sxy / sxx
	f.InterceptPpb = my - f.SlopePpbPerWt*mx
	f.ResidualsPpb = make([]float64, n)
	f.Excess = make([]bool, n)
	bg := make([]float64, 0, m)
	for i := range n {
		if !proxyFinite(hgPpb[i]) || !proxyFinite(hostWtPct[i]) {
			f.ResidualsPpb[i] = math.NaN()
			continue
		}
		f.ResidualsPpb[i] = hgPpb[i] - (f.InterceptPpb + f.SlopePpbPerWt*hostWtPct[i])
		if use(i) {
			bg = append(bg, f.ResidualsPpb[i])
		}
	}
	f.SigmaHatPpb = RobustSigma(bg)
	// A floor keeps rounding noise from being flagged when the background fits exactly (σ̂ = 0).
	var scale float64
	for _, v := range bg {
		scale = math.Max(scale, math.Abs(v))
	}
	limit := math.Max(k*f.SigmaHatPpb, 1e-9*math.Max(math.Abs(my), scale))
	for i, r := range f.ResidualsPpb {
		f.Excess[i] = r > limit
	}
	return f, nil
}
