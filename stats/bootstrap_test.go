package stats

import (
	"math"
	"math/rand/v2"
	"reflect"
	"runtime"
	"slices"
	"testing"
	"time"
)

// k10SigmaMa are the 1σ of check K10's PDP (REFERENCES §4).
var k10SigmaMa = []float64{0.05, 0.04, 0.06, 0.03, 0.05, 0.04, 0.08, 0.06, 0.07, 0.10}

func TestBootstrapBandReproducible(t *testing.T) {
	opts := BandOptions{
		KDE:        KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleSilverman}, Grid: AgeGrid{Points: 128}},
		Replicates: 50,
		Seed:       20240601,
	}
	a, err := BootstrapBand(d50AgesMa(), nil, opts)
	if err != nil {
		t.Fatal(err)
	}
	b, err := BootstrapBand(d50AgesMa(), nil, opts)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(a, b) {
		t.Error("same seed, different bands")
	}
	// The split of replicates over workers must not matter.
	prev := runtime.GOMAXPROCS(1)
	c, err := BootstrapBand(d50AgesMa(), nil, opts)
	runtime.GOMAXPROCS(prev)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(a, c) {
		t.Error("GOMAXPROCS changed the band")
	}
	opts.Seed++
	d, err := BootstrapBand(d50AgesMa(), nil, opts)
	if err != nil {
		t.Fatal(err)
	}
	if reflect.DeepEqual(a.Replicates, d.Replicates) {
		t.Error("different seeds, same replicates")
	}
	if a.Seed != 20240601 || d.Seed != 20240601+1 {
		t.Errorf("seeds recorded as %d and %d", a.Seed, d.Seed)
	}
}

func TestBootstrapBandShape(t *testing.T) {
	tests := []struct {
		name  string
		ages  []float64
		sigma []float64
		opts  BandOptions
	}{
		{"fixed bandwidth, perturbed", k10AgesMa, k10SigmaMa,
			BandOptions{KDE: KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleScott}}, Replicates: 200, Seed: 1}},
		{"re-estimated ISJ falls back on K10", k10AgesMa, nil,
			BandOptions{KDE: KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleISJ}}, Replicates: 40, Seed: 2, ReestimateBandwidth: true}},
		{"adaptive, weighted, window", k10AgesMa, k10SigmaMa,
			BandOptions{KDE: KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleSilverman}, Adaptive: true,
				Weight: []float64{1, 2, 3, 4, 5, 5, 4, 3, 2, 1}, Grid: AgeGrid{MinMa: 200.5, MaxMa: 203, Points: 300}},
				Replicates: 100, Seed: 3}},
		{"d50 ISJ re-estimated", d50AgesMa(), nil,
			BandOptions{KDE: KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleISJ}}, Replicates: 30, Seed: 4, ReestimateBandwidth: true}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			b, err := BootstrapBand(tt.ages, tt.sigma, tt.opts)
			if err != nil {
				t.Fatal(err)
			}
			m := len(b.GridMa)
			if len(b.Replicates) != tt.opts.Replicates || len(b.BandwidthsMa) != tt.opts.Replicates {
				t.Fatalf("%d replicates, %d bandwidths; want %d", len(b.Replicates), len(b.BandwidthsMa), tt.opts.Replicates)
			}
			if !reflect.DeepEqual(b.GridMa, b.Reference.GridMa) || len(b.Lower) != m || len(b.Median) != m || len(b.Upper) != m {
				t.Fatal("band and reference grids differ")
			}
			for j := range m {
				if !(0 <= b.Lower[j] && b.Lower[j] <= b.Median[j] && b.Median[j] <= b.Upper[j]) {
					t.Fatalf("at %v: %v ≤ %v ≤ %v fails", b.GridMa[j], b.Lower[j], b.Median[j], b.Upper[j])
				}
			}
			for r, d := range b.Replicates {
				if len(d) != m {
					t.Fatalf("replicate %d has %d values", r, len(d))
				}
				if !tt.opts.ReestimateBandwidth && b.BandwidthsMa[r] != b.Reference.BandwidthMa {
					t.Fatalf("replicate %d bandwidth %v, want the fixed %v", r, b.BandwidthsMa[r], b.Reference.BandwidthMa)
				}
			}
			if tt.opts.KDE.Grid.Points == 0 {
				// The median band of an automatic, wide grid still integrates to about 1.
				if got := trapezoid(b.GridMa, b.Median); math.Abs(got-1) > 0.05 {
					t.Errorf("∫ median band = %.4f", got)
				}
			}
		})
	}
	b, err := BootstrapBand(k10AgesMa, nil, tests[1].opts)
	if err != nil {
		t.Fatal(err)
	}
	// No ten-date resample of K10 has an ISJ root (REFERENCES §4); every replicate falls back.
	if b.Fallbacks != 40 || b.Reference.Rule != RuleSilvermanRobust || b.Reference.Note == "" {
		t.Errorf("fallbacks %d of 40, reference rule %v, note %q", b.Fallbacks, b.Reference.Rule, b.Reference.Note)
	}
}

