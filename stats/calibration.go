package stats

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
)

// yearsPerMa converts ages in Ma to years, the unit of the decay constants (a⁻¹).
const yearsPerMa = 1e6

// Calibration is a ⁴⁰Ar/³⁹Ar calibration: a total ⁴⁰K decay constant and the age of the neutron-fluence
// monitor the J values were measured against. Uncertainties are 1σ; a zero σ means the source gives
// none that this package can use, and contributes nothing to a full external uncertainty.
//
// λ and the monitor age are jointly normal with correlation LambdaMonitorCorrelation. A calibration fitted
// jointly (Renne et al. 2010, 2011: the partial decay constants λε, λβ and the FCs ⁴⁰Ar*/⁴⁰K ratio κ from
// one optimisation) publishes the covariance of (κ, λε, λβ); an age depends on those three only through
// λ = λε + λβ and t_s = ln(1 + λκ/λε)/λ, so the first-order reduction of that covariance to (λ, t_s) is all a
// recalculation needs, and is what is stored. Independent sources (λ from one paper, the monitor age from
// another) have correlation 0.
type Calibration struct {
	Code            string  // short stable key for URLs and storage, e.g. "kuiper08"
	Name            string  // human label
	Source          string  // citation for λ and the monitor age, with any caveat on the values
	LambdaPerA      float64 // total ⁴⁰K decay constant (a⁻¹)
	LambdaSigmaPerA float64 // 1σ of LambdaPerA (a⁻¹); 0 if not used
	MonitorName     string  // e.g. "FCs" (Fish Canyon sanidine)
	MonitorAgeMa    float64 // age of the monitor (Ma)
	MonitorSigmaMa  float64 // 1σ of MonitorAgeMa (Ma); 0 if not used
	// LambdaMonitorCorrelation is the correlation coefficient of λ and the monitor age, in [−1, 1];
	// 0 when they come from independent sources.
	LambdaMonitorCorrelation float64
}

