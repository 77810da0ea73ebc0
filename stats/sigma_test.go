package stats

import (
	"math"
	"testing"
)

func TestParseSigmaLevel(t *testing.T) {
	tests := []struct {
		in   string
		want SigmaLevel
		ok   bool
	}{
		{"1", OneSigma, true}, {"2", TwoSigma, true},
		{"1s", OneSigma, true}, {"2S", TwoSigma, true},
		{"1sigma", OneSigma, true}, {"2SIGMA", TwoSigma, true}, {"2Sigma", TwoSigma, true},
		{"1σ", OneSigma, true}, {"2Σ", TwoSigma, true}, {" 2σ ", TwoSigma, true},
		{"", 0, false}, {"3", 0, false}, {"0", 0, false}, {"2x", 0, false}, {"12", 0, false},
		{"sigma", 0, false}, {"2 sigma", 0, false}, {"-1", 0, false}, {"1ss", 0, false},
	}
	for _, tt := range tests {
		t.Run(tt.in, func(t *testing.T) {
			got, err := ParseSigmaLevel(tt.in)
			if (err == nil) != tt.ok {
				t.Fatalf("ParseSigmaLevel(%q) error = %v, want ok=%v", tt.in, err, tt.ok)
			}
			if got, want := got, tt.want; got != want {
				t.Errorf("ParseSigmaLevel(%q) = %v, want %v", tt.in, got, want)
			}
		})
	}
}

func TestSigmaLevelString(t *testing.T) {
	tests := []struct {
		level SigmaLevel
		want  string
	}{{OneSigma, "1σ"}, {TwoSigma, "2σ"}, {0, "SigmaLevel(0)"}, {3, "SigmaLevel(3)"}}
	for _, tt := range tests {
		if got, want := tt.level.String(), tt.want; got != want {
			t.Errorf("SigmaLevel(%d).String() = %q, want %q", int(tt.level), got, want)
		}
	}
}

func TestSigmaConversion(t *testing.T) {
	// REFERENCES conventions: papers tabulate 2σ, halve before using as a weight.
	if got, want := To1Sigma(0.046, TwoSigma), 0.023; got != want {
		t.Errorf("To1Sigma(0.046, 2σ) = %v, want %v", got, want)
	}
	if got, want := From1Sigma(0.023, TwoSigma), 0.046; got != want {
		t.Errorf("From1Sigma(0.023, 2σ) = %v, want %v", got, want)
	}
	if got, want := To1Sigma(0.05, OneSigma), 0.05; got != want {
		t.Errorf("To1Sigma(0.05, 1σ) = %v, want %v", got, want)
	}
	defer func() {
		if recover() == nil {
			t.Error("To1Sigma with the zero SigmaLevel did not panic")
		}
	}()
	To1Sigma(1, 0)
}

func TestQuadrature(t *testing.T) {
	tests := []struct {
		name  string
		terms []float64
		want  float64
	}{
		{"none", nil, 0},
		{"one negative", []float64{-3}, 3},
		{"3-4-5", []float64{3, 4}, 5},
		{"1-2-2", []float64{1, 2, 2}, 3},
		{"huge", []float64{3e300, 4e300}, 5e300},
		{"tiny", []float64{3e-300, 4e-300}, 5e-300},
		{"inf beats nan", []float64{math.NaN(), math.Inf(-1)}, math.Inf(1)},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got, want := Quadrature(tt.terms...), tt.want; math.Abs(got-want) > 1e-15*want {
				t.Errorf("Quadrature(%v) = %v, want %v", tt.terms, got, want)
			}
		})
	}
	if got := Quadrature(1, math.NaN()); !math.IsNaN(got) {
		t.Errorf("Quadrature(1, NaN) = %v, want NaN", got)
	}
}

// FuzzParseSigmaLevel checks that every accepted string is a valid level whose String parses back to it,
// and that the conversions round-trip.
func FuzzParseSigmaLevel(f *testing.F) {
	for _, s := range []string{"1", "2", "1s", "2s", "1sigma", "2sigma", "1σ", "2σ", "2Σ", " 1S ", "", "3", "σ", "2\xff", "1 σ"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		level, err := ParseSigmaLevel(s)
		if err != nil {
			return
		}
		if !level.Valid() {
			t.Fatalf("ParseSigmaLevel(%q) = %d, not a valid level", s, int(level))
		}
		back, err := ParseSigmaLevel(level.String())
		if err != nil || back != level {
			t.Fatalf("ParseSigmaLevel(%q) = %v, but String %q parses to %v, %v", s, level, level.String(), back, err)
		}
		if got, want := To1Sigma(From1Sigma(0.3, level), level), 0.3; got != want {
			t.Fatalf("round trip of 0.3 at %v = %v", level, got)
		}
	})
}

// TestUsableSigma: a σ below 1 ppm of the age, or one whose weight 1/σ² overflows, cannot be weighted;
// a weighted mean refuses it with an error instead of answering NaN.
func TestUsableSigma(t *testing.T) {
	tests := []struct {
		age, sigma float64
		want       bool
	}{
		{155.449, 0.0305, true},      // an ordinary CA-ID-TIMS date (demo HV-12-01, 1σ)
		{155.449, 155.449e-6, true},  // exactly 1 ppm: the floor is inclusive
		{155.449, 155.448e-6, false}, // just below 1 ppm
		{155.449, 1e-320, false},     // subnormal: 1/σ² = +Inf
		{155.449, 1e-200, false},     // 1/σ² = +Inf
		{1e-200, 1e-160, false},      // relative rule passes, but 1/σ² = 1e320 overflows
		{1e-200, 1e-150, true},       // the absolute floor: 1/σ² = 1e300
		{math.NaN(), 1, false},       // NaN age
		{155, math.Inf(1), false},    // infinite σ
		{155, math.NaN(), false},     // NaN σ
	}
	for _, tt := range tests {
		if got := UsableSigma(tt.age, tt.sigma); got != tt.want {
			t.Errorf("UsableSigma(%g, %g) = %v, want %v", tt.age, tt.sigma, got, tt.want)
		}
	}
	if _, err := WeightedMean([]float64{155.4, 155.5}, []float64{0.03, 1e-320}, WeightedMeanOptions{}); err == nil {
		t.Error("WeightedMean with σ = 1e-320: no error (1/σ² is +Inf, the mean NaN)")
	}
}