func TestBootstrapBandErrors(t *testing.T) {
	tests := []struct {
		name  string
		ages  []float64
		sigma []float64
		opts  BandOptions
	}{
		{"σ length", k10AgesMa, []float64{0.1}, BandOptions{}},
		{"negative σ", []float64{1, 2}, []float64{0.1, -0.1}, BandOptions{}},
		{"negative replicates", k10AgesMa, nil, BandOptions{Replicates: -1}},
		{"weight length", k10AgesMa, nil, BandOptions{KDE: KDEOptions{Weight: []float64{1}}}},
		{"no dates", nil, nil, BandOptions{}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if _, err := BootstrapBand(tt.ages, tt.sigma, tt.opts); err == nil {
				t.Error("want an error")
			}
		})
	}
}

// BenchmarkBootstrapBand is the band of the demo province's timeline: 1000 replicates on the grid the
// page uses (8 points per bandwidth, at least 256, over the values padded by 4h and their 2σ bars, and
// a margin of 2 %), for its 56 dates with the ISJ bandwidth held (the binned FFT path, as on the
// per-date view), for its 17 unit means (ISJ falls back to the robust rule; exact kernel sums, as on
// the default view), and for the 56 dates with Scott's rule and with ISJ applied afresh in every
// replicate. It also reports the CPU time of the process (every worker) per op.
func BenchmarkBootstrapBand(b *testing.B) {
	for _, c := range []struct {
		name         string
		ages, sigma  []float64
		rule         BandwidthRule
		reestimateBW bool
	}{
		{"56-dates-isj-binned", demoDatesMa, demoDatesSigmaMa, RuleISJ, false},
		{"17-units-exact", demoUnitsMa, demoUnitsSigmaMa, RuleISJ, false},
		{"56-dates-scott-each", demoDatesMa, demoDatesSigmaMa, RuleScott, true},
		{"56-dates-isj-each", demoDatesMa, demoDatesSigmaMa, RuleISJ, true},
	} {
		b.Run(c.name, func(b *testing.B) {
			bw, err := SelectBandwidth(c.ages, BandwidthOptions{Rule: c.rule})
			if err != nil {
				b.Fatal(err)
			}
			lo, hi := slices.Min(c.ages)-4*bw.Ma, slices.Max(c.ages)+4*bw.Ma
			for i, a := range c.ages {
				lo, hi = min(lo, a-2*c.sigma[i]), max(hi, a+2*c.sigma[i])
			}
			lo, hi = lo-0.02*(hi-lo), hi+0.02*(hi-lo)
			grid := AgeGrid{MinMa: lo, MaxMa: hi, Points: min(max(int(math.Ceil(8*(hi-lo)/bw.Ma)), 256), 2048)}
			opts := BandOptions{KDE: KDEOptions{Bandwidth: BandwidthOptions{Rule: RuleUser, UserMa: bw.Ma}, Grid: grid}, Seed: 1}
			if c.reestimateBW {
				opts.KDE.Bandwidth = BandwidthOptions{Rule: c.rule}
				opts.ReestimateBandwidth = true
			}
			cpu0, n := processCPU(), 0
			for b.Loop() {
				if _, err := BootstrapBand(c.ages, c.sigma, opts); err != nil {
					b.Fatal(err)
				}
				n++
			}
			b.ReportMetric(float64(grid.Points), "points")
			if cpu := processCPU(); cpu0 > 0 {
				b.ReportMetric(float64(cpu-cpu0)/float64(time.Millisecond)/float64(n), "cpu-ms/op")
			}
		})
	}
}

