package stats

import (
	"errors"
	"fmt"
	"hash/fnv"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"strings"
	"sync"
)

// This file holds the engine of joint draws behind every comparison: each quantity (a date, a unit mean,
// a pulse edge, an event age) is drawn N times, and systematic components shared between quantities are
// drawn once per draw and applied to all of them, so that they cancel where they should and count where
// they should. compare.go reads the draws.

// ComparisonLevel says which uncertainty components a comparison draws. The zero value is the default,
// LevelAsNeeded.
type ComparisonLevel int

const (
	// LevelAsNeeded (the default) draws, for every comparison of two quantities, the random part of
	// both and each systematic component that only one of the two carries; a component that both carry
	// (the same key) is held at its nominal value in both, since it moves them together. A statistic
	// built from several pairs (the within-pulse test, the volume fraction) applies this pair by pair.
	// It is the rule of REFERENCES §8 made automatic: U–Pb against U–Pb of the same tracer uses X,
	// against another tracer Y, against any other system Z, and ⁴⁰Ar/³⁹Ar against ⁴⁰Ar/³⁹Ar on the same
	// calibration uses the analytical σ and against anything else the full external σ. It equals
	// LevelFull except for the second-order remainder of a shared component when the two ages differ
	// (for a relative term ε, (A − B)·ε: 3e-5 Ma for 0.05 Ma apart at 0.05 % 1σ), which it sets to zero,
	// i.e. it is the same as drawing the shared keys jointly.
	LevelAsNeeded ComparisonLevel = iota
	// LevelAnalytical draws only the random part of each quantity: every systematic component is held
	// at its nominal value. It is right only when every pair compared shares all its systematic
	// components, and too narrow otherwise.
	LevelAnalytical
	// LevelFull draws every component: each systematic key once per draw, applied to every quantity
	// that carries it (shared components are correlated, never added as independent terms). Differences
	// are then as under LevelAsNeeded up to the second-order remainder; use it when an absolute age
	// enters, e.g. against a timescale boundary given only as a number.
	LevelFull
)

// String returns "as-needed", "analytical" or "full", the spelling ParseComparisonLevel reads.
func (l ComparisonLevel) String() string {
	switch l {
	case LevelAsNeeded:
		return "as-needed"
	case LevelAnalytical:
		return "analytical"
	case LevelFull:
		return "full"
	}
	return fmt.Sprintf("ComparisonLevel(%d)", int(l))
}

// ParseComparisonLevel reads "as-needed", "analytical" or "full" (case-insensitive, surrounding blanks
// ignored). The empty string is an error, not a default: the caller picks the default.
func ParseComparisonLevel(s string) (ComparisonLevel, error) {
	for _, l := range []ComparisonLevel{LevelAsNeeded, LevelAnalytical, LevelFull} {
		if strings.EqualFold(strings.TrimSpace(s), l.String()) {
			return l, nil
		}
	}
	return 0, fmt.Errorf("comparison level %q: want as-needed, analytical or full", s)
}

// SystematicKind says how a systematic component moves an age.
type SystematicKind int

const (
	// SystematicRelative scales the age by (1 + ε), ε ~ N(0, RelSigma²): a tracer calibration, taking
	// the tracer's relative σ as a relative σ of the age, as UPbXYZ does.
	SystematicRelative SystematicKind = iota + 1
	// SystematicDecayConstant draws λ' = λ(1 + ε), ε ~ N(0, RelSigma²), and scales the age by λ/λ' =
	// 1/(1 + ε): exact for an age ln(1 + R)/λ with the measured ratio R fixed (²⁰⁶Pb/²³⁸U).
	SystematicDecayConstant
	// SystematicAbsolute adds ε ~ N(0, SigmaMa²) to the age: a shared offset in Ma, e.g. the
	// uncertainty of a timescale age that several quantities are tied to.
	SystematicAbsolute
)

// String returns "relative", "decay-constant" or "absolute".
func (k SystematicKind) String() string {
	switch k {
	case SystematicRelative:
		return "relative"
	case SystematicDecayConstant:
		return "decay-constant"
	case SystematicAbsolute:
		return "absolute"
	}
	return fmt.Sprintf("SystematicKind(%d)", int(k))
}

