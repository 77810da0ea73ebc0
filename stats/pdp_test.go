package stats

import (
	"math"
	"strings"
	"testing"
)

func TestPDPK10(t *testing.T) {
	sigma := []float64{0.05, 0.04, 0.06, 0.03, 0.05, 0.04, 0.08, 0.06, 0.07, 0.10}
	// REFERENCES §4 K10 [C]: PDP(x) = (1/n)Σφ((x−xᵢ)/σᵢ)/σᵢ with the listed σᵢ.
	want := []float64{0.0002676605, 1.2121856310, 1.1781283673, 0.1964801706, 0.2993461744}
	d, err := PDP(k10AgesMa, sigma, PDPOptions{Grid: AgeGrid{MinMa: 201.0, MaxMa: 202.2, Points: 7}})
	if err != nil {
		t.Fatal(err)
	}
	for k, x := range k10PointsMa {
		j := int(math.Round((x - 201.0) / 0.2))
		if got := d.Density[j]; !relClose(got, want[k], 1e-9) {
			t.Errorf("PDP(%v) = %.10f, want %.10f", x, got, want[k])
		}
	}
	if d.Kind != KindPDP || d.Rule != 0 || d.BandwidthMa != 0 || d.Note != PDPCaution {
		t.Errorf("PDP labelled %v rule %v h %v note %q", d.Kind, d.Rule, d.BandwidthMa, d.Note)
	}
	if !strings.Contains(PDPCaution, "Vermeesch 2012") || !strings.Contains(PDPCaution, "not a kernel density estimate") {
		t.Errorf("caution text lacks its source or its point: %q", PDPCaution)
	}
	sigma[0] = 99 // the Density keeps its own copy
	if d.PointBandwidthsMa[0] != 0.05 {
		t.Error("PDP shares the caller's σ slice")
	}
}

func TestPDPErrors(t *testing.T) {
	tests := []struct {
		name        string
		ages, sigma []float64
	}{
		{"length", []float64{1, 2}, []float64{0.1}},
		{"zero σ", []float64{1, 2}, []float64{0.1, 0}},
		{"NaN σ", []float64{1, 2}, []float64{0.1, math.NaN()}},
		{"empty", nil, nil},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if _, err := PDP(tt.ages, tt.sigma, PDPOptions{}); err == nil {
				t.Error("want an error")
			}
		})
	}
}
