package noise

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

// TestInverseMatchesDefinition compares the transform with the inverse
// DFT's definition, out[t] = Σ_k in[k]·e^(2πi·k·t/n), summed directly
// with k·t reduced modulo n in integers, on random input: lengths gonum
// takes as they are and lengths that go through Bluestein's algorithm
// (primes, a prime times a smooth number), the smallest included.
func TestInverseMatchesDefinition(t *testing.T) {
	rng := rand.New(rand.NewPCG(18, 1))
	for _, n := range []int{1, 2, 3, 7, 8, 97, 360, 1000, 1009, 2 * 1009, 4096, 4999} {
		in := make([]complex128, n)
		for i := range in {
			in[i] = complex(rng.NormFloat64(), rng.NormFloat64())
		}
		twiddle := make([]complex128, n)
		for j := range twiddle {
			twiddle[j] = cmplx.Rect(1, 2*math.Pi*float64(j)/float64(n))
		}
		var v inverse
		v.reset(n)
		out := make([]complex128, n)
		v.transform(out, in)
		var diff, norm float64
		for t := range n {
			var want complex128
			for k := range n {
				want += in[k] * twiddle[k*t%n]
			}
			diff += sqAbs(out[t] - want)
			norm += sqAbs(want)
		}
		if rel := math.Sqrt(diff / norm); rel > 1e-12 {
			t.Errorf("n = %d (%s): relative error %.3g against the definition", n, path(n), rel)
		}
	}
}

func sqAbs(z complex128) float64 { return real(z)*real(z) + imag(z)*imag(z) }

func path(n int) string {
	if smooth(n) {
		return "gonum's FFT"
	}
	return "Bluestein"
}

// TestSmooth: the smallest length with no prime factor above 5 at or
// above n, against values worked out by trial division (computed).
func TestSmooth(t *testing.T) {
	for _, c := range [][2]int{{1, 1}, {7, 8}, {11, 12}, {97, 100}, {1001, 1024}, {4999, 5000}, {48001, 48600}, {95999, 96000}, {144000, 144000}} {
		if got := Smooth(c[0]); got != c[1] {
			t.Errorf("Smooth(%d) = %d, want %d", c[0], got, c[1])
		}
	}
}