// Keys of the shared systematic components. One key per decay system, one per tracer (TracerKey), one
// per ⁴⁰Ar/³⁹Ar calibration (ArArCalibrationKey, which holds the monitor age and the ⁴⁰K λ together:
// ⁴⁰Ar/³⁹Ar ages need both and RecalculateAgeMa moves them exactly). KeyLambda40K is for a ⁴⁰K-based age
// that is not tied to a monitor (K–Ar); ⁴⁰Ar/³⁹Ar dates carry their calibration's key instead.
const (
	KeyLambda238 = "λ238"
	KeyLambda235 = "λ235"
	KeyLambda40K = "λ40K"
)

// TracerKey returns the key of the calibration of an isotope-dilution tracer, e.g. TracerKey("ET535").
func TracerKey(tracer string) string { return "tracer " + tracer }

// ArArCalibrationKey returns the key under which the monitor age and λ of an ⁴⁰Ar/³⁹Ar calibration are
// drawn: one draw per comparison draw, shared by every date on that calibration.
func ArArCalibrationKey(c Calibration) string { return "ar/ar " + c.Code }

// Systematic is one systematic component of an age: a shared Key, how it moves the age, and its 1σ.
// Every quantity carrying the same Key receives the same draw; quantities that name one Key must agree
// on its Kind and σ.
type Systematic struct {
	Key      string
	Kind     SystematicKind
	RelSigma float64 // 1σ as a fraction of the age or λ (relative, decay-constant), e.g. Lambda238RelSigma
	SigmaMa  float64 // 1σ in Ma (absolute)
}

// UPbSystematics returns the systematic components of a ²⁰⁶Pb/²³⁸U age: the tracer calibration (relative
// 1σ tracerRelSigma, e.g. 0.00015 for 0.03 % at 2σ; omitted when tracer is "" or the σ is 0) and λ238
// (Lambda238RelSigma), as in UPbXYZ.
func UPbSystematics(tracer string, tracerRelSigma float64) []Systematic {
	var s []Systematic
	if tracer != "" && tracerRelSigma != 0 {
		s = append(s, Systematic{Key: TracerKey(tracer), Kind: SystematicRelative, RelSigma: tracerRelSigma})
	}
	return append(s, Systematic{Key: KeyLambda238, Kind: SystematicDecayConstant, RelSigma: Lambda238RelSigma})
}

// QuantityKind is the form of the random part of a Quantity.
type QuantityKind int

const (
	// QuantityNormal is AgeMa ± SigmaMa (1σ, the analytical or random part only).
	QuantityNormal QuantityKind = iota + 1
	// QuantityUniform is uniform between MinAgeMa and MaxAgeMa.
	QuantityUniform
	// QuantitySamples is given by draws: SamplesMa (pulse edges from a density bootstrap, event ages
	// from an age model).
	QuantitySamples
)

// Quantity is an age to compare: its random part (Kind) and its systematic components. Build it with
// NormalAge, UniformAge, UPbDate, ArArDate or SampledAge; With adds components.
//
// A unit mean is a QuantityNormal: the weighted mean with its σ (WeightedMeanResult.SigmaReported) as
// the random part and the systematic components of its dates, which are shared by the whole mean and so
// belong after averaging (Horstwood et al. 2016).
type Quantity struct {
	Name string
	Kind QuantityKind
	// AgeMa ± SigmaMa (1σ, ≥ 0) describe a QuantityNormal; AgeMa is also the age an ⁴⁰Ar/³⁹Ar date has
	// on ArAr.
	AgeMa, SigmaMa float64
	// MinAgeMa ≤ MaxAgeMa describe a QuantityUniform.
	MinAgeMa, MaxAgeMa float64
	// SamplesMa are the draws of a QuantitySamples. Quantities with the same non-empty Group are rows of
	// one joint sample (the edges of one pulse, the events of one age model): they must have the same
	// number of draws and are always read at the same row. Draw d of the engine reads row idx_d of a
	// group, the idx_d drawn uniformly with replacement from the group's own seeded stream; a quantity
	// with an empty Group is resampled on its own.
	SamplesMa []float64
	Group     string
	// Systematics are the shared components, applied to every draw of the random part.
	Systematics []Systematic
	// ArAr, when set, is the ⁴⁰Ar/³⁹Ar calibration the age is on. Its monitor age and λ are drawn (each
	// normal with the calibration's 1σ) under ArArCalibrationKey and the age is moved to the drawn
	// calibration by RecalculateAgeMa, before any other component is applied.
	ArAr *Calibration
	// Shares give, per systematic key (a key of Systematics, or ArArCalibrationKey of ArAr), the part
	// of the age that the component moves, between 0 and 1: one value for the whole quantity, or one
	// per row of SamplesMa. A key without an entry moves the whole age. An event dated by an age model
	// whose ties carry a component only in part (a U–Pb ash bed below it, a biozone above) carries it
	// with the shares AgeModel.Shares gives; a drawn component then moves the age by share × the shift
	// it gives a whole age.
	Shares map[string][]float64
}

