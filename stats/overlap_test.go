package stats

import (
	"math"
	"math/rand/v2"
	"testing"
)

func TestOverlapNormal(t *testing.T) {
	for _, tc := range []struct {
		name                     string
		mu1, sigma1, mu2, sigma2 float64
		want                     float64
	}{
		// REFERENCES §5 [C]: 2Φ(−|Δμ|/(2σ)), scipy.stats.norm.cdf
		{"equal σ", 201.50, 0.05, 201.60, 0.05, 0.317310507863},
		// REFERENCES §5 [C]: crossing points x±, scipy.stats.norm.cdf (Inman & Bradley 1989)
		{"N(0,1) vs N(1,2²)", 0, 1, 1, 2, 0.609934339879},
		{"N(1,2²) vs N(0,1)", 1, 2, 0, 1, 0.609934339879},
		{"N(201.50,0.05²) vs N(201.60,0.10²)", 201.50, 0.05, 201.60, 0.10, 0.453388134814},
		// Identical distributions overlap completely.
		{"identical", 201.5, 0.1, 201.5, 0.1, 1},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got, err := OverlapNormal(tc.mu1, tc.sigma1, tc.mu2, tc.sigma2)
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(got-tc.want) > 1e-10 {
				t.Errorf("got %.12f, want %.12f", got, tc.want)
			}
		})
	}
}

// TestOverlapNormalNearlyEqualSigma: as σ₂ → σ₁ the unequal-σ form tends to the equal-σ one without
// losing digits (one crossing runs off to infinity).
func TestOverlapNormalNearlyEqualSigma(t *testing.T) {
	want, _ := OverlapNormal(201.50, 0.05, 201.60, 0.05)
	for _, eps := range []float64{1e-6, 1e-9, 1e-12} {
		got, err := OverlapNormal(201.50, 0.05, 201.60, 0.05*(1+eps))
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(got-want) > 1e-6 {
			t.Errorf("ε = %g: got %.12f, want %.12f", eps, got, want)
		}
	}
}

func TestBhattacharyyaNormal(t *testing.T) {
	// REFERENCES §5 [C]: BC = sqrt(2σ₁σ₂/(σ₁²+σ₂²))·exp(−Δμ²/(4(σ₁²+σ₂²))), N(0,1) vs N(1,4) (variance 4)
	got, err := BhattacharyyaNormal(0, 1, 1, 2)
	if err != nil {
		t.Fatal(err)
	}
	if want := 0.850805462153; math.Abs(got-want) > 1e-11 {
		t.Errorf("got %.12f, want %.12f", got, want)
	}
}

func TestPOlderNormal(t *testing.T) {
	for _, tc := range []struct {
		name                        string
		muA, sA, muB, sB, rho, want float64
		tol                         float64
	}{
		// REFERENCES §5 [C]: Φ((μx−μy)/sqrt(σx²+σy²)), scipy.stats.norm.cdf
		{"201.51±0.05 vs 201.45±0.08", 201.51, 0.05, 201.45, 0.08, 0, 0.737611374450, 1e-11},
		// REFERENCES §5 [C]: 201.51±0.03 vs 201.56±0.03 (2σ): P(first younger) = P(second older) = 0.9908
		{"2σ example", 201.56, 0.015, 201.51, 0.015, 0, 0.9908, 5e-5},
		// Perfect positive correlation with equal σ: the difference is exact.
		{"ρ = 1", 201.51, 0.05, 201.45, 0.05, 1, 1, 0},
		{"equal and exact", 201.5, 0, 201.5, 0, 0, 0.5, 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got, err := POlderNormal(tc.muA, tc.sA, tc.muB, tc.sB, tc.rho)
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(got-tc.want) > tc.tol {
				t.Errorf("got %.12f, want %.12f", got, tc.want)
			}
		})
	}
}

