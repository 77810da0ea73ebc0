package stats

import (
	"errors"
	"math"
	"slices"
	"testing"
)

func mustDrawJoint(tb testing.TB, qs []Quantity, opt DrawOptions) *JointDraws {
	tb.Helper()
	j, err := DrawJoint(qs, opt)
	if err != nil {
		tb.Fatal(err)
	}
	return j
}

func TestParseComparisonLevel(t *testing.T) {
	for _, l := range []ComparisonLevel{LevelAsNeeded, LevelAnalytical, LevelFull} {
		got, err := ParseComparisonLevel(" " + l.String() + " ")
		if err != nil || got != l {
			t.Errorf("ParseComparisonLevel(%q) = %v, %v; want %v", l.String(), got, err, l)
		}
	}
	if got, err := ParseComparisonLevel("FULL"); err != nil || got != LevelFull {
		t.Errorf("ParseComparisonLevel(FULL) = %v, %v", got, err)
	}
	for _, s := range []string{"", "z", "all"} {
		if _, err := ParseComparisonLevel(s); err == nil {
			t.Errorf("ParseComparisonLevel(%q) gave no error", s)
		}
	}
	if ComparisonLevel(0) != LevelAsNeeded {
		t.Error("the zero level is not the default as-needed")
	}
}

func TestDrawJointErrors(t *testing.T) {
	kuiper := mustCalibration(t, "kuiper08")
	otherKuiper := kuiper
	otherKuiper.MonitorAgeMa = 28.3
	for _, tc := range []struct {
		name string
		qs   []Quantity
		opt  DrawOptions
	}{
		{"no quantities", nil, DrawOptions{}},
		{"negative N", []Quantity{NormalAge("a", 1, 1)}, DrawOptions{N: -1}},
		{"bad level", []Quantity{NormalAge("a", 1, 1)}, DrawOptions{Level: 7}},
		{"negative σ", []Quantity{NormalAge("a", 1, -1)}, DrawOptions{}},
		{"NaN age", []Quantity{NormalAge("a", math.NaN(), 1)}, DrawOptions{}},
		{"empty uniform", []Quantity{UniformAge("a", 2, 1)}, DrawOptions{}},
		{"no samples", []Quantity{SampledAge("a", nil, "")}, DrawOptions{}},
		{"Inf sample", []Quantity{SampledAge("a", []float64{1, math.Inf(1)}, "")}, DrawOptions{}},
		{"group lengths", []Quantity{SampledAge("a", []float64{1, 2}, "g"), SampledAge("b", []float64{1}, "g")}, DrawOptions{}},
		{"no kind", []Quantity{{Name: "a"}}, DrawOptions{}},
		{"empty key", []Quantity{NormalAge("a", 1, 1).With(Systematic{Kind: SystematicRelative, RelSigma: 0.001})}, DrawOptions{}},
		{"bad kind", []Quantity{NormalAge("a", 1, 1).With(Systematic{Key: "k", Kind: 9})}, DrawOptions{}},
		{"absolute with RelSigma", []Quantity{NormalAge("a", 1, 1).With(Systematic{Key: "k", Kind: SystematicAbsolute, RelSigma: 0.1})}, DrawOptions{}},
		{"too many values", []Quantity{NormalAge("a", 1, 1), NormalAge("b", 1, 1)}, DrawOptions{N: 30_000_000}},
		{"bad calibration", []Quantity{ArArDate("a", 200, 0.1, Calibration{Code: "x"})}, DrawOptions{}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if _, err := DrawJoint(tc.qs, tc.opt); err == nil {
				t.Error("no error")
			}
		})
	}
	t.Run("conflicting key", func(t *testing.T) {
		qs := []Quantity{
			NormalAge("a", 200, 0.1).With(Systematic{Key: KeyLambda238, Kind: SystematicDecayConstant, RelSigma: 0.0005}),
			NormalAge("b", 200, 0.1).With(Systematic{Key: KeyLambda238, Kind: SystematicDecayConstant, RelSigma: 0.001}),
		}
		if _, err := DrawJoint(qs, DrawOptions{}); !errors.Is(err, ErrKeyConflict) {
			t.Errorf("got %v, want ErrKeyConflict", err)
		}
		qs = []Quantity{ArArDate("a", 200, 0.1, kuiper), ArArDate("b", 200, 0.1, otherKuiper)}
		if _, err := DrawJoint(qs, DrawOptions{}); !errors.Is(err, ErrKeyConflict) {
			t.Errorf("calibrations: got %v, want ErrKeyConflict", err)
		}
	})
}