// NormalAge returns an age N(ageMa, sigmaMa²) with no systematic component (1σ), e.g. a direct event
// age or a date whose systematic terms are already included.
func NormalAge(name string, ageMa, sigmaMa float64) Quantity {
	return Quantity{Name: name, Kind: QuantityNormal, AgeMa: ageMa, SigmaMa: sigmaMa}
}

// UniformAge returns an age uniform between minAgeMa and maxAgeMa, e.g. an event known only to lie
// within a biozone.
func UniformAge(name string, minAgeMa, maxAgeMa float64) Quantity {
	return Quantity{Name: name, Kind: QuantityUniform, MinAgeMa: minAgeMa, MaxAgeMa: maxAgeMa}
}

// UPbDate returns a ²⁰⁶Pb/²³⁸U date (or unit mean) ageMa ± xSigmaMa (X, 1σ) with the systematic
// components of UPbSystematics.
func UPbDate(name string, ageMa, xSigmaMa float64, tracer string, tracerRelSigma float64) Quantity {
	q := NormalAge(name, ageMa, xSigmaMa)
	q.Systematics = UPbSystematics(tracer, tracerRelSigma)
	return q
}

// ArArDate returns an ⁴⁰Ar/³⁹Ar date (or unit mean) ageMa ± sigmaMa (1σ analytical) on calibration cal.
// Move dates to one calibration first (Recalculate) so that they share its key.
func ArArDate(name string, ageMa, sigmaMa float64, cal Calibration) Quantity {
	q := NormalAge(name, ageMa, sigmaMa)
	q.ArAr = &cal
	return q
}

// SampledAge returns an age given by draws (see Quantity.SamplesMa and Group). The slice is not copied
// by the constructor; DrawJoint does not modify it.
func SampledAge(name string, samplesMa []float64, group string) Quantity {
	return Quantity{Name: name, Kind: QuantitySamples, SamplesMa: samplesMa, Group: group}
}

// With returns a copy of q with the components s added, e.g. UPbSystematics for pulse edges of a
// density of U–Pb dates.
func (q Quantity) With(s ...Systematic) Quantity {
	q.Systematics = append(slices.Clone(q.Systematics), s...)
	return q
}

// PulseEdgeSamples are the bootstrap draws of the edges of one pulse: in each replicate in which the
// pulse exists, its older edge (start, the onset) and younger edge (end).
type PulseEdgeSamples struct {
	Pulse                // of the reference density
	Replicates []int     // the replicates in which the pulse exists, ascending
	ModeMa     []float64 // one per entry of Replicates
	StartMa    []float64
	EndMa      []float64
}

// Quantities returns the onset (start) and end of the pulse as sampled quantities of one group, so that
// every draw takes both edges from the same replicate.
func (p PulseEdgeSamples) Quantities(name, group string) (start, end Quantity) {
	return SampledAge(name+" onset", p.StartMa, group), SampledAge(name+" end", p.EndMa, group)
}

