package wav

import (
	"bytes"
	"math"
	"math/rand/v2"
	"testing"

	gowav "github.com/go-audio/wav"
	"gonum.org/v1/gonum/mathext/prng"

	"sinter/synth/kernel"
)

// TestTPDFIsSplitMix64 checks the generator against gonum's SplitMix64, an
// independent implementation of the reference splitmix64.c: the dither for
// index i must be made of output i of the generator seeded with the seed.
func TestTPDFIsSplitMix64(t *testing.T) {
	// First output for seed 0 as printed by the reference splitmix64.c.
	if got := splitMix64(0 + splitMixGamma); got != 0xE220A8397B1DCDAF {
		t.Fatalf("SplitMix64 seed 0 output 0 = %#x, want 0xe220a8397b1dcdaf", got)
	}
	for _, seed := range []uint64{0, 1, 0xDEADBEEF, math.MaxUint64} {
		src := prng.NewSplitMix64(seed)
		for i := range uint64(1000) {
			z := src.Uint64()
			want := (float64(z>>32)/(1<<32) - 0.5) + (float64(z&0xFFFFFFFF)/(1<<32) - 0.5)
			if got := tpdf(seed, i); got != want {
				t.Fatalf("seed %#x index %d: tpdf = %v, want %v from SplitMix64 output %#x", seed, i, got, want, z)
			}
		}
	}
}

// ditherSample returns tpdf values for indices 0 to n−1 of seed 1.
func ditherSample(n int) []float64 {
	d := make([]float64, n)
	for i := range d {
		d[i] = tpdf(1, uint64(i))
	}
	return d
}

// within fails t unless got is within 5 standard errors se of want.
func within(t *testing.T, what string, got, want, se float64) {
	t.Helper()
	if math.Abs(got-want) > 5*se {
		t.Errorf("%s = %.6g, want %.6g ± %.2g (5 standard errors)", what, got, want, 5*se)
	} else {
		t.Logf("%s = %.6g (want %.6g ± %.2g)", what, got, want, 5*se)
	}
}

// TestTPDFMoments: the sum of two independent uniform ±½-LSB values has
// mean 0 and variance 2 · 1/12 = 1/6 LSB² (standards sheet §6, TPDF dither
// and TPDF noise cost), and its successive values are uncorrelated, so the
// noise is white (standards sheet §6, Wannamaker, Lipshitz, Vanderkooy &
// Wright 2000).
func TestTPDFMoments(t *testing.T) {
	const n = 1 << 22
	d := ditherSample(n)
	var sum, sq, lag1 float64
	for i, v := range d {
		sum += v
		sq += v * v
		if i > 0 {
			lag1 += v * d[i-1]
		}
	}
	mean, variance := sum/n, sq/n
	// Standard errors: the variance over √n for the mean; for the mean
	// square √((E[d⁴] − (1/6)²)/n) with E[d⁴] = 1/15 for the triangle on
	// (−1, 1); for the lag-1 correlation 1/√n.
	within(t, "dither mean (LSB)", mean, 0, math.Sqrt(1.0/6/n))
	within(t, "dither variance (LSB²)", variance, 1.0/6, math.Sqrt((1.0/15-1.0/36)/n))
	within(t, "dither lag-1 correlation", lag1/n/variance, 0, 1/math.Sqrt(n))
	for i, v := range d {
		if v < -1 || v >= 1 {
			t.Fatalf("dither %d = %v outside [−1, 1) LSB", i, v)
		}
	}
}

// TestTPDFHistogram compares 20 bins over (−1, 1) LSB with the triangular
// density 1 − |d| of the TPDF dither (standards sheet §6).
func TestTPDFHistogram(t *testing.T) {
	const n, bins = 1 << 22, 20
	var count [bins]int
	for _, v := range ditherSample(n) {
		count[int((v+1)*bins/2)]++
	}
	cdf := func(x float64) float64 { // of the triangle on (−1, 1)
		if x < 0 {
			return (1 + x) * (1 + x) / 2
		}
		return 1 - (1-x)*(1-x)/2
	}
	worst := 0.0
	for b, got := range count {
		lo, hi := -1+2*float64(b)/bins, -1+2*float64(b+1)/bins
		p := cdf(hi) - cdf(lo)
		want := n * p
		// Binomial standard error; 5 of them are 3.5 % of the smallest
		// (outermost) bins and under 1 % of the central ones.
		se := math.Sqrt(n * p * (1 - p))
		if math.Abs(float64(got)-want) > 5*se {
			t.Errorf("bin [%.1f, %.1f): %d values, want %.0f ± %.0f", lo, hi, got, want, 5*se)
		}
		worst = max(worst, math.Abs(float64(got)/want-1))
	}
	t.Logf("largest bin deviation from the triangle: %.2f %%", 100*worst)
}

// TestDitherAcrossBlocks: Encode adds the dither block by block, with
// every set of kernels the processor runs; every code in a file several
// blocks long must still be the rounding of x · 2^(bits−1) + tpdf(seed, i)
// for its interleaved index i.
func TestDitherAcrossBlocks(t *testing.T) {
	const seed = 42
	n := 3*packSamples + packSamples/2 + 6 // whole stereo frames, a partial last block
	rng := rand.New(rand.NewPCG(3, 4))
	samples := make([]float64, n)
	for i := range samples {
		samples[i] = 1.8*rng.Float64() - 0.9
	}
	for _, isa := range kernel.Supported() {
		for _, bits := range []int{16, 24} {
			var buf bytes.Buffer
			opts := Options{SampleRate: 48000, BitDepth: bits, Channels: 2, Dither: true, DitherSeed: seed}
			previous := kernel.Use(isa)
			err := Encode(&buf, samples, opts)
			kernel.Use(previous)
			if err != nil {
				t.Fatal(err)
			}
			// go-audio/wav's decoder as independent reader.
			pcm, err := gowav.NewDecoder(bytes.NewReader(buf.Bytes())).FullPCMBuffer()
			if err != nil {
				t.Fatal(err)
			}
			scale := math.Ldexp(1, bits-1)
			for i, x := range samples {
				want := int(max(-scale, min(scale-1, math.RoundToEven(float64(x*scale)+tpdf(seed, uint64(i))))))
				if got := pcm.Data[i]; got != want {
					t.Fatalf("%s, %d-bit sample %d (block %d): code %d, want %d", isa, bits, i, i/packSamples, got, want)
				}
			}
		}
	}
}
