package noise

import (
	"math"

	"gonum.org/v1/gonum/dsp/fourier"
)

// inverse is the unnormalised inverse discrete Fourier transform of one
// length n: out[t] = Σ_k in[k]·e^(2πi·k·t/n). A length whose prime factors
// are all 2, 3 or 5 goes to gonum's FFT as it is; any other goes through
// Bluestein's algorithm (L. I. Bluestein, "A linear filtering approach to
// the computation of discrete Fourier transform", IEEE Trans. Audio and
// Electroacoustics 18, 1970): a convolution with a chirp, done by gonum's
// FFT at such a length of at least 2n − 1. Either way a transform costs
// O(n log n): gonum's own transform of a length with a large prime factor
// p costs time in proportion to p, and a loop can have any length.
type inverse struct {
	n   int
	fft *fourier.CmplxFFT // of length n, or of the convolution's length
	// chirp holds w_t = e^(iπ·t²/n) for t < n, and kernel the transform of
	// the chirp's conjugate, wrapped around to the convolution's length
	// and divided by it; both nil for a length gonum takes as it is.
	chirp, kernel []complex128
	work          []complex128
}

// smooth reports whether n's only prime factors are 2, 3 and 5.
func smooth(n int) bool {
	if n < 1 {
		return false
	}
	for _, p := range [...]int{2, 3, 5} {
		for n%p == 0 {
			n /= p
		}
	}
	return n == 1
}

// Smooth returns the smallest length at least n whose only prime factors
// are 2, 3 and 5: the lengths gonum's FFT takes fastest. Such lengths lie
// at most a few per cent apart.
func Smooth(n int) int {
	best := math.MaxInt
	for p5 := 1; p5 < 2*max(n, 1); p5 *= 5 {
		for p35 := p5; p35 < 2*max(n, 1); p35 *= 3 {
			p := p35
			for p < n {
				p *= 2
			}
			best = min(best, p)
		}
	}
	return best
}

// reset prepares the transform for length n, keeping what it can.
func (v *inverse) reset(n int) {
	if v.n == n && v.fft != nil {
		return
	}
	v.n = n
	if smooth(n) {
		v.fft, v.chirp, v.kernel, v.work = fourier.NewCmplxFFT(n), nil, nil, nil
		return
	}
	m := Smooth(2*n - 1)
	v.fft = fourier.NewCmplxFFT(m)
	v.chirp = make([]complex128, n)
	v.kernel = make([]complex128, m)
	v.work = make([]complex128, m)
	twoN := uint64(2 * n)
	for t := range v.chirp {
		// e^(iπ·t²/n) has period 2n in t², so t² is reduced exactly in
		// integers before it becomes an angle.
		u := uint64(t)
		sin, cos := math.Sincos(math.Pi * float64(u*u%twoN) / float64(n))
		v.chirp[t] = complex(cos, sin)
	}
	for t, w := range v.chirp {
		b := complex(real(w), -imag(w))
		v.kernel[t] = b
		if t > 0 {
			v.kernel[m-t] = b
		}
	}
	v.fft.Coefficients(v.kernel, v.kernel)
	scale := complex(1/float64(m), 0)
	for i := range v.kernel {
		v.kernel[i] *= scale
	}
}

// transform writes the inverse transform of in, of length n, into out;
// the two may be the same slice.
func (v *inverse) transform(out, in []complex128) {
	if v.chirp == nil {
		v.fft.Sequence(out, in)
		return
	}
	// With k·t = (k² + t² − (t − k)²)/2, e^(2πi·k·t/n) is
	// w_k·w_t·conj(w_(t−k)), so out[t] = w_t · Σ_k (in[k]·w_k)·conj(w_(t−k)):
	// a convolution, which the FFT of the padded length does circularly.
	for k, w := range v.chirp {
		v.work[k] = in[k] * w
	}
	clear(v.work[v.n:])
	v.fft.Coefficients(v.work, v.work)
	for i, b := range v.kernel {
		v.work[i] *= b
	}
	v.fft.Sequence(v.work, v.work)
	for t, w := range v.chirp {
		out[t] = v.work[t] * w
	}
}
