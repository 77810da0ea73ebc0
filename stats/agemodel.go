package stats

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
)

// TieKind is the form of a tie point's age distribution.
type TieKind int

const (
	TieNormal  TieKind = iota // normal: AgeMa ± SigmaMa (1σ)
	TieUniform                // uniform between MinAgeMa and MaxAgeMa
)

// String names the kind.
func (k TieKind) String() string {
	switch k {
	case TieNormal:
		return "normal"
	case TieUniform:
		return "uniform"
	}
	return fmt.Sprintf("TieKind(%d)", int(k))
}

// TiePoint is a height in a section with an independent age distribution (a dated ash bed, a biozone
// boundary with a calibrated age range, ...).
type TiePoint struct {
	HeightM float64
	Kind    TieKind
	// AgeMa and SigmaMa (1σ, ≥ 0; 0 for an exactly known age) describe a TieNormal.
	AgeMa, SigmaMa float64
	// MinAgeMa and MaxAgeMa (MinAgeMa ≤ MaxAgeMa) describe a TieUniform.
	MinAgeMa, MaxAgeMa float64
}

// NormalTie returns a tie point with a normal age distribution (σ is 1σ).
func NormalTie(heightM, ageMa, sigmaMa float64) TiePoint {
	return TiePoint{HeightM: heightM, Kind: TieNormal, AgeMa: ageMa, SigmaMa: sigmaMa}
}

// UniformTie returns a tie point whose age is uniform between minAgeMa and maxAgeMa.
func UniformTie(heightM, minAgeMa, maxAgeMa float64) TiePoint {
	return TiePoint{HeightM: heightM, Kind: TieUniform, MinAgeMa: minAgeMa, MaxAgeMa: maxAgeMa}
}

// meanSigma returns the mean and 1σ of the tie's age distribution.
func (t TiePoint) meanSigma() (float64, float64) {
	if t.Kind == TieUniform {
		return (t.MinAgeMa + t.MaxAgeMa) / 2, (t.MaxAgeMa - t.MinAgeMa) / math.Sqrt(12)
	}
	return t.AgeMa, t.SigmaMa
}

// Hiatus is a surface in a section where time is missing: at least MinDurationMa passes at HeightM
// without deposition.
type Hiatus struct {
	HeightM       float64
	MinDurationMa float64
}

// TieSampler is the method that draws tie ages under superposition.
type TieSampler int

const (
	// TieSamplerAuto uses rejection and switches to Gibbs when the pilot acceptance is below
	// MinAcceptance.
	TieSamplerAuto TieSampler = iota
	// TieSamplerRejection draws all tie ages and keeps a draw only if they are in stratigraphic order.
	TieSamplerRejection
	// TieSamplerGibbs draws each tie from its distribution truncated by its neighbours (Buck, Cavanagh &
	// Litton 1996).
	TieSamplerGibbs
)

// String names the sampler.
func (s TieSampler) String() string {
	switch s {
	case TieSamplerAuto:
		return "auto"
	case TieSamplerRejection:
		return "rejection"
	case TieSamplerGibbs:
		return "gibbs"
	}
	return fmt.Sprintf("TieSampler(%d)", int(s))
}

// Defaults of AgeModelOptions.
const (
	DefaultAgeModelDraws   = 2000
	DefaultRigidityMinPerM = 0.1
	DefaultRigidityMaxPerM = 100
	DefaultMinAcceptance   = 0.01
	defaultPilotAttempts   = 2000
	defaultGibbsBurnIn     = 500
	defaultGibbsThin       = 5
	// hiatusExtraShape is the Dirichlet weight of a hiatus's time beyond its minimum: one waiting time
	// between deposition events of the Poisson model.
	hiatusExtraShape = 1.0
	// MaxAgeModelValues bounds draws × heights of one model (400 MB of float64).
	MaxAgeModelValues = 50_000_000
)

// AgeModelOptions configures FitAgeModel. The zero value means 2,000 draws, seed 0, a log-uniform prior on
// the rigidity k between 0.1 and 100 per metre, automatic choice of the tie sampler.
type AgeModelOptions struct {
	Draws int    // number of Monte Carlo draws; 0 means DefaultAgeModelDraws
	Seed  uint64 // seed of the random stream; recorded in the result
	// RigidityPerM, when > 0, fixes k, the number of deposition events per metre. Intended for tests and
	// sensitivity checks: a wrong fixed k ruins coverage.
	RigidityPerM float64
	// RigidityMinPerM and RigidityMaxPerM bound the log-uniform prior on k used when RigidityPerM is 0
	// (one k per draw); 0 means the defaults 0.1 and 100 per metre. Set them to the scale of the section.
	RigidityMinPerM, RigidityMaxPerM float64
	Sampler                          TieSampler
	// MinAcceptance is the pilot acceptance below which TieSamplerAuto switches to Gibbs; 0 means 0.01.
	MinAcceptance float64
	// PilotAttempts is the number of rejection attempts before the switch is decided; 0 means 2,000.
	PilotAttempts int
	// GibbsBurnIn (sweeps discarded at the start) and GibbsThin (sweeps per kept draw); 0 means 500 and 5.
	GibbsBurnIn, GibbsThin int
}