// TestDrawJointReproducible: the same inputs and seed give the same draws; a quantity's draws do not
// change when another quantity is appended; another seed gives other draws.
func TestDrawJointReproducible(t *testing.T) {
	qs := []Quantity{
		UPbDate("a", 201.5, 0.03, "ET535", 0.00015),
		UniformAge("b", 201.2, 201.4),
		SampledAge("c", []float64{201.1, 201.2, 201.3}, "g"),
	}
	opt := DrawOptions{N: 1000, Seed: 42, Level: LevelFull}
	j1, j2 := mustDrawJoint(t, qs, opt), mustDrawJoint(t, qs, opt)
	j3 := mustDrawJoint(t, append(slices.Clone(qs), NormalAge("d", 200, 1)), opt)
	for q := range qs {
		d1, _ := j1.Draws(q)
		d2, _ := j2.Draws(q)
		d3, _ := j3.Draws(q)
		if !slices.Equal(d1, d2) || !slices.Equal(d1, d3) {
			t.Errorf("quantity %d: draws differ between identical runs", q)
		}
	}
	opt.Seed = 43
	j4 := mustDrawJoint(t, qs, opt)
	d1, _ := j1.Draws(0)
	d4, _ := j4.Draws(0)
	if slices.Equal(d1, d4) {
		t.Error("seeds 42 and 43 gave the same draws")
	}
	if j1.Seed != 42 || j1.N != 1000 || j1.Level != LevelFull || j1.MinSamples != 3 {
		t.Errorf("recorded seed %d, N %d, level %v, min samples %d", j1.Seed, j1.N, j1.Level, j1.MinSamples)
	}
	if want := []string{TracerKey("ET535"), KeyLambda238}; !slices.Equal(j1.Keys, want) && !slices.Equal(j1.Keys, []string{KeyLambda238, TracerKey("ET535")}) {
		t.Errorf("keys %q", j1.Keys)
	}
}

// TestSampleGroupAlignment: quantities of one group are read at the same row in every draw, so a fixed
// difference between rows survives exactly; ungrouped samples are resampled independently.
func TestSampleGroupAlignment(t *testing.T) {
	onset := make([]float64, 500)
	end := make([]float64, 500)
	for i := range onset {
		onset[i] = 201 + float64(i)/1000
		end[i] = onset[i] - 0.1
	}
	qs := []Quantity{SampledAge("onset", onset, "pulse"), SampledAge("end", end, "pulse"), SampledAge("free end", end, "")}
	j := mustDrawJoint(t, qs, DrawOptions{N: 5000, Seed: 1})
	a, _ := j.Draws(0)
	b, _ := j.Draws(1)
	c, _ := j.Draws(2)
	aligned, free := 0, 0
	for d := range a {
		if math.Abs(a[d]-b[d]-0.1) < 1e-12 {
			aligned++
		}
		if math.Abs(a[d]-c[d]-0.1) < 1e-12 {
			free++
		}
	}
	if aligned != j.N {
		t.Errorf("grouped: %d of %d draws aligned", aligned, j.N)
	}
	if free > j.N/50 { // chance alignment 1/500 per draw
		t.Errorf("ungrouped: %d of %d draws aligned, want about %d", free, j.N, j.N/500)
	}
}

// TestArArFullSigma: an ⁴⁰Ar/³⁹Ar date on Kuiper et al. (2008) drawn with its calibration key has the
// full external σ of the first-order propagation. REFERENCES §3 [C]: 199.0 ± 0.10 from FCs 28.02/SJ77 to
// 28.201/5.463e-10 → 200.359518, analytical 0.100725, full external 0.205997 (1σ).
func TestArArFullSigma(t *testing.T) {
	cal := mustCalibration(t, "kuiper08")
	j := mustDrawJoint(t, []Quantity{ArArDate("basalt", 200.359518, 0.100725, cal)}, DrawOptions{N: 200_000, Seed: 3, Level: LevelFull})
	d, _ := j.Draws(0)
	mean, variance := meanVar(d)
	sd := math.Sqrt(variance)
	// SE of a normal sd: sd/sqrt(2(N−1)); of the mean: sd/sqrt(N).
	if se := sd / math.Sqrt(2*float64(j.N-1)); math.Abs(sd-0.205997) > 3*se+2e-4 {
		t.Errorf("full σ: got %.6f, want 0.205997 ± %.6f", sd, 3*se)
	}
	if se := sd / math.Sqrt(float64(j.N)); math.Abs(mean-200.359518) > 3*se {
		t.Errorf("mean: got %.6f, want 200.359518 ± %.6f", mean, 3*se)
	}
	ja := mustDrawJoint(t, []Quantity{ArArDate("basalt", 200.359518, 0.100725, cal)}, DrawOptions{N: 200_000, Seed: 3, Level: LevelAnalytical})
	da, _ := ja.Draws(0)
	_, va := meanVar(da)
	if se := math.Sqrt(va) / math.Sqrt(2*float64(ja.N-1)); math.Abs(math.Sqrt(va)-0.100725) > 3*se {
		t.Errorf("analytical σ: got %.6f, want 0.100725", math.Sqrt(va))
	}
}

