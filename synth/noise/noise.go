// Package noise makes the noise of a band: one period of a signal whose
// power spectral density is a straight line in dB per octave between two
// frequencies and nothing outside them. The period is the inverse discrete
// Fourier transform of a spectrum of that shape with random phases (a
// random-phase multisine), so it repeats without a seam, its power over a
// period is exactly its bins' (Parseval's theorem), and making it costs
// O(P log P) for a period of P samples however wide the band.
package noise

import (
	"math"

	"gonum.org/v1/gonum/dsp/fourier"
)

// Band is the spectrum of a band of noise.
type Band struct {
	Low, High float64 // edges in Hz, Low below High
	Slope     float64 // dB per octave of the power spectral density; 0 is white, −3 equal power per octave
	// Amplitude sets the band's power: over a period, before Gain, its
	// mean square is a sine's of this amplitude, Amplitude²/2.
	Amplitude float64
	// Gain, when set, scales the amplitude at each frequency, as a fade
	// or a body does; the power then changes with it.
	Gain Gain
}

// Gain is a gain that depends on frequency, in Hz. It is an interface
// rather than a function so that a band's own method, behind a pointer,
// serves without a closure to allocate for each note.
type Gain interface {
	Gain(hz float64) float64
}

// Noise is one noise to make: a band, the seed its phases are drawn from,
// and Turn, in radians, by which every bin's phase is turned forward or
// back, the direction drawn from the seed too. Two noises of one band and
// seed whose turns differ by θ have a correlation of cos θ over a period;
// with independent directions, their cross-correlation at other lags has
// no peak either.
type Noise struct {
	Band
	Seed uint64
	Turn float64
}

// Maker makes periods of noise, keeping its transforms and scratch memory
// from one call to the next. A Maker is not safe for concurrent use.
type Maker struct {
	inv inverse
	// half is gonum's real FFT, which makes a noise alone, at a length it
	// takes as it is, in about half the time of a complex transform.
	half     *fourier.FFT
	spectrum []complex128
	power    []float64
}

// Bins returns how many bins of a period of period samples at rate a band
// from low to high Hz takes: those from low to high below half the rate,
// or the one nearest the band's centre when none lies inside (a band
// narrower than the period can resolve sounds as that one sine); 0 when
// the period is too short to hold any.
func Bins(low, high float64, period, rate int) int {
	first, last := bins(low, high, period, rate)
	return max(0, last-first+1)
}

// bins returns the first and last bin of a band.
func bins(low, high float64, period, rate int) (first, last int) {
	top := (period - 1) / 2 // the highest bin below half the rate
	if top < 1 {
		return 1, 0
	}
	scale := float64(period) / float64(rate)
	first = max(1, int(math.Ceil(low*scale)))
	last = min(top, int(math.Floor(high*scale)))
	if first > last {
		first = max(1, min(top, int(math.Round(math.Sqrt(low*high)*scale))))
		last = first
	}
	return first, last
}

// Periods writes one period of noise a into x and, when b is not nil, one
// of noise b into y, both len(x) samples long at rate samples a second.
// The two share one complex transform: a's spectrum is the real part of
// what it transforms and b's the imaginary, so each comes out as it would
// alone but for rounding. A noise alone, at a length gonum's FFT takes as
// it is, takes its real transform.
func (m *Maker) Periods(x, y []float64, rate int, a, b *Noise) {
	n := len(x)
	if cap(m.spectrum) < n {
		m.spectrum = make([]complex128, n)
	}
	spec := m.spectrum[:n]
	clear(spec)
	m.add(spec, rate, a, 1)
	if b != nil {
		m.add(spec, rate, b, 1i)
	}
	if b == nil && smooth(n) {
		if m.half == nil || m.half.Len() != n {
			m.half = fourier.NewFFT(n)
		}
		// The bins up to half the rate say all of a real noise.
		m.half.Sequence(x, spec[:n/2+1])
		return
	}
	if n > 0 {
		m.inv.reset(n)
		m.inv.transform(spec, spec)
	}
	for t, z := range spec {
		x[t] = real(z)
	}
	if b != nil {
		for t, z := range spec {
			y[t] = imag(z)
		}
	}
}

// golden is the step of the SplitMix64 sequence (G. L. Steele, D. Lea and
// C. H. Flood, "Fast splittable pseudorandom number generators", OOPSLA
// 2014), whose mixer draws each bin's phase from the seed and the bin's
// number: a fixed, documented function, so phases never change with the
// Go version.
const golden = 0x9e3779b97f4a7c15

func mix64(z uint64) uint64 {
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}

// phaseBits sets how finely a bin's random phase is drawn: one of 2^12
// angles, 0.09° apart, which no listener or measurement tells from a
// phase drawn from a continuum, and which a table of unit phasors holds
// in 64 KiB, so each bin costs a look-up rather than a sine and cosine.
const phaseBits = 12

// phasors holds e^(2πi·j/2^phaseBits) for every j.
var phasors = func() (t [1 << phaseBits]complex128) {
	for j := range t {
		sin, cos := math.Sincos(2 * math.Pi * float64(j) / (1 << phaseBits))
		t[j] = complex(cos, sin)
	}
	return t
}()

// add puts noise s's bins into spec, times unit (1 for the real part of
// the transform, i for the imaginary): bin k of amplitude a_k and phase
// φ_k, as a_k/2·e^(iφ_k) at k and its conjugate at n − k, is the sine
// a_k·cos(2π·k·t/n + φ_k) of the period.
func (m *Maker) add(spec []complex128, rate int, s *Noise, unit complex128) {
	n := len(spec)
	first, last := bins(s.Low, s.High, n, rate)
	if first > last {
		return
	}
	if cap(m.power) < last-first+1 {
		m.power = make([]float64, last-first+1)
	}
	shape := m.power[:last-first+1]
	// The power density goes as f^γ, Slope dB per octave being a factor
	// of 10^(Slope/10) each time f doubles, so a bin's amplitude goes as
	// f^(γ/2); taken from the band's centre, so that a steep slope over a
	// wide band stays within float64's range.
	halfGamma := s.Slope / (20 * math.Log10(2))
	logCentre := math.Log(math.Sqrt(s.Low*s.High) * float64(n) / float64(rate))
	total := 0.0
	for i := range shape {
		shape[i] = 1
		if halfGamma != 0 {
			shape[i] = math.Exp(halfGamma * (math.Log(float64(first+i)) - logCentre))
		}
		total += shape[i] * shape[i]
	}
	// Halved: a bin's two halves, at k and n − k, make its sine.
	scale := s.Amplitude / math.Sqrt(total) / 2
	forward, back := phasors[0], phasors[0]
	if s.Turn != 0 {
		sin, cos := math.Sincos(s.Turn)
		forward, back = complex(cos, sin), complex(cos, -sin)
	}
	hz := float64(rate) / float64(n)
	for i, q := range shape {
		k := first + i
		a := scale * q
		if s.Gain != nil {
			a *= s.Gain.Gain(float64(k) * hz)
		}
		h := mix64(s.Seed + uint64(k)*golden + golden)
		z := phasors[h>>(64-phaseBits)]
		if h&1 == 0 {
			z *= forward
		} else {
			z *= back
		}
		half := complex(a*real(z), a*imag(z))
		spec[k] += unit * half
		spec[n-k] += unit * complex(real(half), -imag(half))
	}
}
