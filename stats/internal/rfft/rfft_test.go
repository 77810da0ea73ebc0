package rfft

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"
)

// smoothLengths returns every n in [1, max] whose prime factors are 2, 3 and 5.
func smoothLengths(max int) []int {
	var ns []int
	for n := 1; n <= max; n++ {
		m := n
		for _, f := range []int{2, 3, 5} {
			for m%f == 0 {
				m /= f
			}
		}
		if m == 1 {
			ns = append(ns, n)
		}
	}
	return ns
}

// input returns a sequence of length n: dense normal values, or (sparse) mostly zeros with a few
// positive weights as a binned KDE has, or values with signed zeros among them.
func input(rng *rand.Rand, n int, kind int) []float64 {
	x := make([]float64, n)
	for i := range x {
		switch kind {
		case 0:
			x[i] = rng.NormFloat64()
		case 1:
			if rng.IntN(20) == 0 {
				x[i] = rng.Float64()
			}
		case 2:
			x[i] = []float64{0, math.Copysign(0, -1), rng.NormFloat64(), 1e-300}[rng.IntN(4)]
		}
	}
	return x
}

func sameBits(t *testing.T, what string, n int, got, want []float64) {
	t.Helper()
	for i := range want {
		if math.Float64bits(got[i]) != math.Float64bits(want[i]) {
			t.Fatalf("%s, n = %d: element %d is %v, gonum gives %v", what, n, i, got[i], want[i])
		}
	}
}

// TestSameAsGonum: Forward and Backward give gonum's fourier.FFT results bit for bit, signed zeros
// included, for every length 2^a·3^b·5^c up to 6000 and a few longer ones, and dense, sparse and
// signed-zero inputs.
func TestSameAsGonum(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, n := range append(smoothLengths(6000), 3<<14, 15625, 100<<10) {
		p, err := New(n)
		if err != nil {
			t.Fatal(err)
		}
		g := fourier.NewFFT(n)
		for kind := range 3 {
			for range 2 { // twice: a plan is reused
				x := input(rng, n, kind)
				coef := g.Coefficients(nil, x)
				want := make([]float64, n)
				want[0] = real(coef[0])
				for k := 1; 2*k < n; k++ {
					want[2*k-1], want[2*k] = real(coef[k]), imag(coef[k])
				}
				if n%2 == 0 {
					want[n-1] = real(coef[n/2])
				}
				got := append([]float64(nil), x...)
				p.Forward(got)
				sameBits(t, "forward", n, got, want)

				// Backward of packed coefficients, against gonum's Sequence of the same values.
				packed := input(rng, n, kind)
				c := make([]complex128, n/2+1)
				c[0] = complex(packed[0], 0)
				for k := 1; 2*k < n; k++ {
					c[k] = complex(packed[2*k-1], packed[2*k])
				}
				if n%2 == 0 && n > 1 {
					c[n/2] = complex(packed[n-1], 0)
				}
				want = g.Sequence(nil, c)
				got = append(got[:0], packed...)
				p.Backward(got)
				sameBits(t, "backward", n, got, want)
			}
		}
	}
}

func TestNewRefusesOtherLengths(t *testing.T) {
	for _, n := range []int{0, -4, 7, 14, 2 * 3 * 5 * 11} {
		if _, err := New(n); err == nil {
			t.Errorf("New(%d): want an error", n)
		}
	}
}

// BenchmarkRoundTrip is one forward and one backward transform of 2000 points (the padded length of
// the demo province's per-date KDE), with this package and with gonum's fourier.FFT.
func BenchmarkRoundTrip(b *testing.B) {
	in := input(rand.New(rand.NewPCG(1, 2)), 2000, 1)
	x := make([]float64, len(in))
	b.Run("rfft", func(b *testing.B) {
		p, _ := New(len(x))
		for b.Loop() {
			copy(x, in)
			p.Forward(x)
			p.Backward(x)
		}
	})
	b.Run("gonum", func(b *testing.B) {
		g := fourier.NewFFT(len(x))
		c := make([]complex128, len(x)/2+1)
		for b.Loop() {
			copy(x, in)
			g.Coefficients(c, x)
			g.Sequence(x, c)
		}
	})
}
