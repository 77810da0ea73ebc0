package stats

import (
	"errors"
	"math"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// d50AgesMa regenerates check D50 of REFERENCES §4: 201.5 + 0.15·Φ⁻¹((i−½)/30), i = 1..30, and
// 202.4 + 0.10·Φ⁻¹((i−½)/20), i = 1..20, each rounded to 4 decimals.
func d50AgesMa() []float64 {
	var x []float64
	for i := 1; i <= 30; i++ {
		x = append(x, math.Round((201.5+0.15*distuv.UnitNormal.Quantile((float64(i)-0.5)/30))*1e4)/1e4)
	}
	for i := 1; i <= 20; i++ {
		x = append(x, math.Round((202.4+0.10*distuv.UnitNormal.Quantile((float64(i)-0.5)/20))*1e4)/1e4)
	}
	return x
}

func TestD50Spread(t *testing.T) {
	s, err := summarizeSpread(d50AgesMa())
	if err != nil {
		t.Fatal(err)
	}
	// REFERENCES §4 D50 [C]: numpy std(ddof=1); confirms the regenerated sample.
	if got, want := s.sdMa, 0.4641157575; !relClose(got, want, 1e-9) {
		t.Errorf("σ̂ = %.10f, want %.10f", got, want)
	}
}

func TestISJBandwidth(t *testing.T) {
	normal1000 := make([]float64, 1000)
	for i := range normal1000 {
		normal1000[i] = distuv.UnitNormal.Quantile((float64(i) + 0.5) / 1000)
	}
	tests := []struct {
		name    string
		ages    []float64
		points  int
		wantT   float64 // 0: not given
		wantH   float64
		tolRelH float64
	}{
		// REFERENCES §4 D50 [C]: t* = 3.569631384509e-03, h = 0.1014637131 on 2¹⁴ points; it allows
		// 5e-4 relative, and with identical conventions we agree to 1e-9.
		{"d50 2^14", d50AgesMa(), 1 << 14, 3.569631384509e-03, 0.1014637131, 1e-9},
		// REFERENCES §4 D50 [C]: 2¹² points give h = 0.1014820894.
		{"d50 2^12", d50AgesMa(), 1 << 12, 0, 0.1014820894, 1e-9},
		// REFERENCES §4 sanity [C]: n = 1000 standard-normal quantile sample, h = 0.29511 given to 5
		// decimals, so the tolerance is half a unit in the last place: 5e-6/0.29511 ≈ 1.7e-5.
		{"normal quantiles 1000", normal1000, 0, 0, 0.29511, 5e-6 / 0.29511},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r, err := ISJBandwidth(tt.ages, tt.points)
			if err != nil {
				t.Fatal(err)
			}
			if tt.wantT != 0 && !relClose(r.TStar, tt.wantT, 1e-9) {
				t.Errorf("t* = %.12e, want %.12e", r.TStar, tt.wantT)
			}
			if got, want := r.BandwidthMa, tt.wantH; !relClose(got, want, tt.tolRelH) {
				t.Errorf("h = %.10f, want %.10f (rel tol %.2g)", got, want, tt.tolRelH)
			}
			if got, want := r.BandwidthMa, math.Sqrt(r.TStar)*(r.GridMaxMa-r.GridMinMa); !relClose(got, want, 1e-15) {
				t.Errorf("h = %v, √t*·span = %v", got, want)
			}
		})
	}
}

func TestISJErrors(t *testing.T) {
	tests := []struct {
		name   string
		ages   []float64
		points int
		is     error
	}{
		{"k10 has no root", k10AgesMa, 0, ErrNoRoot}, // REFERENCES §4: "K10 has no ISJ root"
		{"no dates", nil, 0, ErrNoDates},
		{"one distinct", []float64{3, 3, 3}, 0, ErrNoSpread},
		{"NaN", []float64{1, math.NaN()}, 0, ErrNonFinite},
		{"tiny grid", []float64{1, 2}, 8, nil},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := ISJBandwidth(tt.ages, tt.points)
			if err == nil || (tt.is != nil && !errors.Is(err, tt.is)) {
				t.Errorf("error = %v, want %v", err, tt.is)
			}
		})
	}
}

// TestDCT2 checks the FFT-based DCT-II against its definition a_k = 2Σ p_j cos(πk(2j+1)/(2n)).
func TestDCT2(t *testing.T) {
	for _, n := range []int{5, 16, 33} {
		p := make([]float64, n)
		for j := range p {
			p[j] = math.Sin(float64(3*j+1)) + 1
		}
		a := dct2(p)
		for k := range n {
			var want float64
			for j := range p {
				want += 2 * p[j] * math.Cos(math.Pi*float64(k)*float64(2*j+1)/float64(2*n))
			}
			if math.Abs(a[k]-want) > 1e-12*float64(n) {
				t.Errorf("n=%d a_%d = %.15g, want %.15g", n, k, a[k], want)
			}
		}
	}
}

// TestISJNormSqRecurrence: the recurrence for e^(−k²π²τ) matches direct exponentials.
func TestISJNormSqRecurrence(t *testing.T) {
	p := isjHistogram(d50AgesMa(), 201.0, 1.8, 1<<12)
	z := newISJZeta(dct2(p), 50)
	for _, tau := range []float64{0, 1e-7, 1e-5, 3.5e-3, 0.05} {
		for s := 2; s <= 7; s++ {
			var want float64
			for i, v := range z.terms[s] {
				want += v * math.Exp(-z.k2[i]*math.Pi*math.Pi*tau)
			}
			want *= 2 * math.Pow(math.Pi, float64(2*s))
			if got := z.normSq(s, tau); !relClose(got, want, 1e-11) {
				t.Errorf("τ=%g s=%d: %.15g, want %.15g", tau, s, got, want)
			}
		}
	}
}

func TestCountDistinct(t *testing.T) {
	tests := []struct {
		x    []float64
		want int
	}{
		{[]float64{1}, 1},
		{[]float64{0, math.Copysign(0, -1), 0}, 1},
		{[]float64{1, 2, 1, 3, 2, 1e300, -1e300, 5e-324}, 6},
		{d50AgesMa(), 50}, // REFERENCES §4 D50: N = 50 distinct values gives its t*
	}
	for _, tt := range tests {
		if got := countDistinct(tt.x); got != tt.want {
			t.Errorf("countDistinct(%v) = %d, want %d", tt.x, got, tt.want)
		}
	}
	big := make([]float64, 5000)
	for i := range big {
		big[i] = float64(i % 1234)
	}
	if got := countDistinct(big); got != 1234 {
		t.Errorf("countDistinct(5000 values, 1234 distinct) = %d", got)
	}
}

func BenchmarkISJ100k(b *testing.B) {
	ages := benchAges(100_000)
	for b.Loop() {
		if _, err := ISJBandwidth(ages, 0); err != nil {
			b.Fatal(err)
		}
	}
}