// The demo province's values (testdata/demo, default choices, rounded to 0.1 kyr): its 56 dates
// (count=date) and its 17 unit means (count=unit), with their 1σ.
var (
	demoDatesMa = []float64{155.493, 155.473, 155.449, 154.987, 154.422, 155.651, 155.63, 155.421, 155.416, 155.393,
		155.38, 155.276, 155.039, 154.61, 155.415, 155.405, 155.374, 155.172, 154.67, 155.415, 154.958, 154.887, 155.381,
		154.823, 154.806, 154.78, 154.773, 153.944, 154.671, 154.768, 154.754, 154.738, 154.644, 154.178, 153.863, 153.776,
		154.633, 154.257, 154.221, 154.662, 154.619, 154.616, 154.732, 154.722, 154.674, 155.485, 155.482, 155.437,
		155.421, 154.751, 154.742, 154.713, 154.649, 155.486, 155.407, 155.342}
	demoDatesSigmaMa = []float64{0.0325, 0.027, 0.0305, 0.2306, 0.4552, 0.0255, 0.0435, 0.038, 0.026, 0.028, 0.031,
		0.2405, 0.3305, 0.4635, 0.0305, 0.0395, 0.043, 0.312, 0.351, 0.2357, 0.3807, 0.291, 0.031, 0.0375, 0.035, 0.059,
		0.053, 0.1826, 0.3676, 0.0455, 0.0255, 0.038, 0.046, 0.461, 0.298, 0.3555, 0.256, 0.1565, 0.2185, 0.0595, 0.029,
		0.06, 0.0465, 0.044, 0.039, 0.049, 0.0615, 0.056, 0.058, 0.061, 0.0465, 0.04, 0.0495, 0.051, 0.0555, 0.0585}
	demoUnitsMa = []float64{155.471, 154.872, 155.479, 155.107, 155.402, 154.913, 155.381, 154.803, 154.088, 154.736,
		153.896, 154.322, 154.625, 154.706, 155.458, 154.712, 155.418}
	demoUnitsSigmaMa = []float64{0.0881, 0.2446, 0.1004, 0.223, 0.0889, 0.2664, 0.0918, 0.0887, 0.2099, 0.0878, 0.2432,
		0.1742, 0.0892, 0.0894, 0.0908, 0.0892, 0.0919}
)

// TestBandQuantilesAsSorted: the band's quantiles by selection are those of a sort (type 7), bit for
// bit, with ties and zeros as the far tails of a band have them.
func TestBandQuantilesAsSorted(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	for _, n := range []int{1, 2, 3, 10, 39, 40, 41, 99, 100, 101, 257, 1000, 1001, 4000} {
		for trial := range 20 {
			x := make([]float64, n)
			for i := range x {
				switch trial % 3 {
				case 0:
					x[i] = rng.Float64()
				case 1:
					x[i] = float64(rng.IntN(5)) // many ties
				case 2:
					x[i] = max(0, rng.NormFloat64()-1) // zeros, then a tail
				}
			}
			s := slices.Clone(x)
			slices.Sort(s)
			lo, med, up := bandQuantiles(x)
			for _, c := range []struct {
				p         float64
				got, want float64
			}{{0.025, lo, sortedQuantile7(s, 0.025)}, {0.5, med, sortedQuantile7(s, 0.5)}, {0.975, up, sortedQuantile7(s, 0.975)}} {
				if math.Float64bits(c.got) != math.Float64bits(c.want) {
					t.Fatalf("n = %d, trial %d, p = %v: %v, sorted %v", n, trial, c.p, c.got, c.want)
				}
			}
		}
	}
}