// PulseEdgeDraws follows the pulses of band.Reference through the replicates exactly as BootstrapPulses
// does (catchments split at the reference minima; the highest replicate pulse in a catchment stands for
// it) and returns, per reference pulse in ascending ModeMa, the edges of every replicate in which it
// exists. Those are the draws of the edges conditional on the pulse existing; BootstrapPulses gives its
// frequency. It returns an error for bad options or a band without replicates.
func PulseEdgeDraws(band DensityBand, opts PulseOptions) ([]PulseEdgeSamples, error) {
	out, err := pulseEdgeDraws(band, opts)
	if err != nil {
		return nil, fmt.Errorf("pulse edge draws: %w", err)
	}
	return out, nil
}

// pulseEdgeDraws is PulseEdgeDraws without the prefix on its errors (BootstrapPulses adds its own).
func pulseEdgeDraws(band DensityBand, opts PulseOptions) ([]PulseEdgeSamples, error) {
	if len(band.Replicates) == 0 {
		return nil, fmt.Errorf("the band has no replicates")
	}
	ref, bounds, err := findPulses(band.GridMa, band.Reference.Density, opts)
	if err != nil {
		return nil, err
	}
	out := make([]PulseEdgeSamples, len(ref))
	for k, p := range ref {
		out[k].Pulse = p
	}
	best := make([]int, len(ref))
	for r, dens := range band.Replicates {
		ps, _, err := findPulses(band.GridMa, dens, opts)
		if err != nil {
			return nil, fmt.Errorf("replicate %d: %w", r, err)
		}
		for k := range best {
			best[k] = -1
		}
		for q, p := range ps {
			k := sort.SearchFloat64s(bounds, p.ModeMa)
			if best[k] < 0 || p.Height > ps[best[k]].Height {
				best[k] = q
			}
		}
		for k, q := range best {
			if q >= 0 {
				out[k].Replicates = append(out[k].Replicates, r)
				out[k].ModeMa = append(out[k].ModeMa, ps[q].ModeMa)
				out[k].StartMa = append(out[k].StartMa, ps[q].StartMa)
				out[k].EndMa = append(out[k].EndMa, ps[q].EndMa)
			}
		}
	}
	return out, nil
}

// DefaultComparisonDraws is the number of joint draws used when DrawOptions leaves N zero.
const DefaultComparisonDraws = 10_000

// maxJointValues bounds draws × quantities of one set of joint draws (400 MB of float64).
const maxJointValues = 50_000_000

// DrawOptions configures DrawJoint.
type DrawOptions struct {
	N     int // joint draws; 0 means DefaultComparisonDraws
	Seed  uint64
	Level ComparisonLevel // zero: LevelAsNeeded
}

// JointDraws holds N joint draws of a set of quantities, from which the comparisons of compare.go are
// read. Quantities are referred to by their index in the slice given to DrawJoint. Its methods are safe
// for concurrent use.
type JointDraws struct {
	Names []string // of the quantities, in input order
	N     int
	Seed  uint64
	Level ComparisonLevel
	// Keys are the systematic keys met, sorted.
	Keys []string
	// MinSamples is the smallest number of rows of any sampled quantity (0 if none). When it is below N
	// the draws resample those rows, and a probability cannot be known better than the rows allow,
	// whatever N: the SE of every Probability counts the rows of the sampled quantities it is read from
	// (see Probability).
	MinSamples int

	qs   []jdQuantity
	keys []jdKey

	mu      sync.Mutex
	cache   map[jdCacheKey][]float64
	volumes *jdVolumes // volume draws of VolumeFractionBefore; Sensitivity shares them between its sets
}

// jdVolumes holds volume draws per quantity index and volume. They depend only on the seed, N, the index
// and the volume, so draws with the same seed and N (the sets of Sensitivity) can share them.
type jdVolumes struct {
	mu sync.Mutex
	m  map[jdVolumeKey][]float64
}

type jdVolumeKey struct {
	q int
	v Volume
}

