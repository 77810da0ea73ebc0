package stats

import (
	"math"
	"strings"
	"testing"
)

func TestUnitConversions(t *testing.T) {
	tests := []struct {
		name      string
		got, want float64
	}{
		{"Hg 0.1 ppm", HgPpmToPpb(0.1), 100},                                                 // REFERENCES §6 [T]: ppm × 1000 → ppb
		{"Al2O3 15 wt%", Al2O3ToAlWtPct(15), 7.9395},                                         // REFERENCES §6 [T]: Al = 0.5293 × Al₂O₃
		{"Hg/TOC 100 ppb at 2 wt%", HgHostRatio(100, 0, 2, 0, DefaultMinTocWtPct).Value, 50}, // REFERENCES §6 [T]
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got, want := tc.got, tc.want; math.Abs(got-want) > 1e-12 {
				t.Errorf("got %g, want %g", got, want)
			}
		})
	}
}

func TestHgTocRelativeError(t *testing.T) {
	// 5 % Hg error and ±0.02 wt% TOC (1σ), threshold 0 so that every ratio is evaluated.
	tests := []struct {
		tocWtPct float64
		wantPct  float64 // REFERENCES §6 [C]: sqrt(0.05² + (0.02/TOC)²), rounded as tabulated
		tolPct   float64
	}{
		{0.05, 40, 0.5},
		{0.1, 21, 0.5},
		{0.2, 11, 0.5},
		{0.5, 6.4, 0.05},
		{1, 5.4, 0.05},
	}
	for _, tc := range tests {
		r := HgHostRatio(100, 5, tc.tocWtPct, 0.02, 0)
		if got, want := 100*r.RelSigma, tc.wantPct; math.Abs(got-want) > tc.tolPct {
			t.Errorf("TOC %g: got %.3g %%, want %.3g %%", tc.tocWtPct, got, want)
		}
		if got, want := r.Sigma, r.Value*r.RelSigma; math.Abs(got-want) > 1e-12 {
			t.Errorf("TOC %g: σ got %g, want %g", tc.tocWtPct, got, want)
		}
	}
}

func TestHgHostRatioStatus(t *testing.T) {
	tests := []struct {
		name           string
		hg, toc, minWt float64
		want           RatioStatus
	}{
		{"above threshold", 100, 0.5, DefaultMinTocWtPct, RatioOK},
		{"at threshold", 100, 0.2, DefaultMinTocWtPct, RatioOK},
		{"below threshold", 100, 0.1, DefaultMinTocWtPct, RatioLowHost}, // REFERENCES §6 [T]: not evaluable
		{"no threshold", 100, 0.1, 0, RatioOK},
		{"zero host", 100, 0, 0, RatioMissing},
		{"missing Hg", math.NaN(), 1, 0, RatioMissing},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			r := HgHostRatio(tc.hg, 5, tc.toc, 0.02, tc.minWt)
			if got, want := r.Status, tc.want; got != want {
				t.Errorf("got %v, want %v", got, want)
			}
			if got, want := math.IsNaN(r.Value), tc.want != RatioOK; got != want {
				t.Errorf("Value %g: NaN %v, want NaN %v", r.Value, got, want)
			}
		})
	}
	// Low host keeps the sample and the reason (its relative error) rather than dropping it.
	rs, err := HgHostRatios([]float64{100, 100, 100}, nil, []float64{1, 0.05, 2}, []float64{0.02, 0.02, 0.02}, DefaultMinTocWtPct)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := len(rs), 3; got != want {
		t.Fatalf("got %d ratios, want %d", got, want)
	}
	if got, want := rs[1].Status, RatioLowHost; got != want {
		t.Errorf("got %v, want %v", got, want)
	}
	if got, want := rs[1].RelSigma, 0.4; math.Abs(got-want) > 1e-12 { // 0.02/0.05, no Hg error given
		t.Errorf("RelSigma got %g, want %g", got, want)
	}
	if _, err := HgHostRatios([]float64{1}, nil, []float64{1, 2}, nil, 0); err == nil {
		t.Error("length mismatch: want error")
	}
}

func TestPearson(t *testing.T) {
	tests := []struct {
		name  string
		x, y  []float64
		wantR float64
		wantN int
	}{
		{"by hand", []float64{1, 2, 3, 4, 5}, []float64{2, 4, 5, 4, 5}, 6 / math.Sqrt(60), 5}, // by hand: Sxy 6, Sxx 10, Syy 6
		{"perfect negative", []float64{1, 2, 3}, []float64{3, 2, 1}, -1, 3},
		{"missing pair skipped", []float64{1, 2, math.NaN(), 3}, []float64{1, 2, 9, 3}, 1, 3},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			r, n, err := Pearson(tc.x, tc.y)
			if err != nil {
				t.Fatal(err)
			}
			if got, want := r, tc.wantR; math.Abs(got-want) > 1e-12 {
				t.Errorf("r got %g, want %g", got, want)
			}
			if got, want := n, tc.wantN; got != want {
				t.Errorf("n got %d, want %d", got, want)
			}
		})
	}
	if r, _, _ := Pearson([]float64{1, 1, 1}, []float64{1, 2, 3}); !math.IsNaN(r) {
		t.Errorf("constant x: r = %g, want NaN", r)
	}
}