// Calibrations returns the calibrations the app offers, as a fresh slice the caller owns, oldest first.
//
// Values and their standing (project REFERENCES §3):
//   - "sj77": λ of Steiger & Jäger (1977) with FCs 28.02 Ma of Renne et al. (1998). Published, values
//     quoted from memory. No σ is stored: Steiger & Jäger give no uncertainty for λ, and the FCs σ of
//     Renne et al. (1998) is not in REFERENCES, so the full external σ on this calibration is not
//     available (it equals the analytical one).
//   - "kuiper08": λ of Min et al. (2000) with FCs 28.201 ± 0.046 Ma of Kuiper et al. (2008). The published
//     ± 0.046 Ma and ± 0.107e-10 a⁻¹ are taken as 2σ (the level is from memory), so 1σ = 0.023 Ma and
//     0.0535e-10 a⁻¹, as in the propagation check of REFERENCES §3. Independent sources: correlation 0.
//   - "renne10": Renne et al. (2010) λ and FCs 28.305 ± 0.036 Ma with the joint uncertainty of its
//     optimisation. Published (abstract, GCA 74:5349): κ = (1.6418 ± 0.0045)e-3, λε = (0.5755 ±
//     0.0016)e-10 a⁻¹, λβ = (4.9737 ± 0.0093)e-10 a⁻¹, cov(κ, λε) = 7.1889e-19, cov(κ, λβ) = −7.1390e-19,
//     cov(λε, λβ) = −3.4497e-26. Reduced here (first order, renneReduction in the tests):
//     σ(λ) = √(σε² + σβ² + 2cov(λε, λβ)) = 0.00906e-10 a⁻¹; cov(λ, t_s) = 3.3e-15 to 4.1e-15 Ma·a⁻¹ over
//     the rounding of the published σ. σ(t_s) is ill-conditioned: κ and λε correlate at 0.998, and the
//     printed digits give σ(t_s) anywhere from 0.004 to 0.023 Ma, never 0.036 — so the published ± 0.036 Ma
//     cannot be a 1σ on the same footing as the covariance; it is taken as 2σ (σ(t_s) = 0.018 Ma), which
//     lies in that range and matches what the K–Pg full uncertainty implies (see "renne11"). Correlation
//     ρ(λ, t_s) = 4.1e-15/(0.00906e-10 × 0.018) ≈ 0.25 (0.20 at the low end of the rounding).
//   - "renne11": Renne et al. (2011) λ and FCs 28.294 ± 0.036 Ma, values from memory (REFERENCES §3 [M]).
//     The revised covariance of that paper was not reachable, so the joint uncertainty is derived: σ(λ) =
//     0.0132e-10 a⁻¹ from σ(λε) = 0.0016e-10 and σ(λβ) = 0.0134e-10 (Renne et al. 2011, from memory) with
//     cov(λε, λβ) of Renne et al. (2010); ρ = 0.25 as for "renne10"; and σ(t_s) fitted so that the full
//     external σ of the K–Pg sanidine age on this calibration, 66.043 ± 0.010 Ma analytical, is the published
//     ± 0.043 Ma (Sprain et al. 2015, GSAB 127:393; Renne et al. 2013, Science 339:684; both taken as 1σ, the
//     level from memory): σ(t_s) = 0.0183 Ma, i.e. the published ± 0.036 read as 2σ. Fitting ρ instead
//     cannot work: at 66 Ma the λ term is 0.0016 Ma, so with σ(t_s) = 0.036 any ρ in [−1, 1] leaves the full
//     σ between 0.081 and 0.085 Ma.
func Calibrations() []Calibration {
	return []Calibration{
		{
			Code:         "sj77",
			Name:         "Steiger & Jäger 1977, FCs 28.02 Ma",
			Source:       "Steiger & Jäger 1977, EPSL 36:359; FCs of Renne et al. 1998, Chem. Geol. 145:117 (values from memory)",
			LambdaPerA:   5.543e-10,
			MonitorName:  "FCs",
			MonitorAgeMa: 28.02,
		},
		{
			Code:            "kuiper08",
			Name:            "Min et al. 2000 λ, FCs 28.201 Ma (Kuiper et al. 2008)",
			Source:          "Min et al. 2000, GCA 64:73; Kuiper et al. 2008, Science 320:500 (σ level 2σ from memory, stored as 1σ)",
			LambdaPerA:      5.463e-10,
			LambdaSigmaPerA: 0.0535e-10,
			MonitorName:     "FCs",
			MonitorAgeMa:    28.201,
			MonitorSigmaMa:  0.023,
		},
		{
			Code: "renne11",
			Name: "Renne et al. 2011, FCs 28.294 Ma",
			Source: "Renne et al. 2011, GCA 75:5097 (values from memory). Joint uncertainty derived: σ(λ) from the " +
				"σ of λε and λβ (from memory) with their covariance in Renne et al. 2010; correlation of λ and the FCs " +
				"age 0.25 as for Renne et al. 2010; σ of the FCs age fitted so that the K–Pg sanidine age 66.043 ± " +
				"0.010 Ma has the published full ± 0.043 Ma (Sprain et al. 2015, GSAB 127:393; 1σ, level from memory), " +
				"i.e. the published ± 0.036 Ma read as 2σ",
			LambdaPerA:               5.5305e-10,
			LambdaSigmaPerA:          0.0132e-10,
			MonitorName:              "FCs",
			MonitorAgeMa:             28.294,
			MonitorSigmaMa:           0.0183,
			LambdaMonitorCorrelation: 0.25,
		},
		{
			Code: "renne10",
			Name: "Renne et al. 2010, FCs 28.305 Ma",
			Source: "Renne et al. 2010, GCA 74:5349: σ(λ) and the correlation of λ and the FCs age reduced from the " +
				"published covariance of κ, λε and λβ; the published ± 0.036 Ma of the FCs age read as 2σ (its " +
				"covariance cannot give a 1σ that large)",
			LambdaPerA:               5.5492e-10,
			LambdaSigmaPerA:          0.00906e-10,
			MonitorName:              "FCs",
			MonitorAgeMa:             28.305,
			MonitorSigmaMa:           0.018,
			LambdaMonitorCorrelation: 0.25,
		},
	}
}

