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
type Calibration struct {
	Code            string  // short stable key for URLs and storage, e.g. "kuiper08"
	Name            string  // human label
	Source          string  // citation for λ and the monitor age, with any caveat on the values
	LambdaPerA      float64 // total ⁴⁰K decay constant (a⁻¹)
	LambdaSigmaPerA float64 // 1σ of LambdaPerA (a⁻¹); 0 if not used
	MonitorName     string  // e.g. "FCs" (Fish Canyon sanidine)
	MonitorAgeMa    float64 // age of the monitor (Ma)
	MonitorSigmaMa  float64 // 1σ of MonitorAgeMa (Ma); 0 if not used
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
//     0.0535e-10 a⁻¹, as in the propagation check of REFERENCES §3.
//   - "renne11": Renne et al. (2011) λ and FCs 28.294 ± 0.036 Ma, values from memory; ± 0.036 taken as 1σ
//     (level from memory). λ σ left 0: Renne et al. fit λ and the FCs age jointly, their errors are
//     correlated, and adding them as independent terms would overstate the full external σ.
//   - "renne10": Renne et al. (2010) λ and FCs 28.305 ± 0.036 Ma (published); ± 0.036 taken as 1σ. λ σ
//     left 0 for the same reason as "renne11".
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
			Code:           "renne11",
			Name:           "Renne et al. 2011, FCs 28.294 Ma",
			Source:         "Renne et al. 2011, GCA 75:5097 (values from memory; λ σ not stored, correlated with the monitor age)",
			LambdaPerA:     5.5305e-10,
			MonitorName:    "FCs",
			MonitorAgeMa:   28.294,
			MonitorSigmaMa: 0.036,
		},
		{
			Code:           "renne10",
			Name:           "Renne et al. 2010, FCs 28.305 Ma",
			Source:         "Renne et al. 2010, GCA 74:5349 (λ σ not stored, correlated with the monitor age)",
			LambdaPerA:     5.5492e-10,
			MonitorName:    "FCs",
			MonitorAgeMa:   28.305,
			MonitorSigmaMa: 0.036,
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
	}
	return nil
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
	// FullSigmaMa adds in quadrature the monitor-age and decay-constant σ of To: use it to compare with
	// any other system (Renne et al. 1998; Min et al. 2000).
	FullSigmaMa float64
	Ratio       float64 // sample/monitor ratio 𝓡 = J·R/(e^{λ t_s} − 1), invariant across calibrations
	From, To    string  // calibration codes
}

// Recalculate moves ageMa ± sigmaMa (1σ, analytical: it must not already hold the monitor-age or
// decay-constant uncertainty of from) from one calibration to another and propagates the σ to first
// order with the partial derivatives of t' = ln(1 + E𝓡)/λ', E = e^{λ' t_s'} − 1, D = 1 + E𝓡:
// ∂t'/∂𝓡 = E/(λ'D), ∂t'/∂t_s' = 𝓡e^{λ' t_s'}/D, ∂t'/∂λ' = −t'/λ' + 𝓡 t_s' e^{λ' t_s'}/(λ'D).
// The monitor-age and λ' terms are taken as independent. With from == to it returns the age unchanged
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
	full := Quadrature(analytical, dtdTs*to.MonitorSigmaMa, dtdL*to.LambdaSigmaPerA/yearsPerMa)
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
	FullSigmaMa       float64 // sd of t' when the input age, the monitor age and λ' are drawn
	// MeanSEMa is the standard error of MeanAgeMa, FullSigmaMa/sqrt(N).
	MeanSEMa float64
	// SigmaSEMa is the standard error of FullSigmaMa for normal draws, sd/sqrt(2(N−1)) (that of
	// AnalyticalSigmaMa is AnalyticalSigmaMa/sqrt(2(N−1))).
	SigmaSEMa float64
	N         int
	Seed      uint64
	From, To  string
}

// RecalculateMC propagates the same uncertainties as Recalculate by drawing n times, independently and
// normally, the input age (analytical σ), the monitor age of to and its λ, and evaluating the exact
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
		full := ageFromRatio(r,
			to.LambdaPerA+to.LambdaSigmaPerA*rng.NormFloat64(),
			to.MonitorAgeMa+to.MonitorSigmaMa*rng.NormFloat64())
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
