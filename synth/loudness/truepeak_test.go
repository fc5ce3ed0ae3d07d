package loudness_test

import (
	"math"
	"math/rand/v2"
	"testing"

	"sinter/synth/kernel"
	"sinter/synth/loudness"
)

func dB(linear float64) float64 { return 20 * math.Log10(linear) }

// edgeSeconds is the raised-cosine fade at both ends of the test tones.
// An abrupt start or stop rings in the reconstructed signal (the meter
// reads the signal as zero outside the buffer); the fades keep the
// reading that of the steady tone, which is what the checks are about.
const edgeSeconds = 0.01

// sine returns interleaved frames of amplitude·sin(2π·cycles·n + phase),
// the same in every channel, cycles being the frequency as a fraction of
// the sample rate, with faded ends.
func sine(channels, rate int, cycles, amplitude, phase, seconds float64) []float64 {
	frames := int(math.Round(seconds * float64(rate)))
	fade := int(math.Round(edgeSeconds * float64(rate)))
	x := make([]float64, frames*channels)
	for n := range frames {
		v := amplitude * math.Sin(2*math.Pi*cycles*float64(n)+phase)
		if edge := min(n, frames-1-n); edge < fade {
			v *= (1 - math.Cos(math.Pi*float64(edge)/float64(fade))) / 2
		}
		for c := range channels {
			x[n*channels+c] = v
		}
	}
	return x
}

func samplePeak(x []float64) float64 {
	peak := 0.0
	for _, v := range x {
		peak = max(peak, math.Abs(v))
	}
	return peak
}

func degrees(d float64) float64 { return d * math.Pi / 180 }

func TestTruePeakEBUTech3341(t *testing.T) {
	// Source: EBU Tech 3341 Table 1, cases 15–19 (standards sheet §5.4),
	// tolerance +0.2/−0.4 dB. Stereo 48 kHz; the phase is that of a sine,
	// which puts the crests of cases 16–19 between samples.
	cases := []struct {
		name               string
		cycles, ffs, phase float64
		want               float64 // dBTP
	}{
		{"case 15: fs/4, 0.5 FFS, 0°", 1.0 / 4, 0.5, 0, -6.0},
		{"case 16: fs/4, 0.5 FFS, 45°", 1.0 / 4, 0.5, 45, -6.0},
		{"case 17: fs/6, 0.5 FFS, 60°", 1.0 / 6, 0.5, 60, -6.0},
		{"case 18: fs/8, 0.5 FFS, 67.5°", 1.0 / 8, 0.5, 67.5, -6.0},
		{"case 19: fs/4, 1.41 FFS, 45°", 1.0 / 4, 1.41, 45, 3.0},
	}
	m := loudness.NewMeter(2, 48000)
	for _, c := range cases {
		x := sine(2, 48000, c.cycles, c.ffs, degrees(c.phase), 1)
		got := dB(m.TruePeak(x))
		t.Logf("%s: %.3f dBTP (sample peak %.3f dBFS)", c.name, got, dB(samplePeak(x)))
		if got < c.want-0.4 || got > c.want+0.2 {
			t.Errorf("%s: %.3f dBTP, want %.1f +0.2/−0.4", c.name, got, c.want)
		}
	}
}

func TestTruePeakFindsMissedCrest(t *testing.T) {
	// Source: analytic. An fs/4 sine of amplitude 0.5 at 45° has samples
	// ±0.5·sin 45° (−9.03 dBFS) and crests midway between them (−6.02 dBFS).
	// Every oversampling factor here puts the midpoint on its grid.
	cases := []struct {
		rate int
		want float64 // dB
	}{
		{44100, -6.0206},  // 4×
		{48000, -6.0206},  // 4×
		{88200, -6.0206},  // 4×
		{96000, -6.0206},  // 2×
		{176400, -6.0206}, // 2×
		{192000, -9.0309}, // 1×: the sample peak, by definition
	}
	for _, c := range cases {
		x := sine(1, c.rate, 1.0/4, 0.5, degrees(45), 0.5)
		if sp := dB(samplePeak(x)); math.Abs(sp - -9.0309) > 0.01 {
			t.Fatalf("%d Hz: test signal sample peak %.4f dBFS, want −9.03", c.rate, sp)
		}
		got := dB(loudness.NewMeter(1, c.rate).TruePeak(x))
		t.Logf("%d Hz: %.4f dBTP", c.rate, got)
		if math.Abs(got-c.want) > 0.1 {
			t.Errorf("%d Hz: %.4f dBTP, want %.4f ±0.1", c.rate, got, c.want)
		}
	}
}