type jdQuantity struct {
	base  []float64   // the random part, N draws
	keys  []int       // indices into JointDraws.keys, ascending
	share [][]float64 // per entry of keys: nil (the whole age), one value, or one per sample row
	rows  []int32     // the sample row of every draw, for per-row shares
	// nrows is the number of rows of a sampled quantity (0 otherwise), and rowsOf the stream its rows
	// are chosen from: quantities with the same rowsOf (one group) share their rows. effectiveN reads them.
	nrows  int
	rowsOf string
}

// shareAt is the share of component b (an index into keys) in draw d.
func (jq *jdQuantity) shareAt(b, d int) float64 {
	s := jq.share[b]
	if len(s) == 1 {
		return s[0]
	}
	return s[jq.rows[d]]
}

type jdKey struct {
	sys Systematic
	cal *Calibration // set for an ⁴⁰Ar/³⁹Ar calibration key
	dev []float64    // N standard normal deviates; for a calibration the drawn λ then monitor age
	lam []float64    // drawn λ (a⁻¹) of a calibration key
	mon []float64    // drawn monitor age (Ma) of a calibration key
}

type jdCacheKey struct {
	q    int
	mask uint64
}

// jdStream returns a generator for one named stream of a seed, so that a quantity's or a key's draws do
// not depend on what else is drawn.
func jdStream(seed uint64, name string) *rand.Rand {
	h := fnv.New64a()
	h.Write([]byte(name))
	return rand.New(rand.NewPCG(seed, h.Sum64()))
}

// ErrKeyConflict is returned by DrawJoint when two quantities describe one systematic key differently.
var ErrKeyConflict = errors.New("systematic key described differently by two quantities")

