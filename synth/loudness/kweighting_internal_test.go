package loudness

import (
	"math"
	"math/cmplx"
	"testing"

	"sinter/synth/kernel"
)

// table48k is the K-weighting of ITU-R BS.1770-4 Annex 1 Tables 1–2 at
// 48 kHz, as given on the standards sheet §5.1.
var table48k = kWeighting{
	shelf:    biquad{1.53512485958697, -2.69169618940638, 1.19839281085285, -1.69065929318241, 0.73248077421585},
	highPass: biquad{1.0, -2.0, 1.0, -1.99004745483398, 0.99007225036621},
}

func TestKWeightingCoefficients(t *testing.T) {
	cases := []struct {
		name string
		rate float64
		want kWeighting
		// checkHighPassNumerator is false where the source gives only the
		// high-pass denominator.
		checkHighPassNumerator bool
	}{
		// Source: ITU-R BS.1770-4 Annex 1 Tables 1–2, as on the standards sheet §5.1.
		{"48 kHz", 48000, table48k, true},
		// Source: standards sheet §5.1, 44.1 kHz values computed there from
		// the analog prototype (high-pass: denominator only).
		{"44.1 kHz", 44100, kWeighting{
			shelf:    biquad{1.5308412300503, -2.6509799951547, 1.1690790799216, -1.6636551132560, 0.7125954280732},
			highPass: biquad{a1: -1.9891696736298, a2: 0.9891990357870},
		}, false},
	}
	for _, c := range cases {
		got := newKWeighting(c.rate)
		check := func(stage string, got, want biquad, numerator bool) {
			pairs := [][2]float64{{got.a1, want.a1}, {got.a2, want.a2}}
			if numerator {
				pairs = append(pairs, [2]float64{got.b0, want.b0}, [2]float64{got.b1, want.b1}, [2]float64{got.b2, want.b2})
			}
			for _, p := range pairs {
				if math.Abs(p[0]-p[1]) > 1e-12 {
					t.Errorf("%s %s: got %+v, want %+v (to 1e-12)", c.name, stage, got, want)
					return
				}
			}
		}
		check("shelf", got.shelf, c.want.shelf, true)
		check("high-pass", got.highPass, c.want.highPass, c.checkHighPassNumerator)
	}
}

// responseDB is the magnitude in dB of the K-weighting k at hz for a rate.
func (k kWeighting) responseDB(hz, rate float64) float64 {
	z := cmplx.Exp(complex(0, -2*math.Pi*hz/rate))
	h := complex(1, 0)
	for _, q := range []biquad{k.shelf, k.highPass} {
		h *= (complex(q.b0, 0) + complex(q.b1, 0)*z + complex(q.b2, 0)*z*z) /
			(1 + complex(q.a1, 0)*z + complex(q.a2, 0)*z*z)
	}
	return 20 * math.Log10(cmplx.Abs(h))
}

// TestKWeightingKeepsResponseAcrossRates measures the weighting gain of
// the meter with 0 dBFS sines and compares it with the response of the
// 48 kHz table. Source: BS.1770 requires the same response at every rate
// (standards sheet §5.1); the reference is the Annex 1 table's response.
func TestKWeightingKeepsResponseAcrossRates(t *testing.T) {
	frequencies := []float64{25, 100, 997, 3000, 10000}
	cases := []struct {
		rate      int
		tolerance float64 // dB
	}{
		{48000, 0.002}, // the table itself, through the meter
		{32000, 0.02},
		{44100, 0.02},
		{88200, 0.02},
		{96000, 0.02},
		{192000, 0.02},
		{384000, 0.02},
	}
	for _, c := range cases {
		m := NewMeter(1, c.rate)
		for _, hz := range frequencies {
			x := make([]float64, 4*c.rate)
			for n := range x {
				x[n] = math.Sin(2 * math.Pi * hz * float64(n) / float64(c.rate))
			}
			// A sine of peak 1 has mean square 1/2 (−3.0103 dB).
			got := m.Integrated(x) - loudnessOffset + 10*math.Log10(2)
			want := table48k.responseDB(hz, tableRate)
			t.Logf("%d Hz rate, %g Hz tone: K gain %.4f dB, 48 kHz table %.4f dB", c.rate, hz, got, want)
			if math.Abs(got-want) > c.tolerance {
				t.Errorf("%d Hz rate, %g Hz tone: K gain %.4f dB, 48 kHz table %.4f dB (±%g)", c.rate, hz, got, want, c.tolerance)
			}
		}
	}
}

