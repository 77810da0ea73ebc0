package stats

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// These tests check that a systematic component counts exactly once between an age model's events and
// the dates they are compared with. Every expected value is a closed form of the raw inputs (ages, X,
// tracer and decay-constant σ, calibration constants), never a number the engine was handed.

// Kuiper08 is the calibration of REFERENCES §3's uncertainty check: λ 5.463e-10 ± 0.0535e-10 a⁻¹ and FCs
// 28.201 ± 0.023 Ma (1σ, independent).
var kuiper08 = Calibration{Code: "kuiper08", Name: "kuiper08", LambdaPerA: 5.463e-10, LambdaSigmaPerA: 0.0535e-10,
	MonitorName: "FCs", MonitorAgeMa: 28.201, MonitorSigmaMa: 0.023}

// arArSystematicSigma is the 1σ that a calibration's monitor age and λ add to an age t on it, by the
// partial derivatives of REFERENCES §3 with 𝓡 the sample/monitor ratio: with E = e^{λt_s} − 1,
// 𝓡 = (e^{λt} − 1)/E, D = 1 + E𝓡: ∂t/∂t_s = 𝓡e^{λt_s}/D, ∂t/∂λ = −t/λ + 𝓡t_s e^{λt_s}/(λD).
func arArSystematicSigma(tMa float64, c Calibration) float64 {
	l := c.LambdaPerA
	t, ts := tMa*1e6, c.MonitorAgeMa*1e6
	e := math.Expm1(l * ts)
	r := math.Expm1(l*t) / e
	d := 1 + e*r
	dts := r * math.Exp(l*ts) / d                  // years per year
	dl := (-t/l + r*ts*math.Exp(l*ts)/(l*d)) / 1e6 // Ma per a⁻¹
	return math.Hypot(dts*c.MonitorSigmaMa, dl*c.LambdaSigmaPerA)
}

// fitAt fits a model on ties and returns its draws at heightM with the shares of every component.
func fitAt(t *testing.T, ties []TiePoint, comps []SharedComponent, heightM float64, opt AgeModelOptions) Quantity {
	t.Helper()
	heights := []float64{heightM}
	if ties[0].HeightM != heightM {
		heights = []float64{ties[0].HeightM, heightM}
	}
	m, err := FitAgeModel(ties, nil, heights, opt)
	if err != nil {
		t.Fatal(err)
	}
	draws, err := m.AgesAt(heightM)
	if err != nil {
		t.Fatal(err)
	}
	q := SampledAge("event", draws, "model")
	q.Shares = map[string][]float64{}
	for _, c := range comps {
		sh, err := m.Shares(c.Carries, heightM)
		if err != nil {
			t.Fatal(err)
		}
		if c.Cal != nil {
			cal := *c.Cal
			q.ArAr = &cal
			q.Shares[ArArCalibrationKey(cal)] = sh
		} else {
			q.Systematics = append(q.Systematics, c.Systematic)
			q.Shares[c.Key] = sh
		}
	}
	return q
}

// upbComps are the components of a U–Pb tie at index i of n ties: its tracer and λ238.
func upbComps(i, n int, tracer string, rel float64) []SharedComponent {
	var out []SharedComponent
	for _, s := range UPbSystematics(tracer, rel) {
		c := SharedComponent{Systematic: s, Carries: make([]bool, n)}
		c.Carries[i] = true
		out = append(out, c)
	}
	return out
}

// pOlder returns P(a older than b) and its Monte Carlo SE (from the fewer of N and the model's rows).
func pOlder(t *testing.T, qs []Quantity, level ComparisonLevel, n int, seed uint64) (float64, float64, PairComparison) {
	t.Helper()
	jd, err := DrawJoint(qs, DrawOptions{N: n, Seed: seed, Level: level})
	if err != nil {
		t.Fatal(err)
	}
	c, err := jd.ComparePair(0, 1, PairOptions{})
	if err != nil {
		t.Fatal(err)
	}
	m := float64(n)
	if jd.MinSamples > 0 && jd.MinSamples < n {
		m = float64(jd.MinSamples)
	}
	return c.Older.P, math.Sqrt(c.Older.P * (1 - c.Older.P) * (1/float64(n) + 1/m)), c
}

var stdNormal = distuv.Normal{Mu: 0, Sigma: 1}