// DrawJoint draws every quantity opt.N times with opt.Seed.
//
// The random part of quantity i comes from its own stream (seed, "quantity i"): a normal draw, a uniform
// draw, or the row of its samples chosen for that draw. Rows of a sample group are chosen uniformly
// with replacement from the stream (seed, "group <name>"), one row per draw shared by the whole group;
// an ungrouped sampled quantity uses its own stream. Each systematic key is drawn once per draw from
// (seed, "key <name>") — a standard normal deviate, two for an ⁴⁰Ar/³⁹Ar calibration (λ, then monitor
// age) — whatever the level: the level only decides which keys a comparison applies (ComparisonLevel),
// so results at different levels use the same random numbers. The same quantities, N and seed give the
// same draws on any machine.
//
// It returns an error for no quantities, N < 0, an unknown level, a quantity with non-finite or
// negative σ, an empty range or no samples, a sample group whose members differ in length, a component
// with an empty key, unknown kind or bad σ, an invalid calibration, ErrKeyConflict, more than 64 keys on
// one quantity, or draws × quantities above 5e7.
func DrawJoint(qs []Quantity, opt DrawOptions) (*JointDraws, error) {
	n := opt.N
	if n == 0 {
		n = DefaultComparisonDraws
	}
	if n < 1 {
		return nil, fmt.Errorf("joint draws: %d draws", opt.N)
	}
	if opt.Level < LevelAsNeeded || opt.Level > LevelFull {
		return nil, fmt.Errorf("joint draws: unknown level %v", opt.Level)
	}
	if len(qs) == 0 {
		return nil, fmt.Errorf("joint draws: no quantities")
	}
	if n*len(qs) > maxJointValues || n > maxJointValues {
		return nil, fmt.Errorf("joint draws: %d draws × %d quantities exceed %d values", n, len(qs), maxJointValues)
	}
	j := &JointDraws{N: n, Seed: opt.Seed, Level: opt.Level, Names: make([]string, len(qs)),
		qs: make([]jdQuantity, len(qs)), cache: map[jdCacheKey][]float64{}, volumes: &jdVolumes{m: map[jdVolumeKey][]float64{}}}

	// Keys: collect, check agreement, sort.
	type keySpec struct {
		sys Systematic
		cal *Calibration
	}
	specs := map[string]keySpec{}
	addKey := func(i int, s keySpec) error {
		if old, ok := specs[s.sys.Key]; ok {
			same := old.sys == s.sys && (old.cal == nil) == (s.cal == nil) && (old.cal == nil || *old.cal == *s.cal)
			if !same {
				return fmt.Errorf("joint draws: quantity %d (%s): key %q: %w", i, qs[i].Name, s.sys.Key, ErrKeyConflict)
			}
			return nil
		}
		specs[s.sys.Key] = s
		return nil
	}
	groups := map[string]int{}
	for i, q := range qs {
		j.Names[i] = q.Name
		if err := jdValidate(q); err != nil {
			return nil, fmt.Errorf("joint draws: quantity %d (%s): %w", i, q.Name, err)
		}
		if q.Kind == QuantitySamples {
			if j.MinSamples == 0 || len(q.SamplesMa) < j.MinSamples {
				j.MinSamples = len(q.SamplesMa)
			}
			if q.Group != "" {
				if m, ok := groups[q.Group]; ok && m != len(q.SamplesMa) {
					return nil, fmt.Errorf("joint draws: quantity %d (%s): %d draws in group %q of %d",
						i, q.Name, len(q.SamplesMa), q.Group, m)
				}
				groups[q.Group] = len(q.SamplesMa)
			}
		}
		if q.ArAr != nil {
			c := *q.ArAr
			if err := addKey(i, keySpec{sys: Systematic{Key: ArArCalibrationKey(c)}, cal: &c}); err != nil {
				return nil, err
			}
		}
		for _, s := range q.Systematics {
			if err := addKey(i, keySpec{sys: s}); err != nil {
				return nil, err
			}
		}
	}
	for k := range specs {
		j.Keys = append(j.Keys, k)
	}
	slices.Sort(j.Keys)
	keyIndex := map[string]int{}
	j.keys = make([]jdKey, len(j.Keys))
	for k, name := range j.Keys {
		keyIndex[name] = k
		s := specs[name]
		r := jdStream(opt.Seed, "key "+name)
		kk := jdKey{sys: s.sys, cal: s.cal}
		if s.cal != nil {
			kk.lam, kk.mon = make([]float64, n), make([]float64, n)
			for d := range n {
				z1 := r.NormFloat64()
				kk.lam[d], kk.mon[d] = s.cal.Draw(z1, r.NormFloat64())
			}
		} else {
			kk.dev = make([]float64, n)
			for d := range n {
				kk.dev[d] = r.NormFloat64()
			}
		}
		j.keys[k] = kk
	}

	// Rows of the sample groups.
	rows := map[string][]int32{}
	groupRows := func(name string, m int) []int32 {
		if idx, ok := rows[name]; ok {
			return idx
		}
		r := jdStream(opt.Seed, name)
		idx := make([]int32, n)
		for d := range idx {
			idx[d] = int32(r.IntN(m))
		}
		rows[name] = idx
		return idx
	}

	for i, q := range qs {
		jq := jdQuantity{base: make([]float64, n)}
		switch q.Kind {
		case QuantityNormal:
			r := jdStream(opt.Seed, fmt.Sprintf("quantity %d", i))
			for d := range jq.base {
				jq.base[d] = q.AgeMa + q.SigmaMa*r.NormFloat64()
			}
		case QuantityUniform:
			r := jdStream(opt.Seed, fmt.Sprintf("quantity %d", i))
			for d := range jq.base {
				jq.base[d] = q.MinAgeMa + (q.MaxAgeMa-q.MinAgeMa)*r.Float64()
			}
		case QuantitySamples:
			name := fmt.Sprintf("quantity %d", i)
			if q.Group != "" {
				name = "group " + q.Group
			}
			rs := groupRows(name, len(q.SamplesMa))
			for d, row := range rs {
				jq.base[d] = q.SamplesMa[row]
			}
			jq.rows = rs
			jq.nrows, jq.rowsOf = len(q.SamplesMa), name
		}
		if q.ArAr != nil {
			jq.keys = append(jq.keys, keyIndex[ArArCalibrationKey(*q.ArAr)])
		}
		for _, s := range q.Systematics {
			jq.keys = append(jq.keys, keyIndex[s.Key])
		}
		slices.Sort(jq.keys)
		jq.keys = slices.Compact(jq.keys)
		if len(jq.keys) > 64 {
			return nil, fmt.Errorf("joint draws: quantity %d (%s): %d systematic keys, at most 64", i, q.Name, len(jq.keys))
		}
		jq.share = make([][]float64, len(jq.keys))
		for key, sh := range q.Shares {
			b := slices.IndexFunc(jq.keys, func(k int) bool { return j.Keys[k] == key })
			if b < 0 {
				return nil, fmt.Errorf("joint draws: quantity %d (%s): a share for key %q, which it does not carry", i, q.Name, key)
			}
			jq.share[b] = jdShares(sh)
		}
		j.qs[i] = jq
	}
	return j, nil
}