// DrawSummary is the median and central 95 % interval (2.5 and 97.5 percentiles) of a set of draws.
type DrawSummary struct {
	Median, Lo95, Hi95 float64
}

// AgeModel is a Monte Carlo age–height model of a section: joint draws of the ages at requested heights.
type AgeModel struct {
	HeightsM []float64 // requested heights, ascending
	NDraws   int
	// AgesMa holds the draws, draw-major: the age at HeightsM[j] in draw d is AgesMa[d*len(HeightsM)+j].
	// Within a draw the ages come from one deposition history, so they decrease upwards.
	AgesMa []float64
	Ages   []DrawSummary // per height
	// TieAgesMa holds the tie ages of every draw, draw-major, ties in ascending height.
	TieAgesMa    []float64
	TieHeightsM  []float64
	RigidityPerM []float64 // k of every draw
	Seed         uint64
	Sampler      TieSampler // the sampler that produced the draws: rejection or gibbs
	// Acceptance is the fraction of rejection attempts that were in stratigraphic order (of the pilot when
	// Gibbs took over); Attempts is their number, 0 when rejection was not tried.
	Acceptance float64
	Attempts   int

	inputHeightsM []float64 // the ties' heights in the order given to FitAgeModel
	hiatuses      []Hiatus  // ascending
}

// At returns the age in Ma of draw d at the j-th requested height.
func (m *AgeModel) At(d, j int) float64 { return m.AgesMa[d*len(m.HeightsM)+j] }

// ErrUnorderable is returned when the tie ages cannot be put in stratigraphic order.
var ErrUnorderable = errors.New("tie ages cannot be put in stratigraphic order")

// amStep is one step of the walk up a tie interval: a thickness of sediment (Gamma shape k·ThickM) or a
// hiatus (its minimum plus a share of weight hiatusExtraShape), after which a requested height may be
// reached.
type amStep struct {
	thickM float64
	hiatus bool
	minMa  float64
	out    int // index of the requested height reached after the step, or −1
}

