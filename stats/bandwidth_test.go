package stats

import (
	"encoding/binary"
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
)

// k10AgesMa is check K10 of REFERENCES §4.
var k10AgesMa = []float64{201.20, 201.35, 201.41, 201.48, 201.52, 201.55, 201.61, 201.90, 202.05, 202.30}

// relClose reports whether got is within rel (relative) of want.
func relClose(got, want, rel float64) bool {
	return math.Abs(got-want) <= rel*math.Abs(want)
}

func TestSpreadK10(t *testing.T) {
	s, err := summarizeSpread(k10AgesMa)
	if err != nil {
		t.Fatal(err)
	}
	// REFERENCES §4 K10 [C]: numpy 1.24 std(ddof=1) and percentile (type 7).
	if got, want := s.sdMa, 0.3416967466; !relClose(got, want, 1e-9) {
		t.Errorf("σ̂ = %.10f, want %.10f", got, want)
	}
	if got, want := s.iqrMa(), 0.4000; !relClose(got, want, 1e-9) {
		t.Errorf("type-7 IQR = %.10f, want %.10f", got, want)
	}
}

func TestSelectBandwidthK10(t *testing.T) {
	tests := []struct {
		rule BandwidthRule
		want float64
	}{
		{RuleScott, 0.2155960719},           // REFERENCES §4 K10 [C]: scipy 1.10 gaussian_kde bw_method='scott'
		{RuleSilverman, 0.2283644994},       // REFERENCES §4 K10 [C]: scipy 1.10 gaussian_kde bw_method='silverman'
		{RuleSilvermanRobust, 0.1695109284}, // REFERENCES §4 K10 [C]: 0.9·min(σ̂, IQR/1.34)·n^-1/5, numpy type-7 IQR
	}
	for _, tt := range tests {
		t.Run(tt.rule.String(), func(t *testing.T) {
			b, err := SelectBandwidth(k10AgesMa, BandwidthOptions{Rule: tt.rule})
			if err != nil {
				t.Fatal(err)
			}
			if got, want := b.Ma, tt.want; !relClose(got, want, 1e-9) {
				t.Errorf("h = %.10f, want %.10f", got, want)
			}
			if b.Fallback() || b.Rule != tt.rule || b.Requested != tt.rule {
				t.Errorf("unexpected fallback: %+v", b)
			}
		})
	}
}

// REFERENCES §4: "K10 has no ISJ root: the fallback must trigger."
func TestSelectBandwidthISJFallsBackOnK10(t *testing.T) {
	_, err := ISJBandwidth(k10AgesMa, 0)
	if !errors.Is(err, ErrNoRoot) {
		t.Fatalf("ISJBandwidth(K10) error = %v, want ErrNoRoot", err)
	}
	b, err := SelectBandwidth(k10AgesMa, BandwidthOptions{Rule: RuleISJ})
	if err != nil {
		t.Fatal(err)
	}
	if !b.Fallback() || b.Requested != RuleISJ || b.Rule != RuleSilvermanRobust {
		t.Errorf("got %+v, want a fallback from isj to silverman-robust", b)
	}
	if !strings.Contains(b.Note, "no root") {
		t.Errorf("note %q does not say that ISJ has no root", b.Note)
	}
	// REFERENCES §4 K10 [C]: the 0.9 rule with type-7 IQR.
	if got, want := b.Ma, 0.1695109284; !relClose(got, want, 1e-9) {
		t.Errorf("fallback h = %.10f, want %.10f", got, want)
	}
}