// referenceIntegrated is integrated loudness as ITU-R BS.1770-4 writes it
// (standards sheet §5.1–5.2): each channel through the two biquads as
// their difference equations, term by term, then 400 ms blocks every
// 100 ms, an absolute gate at −70 LUFS and a relative one 10 LU below the
// mean of the blocks above it, L = −0.691 + 10·log10(mean power). It
// never lets the filters' memory go; where flushBelow > 0 it sets the
// whole memory of a channel to zero whenever all of it falls below that
// level, which is how the tests show a flush at an audible level to be
// caught.
func referenceIntegrated(x []float64, channels, rate int, flushBelow float64) float64 {
	k := newKWeighting(float64(rate))
	s, h := k.shelf, k.highPass
	hop := int(math.Round(float64(rate) / 10))
	frames := len(x) / channels
	energy := make([]float64, frames/hop)
	for c := range channels {
		var x1, x2, y1, y2, z1, z2 float64
		for n := range len(energy) * hop {
			v := x[n*channels+c]
			y := s.b0*v + s.b1*x1 + s.b2*x2 - s.a1*y1 - s.a2*y2
			z := h.b0*y + h.b1*y1 + h.b2*y2 - h.a1*z1 - h.a2*z2
			x1, x2, y1, y2, z1, z2 = v, x1, y, y1, z, z1
			energy[n/hop] += z * z
			if max(math.Abs(x1), math.Abs(x2), math.Abs(y1), math.Abs(y2), math.Abs(z1), math.Abs(z2)) < flushBelow {
				x1, x2, y1, y2, z1, z2 = 0, 0, 0, 0, 0, 0
			}
		}
	}
	var blocks []float64
	for j := 0; j+4 <= len(energy); j++ {
		blocks = append(blocks, (energy[j]+energy[j+1]+energy[j+2]+energy[j+3])/float64(4*hop))
	}
	mean := func(gate float64) float64 {
		sum, n := 0.0, 0
		for _, p := range blocks {
			if p > gate {
				sum += p
				n++
			}
		}
		return sum / float64(n)
	}
	absolute := math.Pow(10, (-70+0.691)/10)
	return -0.691 + 10*math.Log10(mean(max(absolute, 0.1*mean(absolute))))
}

