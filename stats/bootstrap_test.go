package stats

import (
	"math"
	"reflect"
	"runtime"
	"testing"
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
