package analysis

import (
	"math"
	"math/cmplx"

	"gonum.org/v1/gonum/dsp/window"
)

// bh are the coefficients of the 4-term Blackman–Harris window, whose
// highest sidelobe lies 92 dB below its main lobe and whose main lobe is 8
// bins wide (F. J. Harris, "On the use of windows for harmonic analysis
// with the discrete Fourier transform", Proc. IEEE 66(1), 1978; the values
// gonum's window.BlackmanHarris uses). Centred on u = 0 and T samples
// long it is Σ_j bh[j]·cos(2πj·u/T) for |u| ≤ T/2.
var bh = [4]float64{0.35875, 0.48829, 0.14128, 0.01168}

// lobeBins is half the width of the window's main lobe in bins: two
// partials this many bins apart or more do not share a lobe, and beyond it
// a partial leaks into its neighbour at −92 dB or less.
const lobeBins = 4

// frameWindow is one analysis window of n samples.
type frameWindow struct {
	n      int
	centre float64 // (n−1)/2: the window's centre, in samples from its start
	w      []float64
	sum    float64 // Σ w
}

func newFrameWindow(n int) *frameWindow {
	w := make([]float64, n)
	for i := range w {
		w[i] = 1
	}
	window.BlackmanHarris(w)
	sum := 0.0
	for _, v := range w {
		sum += v
	}
	return &frameWindow{n: n, centre: float64(n-1) / 2, w: w, sum: sum}
}

// response is the window's transform at δ radians per sample from its
// centre frequency, Σ w(k)·cos(δ·(k − centre)): real, since the window is
// symmetric about its centre. A sinusoid of amplitude A at ω seen at a
// bin of frequency ω_k gives |X_k| = A/2 · response(ω_k − ω).
func (fw *frameWindow) response(delta float64) float64 {
	s := 0.0
	for k, v := range fw.w {
		s += v * math.Cos(delta*(float64(k)-fw.centre))
	}
	return s
}

// piece is one stretch of an amplitude envelope, in seconds: on [t0, t1]
// its level is p + q·(t − t0) + r·e^{g·(t − t0)}, with g ≤ 0. Every
// segment the patch language draws is one: a straight attack (r = 0), the
// exponential curve of a decay or release (q = 0), a held level (q = r =
// 0).
type piece struct {
	t0, t1  float64
	p, q, r float64
	g       float64
}

// at is the piece's level at t.
func (pc *piece) at(t float64) float64 {
	v := t - pc.t0
	return pc.p + pc.q*v + pc.r*math.Exp(pc.g*v)
}

// smoother gives the average of an envelope that a frame of a window
// measures: a sinusoid of amplitude e(t) demodulated at its own frequency
// by a window w centred at τ reads Σ w·e / Σ w, and with the window written
// as its cosine terms that average has a closed form over each piece. It
// works in seconds; half is half the window's length.
type smoother struct {
	half  float64
	omega [4]float64 // the cosine terms' angular frequencies, rad/s
	norm  float64    // ∫ w = bh[0]·2·half
}

func newSmoother(half float64) smoother {
	s := smoother{half: half, norm: bh[0] * 2 * half}
	for j := range s.omega {
		s.omega[j] = math.Pi * float64(j) / half
	}
	return s
}

// expIntegral is ∫_0^L e^{z·s} ds, exact also for z = 0 and accurate for a
// small real z.
func expIntegral(z complex128, l float64) complex128 {
	switch {
	case z == 0:
		return complex(l, 0)
	case imag(z) == 0:
		return complex(math.Expm1(real(z)*l)/real(z), 0)
	}
	return (cmplx.Exp(z*complex(l, 0)) - 1) / z
}

// gain is the average the window gives e^{g·u} about its centre,
// ∫ w(u)·e^{g·u} du / ∫ w: what a frame reads of an exponential that runs
// through the whole window, relative to its value at the centre.
func (s *smoother) gain(g float64) float64 {
	if g == 0 {
		return 1
	}
	sum := 0.0
	for j, a := range bh {
		// ∫_{−H}^{H} cos(ω u) e^{g u} du = Re ∫_0^{2H} e^{(g+iω)(s−H)} ds.
		z := complex(g, s.omega[j])
		sum += a * real(cmplx.Exp(-z*complex(s.half, 0))*expIntegral(z, 2*s.half))
	}
	return sum / s.norm
}

// average is what a frame centred at tau reads of an envelope made of
// pieces (sorted, not overlapping; zero outside them); gains holds
// s.gain(pc.g) for each piece, which the caller computes once per
// envelope.
func (s *smoother) average(pieces []piece, gains []float64, tau float64) float64 {
	lo, hi := tau-s.half, tau+s.half
	total := 0.0
	for i := range pieces {
		pc := &pieces[i]
		if pc.t1 <= lo || pc.t0 >= hi {
			continue
		}
		if pc.t0 <= lo && pc.t1 >= hi {
			// The window lies inside the piece: a straight line averages to
			// its value at the centre (the window is symmetric), an
			// exponential to its centre value times the window's gain.
			v := tau - pc.t0
			return pc.p + pc.q*v + pc.r*math.Exp(pc.g*v)*gains[i]
		}
		total += s.partial(pc, max(pc.t0, lo), min(pc.t1, hi), tau)
	}
	return total
}

// partial is the share of the frame centred at tau from piece pc over
// [a, b], which lies inside both: Σ_j bh_j ∫ cos(ω_j(t − τ))·level(t) dt
// over the stretch, divided by ∫ w, each term worked out from the start of
// the stretch so no exponential grows. The cosines' phases at a and over
// the stretch are powers of the first's, ω_j being j·ω_1.
func (s *smoother) partial(pc *piece, a, b, tau float64) float64 {
	l := b - a
	v1 := a - pc.t0               // the stretch's start, from the piece's start
	p := pc.p + pc.q*v1           // the straight part's value there
	r := pc.r * math.Exp(pc.g*v1) // the exponential's value there
	egl := math.Exp(pc.g * l)
	// j = 0: the window's constant term, all real.
	sum := bh[0] * (p*l + pc.q*l*l/2 + r*real(expIntegral(complex(pc.g, 0), l)))
	shift1, span1 := unit(s.omega[1]*(a-tau)), unit(s.omega[1]*l)
	shift, span := complex(1, 0), complex(1, 0)
	ll := complex(l, 0)
	for j := 1; j < len(bh); j++ {
		shift *= shift1 // e^{iω_j(a − τ)}
		span *= span1   // e^{iω_j·l}
		z := complex(0, s.omega[j])
		in := complex(p, 0)*(span-1)/z + complex(pc.q, 0)*(span*(z*ll-1)+1)/(z*z)
		if r != 0 {
			zg := complex(pc.g, s.omega[j])
			in += complex(r, 0) * (complex(egl, 0)*span - 1) / zg
		}
		sum += bh[j] * real(shift*in)
	}
	return sum / s.norm
}

// unit is e^{ix}.
func unit(x float64) complex128 {
	sin, cos := math.Sincos(x)
	return complex(cos, sin)
}