func TestSelectBandwidthFallbacks(t *testing.T) {
	tests := []struct {
		name     string
		ages     []float64
		opts     BandwidthOptions
		wantMa   float64
		wantNote string
	}{
		{"one date", []float64{201.5}, BandwidthOptions{Rule: RuleScott}, 0.2015, "only one date"},
		{"all equal", []float64{66, 66, 66}, BandwidthOptions{Rule: RuleISJ}, 0.066, "all dates are equal"},
		{"caller fallback", []float64{66, 66}, BandwidthOptions{Rule: RuleSilverman, FallbackMa: 0.05}, 0.05, "caller's fallback"},
		{"young ages floor", []float64{0.5}, BandwidthOptions{}, 1e-3, "only one date"},
		// Over half the dates equal: IQR = 0, so the robust rule uses σ̂ alone. [T] (statsmodels does the same)
		{"zero IQR", []float64{1, 1, 1, 1, 1, 2}, BandwidthOptions{Rule: RuleSilvermanRobust},
			0.9 * math.Sqrt(1.0/6) * math.Pow(6, -0.2), "IQR is zero"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			b, err := SelectBandwidth(tt.ages, tt.opts)
			if err != nil {
				t.Fatal(err)
			}
			if got, want := b.Ma, tt.wantMa; !relClose(got, want, 1e-12) {
				t.Errorf("h = %g, want %g", got, want)
			}
			if !strings.Contains(b.Note, tt.wantNote) {
				t.Errorf("note %q, want it to contain %q", b.Note, tt.wantNote)
			}
		})
	}
}

func TestSelectBandwidthErrors(t *testing.T) {
	tests := []struct {
		name string
		ages []float64
		opts BandwidthOptions
	}{
		{"no dates", nil, BandwidthOptions{}},
		{"NaN", []float64{1, math.NaN()}, BandwidthOptions{}},
		{"Inf", []float64{1, math.Inf(1)}, BandwidthOptions{}},
		{"overflowing span", []float64{-math.MaxFloat64, math.MaxFloat64}, BandwidthOptions{}},
		{"user without value", []float64{1, 2}, BandwidthOptions{Rule: RuleUser}},
		{"user negative", []float64{1, 2}, BandwidthOptions{Rule: RuleUser, UserMa: -1}},
		{"unknown rule", []float64{1, 2}, BandwidthOptions{Rule: 99}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if b, err := SelectBandwidth(tt.ages, tt.opts); err == nil {
				t.Errorf("got %+v, want an error", b)
			}
		})
	}
}

func TestSelectBandwidthUserAndDefault(t *testing.T) {
	b, err := SelectBandwidth(k10AgesMa, BandwidthOptions{Rule: RuleUser, UserMa: 0.07})
	if err != nil || b.Ma != 0.07 || b.Fallback() {
		t.Errorf("user rule: got %+v, %v", b, err)
	}
	b, err = SelectBandwidth(k10AgesMa, BandwidthOptions{})
	if err != nil || b.Requested != DefaultBandwidthRule {
		t.Errorf("zero rule: got %+v, %v; want the default rule %v", b, err, DefaultBandwidthRule)
	}
}

func TestParseBandwidthRule(t *testing.T) {
	for r := RuleScott; r <= RuleUser; r++ {
		got, err := ParseBandwidthRule(r.String())
		if err != nil || got != r {
			t.Errorf("ParseBandwidthRule(%q) = %v, %v; want %v", r.String(), got, err, r)
		}
		if r.Label() == "" || r.Label() == r.String() {
			t.Errorf("rule %v has no label", r)
		}
	}
	for _, s := range []string{" ISJ ", "Scott", "nrd", "silverman-1.06", "robust"} {
		if _, err := ParseBandwidthRule(s); err != nil {
			t.Errorf("ParseBandwidthRule(%q): %v", s, err)
		}
	}
	for _, s := range []string{"", "silverman1", "bogus"} {
		if r, err := ParseBandwidthRule(s); err == nil {
			t.Errorf("ParseBandwidthRule(%q) = %v, want an error", s, r)
		}
	}
	if got := BandwidthRule(0).String(); got != "BandwidthRule(0)" {
		t.Errorf("zero rule String = %q", got)
	}
}