// CalibrationByCode returns the calibration of Calibrations with the given Code, or an error naming it.
func CalibrationByCode(code string) (Calibration, error) {
	for _, c := range Calibrations() {
		if c.Code == code {
			return c, nil
		}
	}
	return Calibration{}, fmt.Errorf("calibration %q: unknown code", code)
}

// Validate reports an error unless λ and the monitor age are positive and finite and the σ are finite
// and non-negative.
func (c Calibration) Validate() error {
	switch {
	case !(c.LambdaPerA > 0) || math.IsInf(c.LambdaPerA, 0):
		return fmt.Errorf("calibration %q: decay constant %g must be positive", c.Code, c.LambdaPerA)
	case !(c.MonitorAgeMa > 0) || math.IsInf(c.MonitorAgeMa, 0):
		return fmt.Errorf("calibration %q: monitor age %g must be positive", c.Code, c.MonitorAgeMa)
	case !(c.LambdaSigmaPerA >= 0) || math.IsInf(c.LambdaSigmaPerA, 0):
		return fmt.Errorf("calibration %q: decay constant σ %g must be finite and ≥ 0", c.Code, c.LambdaSigmaPerA)
	case !(c.MonitorSigmaMa >= 0) || math.IsInf(c.MonitorSigmaMa, 0):
		return fmt.Errorf("calibration %q: monitor σ %g must be finite and ≥ 0", c.Code, c.MonitorSigmaMa)
	case !(c.LambdaMonitorCorrelation >= -1 && c.LambdaMonitorCorrelation <= 1):
		return fmt.Errorf("calibration %q: correlation of λ and the monitor age %g must be between −1 and 1", c.Code, c.LambdaMonitorCorrelation)
	}
	return nil
}

// Draw turns two independent standard normal deviates into one joint draw of (λ, monitor age) on c,
// by the Cholesky factor of their covariance: λ = λ̄ + σ_λ·z1, t_s = t̄_s + σ_s·(ρ·z1 + √(1 − ρ²)·z2).
// With ρ = 0 it is exactly λ̄ + σ_λ·z1 and t̄_s + σ_s·z2, the independent draw. c is not validated here.
func (c Calibration) Draw(z1, z2 float64) (lambdaPerA, monitorAgeMa float64) {
	lambdaPerA = c.LambdaPerA + c.LambdaSigmaPerA*z1
	rho := c.LambdaMonitorCorrelation
	if rho == 0 {
		return lambdaPerA, c.MonitorAgeMa + c.MonitorSigmaMa*z2
	}
	return lambdaPerA, c.MonitorAgeMa + c.MonitorSigmaMa*(rho*z1+math.Sqrt(1-rho*rho)*z2)
}

// ArArJ returns the irradiation parameter J = (e^{λ t_s} − 1)/R_s from a monitor of age monitorAgeMa whose
// measured ⁴⁰Ar*/³⁹Ar_K is monitorRatio (McDougall & Harrison 1999).
func ArArJ(monitorAgeMa, monitorRatio, lambdaPerA float64) float64 {
	return math.Expm1(lambdaPerA*monitorAgeMa*yearsPerMa) / monitorRatio
}

// ArArAgeMa returns the age t = ln(1 + J·R)/λ in Ma of a sample with ⁴⁰Ar*/³⁹Ar_K ratio R
// (McDougall & Harrison 1999).
func ArArAgeMa(ratio, j, lambdaPerA float64) float64 {
	return math.Log1p(j*ratio) / lambdaPerA / yearsPerMa
}

// arArRatio returns the sample/monitor ratio 𝓡 = (e^{λt} − 1)/(e^{λ t_s} − 1), which does not depend on
// the calibration; ageFromRatio inverts it on a calibration.
func arArRatio(ageMa float64, c Calibration) float64 {
	return math.Expm1(c.LambdaPerA*ageMa*yearsPerMa) / math.Expm1(c.LambdaPerA*c.MonitorAgeMa*yearsPerMa)
}

func ageFromRatio(r, lambdaPerA, monitorAgeMa float64) float64 {
	return math.Log1p(math.Expm1(lambdaPerA*monitorAgeMa*yearsPerMa)*r) / lambdaPerA / yearsPerMa
}