func TestTruePeakInterpolatesBandLimitedSines(t *testing.T) {
	// Source: analytic (sampling theorem). A sine whose crest falls on an
	// oversampled grid point must read its amplitude, up to the
	// interpolator's in-band error; a sine at any phase reads at least
	// amplitude·cos(π·f/(L·fs)), the value half a grid step from the crest.
	const amplitude = 0.8
	const tolerance = 5e-4 // relative
	const seconds = 0.05
	rng := rand.New(rand.NewPCG(3341, 1770))
	cases := []struct {
		rate, oversampling int
	}{
		{44100, 4}, {48000, 4}, {96000, 2}, {176400, 2},
	}
	for _, c := range cases {
		m := loudness.NewMeter(1, c.rate)
		worst := 0.0 // largest relative error with the crest on the grid
		for _, cycles := range []float64{0.01, 0.05, 0.125, 0.2, 0.3, 0.35, 0.4, 20000.0 / 48000} {
			for p := 1; p < c.oversampling; p++ {
				// Crest p/L after the middle frame, clear of the fades: sin
				// peaks where its argument is π/2.
				crest := math.Round(seconds*float64(c.rate)/2) + float64(p)/float64(c.oversampling)
				x := sine(1, c.rate, cycles, amplitude, math.Pi/2-2*math.Pi*cycles*crest, seconds)
				got := m.TruePeak(x)
				worst = max(worst, math.Abs(got/amplitude-1))
				if math.Abs(got/amplitude-1) > tolerance {
					t.Errorf("%d Hz, %.4f·fs, crest at +%d/%d: %.6f, want %.6f (±%g relative)",
						c.rate, cycles, p, c.oversampling, got, amplitude, tolerance)
				}
			}
			for range 8 {
				x := sine(1, c.rate, cycles, amplitude, 2*math.Pi*rng.Float64(), seconds)
				got := m.TruePeak(x)
				low := amplitude * math.Cos(math.Pi*cycles/float64(c.oversampling)) * (1 - tolerance)
				if got < low || got > amplitude*(1+tolerance) {
					t.Errorf("%d Hz, %.4f·fs, random phase: %.6f, want %.6f to %.6f",
						c.rate, cycles, got, low, amplitude*(1+tolerance))
				}
			}
		}
		t.Logf("%d Hz: crest on the grid read within %.2g of the amplitude", c.rate, worst)
	}
}

func TestTruePeakNeverBelowSamplePeak(t *testing.T) {
	// Property from the definition: the reconstructed signal passes
	// through every sample.
	rng := rand.New(rand.NewPCG(1, 2))
	for _, rate := range []int{8000, 44100, 96000, 192000} {
		for _, channels := range []int{1, 2} {
			m := loudness.NewMeter(channels, rate)
			for range 50 {
				x := make([]float64, channels*(1+rng.IntN(3000)))
				for i := range x {
					x[i] = 2*rng.Float64() - 1
				}
				if got, sp := m.TruePeak(x), samplePeak(x); got < sp {
					t.Fatalf("%d Hz %d ch, %d samples: true peak %v below sample peak %v", rate, channels, len(x), got, sp)
				}
			}
		}
	}
}

// TestTruePeakSameBitsEverySet measures the same buffers with every set of
// kernels this processor has and requires the plain form's reading bit
// for bit: mono and stereo, at rates of each oversampling, for lengths
// around the stretch the meter interpolates at a time (4096 frames) and
// the vector widths, of noise and a sine whose crests fall between
// samples, decaying so that later stretches are skipped.
func TestTruePeakSameBitsEverySet(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, c := range []struct{ channels, rate int }{
		{1, 48000}, {2, 44100}, {1, 88200}, {2, 96000}, {1, 176400}, {2, 192000},
	} {
		m := loudness.NewMeter(c.channels, c.rate)
		for _, frames := range []int{1, 7, 8, 31, 32, 38, 39, 50, 70, 71, 100, 4095, 4096, 4097, 4096 + 38, 2*4096 + 7, 3*4096 + 7, 9000, 10000, 48000 + 13} {
			x := make([]float64, c.channels*frames)
			for i := range x {
				n := float64(i / c.channels)
				x[i] = (0.3*(rng.Float64()*2-1) + 0.6*math.Sin(0.9*math.Pi*n+0.3)) * math.Exp(-n/3000)
			}
			previous := kernel.Use(kernel.Plain)
			want := m.TruePeak(x)
			for _, isa := range kernel.Supported() {
				kernel.Use(isa)
				if got := m.TruePeak(x); math.Float64bits(got) != math.Float64bits(want) {
					t.Errorf("%d ch, %d Hz, %d frames, %s: %.17g, the plain form reads %.17g", c.channels, c.rate, frames, isa, got, want)
				}
			}
			kernel.Use(previous)
		}
	}
}