// jdShares returns the shares as the draws use them: nil when every one is 1 to within rounding (the
// whole age moves, and a comparison may hold the component fixed when the other side carries it whole
// too).
func jdShares(sh []float64) []float64 {
	for _, x := range sh {
		if math.Abs(x-1) > 1e-9 {
			return slices.Clone(sh)
		}
	}
	return nil
}

func jdValidate(q Quantity) error {
	finite := func(v ...float64) bool {
		for _, x := range v {
			if math.IsNaN(x) || math.IsInf(x, 0) {
				return false
			}
		}
		return true
	}
	switch q.Kind {
	case QuantityNormal:
		if !finite(q.AgeMa, q.SigmaMa) || q.SigmaMa < 0 {
			return fmt.Errorf("age %g ± %g Ma: want finite, σ ≥ 0", q.AgeMa, q.SigmaMa)
		}
	case QuantityUniform:
		if !finite(q.MinAgeMa, q.MaxAgeMa) || q.MinAgeMa > q.MaxAgeMa {
			return fmt.Errorf("uniform %g–%g Ma: want finite, min ≤ max", q.MinAgeMa, q.MaxAgeMa)
		}
	case QuantitySamples:
		if len(q.SamplesMa) == 0 {
			return fmt.Errorf("no samples")
		}
		if len(q.SamplesMa) > math.MaxInt32 {
			return fmt.Errorf("%d samples", len(q.SamplesMa))
		}
		for k, x := range q.SamplesMa {
			if !finite(x) {
				return fmt.Errorf("sample %d: %w", k, ErrNonFinite)
			}
		}
	default:
		return fmt.Errorf("unknown kind %d", int(q.Kind))
	}
	if q.ArAr != nil {
		if err := q.ArAr.Validate(); err != nil {
			return err
		}
		if q.ArAr.Code == "" {
			return fmt.Errorf("calibration without a code")
		}
	}
	for key, sh := range q.Shares {
		if len(sh) != 1 && (q.Kind != QuantitySamples || len(sh) != len(q.SamplesMa)) {
			return fmt.Errorf("key %q: %d shares: want 1 or one per sample row", key, len(sh))
		}
		for k, x := range sh {
			if !(x >= 0 && x <= 1) {
				return fmt.Errorf("key %q: share %d is %g: want between 0 and 1", key, k, x)
			}
		}
	}
	for _, s := range q.Systematics {
		if s.Key == "" {
			return fmt.Errorf("systematic component without a key")
		}
		switch s.Kind {
		case SystematicRelative, SystematicDecayConstant:
			if !finite(s.RelSigma) || s.RelSigma < 0 || s.RelSigma >= 0.2 || s.SigmaMa != 0 {
				return fmt.Errorf("key %q: relative σ %g: want in [0, 0.2) and no SigmaMa", s.Key, s.RelSigma)
			}
		case SystematicAbsolute:
			if !finite(s.SigmaMa) || s.SigmaMa < 0 || s.RelSigma != 0 {
				return fmt.Errorf("key %q: σ %g Ma: want finite, ≥ 0 and no RelSigma", s.Key, s.SigmaMa)
			}
		default:
			return fmt.Errorf("key %q: unknown kind %d", s.Key, int(s.Kind))
		}
	}
	return nil
}

