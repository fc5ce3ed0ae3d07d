package noise_test

import (
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"

	"sinter/synth/noise"
)

// binPowers returns the power of each bin of one period x, by gonum's real
// FFT: a bin holding a_k·cos(2π·k·t/n + φ) has |X_k| = n·a_k/2 and the
// power a_k²/2 = 2|X_k|²/n² (and |X_0|²/n² at 0 Hz).
func binPowers(x []float64) []float64 {
	n := float64(len(x))
	coef := fourier.NewFFT(len(x)).Coefficients(nil, x)
	p := make([]float64, len(coef))
	for k, c := range coef {
		p[k] = 2 * (real(c)*real(c) + imag(c)*imag(c)) / (n * n)
	}
	p[0] /= 2
	return p
}

// gainFunc is a function as a noise.Gain.
type gainFunc func(float64) float64

func (f gainFunc) Gain(hz float64) float64 { return f(hz) }

func meanSquare(x []float64) float64 {
	s := 0.0
	for _, v := range x {
		s += v * v
	}
	return s / float64(len(x))
}

// TestPeriodSpectrum makes one period of bands of several slopes, widths
// and period lengths (ones gonum's FFT takes as they are and ones that
// need Bluestein's algorithm) and reads it back with gonum's FFT: every
// bin from low to high holds power in proportion to f^γ, γ = slope/(10
// log10 2) (a slope in dB per octave of the power density), nothing lies
// outside the band, and the mean square over the period is the sine's,
// A²/2, and the sum of the bins' powers (Parseval's theorem). Gain scales
// each bin's amplitude.
func TestPeriodSpectrum(t *testing.T) {
	fade := func(hz float64) float64 { return max(0, min(1, (6000-hz)/2000)) }
	cases := []struct {
		name      string
		period    int
		low, high float64
		slope     float64
		gain      gainFunc
		bins      int // expected, where the band is narrow enough to count
	}{
		{"white, smooth period", 48000, 400, 1600, 0, nil, 1201},
		{"pink, Bluestein period", 48001, 400, 1600, -3, nil, 0},
		{"brighter, one octave", 47999, 2000, 4000, 6, nil, 0},
		{"steep over nine octaves", 96000, 40, 20000, -24, nil, 0},
		{"a third of an octave at 100 Hz", 4800, 89, 112, 0, nil, 3},
		{"narrower than a bin: the nearest one", 480, 1210, 1290, 0, nil, 1},
		{"faded above 4 kHz", 48000, 1000, 8000, -3, fade, 0},
	}
	const rate, amplitude = 48000, 0.25
	var m noise.Maker
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			x := make([]float64, c.period)
			s := noise.Noise{Band: noise.Band{Low: c.low, High: c.high, Slope: c.slope, Amplitude: amplitude}, Seed: 7}
			if c.gain != nil {
				s.Gain = c.gain
			}
			m.Periods(x, nil, rate, &s, nil)
			p := binPowers(x)
			first, last := c.period, 0
			total, band := 0.0, 0.0
			for k, v := range p {
				total += v
				if v > 1e-20 {
					first, last = min(first, k), max(last, k)
				}
			}
			if got := noise.Bins(c.low, c.high, c.period, rate); c.bins > 0 && got != c.bins {
				t.Errorf("Bins = %d, want %d", got, c.bins)
			}
			if n := noise.Bins(c.low, c.high, c.period, rate); last-first+1 > n {
				t.Errorf("power in bins %d..%d, more than the band's %d", first, last, n)
			}
			hz := float64(rate) / float64(c.period)
			if c.bins != 1 && (float64(first)*hz < c.low || float64(last)*hz > c.high) {
				t.Errorf("power from %.2f to %.2f Hz, outside the band %g..%g Hz", float64(first)*hz, float64(last)*hz, c.low, c.high)
			}
			gamma := c.slope / (10 * math.Log10(2))
			for k := first; k <= last; k++ {
				band += p[k]
				want := p[first] * math.Pow(float64(k)/float64(first), gamma)
				if c.gain != nil {
					g0, g := c.gain(float64(first)*hz), c.gain(float64(k)*hz)
					want *= g * g / (g0 * g0)
				}
				// Rounding moves a bin's amplitude by a small part of the
				// whole signal's, which its power shows in proportion to
				// its own amplitude; gonum's transform of a length with a
				// large prime factor (47999 = 7·6857) rounds to about 1e-9.
				if math.Abs(p[k]-want) > 1e-9*want+1e-8*math.Sqrt(want*total) {
					t.Fatalf("bin %d (%.1f Hz) holds %.12g, want %.12g for a slope of %g dB/octave", k, float64(k)*hz, p[k], want, c.slope)
				}
			}
			ms := meanSquare(x)
			if math.Abs(ms-total) > 1e-8*ms {
				t.Errorf("mean square %.15g, sum of the bins' powers %.15g (Parseval)", ms, total)
			}
			if c.gain == nil && math.Abs(ms-amplitude*amplitude/2) > 1e-12 {
				t.Errorf("mean square %.15g, want a sine's %.15g", ms, amplitude*amplitude/2)
			}
		})
	}
}

// correlation is the normalised correlation of x and y at lag 0.
func correlation(x, y []float64) float64 {
	var xy, xx, yy float64
	for i := range x {
		xy += x[i] * y[i]
		xx += x[i] * x[i]
		yy += y[i] * y[i]
	}
	return xy / math.Sqrt(xx*yy)
}

// TestTurnsCorrelate: two noises of one band and seed whose turns differ
// by θ correlate by cos θ over a period, since each bin's pair of sines
// does (the mean of cos α·cos(α + θ) over whole cycles is cos θ / 2,
// common practice); noises of two seeds hardly correlate at all. Made as
// a pair in one transform, each is what it is made alone.
func TestTurnsCorrelate(t *testing.T) {
	const rate, period = 48000, 48001
	band := noise.Band{Low: 300, High: 3000, Slope: -3, Amplitude: 1}
	var m noise.Maker
	for _, theta := range []float64{0, math.Pi / 3, math.Pi / 2, math.Pi} {
		t.Run(fmt.Sprintf("θ=%.3f", theta), func(t *testing.T) {
			a, b := noise.Noise{Band: band, Seed: 3, Turn: -theta / 2}, noise.Noise{Band: band, Seed: 3, Turn: theta / 2}
			x, y := make([]float64, period), make([]float64, period)
			m.Periods(x, y, rate, &a, &b)
			if c := correlation(x, y); math.Abs(c-math.Cos(theta)) > 1e-9 {
				t.Errorf("correlation %.12f, want cos θ = %.12f", c, math.Cos(theta))
			}
			alone := make([]float64, period)
			for i, s := range []*noise.Noise{&a, &b} {
				m.Periods(alone, nil, rate, s, nil)
				got := [2][]float64{x, y}[i]
				for j := range alone {
					if math.Abs(alone[j]-got[j]) > 1e-12 {
						t.Fatalf("noise %d at sample %d: %.17g in a pair, %.17g alone", i, j, got[j], alone[j])
					}
				}
			}
		})
	}
	x, y := make([]float64, period), make([]float64, period)
	a, b := noise.Noise{Band: band, Seed: 3}, noise.Noise{Band: band, Seed: 4}
	m.Periods(x, y, rate, &a, &b)
	if c := correlation(x, y); math.Abs(c) > 0.05 {
		t.Errorf("two seeds correlate by %.4f", c)
	}
}
