package stats

import (
	"fmt"
	"math"
	"strings"
)

// SigmaLevel is the coverage factor k of a quoted uncertainty: a value quoted at level k is k times the
// 1σ standard uncertainty. The package stores 1σ everywhere; convert with To1Sigma when reading input and
// with From1Sigma when displaying. The zero value is not a valid level.
type SigmaLevel int

// The levels in use. Papers in geochronology usually tabulate 2σ.
const (
	OneSigma SigmaLevel = 1
	TwoSigma SigmaLevel = 2
)

// ParseSigmaLevel reads a level as written in a URL query or an import header: "1", "2", "1s", "2s",
// "1sigma", "2sigma", "1σ" or "2σ", case-insensitively and ignoring surrounding spaces. Anything else
// is an error.
func ParseSigmaLevel(s string) (SigmaLevel, error) {
	t := strings.ToLower(strings.TrimSpace(s))
	if t == "" {
		return 0, fmt.Errorf("parse sigma level %q: empty", s)
	}
	var level SigmaLevel
	switch t[0] {
	case '1':
		level = OneSigma
	case '2':
		level = TwoSigma
	default:
		return 0, fmt.Errorf("parse sigma level %q: want 1 or 2", s)
	}
	switch t[1:] {
	case "", "s", "sigma", "σ":
		return level, nil
	}
	return 0, fmt.Errorf("parse sigma level %q: unknown suffix", s)
}

// Valid reports whether l is OneSigma or TwoSigma.
func (l SigmaLevel) Valid() bool { return l == OneSigma || l == TwoSigma }

// String returns "1σ" or "2σ", the label to put beside a displayed ±. ParseSigmaLevel reads it back.
// An invalid level prints as "SigmaLevel(n)".
func (l SigmaLevel) String() string {
	if !l.Valid() {
		return fmt.Sprintf("SigmaLevel(%d)", int(l))
	}
	return fmt.Sprintf("%dσ", int(l))
}

// To1Sigma converts an uncertainty quoted at level to 1σ. It panics if level is not valid: levels come
// from ParseSigmaLevel or the constants, so an invalid one is a programming error.
func To1Sigma(sigma float64, level SigmaLevel) float64 {
	mustValid(level)
	return sigma / float64(level)
}

// From1Sigma converts a 1σ uncertainty to level, for display. It panics if level is not valid.
func From1Sigma(sigma1s float64, level SigmaLevel) float64 {
	mustValid(level)
	return sigma1s * float64(level)
}

func mustValid(level SigmaLevel) {
	if !level.Valid() {
		panic(fmt.Sprintf("stats: invalid sigma level %d", int(level)))
	}
}

// Quadrature returns sqrt(Σ termᵢ²), the sum in quadrature of independent uncertainties (all at the
// same level), without overflow or underflow for large or tiny terms. No terms give 0; an infinite
// term gives +Inf; otherwise a NaN term gives NaN.
func Quadrature(terms ...float64) float64 {
	scale := 0.0
	for _, x := range terms {
		a := math.Abs(x)
		if math.IsInf(a, 1) {
			return math.Inf(1)
		}
		if a > scale || math.IsNaN(a) {
			scale = a
		}
	}
	if scale == 0 || math.IsNaN(scale) {
		return scale
	}
	sum := 0.0
	for _, x := range terms {
		r := x / scale
		sum += r * r
	}
	return scale * math.Sqrt(sum)
}

// MinRelSigma is the smallest uncertainty, relative to the age, that a date can plausibly have: 1 ppm,
// a hundred times finer than the best published single dates (CA-ID-TIMS reaches about 0.01 % at 2σ; common
// practice). A smaller σ is a unit or typing mistake, and its weight 1/σ² swamps every other date.
const MinRelSigma = 1e-6

// MinAbsSigmaMa is the smallest uncertainty in Ma whatever the age: 1/σ² stays below 1e300, so that sums
// of weights stay finite.
const MinAbsSigmaMa = 1e-150

// SigmaFloorMa is the smallest 1σ uncertainty (Ma) a date of age ageMa may have to be weighted: the larger
// of MinRelSigma × |age| and MinAbsSigmaMa.
func SigmaFloorMa(ageMa float64) float64 { return math.Max(MinRelSigma*math.Abs(ageMa), MinAbsSigmaMa) }

// UsableSigma reports whether an age and its 1σ can enter a weighted computation: both finite, σ at
// least SigmaFloorMa(age) (so 1/σ² is finite too).
func UsableSigma(ageMa, sigmaMa float64) bool {
	if math.IsNaN(ageMa) || math.IsInf(ageMa, 0) || math.IsNaN(sigmaMa) || math.IsInf(sigmaMa, 0) {
		return false
	}
	return sigmaMa >= SigmaFloorMa(ageMa)
}