func TestSharedComponentsCountOnceAgainstUnit(t *testing.T) {
	const (
		tracerRel = 0.00015 // 0.03 % 2σ (Condon et al. 2015, REFERENCES §1)
		n         = 200_000
		draws     = 20_000
	)
	lam := Lambda238RelSigma
	// Ties: an ash bed at 10 m and a biozone boundary far below (no component): the event sits on the ash.
	ash := func(age, x float64) []TiePoint {
		return []TiePoint{UniformTie(0, 203.0, 203.5), NormalTie(10, age, x)}
	}
	cases := []struct {
		name  string
		unit  Quantity
		ties  []TiePoint
		comps []SharedComponent
		want  float64 // P(unit older than event)
		wrong float64 // the value when each side's full σ is taken as independent
	}{
		{
			// REFERENCES §5 "Through an age model" [C]: unit 201.50 (X 0.040, 2σ), ash 201.45 (X 0.060, 2σ),
			// same tracer: Φ(0.05/hypot(0.02, 0.03)) = 0.917241; Z taken as independent: 0.623312.
			name: "same tracer: X only", unit: UPbDate("unit", 201.50, 0.020, "ET535", tracerRel),
			ties: ash(201.45, 0.030), comps: upbComps(1, 2, "ET535", tracerRel),
			want: 0.917241, wrong: 0.623312,
		},
		{
			// Different tracers (common practice, REFERENCES §8: Y): the tracer terms count, λ238 cancels.
			name: "different tracer: Y", unit: UPbDate("unit", 201.50, 0.020, "ET2535", 0.0002),
			ties: ash(201.45, 0.030), comps: upbComps(1, 2, "ET535", tracerRel),
			want: stdNormal.CDF(0.05 / math.Sqrt(0.02*0.02+0.03*0.03+sq(201.50*0.0002)+sq(201.45*tracerRel))),
			wrong: stdNormal.CDF(0.05 / math.Sqrt(0.02*0.02+0.03*0.03+sq(201.50*0.0002)+sq(201.45*tracerRel)+
				sq(201.50*lam)+sq(201.45*lam)+sq(201.45*lam))),
		},
		{
			// U–Pb against ⁴⁰Ar/³⁹Ar (REFERENCES §8: Z against full external): the unit's analytical σ with
			// its calibration's monitor-age and λ terms (REFERENCES §3 partial derivatives), the ash's X with
			// its tracer and λ238.
			name: "against 40Ar/39Ar: Z vs full external", unit: ArArDate("unit", 201.50, 0.020, kuiper08),
			ties: ash(201.45, 0.030), comps: upbComps(1, 2, "ET535", tracerRel),
			want: stdNormal.CDF(0.05 / math.Sqrt(0.02*0.02+sq(arArSystematicSigma(201.50, kuiper08))+
				0.03*0.03+sq(201.45*tracerRel)+sq(201.45*lam))),
			wrong: stdNormal.CDF(0.05 / math.Sqrt(0.02*0.02+sq(arArSystematicSigma(201.50, kuiper08))+
				0.03*0.03+2*sq(201.45*tracerRel)+2*sq(201.45*lam))),
		},
	}
	for _, c := range cases {
		for _, level := range []ComparisonLevel{LevelAsNeeded, LevelFull} {
			t.Run(fmt.Sprintf("%s/%v", c.name, level), func(t *testing.T) {
				ev := fitAt(t, c.ties, c.comps, 10, AgeModelOptions{Draws: draws, Seed: 3})
				p, se, _ := pOlder(t, []Quantity{c.unit, ev}, level, n, 11)
				if math.Abs(p-c.want) > 3*se+2e-4 {
					t.Errorf("P(unit older than event) = %.5f ± %.5f, closed form %.6f (double counting gives %.6f)", p, se, c.want, c.wrong)
				}
				if math.Abs(c.want-c.wrong) > 10*se && math.Abs(p-c.wrong) < math.Abs(p-c.want) {
					t.Errorf("P = %.5f is nearer the double-counted %.6f than the closed form %.6f", p, c.wrong, c.want)
				}
			})
		}
	}
}

func sq(x float64) float64 { return x * x }