// TestPulseEdgeDrawsMatchBootstrapPulses: the edge draws are those BootstrapPulses summarises: the same
// number of replicates and the same 2.5/50/97.5 % points.
func TestPulseEdgeDrawsMatchBootstrapPulses(t *testing.T) {
	band, err := BootstrapBand(d50AgesMa(), nil, BandOptions{
		KDE: KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleISJ}}, Replicates: 200, Seed: 7,
	})
	if err != nil {
		t.Fatal(err)
	}
	sums, err := BootstrapPulses(band, PulseOptions{})
	if err != nil {
		t.Fatal(err)
	}
	edges, err := PulseEdgeDraws(band, PulseOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(edges) != len(sums) {
		t.Fatalf("%d pulses, BootstrapPulses %d", len(edges), len(sums))
	}
	for k, e := range edges {
		s := sums[k]
		if len(e.Replicates) != s.Present || len(e.StartMa) != s.Present || len(e.EndMa) != s.Present {
			t.Errorf("pulse %d: %d replicates, BootstrapPulses %d", k, len(e.Replicates), s.Present)
			continue
		}
		if got := ageQuantiles(slices.Clone(e.StartMa)); got != s.Start {
			t.Errorf("pulse %d start: got %+v, want %+v", k, got, s.Start)
		}
		if got := ageQuantiles(slices.Clone(e.EndMa)); got != s.End {
			t.Errorf("pulse %d end: got %+v, want %+v", k, got, s.End)
		}
		for i := range e.StartMa {
			if e.StartMa[i] < e.EndMa[i] {
				t.Errorf("pulse %d replicate %d: onset %g younger than end %g", k, e.Replicates[i], e.StartMa[i], e.EndMa[i])
			}
		}
		on, end := e.Quantities("pulse", "band 7")
		if on.Group != end.Group || on.Kind != QuantitySamples {
			t.Errorf("pulse %d: edges not in one group", k)
		}
	}
	if _, err := PulseEdgeDraws(DensityBand{}, PulseOptions{}); err == nil {
		t.Error("no error for a band without replicates")
	}
}

// TestEventAgesKeepSuperposition: two events of one age model, given as one sample group, keep their
// stratigraphic order in every joint draw (the model's draws are read row by row).
func TestEventAgesKeepSuperposition(t *testing.T) {
	ties := []TiePoint{NormalTie(0, 201.6, 0.03), NormalTie(10, 201.4, 0.03)}
	m := mustFitAgeModel(t, ties, nil, []float64{0, 4, 5, 10}, AgeModelOptions{Draws: 1000, Seed: 2})
	lower, err := m.EventAge(4, 4, 0)
	if err != nil {
		t.Fatal(err)
	}
	upper, err := m.EventAge(5, 5, 0)
	if err != nil {
		t.Fatal(err)
	}
	qs := []Quantity{SampledAge("lower", lower.AgesMa, "section"), SampledAge("upper", upper.AgesMa, "section"),
		SampledAge("upper, unaligned", upper.AgesMa, "")}
	j := mustDrawJoint(t, qs, DrawOptions{N: 5000, Seed: 9})
	// Within a draw the two can be equal (a Gamma duration that underflows to 0 at low rigidity), never
	// in the wrong order.
	o, err := j.Order([]int{0, 1})
	if err != nil {
		t.Fatal(err)
	}
	if o.P[1][0] != 0 || o.P[0][1] < 0.99 {
		t.Errorf("P(upper older than lower) = %g, want 0; P(lower older) = %g (superposition)", o.P[1][0], o.P[0][1])
	}
	free, err := j.ComparePair(0, 2, PairOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if free.Older.P > 0.95 {
		t.Errorf("unaligned P = %g: resampling independently should lose the order", free.Older.P)
	}
}

// FuzzParseComparisonLevel: a parsed level prints as a name that parses back to it.
func FuzzParseComparisonLevel(f *testing.F) {
	for _, s := range []string{"as-needed", "analytical", " FULL ", "", "z", "as needed"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		l, err := ParseComparisonLevel(s)
		if err != nil {
			return
		}
		back, err := ParseComparisonLevel(l.String())
		if err != nil || back != l {
			t.Errorf("%q → %v → %v, %v", s, l, back, err)
		}
	})
}
