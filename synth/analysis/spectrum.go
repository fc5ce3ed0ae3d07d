package analysis

import (
	"math"
	"math/cmplx"

	"gonum.org/v1/gonum/dsp/fourier"
)

// stft cuts a signal into frames of one window, a quarter of a window
// apart, and transforms them with gonum's real FFT. Frame m starts at
// sample m·hop − n/2, so it is centred half a sample before m·hop, and
// samples outside the signal read as zero, so the first frame sees the
// onset of a signal that starts at its first sample.
type stft struct {
	x    []float64
	win  *frameWindow
	hop  int
	size int // FFT length: the window, zero-padded
	fft  *fourier.FFT
	buf  []float64
	spec []complex128
}

func newSTFT(x []float64, n, pad int) *stft {
	size := n * pad
	return &stft{x: x, win: newFrameWindow(n), hop: n / 4, size: size,
		fft: fourier.NewFFT(size), buf: make([]float64, size), spec: make([]complex128, size/2+1)}
}

// frames is how many frames cover the signal, the last one centred at or
// after its end.
func (s *stft) frames() int { return (len(s.x)+s.hop-1)/s.hop + 1 }

// start is the first sample of frame m.
func (s *stft) start(m int) int { return m*s.hop - s.win.n/2 }

// centre is the time of frame m's centre, in samples.
func (s *stft) centre(m int) float64 { return float64(s.start(m)) + s.win.centre }

// transform windows frame m and returns its spectrum, s.size/2+1 bins;
// the slice is reused by the next call.
func (s *stft) transform(m int) []complex128 {
	clear(s.buf)
	from := s.start(m)
	for k, w := range s.win.w {
		if i := from + k; i >= 0 && i < len(s.x) {
			s.buf[k] = w * s.x[i]
		}
	}
	return s.fft.Coefficients(s.spec, s.buf)
}

// peak is a spectral peak of one frame.
type peak struct {
	hz  float64
	amp float64 // amplitude of the sinusoid it stands for, full scale 1
}

// peaks finds the local maxima of power spectrum pow whose power is at
// least threshold, and refines each by a parabola through the log
// magnitudes of the bin and its neighbours (quadratically interpolated
// FFT: J. O. Smith and X. Serra, "PARSHL: an analysis/synthesis program
// for non-harmonic sounds based on a sinusoidal representation", ICMC
// 1987). binHz is the bin spacing.
func (s *stft) peaks(pow []float64, threshold, binHz float64, dst []peak) []peak {
	for k := 2; k < len(pow)-2; k++ {
		b := pow[k]
		if b < threshold || b < pow[k-1] || b <= pow[k+1] {
			continue
		}
		// Log magnitudes, in nepers of power; the vertex of the parabola
		// through three bins is the peak's position and height.
		la, lb, lc := math.Log(pow[k-1]+1e-300), math.Log(b), math.Log(pow[k+1]+1e-300)
		d := 0.5 * (la - lc) / (la - 2*lb + lc)
		if math.IsNaN(d) || math.Abs(d) > 1 {
			d = 0
		}
		height := lb - 0.25*(la-lc)*d
		dst = append(dst, peak{hz: (float64(k) + d) * binHz, amp: 2 * math.Exp(height/2) / s.win.sum})
	}
	return dst
}

// power fills dst with the power of each bin of spec.
func power(dst []float64, spec []complex128) []float64 {
	dst = dst[:len(spec)]
	for k, c := range spec {
		dst[k] = real(c)*real(c) + imag(c)*imag(c)
	}
	return dst
}

// noisePower estimates the mean power per bin of a frame's noise from its
// quietest bins: for white noise a bin's power is exponentially
// distributed (common practice), so its 20th percentile is −ln 0.8 ≈ 0.223
// of the mean. A low percentile keeps even a dense spectrum's partials,
// whose lobes can cover half the bins, out of the estimate.
func noisePower(pow, scratch []float64) float64 {
	scratch = append(scratch[:0], pow[1:]...)
	return nth(scratch, len(scratch)/5) / -math.Log(0.8)
}

// nth returns the k-th smallest of xs (from 0), reordering xs: Hoare's
// selection, in linear time on average.
func nth(xs []float64, k int) float64 {
	lo, hi := 0, len(xs)-1
	for lo < hi {
		pivot := xs[(lo+hi)/2]
		i, j := lo, hi
		for i <= j {
			for xs[i] < pivot {
				i++
			}
			for xs[j] > pivot {
				j--
			}
			if i <= j {
				xs[i], xs[j] = xs[j], xs[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return xs[k]
		}
	}
	return xs[k]
}

// demodulate reads the complex amplitude of a sinusoid of angular
// frequency omega (radians per sample) in the frame of s that starts at
// sample from, summing the windowed signal against e^{−iω(k − centre)}
// directly, so the estimate holds whatever the frequency's place between
// bins: A·e^{i(ω·t_c + φ)} for A·cos(ωt + φ), t_c the frame's centre.
func (s *stft) demodulate(from int, omega float64) complex128 {
	w := s.win
	step := cmplx.Exp(complex(0, -omega))
	rot := cmplx.Exp(complex(0, omega*w.centre)) // e^{−iω(0 − centre)}
	var sum complex128
	for k, v := range w.w {
		if i := from + k; i >= 0 && i < len(s.x) {
			sum += complex(v*s.x[i], 0) * rot
		}
		rot *= step
		if k%1024 == 1023 {
			// Renormalise the rotation, which drifts by an ulp a step.
			rot = cmplx.Exp(complex(0, -omega*(float64(k+1)-w.centre)))
		}
	}
	return 2 * sum / complex(w.sum, 0)
}