// TestSharedComponentsBetweenTies checks an event between two ties under nearly regular deposition, where
// the age is (1 − F)·a₁ + F·a₂ with F ~ Beta(k·d₁, k·d₂) (REFERENCES §7: mean w, variance w(1 − w)/(kD + 1)).
// Two U–Pb ash beds of one tracer: the shared terms cancel against a unit of the same tracer. An ash
// below and a biozone above: the event carries the ash's terms by its share (1 − w)·a₁/age, and the
// rest of the unit's terms counts.
func TestSharedComponentsBetweenTies(t *testing.T) {
	const (
		tracerRel = 0.00015
		n         = 200_000
		draws     = 20_000
		k         = 1000.0 // events per metre: kD = 10⁴, F nearly w
		w         = 0.3    // the event at 3 m of 10
	)
	lam := Lambda238RelSigma
	varF := w * (1 - w) / (k*10 + 1)
	unit := UPbDate("unit", 201.62, 0.020, "ET535", tracerRel)
	t.Run("two ash beds", func(t *testing.T) {
		a1, x1, a2, x2 := 201.80, 0.030, 201.30, 0.025
		ties := []TiePoint{NormalTie(0, a1, x1), NormalTie(10, a2, x2)}
		comps := upbComps(0, 2, "ET535", tracerRel)
		for i := range comps {
			comps[i].Carries[1] = true
		}
		mu := (1-w)*a1 + w*a2
		sd := math.Sqrt(0.02*0.02 + sq((1-w)*x1) + sq(w*x2) + varF*(sq(a1-a2)+x1*x1+x2*x2))
		want := stdNormal.CDF((201.62 - mu) / sd)
		for _, level := range []ComparisonLevel{LevelAsNeeded, LevelFull, LevelAnalytical} {
			ev := fitAt(t, ties, comps, 3, AgeModelOptions{Draws: draws, Seed: 5, RigidityPerM: k})
			p, se, c := pOlder(t, []Quantity{unit, ev}, level, n, 13)
			if math.Abs(p-want) > 3*se+3e-4 {
				t.Errorf("%v: P = %.5f ± %.5f, closed form %.6f", level, p, se, want)
			}
			// The lag's 95 % interval: mean 201.62 − μ, σ as above.
			if lo := 201.62 - mu - 1.959964*sd; math.Abs(c.LagMa.Lo95-lo) > 0.004 {
				t.Errorf("%v: lag 2.5 %% point %.4f, closed form %.4f", level, c.LagMa.Lo95, lo)
			}
		}
	})
	t.Run("ash below, biozone above", func(t *testing.T) {
		a1, x1, lo2, hi2 := 201.80, 0.030, 201.25, 201.35
		ties := []TiePoint{NormalTie(0, a1, x1), UniformTie(10, lo2, hi2)}
		comps := upbComps(0, 2, "ET535", tracerRel)
		mu2, v2 := (lo2+hi2)/2, sq(hi2-lo2)/12
		mu := (1-w)*a1 + w*mu2
		// The unit's terms move 201.62, the event's only its ash part (1 − w)·a₁: the difference remains.
		sys := sq(tracerRel)*sq(201.62-(1-w)*a1) + sq(lam)*sq(201.62-(1-w)*a1)
		sd := math.Sqrt(0.02*0.02 + sq((1-w)*x1) + sq(w)*v2 + varF*(sq(a1-mu2)+x1*x1+v2) + sys)
		want := stdNormal.CDF((201.62 - mu) / sd)
		for _, level := range []ComparisonLevel{LevelAsNeeded, LevelFull} {
			ev := fitAt(t, ties, comps, 3, AgeModelOptions{Draws: draws, Seed: 7, RigidityPerM: k})
			p, se, _ := pOlder(t, []Quantity{unit, ev}, level, n, 17)
			if math.Abs(p-want) > 3*se+5e-4 {
				t.Errorf("%v: P = %.5f ± %.5f, closed form %.6f (shared part cancelled: %.6f)", level, p, se, want,
					stdNormal.CDF((201.62-mu)/math.Sqrt(sd*sd-sys)))
			}
		}
	})
}

func TestSharesAtAndBetweenTies(t *testing.T) {
	ties := []TiePoint{NormalTie(0, 201.8, 0.03), UniformTie(10, 201.25, 201.35), NormalTie(20, 200.9, 0.03)}
	m, err := FitAgeModel(ties, []Hiatus{{HeightM: 15, MinDurationMa: 0.05}}, []float64{0, 3, 10, 16, 20},
		AgeModelOptions{Draws: 2000, Seed: 1, RigidityPerM: 1000})
	if err != nil {
		t.Fatal(err)
	}
	carries := []bool{true, false, true}
	for _, c := range []struct {
		z    float64
		want float64 // mean share, from w and the tie means (common practice: linear weights)
		tol  float64
	}{
		{0, 1, 0}, {10, 0, 0}, {20, 1, 0},
		{3, 0.7 * 201.8 / (0.7*201.8 + 0.3*201.3), 2e-3},
		// Above the hiatus at 15 m: F = (a₂ − age − 0.05)/(a₂ − a₃ − 0.05), share F·a₃/age.
		{16, 0.6 * 200.9 / (0.4*201.3 + 0.6*200.9 + 0.6*0.05 - 0.05), 3e-3},
	} {
		sh, err := m.Shares(carries, c.z)
		if err != nil {
			t.Fatal(err)
		}
		var mean float64
		for _, x := range sh {
			mean += x / float64(len(sh))
			if x < 0 || x > 1 {
				t.Fatalf("share %g out of [0, 1]", x)
			}
		}
		if math.Abs(mean-c.want) > c.tol+1e-12 {
			t.Errorf("share at %g m: mean %.5f, want %.5f", c.z, mean, c.want)
		}
	}
	if _, err := m.Shares([]bool{true}, 3); err == nil {
		t.Error("shares with the wrong number of flags: no error")
	}
}

