package stats

import (
	"math"
	"testing"
)

func TestUPbRatioAge(t *testing.T) {
	tests := []struct {
		name     string
		got      float64
		decimals int
		want     float64
	}{
		{"R of 201.5 Ma", Pb206U238FromAgeMa(201.5), 12, 0.031751339057},             // REFERENCES §2 [C]
		{"t of R 0.0317", AgeMaFromPb206U238(0.031700), 6, 201.179224},               // REFERENCES §2 [C]
		{"λ238 2σ relative %", 200 * Lambda238RelSigma, 4, 0.1070},                   // REFERENCES §2 [C from the 1σ values, M]: Jaffey et al. 1971 1σ from memory
		{"λ238 2σ relative % (Check A digits)", 200 * Lambda238RelSigma, 5, 0.10701}, // REFERENCES §1 Check A [C]
		{"λ235 2σ relative %", 200 * Lambda235RelSigma, 4, 0.1361},                   // REFERENCES §2 [C from the 1σ values, M]
		{"t of R of t", AgeMaFromPb206U238(Pb206U238FromAgeMa(252.1)), 12, 252.1},    // inverse pair
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got, want := tt.got, tt.want; !nearDecimals(got, want, tt.decimals) {
				t.Errorf("got %.*f, want %.*f", tt.decimals+2, got, tt.decimals, want)
			}
		})
	}
	// σ_t = σ_R/(λ238(1 + R)) (REFERENCES §2 [P]) and its inverse.
	r := Pb206U238FromAgeMa(201.5)
	sigmaR := Pb206U238SigmaFromAgeMa(201.5, 0.05)
	if got, want := AgeSigmaMaFromPb206U238(r, sigmaR), 0.05; math.Abs(got-want) > 1e-15 {
		t.Errorf("σ round trip = %.17f, want %v", got, want)
	}
	// And against a central finite difference of the age equation.
	h := 1e-7
	slope := (AgeMaFromPb206U238(r+h) - AgeMaFromPb206U238(r-h)) / (2 * h)
	if got, want := AgeSigmaMaFromPb206U238(r, 1e-5), slope*1e-5; math.Abs(got-want) > 1e-9*want {
		t.Errorf("σ_t for σ_R = 1e-5: %.12g, finite difference %.12g", got, want)
	}
}

// Check A's systematic terms as REFERENCES §1 takes them: tracer 0.03 % and λ238 0.10701 %, both as 2σ
// relative σ of the age (Condon et al. 2015 give the tracer as ≤ 0.03 % at 95 %, λ238 0.107 % at 2σ).
// The printed 0.10701 % is 2·0.00083/1.55125 = 0.1070105 % rounded; REFERENCES' Z and wrong-way values
// are reproduced to their last digit only with the unrounded ratio, Lambda238RelSigma (0.0010701 exactly
// gives Z = 0.2246758 and 0.0837095).
const (
	checkATracerRel1s = 0.0003 / 2
	checkALambdaRel1s = Lambda238RelSigma
)

// TestUPbXYZ checks ±X/Y/Z of Check A (REFERENCES §1 [C]), with systematic terms added after averaging.
func TestUPbXYZ(t *testing.T) {
	a := mustWeightedMean(t, checkAAges, oneSigma(checkA2s), PolicyNever)
	xyz, err := UPbXYZ(a.Mean, a.Sigma, checkATracerRel1s, checkALambdaRel1s)
	if err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		level UncertaintyLevel
		want  float64 // 2σ, 6 decimals
	}{
		{Analytical, 0.017494},   // REFERENCES §1 Check A [C]: X
		{WithTracer, 0.062945},   // REFERENCES §1 Check A [C]: Y
		{FullExternal, 0.224677}, // REFERENCES §1 Check A [C]: Z
	}
	for _, tt := range tests {
		t.Run(tt.level.String(), func(t *testing.T) {
			if got, want := From1Sigma(xyz.Sigma(tt.level), TwoSigma), tt.want; !nearDecimals(got, want, 6) {
				t.Errorf("2σ = %.8f, want %.6f", got, want)
			}
		})
	}
	if xyz.TracerRelSigma != checkATracerRel1s || xyz.LambdaRelSigma != checkALambdaRel1s {
		t.Errorf("recorded relative σ = %g, %g", xyz.TracerRelSigma, xyz.LambdaRelSigma)
	}
}

// TestUPbXYZWrongWay shows why the λ term goes in after averaging: adding it to each date's σ before
// the weighted mean gives REFERENCES' wrong 0.083710 (2σ) instead of the λ-only 2σ, X ⊕ λ-term, that the
// right order gives (REFERENCES §1 Check A [C]; Horstwood et al. 2016 [P]).
func TestUPbXYZWrongWay(t *testing.T) {
	sig := oneSigma(checkA2s)
	wrong := make([]float64, len(sig))
	for i, s := range sig {
		wrong[i] = Quadrature(s, checkALambdaRel1s*checkAAges[i])
	}
	w := mustWeightedMean(t, checkAAges, wrong, PolicyNever)
	if got, want := From1Sigma(w.Sigma, TwoSigma), 0.083710; !nearDecimals(got, want, 6) { // REFERENCES §1 Check A [C]: the wrong way
		t.Errorf("wrong-way 2σ = %.8f, want %.6f", got, want)
	}
	a := mustWeightedMean(t, checkAAges, sig, PolicyNever)
	right, err := UPbXYZ(a.Mean, a.Sigma, 0, checkALambdaRel1s)
	if err != nil {
		t.Fatal(err)
	}
	// Right way with λ only: sqrt(X² + (λ·t)²) = sqrt(0.017494² + 0.215679²) ≈ 0.216388 (2σ), recomputed here.
	if got, want := From1Sigma(right.ZMa, TwoSigma), 0.216388; !nearDecimals(got, want, 6) {
		t.Errorf("right-way 2σ (λ only) = %.8f, want %.6f", got, want)
	}
	if got, bad := From1Sigma(right.ZMa, TwoSigma), 0.083710; got < 2*bad {
		t.Errorf("right way %.6f is not well above the wrong way %.6f", got, bad)
	}
}

func TestUncertaintyLevel(t *testing.T) {
	tests := []struct {
		in   string
		want UncertaintyLevel
	}{
		{"analytical", Analytical}, {"X", Analytical}, {"tracer", WithTracer}, {"y", WithTracer},
		{" Full ", FullExternal}, {"z", FullExternal},
	}
	for _, tt := range tests {
		if got, err := ParseUncertaintyLevel(tt.in); err != nil || got != tt.want {
			t.Errorf("ParseUncertaintyLevel(%q) = %v, %v; want %v", tt.in, got, err, tt.want)
		}
	}
	for _, l := range []UncertaintyLevel{Analytical, WithTracer, FullExternal} {
		if got, err := ParseUncertaintyLevel(l.String()); err != nil || got != l {
			t.Errorf("ParseUncertaintyLevel(%q) = %v, %v", l.String(), got, err)
		}
	}
	if _, err := ParseUncertaintyLevel(""); err == nil {
		t.Error("ParseUncertaintyLevel(\"\"): no error")
	}
	if _, err := UPbXYZ(201, -1, 0, 0); err == nil {
		t.Error("UPbXYZ with negative X: no error")
	}
	if _, err := UPbXYZ(math.NaN(), 1, 0, 0); err == nil {
		t.Error("UPbXYZ with NaN age: no error")
	}
}