// FitAgeModel draws age–height models of a section by Monte Carlo.
//
// Each draw takes every tie age from its distribution and keeps the draw only when the ages are in
// stratigraphic order, older below, with at least the hiatuses' minimum durations between neighbours
// (rejection, which conditions exactly; draws are never sorted). When the pilot acceptance is below
// MinAcceptance the tie ages come from a Gibbs sampler instead, each tie drawn from its distribution
// truncated by its neighbours (Buck, Cavanagh & Litton 1996).
//
// Between ties, deposition is a Poisson process with k events per metre (Bronk Ramsey 2008, QSR
// 27:42–60): the durations of successive thicknesses d₁, d₂, … are independent Gamma(k·dᵢ) variates
// scaled to the time between the ties, i.e. Dirichlet(k·d₁, k·d₂, …). The elapsed fraction at one height
// is therefore Beta(k·d₁, k·d₂), and the fractions at all requested heights of a draw are one joint
// sample, as a chain of conditional Beta bridges between successive heights would give. k is drawn per
// draw from a log-uniform prior unless fixed, so the model averages over the rigidity instead of trusting
// one value: its intervals are calibrated on average over that prior, wider than needed for very regular
// deposition and slightly narrow for very irregular deposition near the prior's lower end. A hiatus adds
// its minimum duration at its height plus a share of the remaining time of Dirichlet weight 1.
//
// Ties need distinct heights (at least two); hiatuses must lie strictly between the lowest and highest
// tie and not at a tie. Requested heights must be strictly ascending and within the tie range; at a
// hiatus height the age is that of the underlying (older) side. Errors are returned for invalid input and
// wrap ErrUnorderable when no ordered draw exists. Draws × heights may not exceed MaxAgeModelValues. The
// result owns its slices.
func FitAgeModel(ties []TiePoint, hiatuses []Hiatus, heightsM []float64, opt AgeModelOptions) (*AgeModel, error) {
	tz, hz, err := amValidate(ties, hiatuses, heightsM)
	if err != nil {
		return nil, fmt.Errorf("age model: %w", err)
	}
	o, err := amOptions(opt)
	if err != nil {
		return nil, fmt.Errorf("age model: %w", err)
	}
	nt, nh := len(tz), len(heightsM)
	if o.Draws > MaxAgeModelValues/nh {
		return nil, fmt.Errorf("age model: %d draws × %d heights exceed %d values", o.Draws, nh, MaxAgeModelValues)
	}

	// gaps[i]: least time between tie i and tie i+1 (the hiatuses between them).
	gaps := make([]float64, nt-1)
	for _, h := range hz {
		i := amInterval(tz, h.HeightM)
		gaps[i] += h.MinDurationMa
	}
	// Walk plan of every tie interval and requested heights that sit on ties.
	plans := make([][]amStep, nt-1)
	atTie := make([]int, nh) // tie index for a height on a tie, else −1
	for j, z := range heightsM {
		atTie[j] = slices.IndexFunc(tz, func(t TiePoint) bool { return t.HeightM == z })
	}
	for i := range nt - 1 {
		plans[i] = amPlan(tz[i].HeightM, tz[i+1].HeightM, heightsM, hz)
	}

	m := &AgeModel{
		HeightsM:     slices.Clone(heightsM),
		NDraws:       o.Draws,
		AgesMa:       make([]float64, o.Draws*nh),
		TieAgesMa:    make([]float64, o.Draws*nt),
		TieHeightsM:  make([]float64, nt),
		RigidityPerM: make([]float64, o.Draws),
		Seed:         opt.Seed,
	}
	for i, t := range tz {
		m.TieHeightsM[i] = t.HeightM
	}
	for _, t := range ties {
		m.inputHeightsM = append(m.inputHeightsM, t.HeightM)
	}
	m.hiatuses = hz
	r := rand.New(rand.NewPCG(opt.Seed, 0x9e3779b97f4a7c15))
	fracs := make([]float64, 0, 16)
	fill := func(d int, a []float64) {
		k := o.RigidityPerM
		if k == 0 {
			k = math.Exp(o.logKMin + (o.logKMax-o.logKMin)*r.Float64())
		}
		m.RigidityPerM[d] = k
		copy(m.TieAgesMa[d*nt:], a)
		row := m.AgesMa[d*nh : (d+1)*nh]
		for j, ti := range atTie {
			if ti >= 0 {
				row[j] = a[ti]
			}
		}
		for i, plan := range plans {
			fracs = amDirichlet(r, plan, k, fracs[:0])
			remaining := a[i] - a[i+1] - gaps[i]
			age := a[i]
			for s, st := range plan {
				age -= remaining * fracs[s]
				if st.hiatus {
					age -= st.minMa
				}
				if st.out >= 0 {
					row[st.out] = age
				}
			}
		}
	}

	a := make([]float64, nt)
	useGibbs := o.Sampler == TieSamplerGibbs
	if !useGibbs {
		accepted, attempts := 0, 0
		maxAttempts := 1000*o.Draws + o.PilotAttempts
		for accepted < o.Draws {
			if o.Sampler == TieSamplerAuto && attempts == o.PilotAttempts && float64(accepted) < o.MinAcceptance*float64(attempts) {
				useGibbs = true
				break
			}
			if attempts >= maxAttempts {
				return nil, fmt.Errorf("age model: %d of %d rejection attempts in order: %w", accepted, attempts, ErrUnorderable)
			}
			attempts++
			for i, t := range tz {
				a[i] = amDrawTie(r, t)
			}
			if !amOrdered(a, gaps) {
				continue
			}
			fill(accepted, a)
			accepted++
		}
		m.Attempts = attempts
		m.Acceptance = float64(accepted) / float64(attempts)
		m.Sampler = TieSamplerRejection
	}
	if useGibbs {
		m.Sampler = TieSamplerGibbs
		if err := amGibbsInit(tz, gaps, a); err != nil {
			return nil, fmt.Errorf("age model: %w", err)
		}
		for range o.GibbsBurnIn {
			amGibbsSweep(r, tz, gaps, a)
		}
		if !amOrdered(a, gaps) { // only exact ties without room between them stay unordered
			return nil, fmt.Errorf("age model: %w", ErrUnorderable)
		}
		for d := range o.Draws {
			for range o.GibbsThin {
				amGibbsSweep(r, tz, gaps, a)
			}
			fill(d, a)
		}
	}

	m.Ages = make([]DrawSummary, nh)
	col := make([]float64, o.Draws)
	for j := range nh {
		for d := range o.Draws {
			col[d] = m.AgesMa[d*nh+j]
		}
		m.Ages[j] = summarizeDraws(col)
	}
	return m, nil
}

type amOpts struct {
	AgeModelOptions
	logKMin, logKMax float64
}