// TestApplySharedMovesTiesTogether checks item 2 of the shared-component rule inside one age model: with
// two ash beds of one tracer and λ238, the time between them is untouched by the components (its spread
// is that of the random parts only), while each tie's own age spreads by its full σ.
func TestApplySharedMovesTiesTogether(t *testing.T) {
	const draws = 40_000
	a1, x1, a2, x2 := 201.80, 0.030, 201.30, 0.025
	ties := []TiePoint{NormalTie(0, a1, x1), NormalTie(10, a2, x2)}
	comps := upbComps(0, 2, "ET535", 0.00015)
	for i := range comps {
		comps[i].Carries[1] = true
	}
	m, err := FitAgeModel(ties, nil, []float64{0, 10}, AgeModelOptions{Draws: draws, Seed: 9})
	if err != nil {
		t.Fatal(err)
	}
	if err := m.ApplyShared(comps, 9); err != nil {
		t.Fatal(err)
	}
	var s1, s11, sd, sdd float64
	for d := range draws {
		x, y := m.At(d, 0), m.At(d, 1)
		s1 += x
		s11 += x * x
		sd += x - y
		sdd += (x - y) * (x - y)
	}
	sdOf := func(s, ss float64) float64 { mu := s / draws; return math.Sqrt(ss/draws - mu*mu) }
	// Full σ of the lower tie: X ⊕ tracer ⊕ λ238 (REFERENCES §1, Z = Y ⊕ decay constant).
	z1 := math.Sqrt(x1*x1 + sq(a1*0.00015) + sq(a1*Lambda238RelSigma))
	// The difference: random parts, plus the shared terms on the 0.5 Ma gap only (second order).
	dd := math.Sqrt(x1*x1 + x2*x2 + sq((a1-a2)*0.00015) + sq((a1-a2)*Lambda238RelSigma))
	// SE of a sample σ is about σ/sqrt(2n): allow 4 of them.
	if got := sdOf(s1, s11); math.Abs(got-z1) > 4*z1/math.Sqrt(2*draws) {
		t.Errorf("σ of the lower tie %.5f, want Z %.5f", got, z1)
	}
	if got := sdOf(sd, sdd); math.Abs(got-dd) > 4*dd/math.Sqrt(2*draws) {
		t.Errorf("σ of the time between the ties %.5f, want %.5f (each tie shifted on its own would give %.5f)", got, dd,
			math.Sqrt(2*z1*z1))
	}
}