// values returns the N draws of quantity q with the keys of its mask applied (bit b stands for
// qs[q].keys[b]). The slice is shared: callers must not modify it.
func (j *JointDraws) values(q int, mask uint64) []float64 {
	jq := j.qs[q]
	if mask == 0 {
		return jq.base
	}
	ck := jdCacheKey{q, mask}
	j.mu.Lock()
	v, ok := j.cache[ck]
	j.mu.Unlock()
	if ok {
		return v
	}
	v = slices.Clone(jq.base)
	// Order: the calibration move first (it is defined on the age as measured), then the scale factors,
	// then absolute offsets.
	for b, k := range jq.keys {
		if mask&(1<<b) == 0 || j.keys[k].cal == nil {
			continue
		}
		key := j.keys[k]
		from := *key.cal
		to := from
		for d := range v {
			to.LambdaPerA, to.MonitorAgeMa = key.lam[d], key.mon[d]
			if jq.share[b] == nil {
				v[d] = RecalculateAgeMa(v[d], from, to)
			} else {
				v[d] += jq.shareAt(b, d) * (RecalculateAgeMa(v[d], from, to) - v[d])
			}
		}
	}
	for b, k := range jq.keys {
		key := j.keys[k]
		if mask&(1<<b) == 0 || key.cal != nil {
			continue
		}
		if jq.share[b] != nil {
			for d := range v {
				f := 1 + key.sys.RelSigma*key.dev[d] // relative: the age × f
				if key.sys.Kind == SystematicDecayConstant {
					f = 1 / f
				}
				v[d] += jq.shareAt(b, d) * (f - 1) * v[d]
			}
			continue
		}
		switch key.sys.Kind {
		case SystematicRelative:
			for d := range v {
				v[d] *= 1 + key.sys.RelSigma*key.dev[d]
			}
		case SystematicDecayConstant:
			for d := range v {
				v[d] /= 1 + key.sys.RelSigma*key.dev[d]
			}
		}
	}
	for b, k := range jq.keys {
		key := j.keys[k]
		if mask&(1<<b) == 0 || key.cal != nil || key.sys.Kind != SystematicAbsolute {
			continue
		}
		for d := range v {
			sh := 1.0
			if jq.share[b] != nil {
				sh = jq.shareAt(b, d)
			}
			v[d] += sh * key.sys.SigmaMa * key.dev[d]
		}
	}
	j.mu.Lock()
	j.cache[ck] = v
	j.mu.Unlock()
	return v
}

// maskAgainst returns the mask of q's keys that the level applies when q is compared with other.
func (j *JointDraws) maskAgainst(q, other int) uint64 {
	keys := j.qs[q].keys
	switch j.Level {
	case LevelAnalytical:
		return 0
	case LevelFull:
		return jdAllKeys(len(keys))
	}
	// A key both carry is held fixed only when it moves both whole; carried in part by either, it is
	// drawn in both (jointly, so the common part still cancels and the rest counts).
	var m uint64
	for b, k := range keys {
		c, shared := slices.BinarySearch(j.qs[other].keys, k)
		if !shared || j.qs[q].share[b] != nil || j.qs[other].share[c] != nil {
			m |= 1 << b
		}
	}
	return m
}

// pair returns the draws of a and b as the level applies them to the comparison of a with b.
func (j *JointDraws) pair(a, b int) (va, vb []float64) {
	return j.values(a, j.maskAgainst(a, b)), j.values(b, j.maskAgainst(b, a))
}

// Draws returns a copy of the N draws of quantity q with every systematic component the level would
// apply against a quantity that shares none of them (all keys under LevelAsNeeded and LevelFull, none
// under LevelAnalytical): the marginal distribution of q for display.
func (j *JointDraws) Draws(q int) ([]float64, error) {
	if q < 0 || q >= len(j.qs) {
		return nil, fmt.Errorf("joint draws: quantity %d of %d", q, len(j.qs))
	}
	var m uint64
	if j.Level != LevelAnalytical {
		m = jdAllKeys(len(j.qs[q].keys))
	}
	return slices.Clone(j.values(q, m)), nil
}

// jdAllKeys is the mask of all n keys of a quantity.
func jdAllKeys(n int) uint64 {
	if n >= 64 {
		return math.MaxUint64
	}
	return 1<<n - 1
}
