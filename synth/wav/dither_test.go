package wav_test

import (
	"bytes"
	"math"
	"sync"
	"testing"

	gowav "github.com/go-audio/wav"

	"sinter/synth/wav"
)

// decodeCodes reads the integer codes of an encoded file back with
// go-audio/wav's decoder as an independent reader, dropping the extra
// sample it reads from an odd data chunk's pad byte.
func decodeCodes(t *testing.T, data []byte, n int) []int {
	t.Helper()
	buf, err := gowav.NewDecoder(bytes.NewReader(data)).FullPCMBuffer()
	if err != nil {
		t.Fatal(err)
	}
	if len(buf.Data) < n {
		t.Fatalf("go-audio read %d samples, want %d", len(buf.Data), n)
	}
	return buf.Data[:n]
}

// TestDitherErrorMoments: with TPDF dither the total error, code minus
// x · 2^(bits−1), has mean 0 and variance q²/12 + 2·q²/12 = q²/4 whatever
// the input (standards sheet §6, TPDF noise cost; Wannamaker, Lipshitz,
// Vanderkooy & Wright 2000: the error's moments are independent of the
// input), including constants that plain rounding turns into a fixed
// error. With 10⁶ samples the tolerances are about 10 standard errors.
func TestDitherErrorMoments(t *testing.T) {
	const n = 1_000_000
	for _, bits := range []int{16, 24} {
		scale := math.Ldexp(1, bits-1)
		for _, lsbs := range []float64{0, 0.25, 0.5, -0.7} {
			samples := make([]float64, n)
			for i := range samples {
				samples[i] = lsbs / scale
			}
			data := encode(t, samples, wav.Options{SampleRate: 48000, BitDepth: bits, Channels: 1, Dither: true, DitherSeed: 7})
			var sum, sq float64
			for _, c := range decodeCodes(t, data, n) {
				e := float64(c) - lsbs
				sum += e
				sq += e * e
			}
			mean := sum / n
			variance := sq/n - mean*mean
			t.Logf("%d-bit, x = %v LSB: error mean %.5f LSB, variance %.5f LSB²", bits, lsbs, mean, variance)
			if math.Abs(mean) > 0.005 {
				t.Errorf("%d-bit, x = %v LSB: error mean %.5f LSB, want 0 ± 0.005", bits, lsbs, mean)
			}
			if math.Abs(variance/0.25-1) > 0.02 {
				t.Errorf("%d-bit, x = %v LSB: error variance %.5f LSB², want 1/4 ± 2 %%", bits, lsbs, variance)
			}
		}
	}
}

// amplitude returns the amplitude of the hz component of codes sampled at
// rate Hz, from their correlation with a sine and a cosine; codes must span
// whole periods of it. The phase is reduced with integers so that it stays
// exact over long signals.
func amplitude(codes []int, hz, rate int) float64 {
	var s, c float64
	for n, v := range codes {
		sin, cos := math.Sincos(2 * math.Pi * float64(n*hz%rate) / float64(rate))
		s += float64(v) * sin
		c += float64(v) * cos
	}
	return 2 / float64(len(codes)) * math.Hypot(s, c)
}

// TestDitherKeepsQuietSine: without dither a sine below ½ LSB quantises to
// silence and one of a little more to a three-level, square-like wave; with
// TPDF dither the codes carry the sine itself plus white noise, so its
// amplitude is recovered and no harmonic distortion appears (standards
// sheet §6, Wannamaker, Lipshitz, Vanderkooy & Wright 2000: the error's
// moments do not depend on the input).
func TestDitherKeepsQuietSine(t *testing.T) {
	const rate, hz, seconds = 48000, 1000, 10 // 10 000 whole periods
	for _, tc := range []struct {
		name string
		dbfs float64
		// plainThird is the least level of the 3rd harmonic relative to
		// the fundamental without dither, in dB; 0 when the sine must
		// quantise to silence instead.
		plainThird float64
	}{
		// 10^(−100/20) · 2^15 ≈ 0.33 LSB peak: every sample rounds to 0.
		{"-100 dBFS", -100, 0},
		// 0.7 LSB peak: codes −1, 0, 1, switching where 0.7 · sin θ = ½
		// (θ ≈ 45.6°), a three-level wave whose 3rd harmonic is only about
		// 8 dB below the fundamental.
		{"0.7 LSB", 20 * math.Log10(0.7/32768), -12},
	} {
		t.Run(tc.name, func(t *testing.T) {
			peak := math.Pow(10, tc.dbfs/20)
			samples := make([]float64, rate*seconds)
			for n := range samples {
				samples[n] = peak * math.Sin(2*math.Pi*float64(n*hz%rate)/rate)
			}
			opts := wav.Options{SampleRate: rate, BitDepth: 16, Channels: 1}
			plain := decodeCodes(t, encode(t, samples, opts), len(samples))
			opts.Dither = true
			dithered := decodeCodes(t, encode(t, samples, opts), len(samples))

			want := peak * 32768 // LSB
			if tc.plainThird == 0 {
				for n, c := range plain {
					if c != 0 {
						t.Fatalf("undithered sample %d = %d, want silence for a %.2f LSB sine", n, c, want)
					}
				}
			} else {
				third := 20 * math.Log10(amplitude(plain, 3*hz, rate)/amplitude(plain, hz, rate))
				t.Logf("undithered: 3rd harmonic %.1f dB", third)
				if third < tc.plainThird {
					t.Errorf("undithered 3rd harmonic %.1f dB relative to the fundamental, expected a square-like wave above %.0f dB", third, tc.plainThird)
				}
			}

			got := amplitude(dithered, hz, rate)
			third := 20 * math.Log10(amplitude(dithered, 3*hz, rate)/got)
			t.Logf("dithered: amplitude %.4f LSB (input %.4f LSB), 3rd harmonic %.1f dB", got, want, third)
			if math.Abs(got/want-1) > 0.1 {
				t.Errorf("dithered amplitude %.4f LSB, want %.4f LSB ± 10 %%", got, want)
			}
			if third > -20 {
				t.Errorf("dithered 3rd harmonic %.1f dB relative to the fundamental, want at most −20 dB", third)
			}
		})
	}
}