func amOptions(opt AgeModelOptions) (amOpts, error) {
	o := amOpts{AgeModelOptions: opt}
	if o.Draws == 0 {
		o.Draws = DefaultAgeModelDraws
	}
	if o.RigidityMinPerM == 0 {
		o.RigidityMinPerM = DefaultRigidityMinPerM
	}
	if o.RigidityMaxPerM == 0 {
		o.RigidityMaxPerM = DefaultRigidityMaxPerM
	}
	if o.MinAcceptance == 0 {
		o.MinAcceptance = DefaultMinAcceptance
	}
	if o.PilotAttempts == 0 {
		o.PilotAttempts = defaultPilotAttempts
	}
	if o.GibbsBurnIn == 0 {
		o.GibbsBurnIn = defaultGibbsBurnIn
	}
	if o.GibbsThin == 0 {
		o.GibbsThin = defaultGibbsThin
	}
	switch {
	case o.Draws < 1:
		return o, fmt.Errorf("draws %d < 1", opt.Draws)
	case o.RigidityPerM < 0 || math.IsInf(o.RigidityPerM, 0) || math.IsNaN(o.RigidityPerM):
		return o, fmt.Errorf("rigidity %g per m", opt.RigidityPerM)
	case !(o.RigidityMinPerM > 0) || !(o.RigidityMaxPerM >= o.RigidityMinPerM) || math.IsInf(o.RigidityMaxPerM, 0):
		return o, fmt.Errorf("rigidity prior [%g, %g] per m", o.RigidityMinPerM, o.RigidityMaxPerM)
	case o.PilotAttempts < 1 || o.GibbsBurnIn < 0 || o.GibbsThin < 1 || o.MinAcceptance < 0:
		return o, fmt.Errorf("sampler options %+v", opt)
	case o.Sampler < TieSamplerAuto || o.Sampler > TieSamplerGibbs:
		return o, fmt.Errorf("unknown sampler %v", opt.Sampler)
	}
	o.logKMin, o.logKMax = math.Log(o.RigidityMinPerM), math.Log(o.RigidityMaxPerM)
	return o, nil
}

// amValidate checks the input and returns the ties and hiatuses sorted by height.
func amValidate(ties []TiePoint, hiatuses []Hiatus, heightsM []float64) ([]TiePoint, []Hiatus, error) {
	if len(ties) < 2 {
		return nil, nil, fmt.Errorf("%d tie points, need 2", len(ties))
	}
	tz := slices.Clone(ties)
	slices.SortStableFunc(tz, func(a, b TiePoint) int { return cmpFloat(a.HeightM, b.HeightM) })
	for i, t := range tz {
		if !proxyFinite(t.HeightM) {
			return nil, nil, fmt.Errorf("tie height %g", t.HeightM)
		}
		if i > 0 && t.HeightM == tz[i-1].HeightM {
			return nil, nil, fmt.Errorf("two ties at %g m", t.HeightM)
		}
		switch t.Kind {
		case TieNormal:
			if !proxyFinite(t.AgeMa) || !proxyFinite(t.SigmaMa) || t.SigmaMa < 0 {
				return nil, nil, fmt.Errorf("tie at %g m: age %g ± %g", t.HeightM, t.AgeMa, t.SigmaMa)
			}
		case TieUniform:
			if !proxyFinite(t.MinAgeMa) || !proxyFinite(t.MaxAgeMa) || t.MinAgeMa > t.MaxAgeMa {
				return nil, nil, fmt.Errorf("tie at %g m: age range [%g, %g]", t.HeightM, t.MinAgeMa, t.MaxAgeMa)
			}
		default:
			return nil, nil, fmt.Errorf("tie at %g m: unknown kind %v", t.HeightM, t.Kind)
		}
	}
	lo, hi := tz[0].HeightM, tz[len(tz)-1].HeightM
	hz := slices.Clone(hiatuses)
	slices.SortStableFunc(hz, func(a, b Hiatus) int { return cmpFloat(a.HeightM, b.HeightM) })
	for i, h := range hz {
		if !(h.HeightM > lo && h.HeightM < hi) {
			return nil, nil, fmt.Errorf("hiatus at %g m outside the ties (%g–%g m)", h.HeightM, lo, hi)
		}
		if slices.ContainsFunc(tz, func(t TiePoint) bool { return t.HeightM == h.HeightM }) {
			return nil, nil, fmt.Errorf("hiatus at %g m sits on a tie", h.HeightM)
		}
		if i > 0 && h.HeightM == hz[i-1].HeightM {
			return nil, nil, fmt.Errorf("two hiatuses at %g m", h.HeightM)
		}
		if !proxyFinite(h.MinDurationMa) || h.MinDurationMa < 0 {
			return nil, nil, fmt.Errorf("hiatus at %g m: minimum duration %g", h.HeightM, h.MinDurationMa)
		}
	}
	if len(heightsM) == 0 {
		return nil, nil, errors.New("no heights requested")
	}
	for j, z := range heightsM {
		if !(z >= lo && z <= hi) {
			return nil, nil, fmt.Errorf("height %g m outside the ties (%g–%g m)", z, lo, hi)
		}
		if j > 0 && !(z > heightsM[j-1]) {
			return nil, nil, fmt.Errorf("heights not strictly ascending at %d", j)
		}
	}
	return tz, hz, nil
}