func TestAbramsonK10(t *testing.T) {
	pilot := 0.2283644994 // scipy 'silverman' h for K10
	b, err := SelectBandwidth(k10AgesMa, BandwidthOptions{Rule: RuleSilverman})
	if err != nil {
		t.Fatal(err)
	}
	hs, g, err := AbramsonBandwidthsMa(k10AgesMa, nil, b.Ma)
	if err != nil {
		t.Fatal(err)
	}
	// REFERENCES §4 K10 [C]: Abramson hᵢ with pilot = scipy 'silverman', g = geometric mean.
	if got, want := g, 0.7769441144; !relClose(got, want, 1e-9) {
		t.Errorf("g = %.10f, want %.10f", got, want)
	}
	want := []float64{0.246212, 0.202623, 0.195052, 0.191939, 0.192706, 0.194432, 0.200683, 0.262108, 0.290715, 0.360459}
	for i := range want {
		// The reference lists hᵢ to 6 decimals: half a unit in the last place.
		if math.Abs(hs[i]-want[i]) > 5e-7 {
			t.Errorf("h_%d = %.7f, want %.6f", i+1, hs[i], want[i])
		}
	}
	if !relClose(b.Ma, pilot, 1e-9) {
		t.Errorf("pilot %.10f, want %.10f", b.Ma, pilot)
	}
}

// FuzzSelectBandwidth checks that for finite dates every rule returns a finite bandwidth > 0,
// or (only when the dates' span overflows float64) an error.
func FuzzSelectBandwidth(f *testing.F) {
	enc := func(rule byte, xs ...float64) []byte {
		b := []byte{rule}
		for _, x := range xs {
			b = binary.LittleEndian.AppendUint64(b, math.Float64bits(x))
		}
		return b
	}
	f.Add(enc(byte(RuleISJ), k10AgesMa...))
	f.Add(enc(byte(RuleSilvermanRobust), 1, 1, 1, 1, 2))
	f.Add(enc(byte(RuleScott), 201.5))
	f.Add(enc(byte(RuleSilverman), 0, 5e-324))
	f.Add(enc(byte(RuleISJ), 1e300, -1e300, 0))
	f.Add(enc(byte(RuleISJ), 0, 0, 0, 1, 1, 1, 1e-12))
	f.Add(enc(byte(RuleSilvermanRobust), -4567, 4567, 4567, 4567))
	f.Fuzz(func(t *testing.T, data []byte) {
		if len(data) < 1 {
			return
		}
		rule := BandwidthRule(int(data[0])%4 + 1) // the four data-driven rules
		var ages []float64
		for b := data[1:]; len(b) >= 8 && len(ages) < 400; b = b[8:] {
			x := math.Float64frombits(binary.LittleEndian.Uint64(b))
			if math.IsNaN(x) || math.IsInf(x, 0) {
				return
			}
			ages = append(ages, x)
		}
		if len(ages) == 0 {
			return
		}
		b, err := SelectBandwidth(ages, BandwidthOptions{Rule: rule})
		if err != nil {
			if math.IsInf(slices.Max(ages)-slices.Min(ages), 0) {
				return
			}
			t.Fatalf("rule %v, ages %v: %v", rule, ages, err)
		}
		if !(b.Ma > 0) || math.IsInf(b.Ma, 0) {
			t.Fatalf("rule %v, ages %v: h = %v (%s)", rule, ages, b.Ma, b.Note)
		}
	})
}

// TestQuantile7Selection: selection gives the same type-7 quantiles as sorting.
func TestQuantile7Selection(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 3))
	for trial := range 200 {
		n := 1 + rng.IntN(60)
		x := make([]float64, n)
		for i := range x {
			x[i] = float64(rng.IntN(8)) // many ties
			if trial%2 == 0 {
				x[i] = rng.NormFloat64()
			}
		}
		sorted := slices.Sorted(slices.Values(x))
		for _, p := range []float64{0, 0.025, 0.25, 0.5, 0.75, 0.975, 1} {
			if got, want := quantile7(slices.Clone(x), p), sortedQuantile7(sorted, p); got != want {
				t.Fatalf("x=%v p=%v: selection %v, sort %v", x, p, got, want)
			}
		}
	}
}