func TestSuggestHost(t *testing.T) {
	toc := []float64{0.5, 1.0, 1.5, 2.0, 2.5, 3.0, 3.5, 4.0}
	ts := []float64{0.3, 0.1, 0.4, 0.2, 0.1, 0.5, 0.2, 0.3}
	al := []float64{5, 6, 5, 7, 6, 5, 7, 6}
	hg := make([]float64, len(toc))
	for i := range toc {
		hg[i] = 20 + 30*toc[i] + 5*float64(i%2) // organic host with a little noise
	}
	s, err := SuggestHost(hg, toc, ts, al)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := s.Host, HostTOC; !s.OK || got != want {
		t.Errorf("got %v (ok %v), want %v", got, s.OK, want)
	}
	if got, want := len(s.Correlations), 3; got != want {
		t.Errorf("got %d correlations, want %d", got, want)
	}
	if !strings.Contains(s.Reason, "TOC") || !strings.Contains(s.Reason, "n = 8") {
		t.Errorf("reason %q does not name the host and n", s.Reason)
	}

	// Sulfide host with TOC not measured.
	s, err = SuggestHost([]float64{10, 40, 20, 50, 30, 60}, nil, []float64{0.1, 1.0, 0.4, 1.3, 0.7, 1.6}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := s.Host, HostTS; !s.OK || got != want {
		t.Errorf("got %v (ok %v), want %v", got, s.OK, want)
	}

	// Too few samples: no suggestion, and the reason says so.
	s, err = SuggestHost([]float64{1, 2, 3}, []float64{1, 2, 3}, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if s.OK {
		t.Errorf("3 samples: got a suggestion %v, want none", s.Host)
	}
	if s.Reason == "" {
		t.Error("no reason given")
	}
	if _, err := SuggestHost([]float64{1, 2}, []float64{1}, nil, nil); err == nil {
		t.Error("length mismatch: want error")
	}
}

func TestFitBackground(t *testing.T) {
	// Background Hg = 20 + 40·TOC exactly; the upper samples carry extra Hg that Hg/TOC hides because TOC
	// rises with it (high-TOC masking).
	toc := []float64{0.5, 1, 1.5, 2, 2.5, 3, 8, 9, 10}
	hg := make([]float64, len(toc))
	for i, x := range toc {
		hg[i] = 20 + 40*x
	}
	hg[1] += 1 // background scatter so that σ̂ > 0
	hg[3] -= 1
	hg[4] += 0.5
	hg[7] += 150
	hg[8] += 200
	win := []bool{true, true, true, true, true, true, false, false, false}
	f, err := FitBackground(hg, toc, BackgroundOptions{Window: win})
	if err != nil {
		t.Fatal(err)
	}
	// OLS by hand on the 6 background points: x̄ = 1.75, Sxx = 4.375, Sxy = 40·Sxx + (−0.75·1 + 0.25·(−1) + 0.75·0.5)
	wantSlope := 40 + (-0.75+-0.25+0.375)/4.375
	wantIntercept := (20 + 40*1.75 + 0.5/6) - wantSlope*1.75
	if got, want := f.SlopePpbPerWt, wantSlope; math.Abs(got-want) > 1e-9 {
		t.Errorf("slope got %g, want %g", got, want)
	}
	if got, want := f.InterceptPpb, wantIntercept; math.Abs(got-want) > 1e-9 {
		t.Errorf("intercept got %g, want %g", got, want)
	}
	if got, want := f.N, 6; got != want {
		t.Errorf("N got %d, want %d", got, want)
	}
	for i, want := range []bool{false, false, false, false, false, false, false, true, true} {
		if got := f.Excess[i]; got != want {
			t.Errorf("Excess[%d] got %v, want %v (residual %g, σ̂ %g)", i, got, want, f.ResidualsPpb[i], f.SigmaHatPpb)
		}
	}

	// An exact background: rounding must not be flagged.
	f, err = FitBackground([]float64{1, 2, 3, 4}, []float64{1, 2, 3, 4}, BackgroundOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for i, e := range f.Excess {
		if e {
			t.Errorf("exact line: sample %d flagged", i)
		}
	}

	errCases := []struct {
		name    string
		hg, toc []float64
		opt     BackgroundOptions
	}{
		{"too few", []float64{1, 2}, []float64{1, 2}, BackgroundOptions{}},
		{"constant host", []float64{1, 2, 3}, []float64{1, 1, 1}, BackgroundOptions{}},
		{"lengths", []float64{1, 2, 3}, []float64{1, 2}, BackgroundOptions{}},
		{"window length", []float64{1, 2, 3}, []float64{1, 2, 3}, BackgroundOptions{Window: []bool{true}}},
	}
	for _, tc := range errCases {
		if _, err := FitBackground(tc.hg, tc.toc, tc.opt); err == nil {
			t.Errorf("%s: want error", tc.name)
		}
	}
}