// RecalculateAgeMa moves an ⁴⁰Ar/³⁹Ar age from calibration from to calibration to by the exact relation
//
//	t' = (1/λ')·ln[1 + (e^{λ' t_s'} − 1)·(e^{λ t} − 1)/(e^{λ t_s} − 1)],
//
// which keeps the sample/monitor ratio fixed. (Scaling t by t_s'/t_s is wrong.) The calibrations are not
// validated here; use Recalculate for checked input and uncertainties.
func RecalculateAgeMa(ageMa float64, from, to Calibration) float64 {
	return ageFromRatio(arArRatio(ageMa, from), to.LambdaPerA, to.MonitorAgeMa)
}

// Recalculated is an ⁴⁰Ar/³⁹Ar age moved to another calibration, with 1σ uncertainties at two levels.
type Recalculated struct {
	AgeMa float64 // age on To
	// AnalyticalSigmaMa is the input analytical σ scaled through ∂t'/∂𝓡: use it to compare with
	// ⁴⁰Ar/³⁹Ar ages on the same calibration.
	AnalyticalSigmaMa float64
	// FullSigmaMa adds the monitor-age and decay-constant terms of To, with their covariance, to the
	// analytical σ: use it to compare with any other system (Renne et al. 1998; Min et al. 2000).
	FullSigmaMa float64
	Ratio       float64 // sample/monitor ratio 𝓡 = J·R/(e^{λ t_s} − 1), invariant across calibrations
	From, To    string  // calibration codes
}

// Recalculate moves ageMa ± sigmaMa (1σ, analytical: it must not already hold the monitor-age or
// decay-constant uncertainty of from) from one calibration to another and propagates the σ to first
// order with the partial derivatives of t' = ln(1 + E𝓡)/λ', E = e^{λ' t_s'} − 1, D = 1 + E𝓡:
// ∂t'/∂𝓡 = E/(λ'D), ∂t'/∂t_s' = 𝓡e^{λ' t_s'}/D, ∂t'/∂λ' = −t'/λ' + 𝓡 t_s' e^{λ' t_s'}/(λ'D).
// The monitor-age and λ' terms are combined with their correlation ρ (To.LambdaMonitorCorrelation):
// σ² = σ_a² + a² + b² + 2ρab, a = ∂t'/∂t_s'·σ(t_s'), b = ∂t'/∂λ'·σ(λ'). With from == to it returns the age unchanged
// with its full external σ on that calibration: use it so on a weighted mean of ages already on one
// calibration, since the systematic terms are shared and belong after averaging. It returns an error
// for an invalid calibration, a non-finite or negative age, or a non-finite or negative σ.
func Recalculate(ageMa, sigmaMa float64, from, to Calibration) (Recalculated, error) {
	if err := checkRecalcInput(ageMa, sigmaMa, from, to); err != nil {
		return Recalculated{}, err
	}
	r := arArRatio(ageMa, from)
	// σ of 𝓡 from the analytical σ of the input age: ∂𝓡/∂t = λ e^{λt}/(e^{λ t_s} − 1).
	lt := from.LambdaPerA * yearsPerMa
	dRdt := lt * math.Exp(lt*ageMa) / math.Expm1(lt*from.MonitorAgeMa)
	sigmaR := sigmaMa * dRdt

	l := to.LambdaPerA
	ts := to.MonitorAgeMa * yearsPerMa // years
	ets := math.Exp(l * ts)
	e := math.Expm1(l * ts)
	d := 1 + e*r
	t := math.Log1p(e*r) / l // years
	dtdR := e / (l * d)
	dtdTs := r * ets / d
	dtdL := -t/l + r*ts*ets/(l*d)

	analytical := math.Abs(dtdR) * sigmaR / yearsPerMa
	a := dtdTs * to.MonitorSigmaMa              // Ma
	b := dtdL * to.LambdaSigmaPerA / yearsPerMa // Ma
	full := Quadrature(analytical, a, b)
	if rho := to.LambdaMonitorCorrelation; rho != 0 {
		// a² + b² + 2ρab ≥ (1 − |ρ|)(a² + b²) ≥ 0, so the root is real.
		full = math.Sqrt(analytical*analytical + a*a + b*b + 2*rho*a*b)
	}
	return Recalculated{
		AgeMa:             t / yearsPerMa,
		AnalyticalSigmaMa: analytical,
		FullSigmaMa:       full,
		Ratio:             r,
		From:              from.Code,
		To:                to.Code,
	}, nil
}