// TestFlushKeepsTheReading measures signals whose filters decay to rest
// (and are flushed, and skip zeros) or never do, against the reference
// meter above, which never flushes. The two filters round differently
// (fused multiply-adds, the high-pass gain folded into the shelf), which
// moves readings by about 1e-13 LU here; what the flush drops lies below
// 1e-30 and cannot show. The tolerance, 1e-10 LU, is a thousand times
// the first and well below what dropping an audible tail does: the
// reference itself, flushed at 1e-5 (−100 dBFS), must miss it on the
// clicks, where that moves the reading by 4e-9 LU at 8 kHz and 1e-5 LU
// at the other rates.
func TestFlushKeepsTheReading(t *testing.T) {
	const tolerance = 1e-10 // LU
	sine := func(n, rate int, hz, dBFS float64) float64 {
		return math.Pow(10, dBFS/20) * math.Sin(2*math.Pi*hz*float64(n)/float64(rate))
	}
	signals := []struct {
		name     string
		channels int
		seconds  int
		// at returns channel c of frame n at rate.
		at func(n, c, rate int) float64
		// catchesAudibleFlush is whether the test requires the
		// reference flushed at −100 dBFS to fail the check.
		catchesAudibleFlush bool
	}{
		{"tone, a minute of zeros, tone", 1, 63, func(n, c, rate int) float64 {
			if n < rate || n >= 61*rate+rate/7 {
				return sine(n, rate, 997, -6)
			}
			return 0
		}, false},
		{"tone, then a minute at −100 dBFS", 1, 61, func(n, c, rate int) float64 {
			if n < rate {
				return sine(n, rate, 997, -6)
			}
			return sine(n, rate, 997, -100)
		}, false},
		// A click every 1.37 s rings the filters from rest, at an offset
		// that moves against the blocks the meter checks at.
		{"clicks in silence", 1, 30, func(n, c, rate int) float64 {
			if n%(rate*137/100) == rate/3 {
				return 0.9
			}
			return 0
		}, true},
		// Stereo: one channel rests and is flushed while the other plays.
		{"stereo, left decays while right plays", 2, 20, func(n, c, rate int) float64 {
			if c == 0 && n >= rate {
				return 0
			}
			return sine(n, rate, 440+float64(c)*557, -12)
		}, false},
	}
	for _, rate := range []int{8000, 44100, 48000, 96000} {
		for _, s := range signals {
			frames := s.seconds * rate
			x := make([]float64, frames*s.channels)
			for n := range frames {
				for c := range s.channels {
					x[n*s.channels+c] = s.at(n, c, rate)
				}
			}
			got := NewMeter(s.channels, rate).Integrated(x)
			want := referenceIntegrated(x, s.channels, rate, 0)
			t.Logf("%d Hz, %s: %.6f LUFS, off the reference by %.2g LU", rate, s.name, got, got-want)
			if math.Abs(got-want) > tolerance {
				t.Errorf("%d Hz, %s: %.12f LUFS, the unflushed reference reads %.12f (±%g)", rate, s.name, got, want, tolerance)
			}
			if !s.catchesAudibleFlush {
				continue
			}
			if audible := referenceIntegrated(x, s.channels, rate, 1e-5); math.Abs(audible-want) <= tolerance {
				t.Errorf("%d Hz, %s: a flush at −100 dBFS moves the reading by only %.2g LU: the check could not catch it", rate, s.name, audible-want)
			}
		}
	}
}

// TestFiltersNeverHoldSubnormals rings the filters with a full-scale
// click and lets them decay on zeros, a frame at a time with the flush
// between blocks as Integrated runs it, at the lowest, common and highest
// rates: every value they hold, and the square of every output, must be
// zero or normal (IEEE 754: the smallest normal float64 is 2⁻¹⁰²²), and
// they must come to rest, after which blocks of zeros are skipped.
func TestFiltersNeverHoldSubnormals(t *testing.T) {
	const smallestNormal = 0x1p-1022
	normal := func(v float64) bool { return v == 0 || math.Abs(v) >= smallestNormal }
	for _, rate := range []int{8000, 44100, 48000, 384000} {
		m := NewMeter(1, rate)
		m.state = kernel.KState{}
		var energy [2]float64
		rested := -1 // the frame where the filters came to rest
		x := []float64{0.9}
		for n := 0; n < 5*rate && rested < 0; n++ {
			kernel.KWeight(x, 1, &m.filter, &m.state, &energy)
			x[0] = 0
			st := m.state
			for _, v := range []float64{st.X1[0], st.X2[0], st.Y1[0], st.Y2[0], st.Z1[0], st.Z2[0], st.Z1[0] * st.Z1[0]} {
				if !normal(v) {
					t.Fatalf("%d Hz, frame %d after the click: memory %+v holds or squares to a subnormal", rate, n, st)
				}
			}
			if (n+1)%checkFrames == 0 {
				m.flush()
				if m.state == (kernel.KState{}) {
					rested = n + 1
				}
			}
		}
		if rested < 0 {
			t.Fatalf("%d Hz: the filters were not at rest 5 s after the click", rate)
		}
		t.Logf("%d Hz: at rest %.3f s after a full-scale click", rate, float64(rested)/float64(rate))
	}
}