// TestSharedComponentsCalibrated simulates cases with known true ages and a true shift of λ238 and of each
// tracer shared by everything measured with it, and checks that the 95 % interval of the lag covers the
// true lag and that P(unit older than event) is calibrated (Σ P against the count of true outcomes), at
// each level where the level is right. Binomial 3-SE bands.
func TestSharedComponentsCalibrated(t *testing.T) {
	if testing.Short() {
		t.Skip("calibration by simulation")
	}
	const sims = 600
	lam := Lambda238RelSigma
	for _, c := range []struct {
		name          string
		unitTracer    string
		unitRel       float64
		levels        []ComparisonLevel
		underAnalytic bool
	}{
		{"same tracer", "ET535", 0.00015, []ComparisonLevel{LevelAsNeeded, LevelFull, LevelAnalytical}, false},
		{"different tracer", "ET2535", 0.0006, []ComparisonLevel{LevelAsNeeded, LevelFull}, true},
	} {
		for _, level := range c.levels {
			t.Run(fmt.Sprintf("%s/%v", c.name, level), func(t *testing.T) {
				r := rand.New(rand.NewPCG(42, uint64(level)))
				covered := 0
				var sumP, sumVar, hits float64
				for s := range sims {
					trueUnit := 201.5
					trueLag := -0.2 + 0.4*r.Float64() // unit − event
					trueEvent := trueUnit - trueLag
					// True shifts, shared by everything measured with the same constant or tracer.
					epsLam := lam * r.NormFloat64()
					epsA := 0.00015 * r.NormFloat64()
					epsU := epsA
					if c.unitTracer != "ET535" {
						epsU = c.unitRel * r.NormFloat64()
					}
					obsUnit := trueUnit*(1+epsU)/(1+epsLam) + 0.02*r.NormFloat64()
					obsAsh := trueEvent*(1+epsA)/(1+epsLam) + 0.03*r.NormFloat64()
					ties := []TiePoint{UniformTie(0, 203.0, 203.5), NormalTie(10, obsAsh, 0.03)}
					ev := fitAt(t, ties, upbComps(1, 2, "ET535", 0.00015), 10, AgeModelOptions{Draws: 1000, Seed: uint64(s)})
					unit := UPbDate("unit", obsUnit, 0.02, c.unitTracer, c.unitRel)
					jd, err := DrawJoint([]Quantity{unit, ev}, DrawOptions{N: 4000, Seed: uint64(s), Level: level})
					if err != nil {
						t.Fatal(err)
					}
					pc, err := jd.ComparePair(0, 1, PairOptions{})
					if err != nil {
						t.Fatal(err)
					}
					if pc.LagMa.Lo95 <= trueLag && trueLag <= pc.LagMa.Hi95 {
						covered++
					}
					sumP += pc.Older.P
					sumVar += pc.Older.P * (1 - pc.Older.P)
					if trueLag > 0 {
						hits++
					}
				}
				cov := float64(covered) / sims
				band := 3 * math.Sqrt(0.95*0.05/sims)
				if math.Abs(cov-0.95) > band {
					t.Errorf("coverage of the lag's 95 %% interval %.3f, want 0.95 ± %.3f", cov, band)
				}
				// The mean P and the share of true outcomes agree within 3 SE of the sum of Bernoullis,
				// plus the MC error of P (4,000 draws from 1,000 model rows).
				if tol := 3*math.Sqrt(sumVar) + 0.02*sims*0.05; math.Abs(sumP-hits) > tol {
					t.Errorf("Σ P(unit older) = %.1f, true outcomes %.0f (tolerance %.1f)", sumP, hits, tol)
				}
			})
		}
	}
}

// TestBootstrapSharedMovesTheWholeDensity: dates that share a relative term (a decay constant, a tracer)
// move together in each replicate, so the replicate density's mode spreads by the term's σ times the age,
// not by that σ over sqrt(n) as when each date is jittered by its full σ on its own (the error this
// replaces). Closed form: mode of replicate r = A·(1 + σε_r) for n identical dates at A.
func TestBootstrapSharedMovesTheWholeDensity(t *testing.T) {
	const (
		n, a, rel = 25, 100.0, 0.01
		reps      = 800
	)
	ages := make([]float64, n)
	carries := make([]bool, n)
	for i := range ages {
		ages[i], carries[i] = a, true
	}
	grid := AgeGrid{MinMa: 94, MaxMa: 106, Points: 2401}
	opts := BandOptions{KDE: KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleUser, UserMa: 0.3}, Grid: grid},
		Replicates: reps, Seed: 4,
		Shared: []SharedComponent{{Systematic: Systematic{Key: "tracer T", Kind: SystematicRelative, RelSigma: rel}, Carries: carries}}}
	band, err := BootstrapBand(ages, make([]float64, n), opts)
	if err != nil {
		t.Fatal(err)
	}
	modeSD := func(b DensityBand) float64 {
		var s, ss float64
		for _, dens := range b.Replicates {
			best := 0
			for j := range dens {
				if dens[j] > dens[best] {
					best = j
				}
			}
			x := b.GridMa[best]
			s += x
			ss += x * x
		}
		mu := s / reps
		return math.Sqrt(ss/reps - mu*mu)
	}
	want := rel * a // 1 Ma
	if got := modeSD(band); math.Abs(got-want) > 4*want/math.Sqrt(2*reps)+0.01 {
		t.Errorf("σ of the replicate modes %.3f Ma, want %.3f (the shared term moves the whole density)", got, want)
	}
	// The same term as independent jitter spreads each date instead: the modes move by about rel·a/sqrt(n).
	indep := make([]float64, n)
	for i := range indep {
		indep[i] = rel * a
	}
	opts.Shared = nil
	band, err = BootstrapBand(ages, indep, opts)
	if err != nil {
		t.Fatal(err)
	}
	if got := modeSD(band); got > want/2 {
		t.Errorf("independent jitter: σ of the modes %.3f Ma, want well below %.3f", got, want)
	}
	opts.Shared = []SharedComponent{{Systematic: Systematic{Key: "x", Kind: SystematicRelative, RelSigma: rel}, Carries: carries[:3]}}
	if _, err := BootstrapBand(ages, nil, opts); err == nil {
		t.Error("a component flagging 3 of 25 dates: no error")
	}
}
