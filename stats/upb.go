package stats

import (
	"fmt"
	"math"
	"strings"
)

// Uranium decay constants of Jaffey et al. (1971), Phys. Rev. C 4:1889, with their 1σ uncertainties.
// The 1σ values are quoted from memory (project REFERENCES §2); as relative 2σ they are 0.1070 % and
// 0.1361 %.
const (
	Lambda238PerA      = 1.55125e-10 // ²³⁸U decay constant (a⁻¹)
	Lambda238SigmaPerA = 0.00083e-10 // 1σ of Lambda238PerA (a⁻¹)
	Lambda235PerA      = 9.8485e-10  // ²³⁵U decay constant (a⁻¹)
	Lambda235SigmaPerA = 0.0067e-10  // 1σ of Lambda235PerA (a⁻¹)

	Lambda238RelSigma = Lambda238SigmaPerA / Lambda238PerA // relative 1σ of λ238, ≈ 5.35e-4
	Lambda235RelSigma = Lambda235SigmaPerA / Lambda235PerA // relative 1σ of λ235, ≈ 6.80e-4
)

// Pb206U238FromAgeMa returns the radiogenic ²⁰⁶Pb/²³⁸U ratio e^{λ238 t} − 1 of an age in Ma.
func Pb206U238FromAgeMa(ageMa float64) float64 {
	return math.Expm1(Lambda238PerA * ageMa * yearsPerMa)
}

// AgeMaFromPb206U238 returns the ²⁰⁶Pb/²³⁸U age ln(1 + R)/λ238 in Ma of a radiogenic ratio R.
// R ≤ −1 gives NaN or −Inf, as math.Log1p does.
func AgeMaFromPb206U238(ratio float64) float64 {
	return math.Log1p(ratio) / Lambda238PerA / yearsPerMa
}

// AgeSigmaMaFromPb206U238 converts a σ of the ²⁰⁶Pb/²³⁸U ratio R to a σ of the age in Ma,
// σ_t = σ_R/(λ238(1 + R)), at the same level as the input σ.
func AgeSigmaMaFromPb206U238(ratio, ratioSigma float64) float64 {
	return ratioSigma / (Lambda238PerA * (1 + ratio)) / yearsPerMa
}

// Pb206U238SigmaFromAgeMa converts a σ of a ²⁰⁶Pb/²³⁸U age in Ma to a σ of the ratio,
// σ_R = λ238·e^{λ238 t}·σ_t, at the same level as the input σ. It inverts AgeSigmaMaFromPb206U238.
func Pb206U238SigmaFromAgeMa(ageMa, sigmaMa float64) float64 {
	l := Lambda238PerA * yearsPerMa
	return l * math.Exp(l*ageMa) * sigmaMa
}

// UncertaintyLevel picks which uncertainty of a date to show or use, as in the ±X/Y/Z of U–Pb
// (Horstwood et al. 2016). For ⁴⁰Ar/³⁹Ar, Analytical is the analytical σ and FullExternal adds the
// monitor age and decay constant; WithTracer has no Ar/Ar meaning and callers should treat it as
// Analytical there.
type UncertaintyLevel int

// Levels, from the smallest. Which to use [T, REFERENCES §8]: U–Pb against U–Pb of the same tracer →
// Analytical; different tracers or labs → WithTracer; any other system → FullExternal.
const (
	Analytical   UncertaintyLevel = iota // X: analytical only
	WithTracer                           // Y: X ⊕ tracer calibration
	FullExternal                         // Z: Y ⊕ decay constant (for Ar/Ar: ⊕ monitor age and λ)
)

// String returns "analytical", "tracer" or "full", the spelling ParseUncertaintyLevel reads
// (meant for URL queries).
func (l UncertaintyLevel) String() string {
	switch l {
	case Analytical:
		return "analytical"
	case WithTracer:
		return "tracer"
	case FullExternal:
		return "full"
	}
	return fmt.Sprintf("UncertaintyLevel(%d)", int(l))
}

// ParseUncertaintyLevel reads "analytical" or "x", "tracer" or "y", "full" or "z" (case-insensitive,
// surrounding spaces ignored). The empty string is an error, not a default: the caller picks the default.
func ParseUncertaintyLevel(s string) (UncertaintyLevel, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "analytical", "x":
		return Analytical, nil
	case "tracer", "y":
		return WithTracer, nil
	case "full", "z":
		return FullExternal, nil
	}
	return 0, fmt.Errorf("parse uncertainty level %q: want analytical, tracer or full", s)
}

// XYZ is a U–Pb age with its ±X/Y/Z uncertainties, all 1σ in Ma.
type XYZ struct {
	AgeMa float64
	XMa   float64 // analytical
	YMa   float64 // X ⊕ tracer
	ZMa   float64 // Y ⊕ λ238
	// The relative 1σ used for the systematic terms, recorded for display.
	TracerRelSigma, LambdaRelSigma float64
}

// Sigma returns the 1σ at level (X, Y or Z); it panics on an unknown level.
func (x XYZ) Sigma(level UncertaintyLevel) float64 {
	switch level {
	case Analytical:
		return x.XMa
	case WithTracer:
		return x.YMa
	case FullExternal:
		return x.ZMa
	}
	panic(fmt.Sprintf("stats: invalid uncertainty level %d", int(level)))
}

// UPbXYZ adds the systematic terms to the analytical 1σ xMa of a U–Pb age, typically a weighted mean:
// Y = X ⊕ tracerRelSigma·t and Z = Y ⊕ lambdaRelSigma·t (relative σ as fractions at 1σ, e.g. 0.00015
// for a tracer quoted as 0.03 % at 2σ, and Lambda238RelSigma). The λ term is exact to first order
// (∂t/∂λ = −t/λ); the tracer term takes the tracer's relative σ as a relative σ of the age, the usual
// practice, which overstates it by a fraction of about λt/2 (1.6 % at 200 Ma).
//
// These terms are shared by every date of one tracer and decay constant, so they are added after
// averaging, never into the weights (Horstwood et al. 2016): pass the weighted mean's σ as xMa
// (WeightedMeanResult.SigmaReported, so that any overdispersion inflation is in X). It
// returns an error for a non-finite or negative age or σ.
func UPbXYZ(ageMa, xMa, tracerRelSigma, lambdaRelSigma float64) (XYZ, error) {
	for _, v := range []struct {
		name string
		x    float64
	}{{"age", ageMa}, {"X", xMa}, {"tracer σ", tracerRelSigma}, {"λ σ", lambdaRelSigma}} {
		if !(v.x >= 0) || math.IsInf(v.x, 0) {
			return XYZ{}, fmt.Errorf("U–Pb X/Y/Z: %s %g must be finite and ≥ 0", v.name, v.x)
		}
	}
	y := Quadrature(xMa, tracerRelSigma*ageMa)
	return XYZ{
		AgeMa:          ageMa,
		XMa:            xMa,
		YMa:            y,
		ZMa:            Quadrature(y, lambdaRelSigma*ageMa),
		TracerRelSigma: tracerRelSigma,
		LambdaRelSigma: lambdaRelSigma,
	}, nil
}