func TestOverlapErrors(t *testing.T) {
	if _, err := OverlapNormal(0, 0, 1, 1); err == nil {
		t.Error("OverlapNormal accepted σ = 0")
	}
	if _, err := BhattacharyyaNormal(math.NaN(), 1, 1, 1); err == nil {
		t.Error("BhattacharyyaNormal accepted NaN")
	}
	if _, err := POlderNormal(0, 1, 1, 1, 1.5); err == nil {
		t.Error("POlderNormal accepted ρ = 1.5")
	}
	if _, err := OverlapSamples([]float64{1}, []float64{1, 2}, OverlapSampleOptions{}); err == nil {
		t.Error("OverlapSamples accepted one draw")
	}
	if _, err := OverlapSamples([]float64{1, math.Inf(1)}, []float64{1, 2}, OverlapSampleOptions{}); err == nil {
		t.Error("OverlapSamples accepted +Inf")
	}
	if _, err := OverlapSamples([]float64{1, 2}, []float64{1, 2}, OverlapSampleOptions{Method: 9}); err == nil {
		t.Error("OverlapSamples accepted an unknown method")
	}
}

// TestOverlapSamples: OVL estimated from 20,000 normal draws each is close to the closed form; the KDE
// estimator to 0.02, the 100-bin histogram to 0.03 (its bin and sampling errors).
func TestOverlapSamples(t *testing.T) {
	r := rand.New(rand.NewPCG(6, 1))
	for _, tc := range []struct {
		mu1, s1, mu2, s2 float64
	}{
		{0, 1, 1, 2},
		{201.50, 0.05, 201.60, 0.10},
		{201.50, 0.05, 201.60, 0.05},
	} {
		a, b := make([]float64, 20000), make([]float64, 20000)
		for i := range a {
			a[i] = tc.mu1 + tc.s1*r.NormFloat64()
			b[i] = tc.mu2 + tc.s2*r.NormFloat64()
		}
		want, _ := OverlapNormal(tc.mu1, tc.s1, tc.mu2, tc.s2)
		for _, m := range []struct {
			method OverlapMethod
			tol    float64
		}{{OverlapKDE, 0.02}, {OverlapHistogram, 0.03}} {
			e, err := OverlapSamples(a, b, OverlapSampleOptions{Method: m.method})
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(e.OVL-want) > m.tol {
				t.Errorf("%v, N(%g,%g²) vs N(%g,%g²): got %.4f, want %.4f ± %g", m.method, tc.mu1, tc.s1, tc.mu2, tc.s2, e.OVL, want, m.tol)
			}
		}
	}
}

// FuzzOverlapNormal checks invariants of the closed forms: 0 ≤ OVL ≤ BC ≤ 1 (min(f, g) ≤ sqrt(fg) ≤ max),
// OVL symmetric in its two normals, and P(A older) + P(B older) = 1.
func FuzzOverlapNormal(f *testing.F) {
	f.Add(201.5, 0.05, 201.6, 0.10)
	f.Add(0.0, 1.0, 1.0, 2.0)
	f.Add(201.5, 0.05, 201.5, 0.05000001)
	f.Add(-3.0, 1e-3, 5.0, 10.0)
	f.Fuzz(func(t *testing.T, mu1, s1, mu2, s2 float64) {
		if !(s1 > 1e-6 && s2 > 1e-6 && s1 < 1e6 && s2 < 1e6) || math.Abs(mu1) > 1e6 || math.Abs(mu2) > 1e6 {
			return
		}
		ovl, err := OverlapNormal(mu1, s1, mu2, s2)
		if err != nil {
			t.Fatal(err)
		}
		back, _ := OverlapNormal(mu2, s2, mu1, s1)
		bc, _ := BhattacharyyaNormal(mu1, s1, mu2, s2)
		if !(ovl >= -1e-12 && ovl <= bc+1e-9 && bc <= 1+1e-12) {
			t.Errorf("OVL %g, BC %g", ovl, bc)
		}
		if math.Abs(ovl-back) > 1e-9 {
			t.Errorf("OVL not symmetric: %g, %g", ovl, back)
		}
		p, _ := POlderNormal(mu1, s1, mu2, s2, 0)
		q, _ := POlderNormal(mu2, s2, mu1, s1, 0)
		if math.Abs(p+q-1) > 1e-12 {
			t.Errorf("P + Q = %g", p+q)
		}
	})
}