func cmpFloat(a, b float64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// amPlan returns the walk up the tie interval (lo, hi): sediment thicknesses, hiatuses and the requested
// heights reached on the way. At a hiatus height the requested height comes first (older side).
func amPlan(lo, hi float64, heightsM []float64, hz []Hiatus) []amStep {
	type node struct {
		z      float64
		out    int // requested height index, or −1 for a hiatus
		minDur float64
	}
	var nodes []node
	for j, z := range heightsM {
		if z > lo && z < hi {
			nodes = append(nodes, node{z: z, out: j})
		}
	}
	for _, h := range hz {
		if h.HeightM > lo && h.HeightM < hi {
			nodes = append(nodes, node{z: h.HeightM, out: -1, minDur: h.MinDurationMa})
		}
	}
	slices.SortStableFunc(nodes, func(a, b node) int {
		if c := cmpFloat(a.z, b.z); c != 0 {
			return c
		}
		return cmpFloat(float64(-a.out), float64(-b.out)) // requested (out ≥ 0) before hiatus (−1)
	})
	var plan []amStep
	pos := lo
	for _, nd := range nodes {
		if nd.z > pos {
			plan = append(plan, amStep{thickM: nd.z - pos, out: -1})
			pos = nd.z
		}
		switch {
		case nd.out < 0:
			plan = append(plan, amStep{hiatus: true, minMa: nd.minDur, out: -1})
		case len(plan) > 0 && plan[len(plan)-1].out < 0 && !plan[len(plan)-1].hiatus:
			plan[len(plan)-1].out = nd.out
		default: // reached without new sediment
			plan = append(plan, amStep{out: nd.out})
		}
	}
	return append(plan, amStep{thickM: hi - pos, out: -1})
}

// amInterval returns the tie interval i (tz[i].HeightM < z < tz[i+1].HeightM) holding z.
func amInterval(tz []TiePoint, z float64) int {
	i := slices.IndexFunc(tz, func(t TiePoint) bool { return t.HeightM > z })
	return i - 1
}

func amDrawTie(r *rand.Rand, t TiePoint) float64 {
	if t.Kind == TieUniform {
		return t.MinAgeMa + (t.MaxAgeMa-t.MinAgeMa)*r.Float64()
	}
	return t.AgeMa + t.SigmaMa*r.NormFloat64()
}

// amOrdered reports whether ages (ties by ascending height) decrease upwards by more than the gaps.
func amOrdered(a, gaps []float64) bool {
	for i := range gaps {
		if !(a[i]-a[i+1] > gaps[i]) {
			return false
		}
	}
	return true
}

// amDirichlet fills out with the Dirichlet fractions of the steps of a plan: Gamma(k·thickness) for
// sediment, Gamma(hiatusExtraShape) for a hiatus, normalised. Zero-thickness steps get 0. When a shape is
// below linearMinShape the variates are drawn on the log scale, so that tiny shapes cannot underflow to
// 0/0; otherwise directly, which is faster.
func amDirichlet(r *rand.Rand, plan []amStep, k float64, out []float64) []float64 {
	const linearMinShape = 0.1 // U^(1/a) ≥ (2⁻⁵³)^10 ≈ 1e-160: no underflow
	linear := true
	for _, st := range plan {
		if !st.hiatus && st.thickM > 0 && k*st.thickM < linearMinShape {
			linear = false
			break
		}
	}
	var sum float64
	if linear {
		for _, st := range plan {
			shape := k * st.thickM
			if st.hiatus {
				shape = hiatusExtraShape
			}
			var g float64
			if shape > 0 {
				dv, logBoost := gammaCore(r, shape)
				g = dv
				if logBoost != 0 {
					g *= math.Exp(logBoost)
				}
			}
			out = append(out, g)
			sum += g
		}
	} else {
		maxL := math.Inf(-1)
		for _, st := range plan {
			shape := k * st.thickM
			if st.hiatus {
				shape = hiatusExtraShape
			}
			l := math.Inf(-1)
			if shape > 0 {
				dv, logBoost := gammaCore(r, shape)
				l = math.Log(dv) + logBoost
			}
			out = append(out, l)
			maxL = max(maxL, l)
		}
		for i, l := range out {
			out[i] = math.Exp(l - maxL)
			sum += out[i]
		}
	}
	for i := range out {
		out[i] /= sum
	}
	return out
}

// gammaCore draws a Gamma(shape, 1) variate as dv·exp(logBoost), by Marsaglia & Tsang (2000, ACM TOMS
// 26:363) with the boost Gamma(a) = Gamma(a+1)·U^(1/a) for a < 1 kept on the log scale.
func gammaCore(r *rand.Rand, shape float64) (dv, logBoost float64) {
	if shape < 1 {
		logBoost = math.Log(1-r.Float64()) / shape
		shape++
	}
	d := shape - 1.0/3
	c := 1 / math.Sqrt(9*d)
	for {
		x := r.NormFloat64()
		v := 1 + c*x
		if v <= 0 {
			continue
		}
		v = v * v * v
		u := r.Float64()
		x2 := x * x
		if u < 1-0.0331*x2*x2 || math.Log(u) < 0.5*x2+d*(1-v+math.Log(v)) {
			return d * v, logBoost
		}
	}
}

// amGibbsInit puts a feasible, ordered state into a, or returns ErrUnorderable.
func amGibbsInit(tz []TiePoint, gaps, a []float64) error {
	n := len(tz)
	lower := make([]float64, n) // least age given the younger ties above
	upper := make([]float64, n) // greatest age given the older ties below
	for i := n - 1; i >= 0; i-- {
		lower[i] = math.Inf(-1)
		if tz[i].Kind == TieUniform {
			lower[i] = tz[i].MinAgeMa
		} else if tz[i].SigmaMa == 0 {
			lower[i] = tz[i].AgeMa
		}
		if i < n-1 {
			lower[i] = max(lower[i], lower[i+1]+gaps[i])
		}
	}
	for i := range n {
		upper[i] = math.Inf(1)
		if tz[i].Kind == TieUniform {
			upper[i] = tz[i].MaxAgeMa
		} else if tz[i].SigmaMa == 0 {
			upper[i] = tz[i].AgeMa
		}
		if i > 0 {
			upper[i] = min(upper[i], upper[i-1]-gaps[i-1])
		}
		if !(lower[i] < upper[i]) && !(lower[i] == upper[i] && amPoint(tz[i])) {
			return fmt.Errorf("tie at %g m: %w", tz[i].HeightM, ErrUnorderable)
		}
	}
	for i := range n {
		mu, _ := tz[i].meanSigma()
		hi := upper[i]
		if i > 0 {
			hi = min(hi, a[i-1]-gaps[i-1])
		}
		a[i] = max(lower[i], min(hi, mu))
	}
	return nil
}

func amPoint(t TiePoint) bool {
	return (t.Kind == TieNormal && t.SigmaMa == 0) || (t.Kind == TieUniform && t.MinAgeMa == t.MaxAgeMa)
}

// amGibbsSweep draws every tie from its distribution truncated by its current neighbours.
func amGibbsSweep(r *rand.Rand, tz []TiePoint, gaps, a []float64) {
	n := len(tz)
	for i, t := range tz {
		lo, hi := math.Inf(-1), math.Inf(1)
		if i < n-1 {
			lo = a[i+1] + gaps[i]
		}
		if i > 0 {
			hi = a[i-1] - gaps[i-1]
		}
		switch {
		case amPoint(t) && t.Kind == TieNormal:
			a[i] = t.AgeMa
		case t.Kind == TieUniform:
			l, h := max(lo, t.MinAgeMa), min(hi, t.MaxAgeMa)
			a[i] = l + (h-l)*r.Float64()
		default:
			a[i] = t.AgeMa + t.SigmaMa*truncStdNormal(r, (lo-t.AgeMa)/t.SigmaMa, (hi-t.AgeMa)/t.SigmaMa)
		}
	}
}

// truncStdNormal draws a standard normal variate truncated to [a, b] (a ≤ b, either may be infinite). It
// inverts the distribution function in the body and uses rejection from an exponential or a uniform
// proposal in a far tail (Robert 1995, Stat. Comput. 5:121), so it stays exact where the CDF underflows.
func truncStdNormal(r *rand.Rand, a, b float64) float64 {
	if a >= b {
		return a
	}
	if b <= 0 { // mirror the lower tail onto the upper one
		return -truncStdNormal(r, -b, -a)
	}
	if a < 3 {
		if a < 0 && b > 0 { // straddles 0: invert Φ directly
			pa, pb := stdNormalCDF(a), stdNormalCDF(b)
			for {
				x := -math.Sqrt2 * math.Erfcinv(2*(pa+(pb-pa)*r.Float64()))
				if !math.IsInf(x, 0) { // u rounded to 0 or 1
					return math.Min(b, math.Max(a, x))
				}
			}
		}
		// 0 ≤ a < 3: invert the upper tail Q(x) = erfc(x/√2)/2, accurate for moderate x.
		qa, qb := 0.5*math.Erfc(a/math.Sqrt2), 0.5*math.Erfc(b/math.Sqrt2)
		u := qb + (qa-qb)*r.Float64()
		if u > 0 {
			x := math.Sqrt2 * math.Erfcinv(2*u)
			return math.Min(b, math.Max(a, x))
		}
	}
	if b-a < 1/a { // narrow band far out: uniform proposal, acceptance ≥ e^{-1}
		for {
			x := a + (b-a)*r.Float64()
			if math.Log(1-r.Float64()) < (a*a-x*x)/2 {
				return x
			}
		}
	}
	lambda := (a + math.Sqrt(a*a+4)) / 2
	for {
		x := a - math.Log(1-r.Float64())/lambda
		if x > b {
			continue
		}
		if math.Log(1-r.Float64()) < -(x-lambda)*(x-lambda)/2 {
			return x
		}
	}
}

func stdNormalCDF(x float64) float64 { return 0.5 * math.Erfc(-x/math.Sqrt2) }

// summarizeDraws returns the median and 2.5/97.5 percentiles (linear interpolation between order
// statistics, Hyndman & Fan type 7). It reorders x in place, by selection rather than a full sort. NaN for
// no draws.
func summarizeDraws(x []float64) DrawSummary {
	return DrawSummary{Median: quantile7(x, 0.5), Lo95: quantile7(x, 0.025), Hi95: quantile7(x, 0.975)}
}

// AgesAt returns a copy of the age draws (Ma) at a requested height, or an error when the height was not
// requested.
func (m *AgeModel) AgesAt(heightM float64) ([]float64, error) {
	j, ok := slices.BinarySearch(m.HeightsM, heightM)
	if !ok {
		return nil, fmt.Errorf("age model: height %g m was not requested", heightM)
	}
	nh := len(m.HeightsM)
	out := make([]float64, m.NDraws)
	for d := range out {
		out[d] = m.AgesMa[d*nh+j]
	}
	return out, nil
}

// AccumulationRate returns the draws of the mean accumulation rate in m/Ma between two requested heights
// (lowerM < upperM), thickness over elapsed time in each draw, and their summary. A hiatus in between
// lowers the rate. A draw without elapsed time gives +Inf.
func (m *AgeModel) AccumulationRate(lowerM, upperM float64) ([]float64, DrawSummary, error) {
	if !(lowerM < upperM) {
		return nil, DrawSummary{}, fmt.Errorf("age model: rate between %g and %g m", lowerM, upperM)
	}
	lo, err := m.AgesAt(lowerM)
	if err != nil {
		return nil, DrawSummary{}, err
	}
	hi, err := m.AgesAt(upperM)
	if err != nil {
		return nil, DrawSummary{}, err
	}
	rate := make([]float64, len(lo))
	for d := range rate {
		rate[d] = (upperM - lowerM) / (lo[d] - hi[d])
	}
	return rate, summarizeDraws(slices.Clone(rate)), nil
}

// AccumulationRates returns the summary of the accumulation rate (m/Ma) between every pair of successive
// requested heights; entry j is for HeightsM[j]–HeightsM[j+1].
func (m *AgeModel) AccumulationRates() []DrawSummary {
	out := make([]DrawSummary, max(0, len(m.HeightsM)-1))
	for j := range out {
		_, s, _ := m.AccumulationRate(m.HeightsM[j], m.HeightsM[j+1])
		out[j] = s
	}
	return out
}

// Shares returns, for every draw, the share of the age at a requested height that comes from the ages of
// the ties flagged in carries (indexed like the ties given to FitAgeModel): between ties i (below) and
// i+1 the age of a draw is (1 − F)·aᵢ + F·aᵢ₊₁ + F·gᵢ − h(z), F the elapsed fraction of the draw, gᵢ the
// hiatus minima between the two ties and h(z) those below z, so its share is
// ((1 − F)·aᵢ·cᵢ + F·aᵢ₊₁·cᵢ₊₁)/age with cᵢ = 1 for a flagged tie. A relative shift ε of the flagged
// ties' ages (a shared decay constant, tracer or calibration) then moves the age by share·ε·age,
// exactly, since F does not depend on the tie ages. At a tie the share is 0 or 1.
func (m *AgeModel) Shares(carries []bool, heightM float64) ([]float64, error) {
	if len(carries) != len(m.inputHeightsM) {
		return nil, fmt.Errorf("age model: %d flags for %d ties", len(carries), len(m.inputHeightsM))
	}
	j, ok := slices.BinarySearch(m.HeightsM, heightM)
	if !ok {
		return nil, fmt.Errorf("age model: height %g m was not requested", heightM)
	}
	nt, nh := len(m.TieHeightsM), len(m.HeightsM)
	c := make([]float64, nt)
	for k, on := range carries {
		if on {
			i, _ := slices.BinarySearch(m.TieHeightsM, m.inputHeightsM[k])
			c[i] = 1
		}
	}
	out := make([]float64, m.NDraws)
	if i, onTie := slices.BinarySearch(m.TieHeightsM, heightM); onTie {
		for d := range out {
			out[d] = c[i]
		}
		return out, nil
	}
	i := sort.SearchFloat64s(m.TieHeightsM, heightM) - 1 // tie below
	var gap, below float64
	for _, h := range m.hiatuses {
		if h.HeightM > m.TieHeightsM[i] && h.HeightM < m.TieHeightsM[i+1] {
			gap += h.MinDurationMa
			if h.HeightM < heightM {
				below += h.MinDurationMa
			}
		}
	}
	for d := range out {
		lo, hi := m.TieAgesMa[d*nt+i], m.TieAgesMa[d*nt+i+1]
		age := m.AgesMa[d*nh+j]
		f := 0.5
		if r := lo - hi - gap; r > 0 {
			f = min(1, max(0, (lo-age-below)/r))
		}
		sh := 0.0
		if age != 0 {
			sh = ((1-f)*lo*c[i] + f*hi*c[i+1]) / age
		}
		out[d] = min(1, max(0, sh))
	}
	return out, nil
}

// EventAge is the age distribution of an event found in a section, pushed through the model's draws.
type EventAge struct {
	BaseM, TopM float64
	AgesMa      []float64 // one age per model draw
	Summary     DrawSummary
	Seed        uint64
}

// EventAge returns the age draws of an event at a height (baseM == topM) or somewhere in an interval
// (baseM < topM, e.g. between the last sample below and the first above an onset). For an interval the
// event's age in each draw is uniform between the draw's ages at the two heights; seed drives that choice
// and is recorded. Both heights must have been requested.
func (m *AgeModel) EventAge(baseM, topM float64, seed uint64) (EventAge, error) {
	if baseM > topM {
		return EventAge{}, fmt.Errorf("age model: event base %g m above top %g m", baseM, topM)
	}
	base, err := m.AgesAt(baseM)
	if err != nil {
		return EventAge{}, err
	}
	e := EventAge{BaseM: baseM, TopM: topM, AgesMa: base, Seed: seed}
	if topM > baseM {
		top, err := m.AgesAt(topM)
		if err != nil {
			return EventAge{}, err
		}
		r := rand.New(rand.NewPCG(seed, 0x9e3779b97f4a7c15))
		for d := range e.AgesMa {
			e.AgesMa[d] = top[d] + (base[d]-top[d])*r.Float64()
		}
	}
	e.Summary = summarizeDraws(slices.Clone(e.AgesMa))
	return e, nil
}

// NaiveLinearAgeModel is linear interpolation between tie means with tie errors propagated as if
// independent. It ignores deposition variability and hiatuses, so its intervals are far too narrow
// (coverage well below the nominal 95 % in simulation). It is offered only as a labelled naive comparison.
type NaiveLinearAgeModel struct {
	HeightsM   []float64
	AgeMa      []float64
	SigmaMa    []float64 // 1σ
	Lo95, Hi95 []float64 // AgeMa ∓ 1.96σ

	inputHeightsM    []float64 // the ties' heights in the order given to FitNaiveLinear
	lowerM, upperM   []float64 // per height: the ties it is interpolated between
	lowerMa, upperMa []float64 // their mean ages
	w                []float64 // per height: the weight of the upper tie
}

// Shares returns the share of the interpolated age at a requested height that comes from the ties flagged
// in carries (indexed like the ties given to FitNaiveLinear): ((1 − w)·m₁·c₁ + w·m₂·c₂)/age.
func (m *NaiveLinearAgeModel) Shares(carries []bool, heightM float64) (float64, error) {
	if len(carries) != len(m.inputHeightsM) {
		return 0, fmt.Errorf("naive linear age model: %d flags for %d ties", len(carries), len(m.inputHeightsM))
	}
	j, ok := slices.BinarySearch(m.HeightsM, heightM)
	if !ok {
		return 0, fmt.Errorf("naive linear age model: height %g m was not requested", heightM)
	}
	var c1, c2 float64
	for k, on := range carries {
		if on && m.inputHeightsM[k] == m.lowerM[j] {
			c1 = 1
		}
		if on && m.inputHeightsM[k] == m.upperM[j] {
			c2 = 1
		}
	}
	if m.AgeMa[j] == 0 {
		return 0, nil
	}
	return min(1, max(0, ((1-m.w[j])*m.lowerMa[j]*c1+m.w[j]*m.upperMa[j]*c2)/m.AgeMa[j])), nil
}

// FitNaiveLinear interpolates linearly between the two ties around every requested height (ties by
// height; a uniform tie counts as its mean ± half-width/√3) with σ² = (1−w)²σ₁² + w²σ₂². Heights must lie
// within the tie range; the error says otherwise.
func FitNaiveLinear(ties []TiePoint, heightsM []float64) (*NaiveLinearAgeModel, error) {
	tz, _, err := amValidate(ties, nil, heightsM)
	if err != nil {
		return nil, fmt.Errorf("naive linear age model: %w", err)
	}
	n := len(heightsM)
	m := &NaiveLinearAgeModel{HeightsM: slices.Clone(heightsM), AgeMa: make([]float64, n), SigmaMa: make([]float64, n),
		Lo95: make([]float64, n), Hi95: make([]float64, n), lowerM: make([]float64, n), upperM: make([]float64, n),
		lowerMa: make([]float64, n), upperMa: make([]float64, n), w: make([]float64, n)}
	for _, t := range ties {
		m.inputHeightsM = append(m.inputHeightsM, t.HeightM)
	}
	for j, z := range heightsM {
		i := max(0, min(len(tz)-2, amInterval(tz, z)))
		if z == tz[len(tz)-1].HeightM {
			i = len(tz) - 2
		}
		m1, s1 := tz[i].meanSigma()
		m2, s2 := tz[i+1].meanSigma()
		w := (z - tz[i].HeightM) / (tz[i+1].HeightM - tz[i].HeightM)
		m.lowerM[j], m.upperM[j], m.lowerMa[j], m.upperMa[j], m.w[j] = tz[i].HeightM, tz[i+1].HeightM, m1, m2, w
		m.AgeMa[j] = (1-w)*m1 + w*m2
		m.SigmaMa[j] = math.Hypot((1-w)*s1, w*s2)
		m.Lo95[j] = m.AgeMa[j] - 1.959963984540054*m.SigmaMa[j]
		m.Hi95[j] = m.AgeMa[j] + 1.959963984540054*m.SigmaMa[j]
	}
	return m, nil
}