func checkRecalcInput(ageMa, sigmaMa float64, from, to Calibration) error {
	if err := from.Validate(); err != nil {
		return fmt.Errorf("recalculate: from: %w", err)
	}
	if err := to.Validate(); err != nil {
		return fmt.Errorf("recalculate: to: %w", err)
	}
	if !(ageMa >= 0) || math.IsInf(ageMa, 0) {
		return fmt.Errorf("recalculate: age %g Ma must be finite and ≥ 0", ageMa)
	}
	if !(sigmaMa >= 0) || math.IsInf(sigmaMa, 0) {
		return fmt.Errorf("recalculate: σ %g Ma must be finite and ≥ 0", sigmaMa)
	}
	return nil
}

// RecalculatedMC is the Monte Carlo counterpart of Recalculated: the sample mean and standard deviation of
// t' over N draws, with the standard errors of both, and the seed that reproduces it.
type RecalculatedMC struct {
	MeanAgeMa         float64
	AnalyticalSigmaMa float64 // sd of t' when only the input age is drawn
	FullSigmaMa       float64 // sd of t' when the input age and, jointly, the monitor age and λ' are drawn
	// MeanSEMa is the standard error of MeanAgeMa, FullSigmaMa/sqrt(N).
	MeanSEMa float64
	// SigmaSEMa is the standard error of FullSigmaMa for normal draws, sd/sqrt(2(N−1)) (that of
	// AnalyticalSigmaMa is AnalyticalSigmaMa/sqrt(2(N−1))).
	SigmaSEMa float64
	N         int
	Seed      uint64
	From, To  string
}

// RecalculateMC propagates the same uncertainties as Recalculate by drawing n times, normally, the input
// age (analytical σ) and, jointly with their correlation (Calibration.Draw), λ and the monitor age of to,
// and evaluating the exact
// recalculation on each draw. It exists to check the first-order propagation of Recalculate. The draws
// come from math/rand/v2's PCG seeded with (seed, 0); the seed is recorded in the result. It returns an error for n < 2 or
// for the inputs Recalculate rejects.
func RecalculateMC(ageMa, sigmaMa float64, from, to Calibration, n int, seed uint64) (RecalculatedMC, error) {
	if err := checkRecalcInput(ageMa, sigmaMa, from, to); err != nil {
		return RecalculatedMC{}, err
	}
	if n < 2 {
		return RecalculatedMC{}, errors.New("recalculate MC: need at least 2 draws")
	}
	rng := rand.New(rand.NewPCG(seed, 0))
	var fullMean, fullM2, anaMean, anaM2 float64 // Welford accumulators
	for i := 0; i < n; i++ {
		r := arArRatio(ageMa+sigmaMa*rng.NormFloat64(), from)
		ana := ageFromRatio(r, to.LambdaPerA, to.MonitorAgeMa)
		z1 := rng.NormFloat64()
		lam, mon := to.Draw(z1, rng.NormFloat64())
		full := ageFromRatio(r, lam, mon)
		k := float64(i + 1)
		d := ana - anaMean
		anaMean += d / k
		anaM2 += d * (ana - anaMean)
		d = full - fullMean
		fullMean += d / k
		fullM2 += d * (full - fullMean)
	}
	fullSD := math.Sqrt(fullM2 / float64(n-1))
	return RecalculatedMC{
		MeanAgeMa:         fullMean,
		AnalyticalSigmaMa: math.Sqrt(anaM2 / float64(n-1)),
		FullSigmaMa:       fullSD,
		MeanSEMa:          fullSD / math.Sqrt(float64(n)),
		SigmaSEMa:         fullSD / math.Sqrt(2*float64(n-1)),
		N:                 n,
		Seed:              seed,
		From:              from.Code,
		To:                to.Code,
	}, nil
}
