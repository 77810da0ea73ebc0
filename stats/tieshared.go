package stats

import (
	"fmt"
	"math"
	"slices"
)

// SharedComponent is a systematic component that some ages carry: the decay constant, tracer or ⁴⁰Ar/³⁹Ar
// calibration of the dates they come from (tie points of an age model, the values of a density). The ages
// enter with their random part only; the component is one shift per draw (or bootstrap replicate),
// shared by every age that carries it.
type SharedComponent struct {
	// Systematic gives Key, Kind (relative or decay-constant) and σ; for an ⁴⁰Ar/³⁹Ar calibration leave
	// Kind zero and set Cal (Key is then ArArCalibrationKey(*Cal)).
	Systematic
	Cal *Calibration
	// Carries flags the ages that carry it, indexed like the ties given to FitAgeModel or the dates given
	// to BootstrapBand.
	Carries []bool
}

// key returns the component's key, as the joint draws name it.
func (c SharedComponent) key() string {
	if c.Cal != nil {
		return ArArCalibrationKey(*c.Cal)
	}
	return c.Key
}

// tieShift returns the function that moves a whole age by the component in one draw: for a relative
// term age·(1 + σε), for a decay constant age/(1 + σε), for a calibration the age recalculated from Cal
// to a calibration with λ and monitor age drawn. The deviates come from the stream (seed, "key <key>"),
// the one DrawJoint uses, so the same seed gives the same shifts in an age model and a comparison.
func (c SharedComponent) shifts(n int, seed uint64) ([]func(float64) float64, error) {
	out := make([]func(float64) float64, n)
	r := jdStream(seed, "key "+c.key())
	switch {
	case c.Cal != nil:
		if err := c.Cal.Validate(); err != nil {
			return nil, err
		}
		from := *c.Cal
		for d := range out {
			to := from
			z1 := r.NormFloat64()
			to.LambdaPerA, to.MonitorAgeMa = from.Draw(z1, r.NormFloat64())
			out[d] = func(a float64) float64 { return RecalculateAgeMa(a, from, to) }
		}
	case c.Kind == SystematicRelative || c.Kind == SystematicDecayConstant:
		if !(c.RelSigma >= 0 && c.RelSigma < 0.2) {
			return nil, fmt.Errorf("key %q: relative σ %g: want in [0, 0.2)", c.Key, c.RelSigma)
		}
		for d := range out {
			f := 1 + c.RelSigma*r.NormFloat64()
			if c.Kind == SystematicDecayConstant {
				f = 1 / f
			}
			out[d] = func(a float64) float64 { return a * f }
		}
	default:
		return nil, fmt.Errorf("key %q: a tie component must be relative, a decay constant or a calibration", c.Key)
	}
	return out, nil
}

// ApplyShared moves every draw of the model by the components, each drawn once per draw and applied to
// every tie that carries it and, by its share (Shares), to every requested height: the shift of a shared
// decay constant or tracer moves all the ties that carry it together, as it does in nature, instead of
// each tie by an independent amount. Shares are taken from the model before any component is applied.
// The summaries (Ages) are recomputed. seed drives the components' draws.
func (m *AgeModel) ApplyShared(comps []SharedComponent, seed uint64) error {
	if len(comps) == 0 {
		return nil
	}
	nh, nt := len(m.HeightsM), len(m.TieHeightsM)
	shares := make([][][]float64, len(comps)) // comp → height → draw
	shifts := make([][]func(float64) float64, len(comps))
	for c, comp := range comps {
		var err error
		if shifts[c], err = comp.shifts(m.NDraws, seed); err != nil {
			return fmt.Errorf("age model: %w", err)
		}
		shares[c] = make([][]float64, nh)
		for j, z := range m.HeightsM {
			if shares[c][j], err = m.Shares(comp.Carries, z); err != nil {
				return err
			}
		}
	}
	for c, comp := range comps {
		carried := make([]bool, nt)
		for k, on := range comp.Carries {
			if on {
				i, _ := slices.BinarySearch(m.TieHeightsM, m.inputHeightsM[k])
				carried[i] = true
			}
		}
		for d := range m.NDraws {
			shift := shifts[c][d]
			for j := range nh {
				a := m.AgesMa[d*nh+j]
				if sh := shares[c][j][d]; sh != 0 {
					m.AgesMa[d*nh+j] = a + sh*(shift(a)-a)
				}
			}
			for i := range nt {
				if carried[i] {
					m.TieAgesMa[d*nt+i] = shift(m.TieAgesMa[d*nt+i])
				}
			}
		}
	}
	col := make([]float64, m.NDraws)
	for j := range nh {
		for d := range m.NDraws {
			col[d] = m.AgesMa[d*nh+j]
		}
		m.Ages[j] = summarizeDraws(col)
	}
	return nil
}

// relSigmaAt is the component's 1σ as a fraction of an age it moves whole: RelSigma for a relative term
// or a decay constant, and for a calibration the full external σ of the age less its analytical part
// (Recalculate of the age on the calibration to itself, with no analytical σ).
func (c SharedComponent) relSigmaAt(ageMa float64) (float64, error) {
	if c.Cal == nil {
		return c.RelSigma, nil
	}
	r, err := Recalculate(ageMa, 0, *c.Cal, *c.Cal)
	if err != nil {
		return 0, err
	}
	return r.FullSigmaMa / ageMa, nil
}

// AddShared widens the naive model's σ by the components, first order: a component moves the age at a
// height by share·ε·age, so its variance share²·σ²·age² adds to that height's. The 95 % limits follow.
func (m *NaiveLinearAgeModel) AddShared(comps []SharedComponent) error {
	for j, z := range m.HeightsM {
		v := m.SigmaMa[j] * m.SigmaMa[j]
		for _, c := range comps {
			sh, err := m.Shares(c.Carries, z)
			if err != nil {
				return err
			}
			rel, err := c.relSigmaAt(m.AgeMa[j])
			if err != nil {
				return fmt.Errorf("naive linear age model: %w", err)
			}
			v += (sh * rel * m.AgeMa[j]) * (sh * rel * m.AgeMa[j])
		}
		m.SigmaMa[j] = math.Sqrt(v)
		m.Lo95[j] = m.AgeMa[j] - 1.959963984540054*m.SigmaMa[j]
		m.Hi95[j] = m.AgeMa[j] + 1.959963984540054*m.SigmaMa[j]
	}
	return nil
}

// GatherShared collects the components of n ages, one per key, with the ages that carry it: parts(i)
// gives age i's relative components and its ⁴⁰Ar/³⁹Ar calibration (nil if none). A key described with
// different σ by different ages (a tracer term estimated from different dates) takes the largest, the
// conservative choice.
func GatherShared(n int, parts func(i int) ([]Systematic, *Calibration)) []SharedComponent {
	var out []SharedComponent
	index := map[string]int{}
	for i := range n {
		syst, cal := parts(i)
		comps := make([]SharedComponent, 0, len(syst)+1)
		for _, s := range syst {
			comps = append(comps, SharedComponent{Systematic: s})
		}
		if cal != nil {
			comps = append(comps, SharedComponent{Systematic: Systematic{Key: ArArCalibrationKey(*cal)}, Cal: cal})
		}
		for _, c := range comps {
			k, ok := index[c.Key]
			if !ok {
				k = len(out)
				index[c.Key] = k
				c.Carries = make([]bool, n)
				out = append(out, c)
			}
			out[k].RelSigma = max(out[k].RelSigma, c.RelSigma)
			out[k].Carries[i] = true
		}
	}
	return out
}
