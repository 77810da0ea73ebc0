package stats

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// stepSeries returns a series with the given segment lengths and means plus N(0, σ²) noise.
func stepSeries(r *rand.Rand, lengths []int, means []float64, sigma float64) []float64 {
	var x []float64
	for i, l := range lengths {
		for range l {
			x = append(x, means[i]+sigma*r.NormFloat64())
		}
	}
	return x
}

func TestSegmentKnownChangepoints(t *testing.T) {
	tests := []struct {
		name    string
		seed    uint64
		lengths []int
		means   []float64
		opt     ChangepointOptions
		want    []int
	}{
		{"four segments", 1, []int{80, 70, 110, 140}, []float64{0, 5, -1, 4}, ChangepointOptions{}, []int{80, 150, 260}},
		{"no change", 2, []int{300}, []float64{3}, ChangepointOptions{}, []int{}},
		{"short segment kept", 3, []int{50, 5, 50}, []float64{0, 8, 0}, ChangepointOptions{MinSegment: 5}, []int{50, 55}},
		{"short segment refused", 3, []int{50, 5, 50}, []float64{0, 8, 0}, ChangepointOptions{MinSegment: 6}, nil},
		{"given sigma", 4, []int{100, 100}, []float64{10, 16}, ChangepointOptions{SigmaHat: 1}, []int{100}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			x := stepSeries(rand.New(rand.NewPCG(tc.seed, 0)), tc.lengths, tc.means, 1)
			for _, f := range []func([]float64, ChangepointOptions) (Segmentation, error){SegmentOP, SegmentPELT} {
				s, err := f(x, tc.opt)
				if err != nil {
					t.Fatal(err)
				}
				if tc.want == nil { // only check that no segment is shorter than MinSegment
					for i, st := range s.Starts {
						end := len(x)
						if i+1 < len(s.Starts) {
							end = s.Starts[i+1]
						}
						if end-st < tc.opt.MinSegment {
							t.Errorf("%s: segment %d has %d samples < %d", s.Method, i, end-st, tc.opt.MinSegment)
						}
					}
					continue
				}
				if got, want := s.Changepoints, tc.want; !slices.Equal(got, want) {
					t.Errorf("%s: got %v, want %v", s.Method, got, want)
				}
				if got, want := len(s.Means), len(tc.want)+1; got != want {
					t.Errorf("%s: got %d means, want %d", s.Method, got, want)
				}
			}
		})
	}
}

func TestSegmentMeansAndSigma(t *testing.T) {
	// Noise-free steps: means exact; σ̂ falls back to the sd of differences since most differences are 0.
	x := []float64{1, 1, 1, 1, 1, 5, 5, 5, 5, 5}
	s, err := SegmentPELT(x, ChangepointOptions{Penalty: 1})
	if err != nil {
		t.Fatal(err)
	}
	if got, want := s.Changepoints, []int{5}; !slices.Equal(got, want) {
		t.Fatalf("got %v, want %v", got, want)
	}
	for i, want := range []float64{1, 5} {
		if got := s.Means[i]; math.Abs(got-want) > 1e-12 {
			t.Errorf("mean %d got %g, want %g", i, got, want)
		}
	}
	// Robust σ̂ of N(0,1) noise with steps: close to 1.
	r := rand.New(rand.NewPCG(9, 0))
	y := stepSeries(r, []int{1000, 1000}, []float64{0, 3}, 1)
	s, err = SegmentOP(y[:400], ChangepointOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if got, want := s.SigmaHat, 1.0; math.Abs(got-want) > 0.15 {
		t.Errorf("σ̂ got %g, want %g ± 0.15", got, want)
	}
	if got, want := s.Penalty, 2*math.Log(400); got != want {
		t.Errorf("default penalty got %g, want %g", got, want)
	}
	// A constant series is one segment.
	s, err = SegmentPELT([]float64{2, 2, 2, 2}, ChangepointOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if got, want := len(s.Changepoints), 0; got != want {
		t.Errorf("constant: got %d change points, want %d", got, want)
	}
	for _, bad := range [][]float64{nil, {1, math.NaN()}} {
		if _, err := SegmentOP(bad, ChangepointOptions{}); err == nil {
			t.Errorf("%v: want error", bad)
		}
	}
	if _, err := SegmentOP([]float64{1, 2, 3}, ChangepointOptions{Penalty: -1}); err == nil {
		t.Error("negative penalty: want error")
	}
}

// TestSegmentOPEqualsPELT checks on 500 random series that pruning never changes the result.
func TestSegmentOPEqualsPELT(t *testing.T) {
	r := rand.New(rand.NewPCG(2005, 2012))
	for i := range 500 {
		n := 10 + r.IntN(300)
		var lengths []int
		var means []float64
		for rest := n; rest > 0; {
			l := min(rest, 1+r.IntN(60))
			lengths = append(lengths, l)
			means = append(means, 3*r.NormFloat64())
			rest -= l
		}
		x := stepSeries(r, lengths, means, 0.3+r.Float64())
		if i%7 == 0 { // repeated values exercise ties and σ̂ fallbacks
			for j := range x {
				x[j] = math.Round(x[j])
			}
		}
		opt := ChangepointOptions{MinSegment: 1 + r.IntN(6)}
		if i%2 == 0 {
			opt.Penalty = 0.5 + 20*r.Float64()
		}
		op, err := SegmentOP(x, opt)
		if err != nil {
			t.Fatal(err)
		}
		pelt, err := SegmentPELT(x, opt)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(op.Changepoints, pelt.Changepoints) || op.Cost != pelt.Cost {
			t.Fatalf("series %d (n %d, %+v): OP %v (cost %g), PELT %v (cost %g)", i, n, opt, op.Changepoints, op.Cost, pelt.Changepoints, pelt.Cost)
		}
	}
}

func BenchmarkSegmentPELT5000(b *testing.B) {
	x := benchSeries(5000)
	for b.Loop() {
		if _, err := SegmentPELT(x, ChangepointOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkSegmentOP5000(b *testing.B) {
	x := benchSeries(5000)
	for b.Loop() {
		if _, err := SegmentOP(x, ChangepointOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}

func benchSeries(n int) []float64 {
	r := rand.New(rand.NewPCG(5000, 0))
	var lengths []int
	var means []float64
	for rest := n; rest > 0; {
		l := min(rest, 50+r.IntN(200))
		lengths = append(lengths, l)
		means = append(means, 2*r.NormFloat64())
		rest -= l
	}
	return stepSeries(r, lengths, means, 1)
}