// TestDitherDeterministic: the noise depends on DitherSeed and the sample
// index only, so repeated and concurrent encodes give the same bytes, a
// different seed different ones, and the seed is ignored without Dither.
func TestDitherDeterministic(t *testing.T) {
	samples := testSamples(3*8192*2 + 1002) // several packing blocks and a partial one
	for _, bits := range []int{16, 24} {
		opts := wav.Options{SampleRate: 44100, BitDepth: bits, Channels: 2, Dither: true, DitherSeed: 1}
		want := encode(t, samples, opts)
		if again := encode(t, samples, opts); !bytes.Equal(again, want) {
			t.Errorf("%d-bit: a second dithered encode differs from the first", bits)
		}
		var wg sync.WaitGroup
		for range 8 {
			wg.Go(func() {
				var buf bytes.Buffer
				if err := wav.Encode(&buf, samples, opts); err != nil {
					t.Error(err)
				} else if !bytes.Equal(buf.Bytes(), want) {
					t.Errorf("%d-bit: a concurrent dithered encode differs from the serial one", bits)
				}
			})
		}
		wg.Wait()

		other := opts
		other.DitherSeed = 2
		if bytes.Equal(encode(t, samples, other), want) {
			t.Errorf("%d-bit: seeds 1 and 2 give the same bytes", bits)
		}
		off := opts
		off.Dither = false
		plain := off
		plain.DitherSeed = 0
		if !bytes.Equal(encode(t, samples, off), encode(t, samples, plain)) {
			t.Errorf("%d-bit: DitherSeed changes the bytes without Dither", bits)
		}
	}
}

// TestDitherIgnoredForFloat: 32-bit float output is not quantised, so
// Dither leaves its bytes unchanged.
func TestDitherIgnoredForFloat(t *testing.T) {
	samples := testSamples(20001 * 2)
	opts := wav.Options{SampleRate: 48000, BitDepth: 32, Channels: 2}
	want := encode(t, samples, opts)
	opts.Dither, opts.DitherSeed = true, 99
	if !bytes.Equal(encode(t, samples, opts), want) {
		t.Error("Dither changed 32-bit float output")
	}
}

// TestDitherClamps: dither cannot push full-scale and out-of-range values
// past the integer range, and NaN stays silence.
func TestDitherClamps(t *testing.T) {
	in := []float64{1, -1, 1.5, -1.5, math.Inf(1), math.Inf(-1), math.NaN()}
	for _, bits := range []int{16, 24} {
		top := 1<<(bits-1) - 1
		want := []int{top, -top - 1, top, -top - 1, top, -top - 1, 0}
		samples := make([]float64, 0, 1000*len(in))
		for range 1000 {
			samples = append(samples, in...)
		}
		data := encode(t, samples, wav.Options{SampleRate: 48000, BitDepth: bits, Channels: 1, Dither: true, DitherSeed: 3})
		for i, c := range decodeCodes(t, data, len(samples)) {
			// −1 · 2^(bits−1) + d rounds to the smallest code or one above.
			ok := c == want[i%len(in)] || in[i%len(in)] == -1 && c == -top
			if !ok {
				t.Fatalf("%d-bit sample %d (%v): code %d, want %d", bits, i, samples[i], c, want[i%len(in)])
			}
		}
	}
}
