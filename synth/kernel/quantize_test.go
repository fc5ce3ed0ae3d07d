package kernel

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mathext/prng"
)

// packSamples returns n samples mixing ordinary values with the ones the
// kernels treat apart: ties, ±0, full scale and past it, huge values,
// subnormals, ±Inf and NaN.
func packSamples(rng *rand.Rand, n int) []float64 {
	special := []float64{
		0, math.Copysign(0, -1), 1, -1, 1.5, -1.5, math.Inf(1), math.Inf(-1), math.NaN(),
		math.MaxFloat64, -math.MaxFloat64, 0x1p52, -0x1p40, math.SmallestNonzeroFloat64, -0x1p-1040,
		0.5 / 32768, 1.5 / 32768, -2.5 / 32768, 0.5 / 8388608, -1.5 / 8388608, (32768 - 0.5) / 32768,
	}
	src := make([]float64, n)
	for i := range src {
		if i%3 == 0 {
			src[i] = special[rng.IntN(len(special))]
		} else {
			src[i] = 2.2*rng.Float64() - 1.1
		}
	}
	return src
}

// TestPackSameBytesEverySet runs every set of kernels this processor has
// on blocks starting and ending anywhere, and requires the plain Go
// form's bytes exactly, and nothing written past the block.
func TestPackSameBytesEverySet(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	src := packSamples(rng, 300)
	for _, format := range []PCM{{Bits: 16}, {Bits: 24}, {Bits: 16, Dither: true, Seed: 9}, {Bits: 24, Dither: true, Seed: math.MaxUint64}, {Bits: 32}} {
		width := format.Bits / 8
		for start := range 20 {
			for _, length := range []int{0, 1, 7, 8, 9, 15, 16, 17, 31, 32, 33, 40, 280} {
				block := src[start : start+length]
				const first = 1 << 50
				want := make([]byte, length*width)
				if format.Bits == 32 {
					packFloat32Go(want, block)
				} else {
					state := uint64(0)
					if format.Dither {
						state = format.Seed + (first+uint64(start))*ditherGamma
					}
					packPCMGo(want, block, format.Bits, format.Dither, state)
				}
				for _, isa := range Supported() {
					dst := bytes.Repeat([]byte{0x5A}, (length+2)*width)
					previous := Use(isa)
					var got []byte
					if format.Bits == 32 {
						got = PackFloat32(dst, block)
					} else {
						got = PackPCM(dst, block, format, first+uint64(start))
					}
					Use(previous)
					name := fmt.Sprintf("%s, %+v, samples %d to %d", isa, format, start, start+length)
					if !bytes.Equal(got, want) {
						t.Fatalf("%s:\n got % x\nwant % x", name, got, want)
					}
					if !bytes.Equal(dst[len(want):], bytes.Repeat([]byte{0x5A}, 2*width)) {
						t.Fatalf("%s: wrote past the block", name)
					}
				}
			}
		}
	}
}

// TestPackPCMCodes checks codes worked by hand from PackPCM's definition
// (round half to even of x·2^(bits−1), clamped, NaN to 0), stored
// little-endian, two's complement (the WAVE format's PCM, standards
// sheet §1), with every set of kernels. Each value fills a block of 37
// samples, so that it goes through every vector lane and the plain tail.
func TestPackPCMCodes(t *testing.T) {
	for _, c := range []struct {
		bits int
		x    float64
		want []byte
	}{
		{16, 0.5, []byte{0x00, 0x40}},                             // 16384, exact
		{16, -0.5, []byte{0x00, 0xC0}},                            // −16384
		{16, 1, []byte{0xFF, 0x7F}},                               // 32768 clips to 32767
		{16, -1, []byte{0x00, 0x80}},                              // −32768, the smallest code
		{16, 0.5 / 32768, []byte{0x00, 0x00}},                     // ½ LSB: a tie, to even 0
		{16, 1.5 / 32768, []byte{0x02, 0x00}},                     // 1½: to even 2
		{16, 2.5 / 32768, []byte{0x02, 0x00}},                     // 2½: to even 2
		{16, -1.5 / 32768, []byte{0xFE, 0xFF}},                    // −1½: to even −2
		{16, math.NaN(), []byte{0x00, 0x00}},                      // NaN is silence
		{16, 1e300, []byte{0xFF, 0x7F}},                           // huge: clips
		{24, 0.5, []byte{0x00, 0x00, 0x40}},                       // 4194304
		{24, -1 / 8388608.0, []byte{0xFF, 0xFF, 0xFF}},            // −1
		{24, math.Inf(1), []byte{0xFF, 0xFF, 0x7F}},               // 8388607
		{24, math.Inf(-1), []byte{0x00, 0x00, 0x80}},              // −8388608
		{24, 0x1p-1074, []byte{0x00, 0x00, 0x00}},                 // the smallest subnormal
		{24, (8388608 - 0.5) / 8388608, []byte{0xFF, 0xFF, 0x7F}}, // ties up to 2^23, which clips
	} {
		src := make([]float64, 37)
		for i := range src {
			src[i] = c.x
		}
		want := bytes.Repeat(c.want, len(src))
		for _, isa := range Supported() {
			previous := Use(isa)
			got := PackPCM(make([]byte, len(want)), src, PCM{Bits: c.bits}, 0)
			Use(previous)
			if !bytes.Equal(got, want) {
				t.Errorf("%s, %d bits: %v packs as % x, want % x", isa, c.bits, c.x, got[:c.bits/8], c.want)
			}
		}
	}
}

// TestDitherIsSplitMix64 checks the dither against gonum's SplitMix64, an
// independent implementation of the reference splitmix64.c: the dither
// of the sample at index i must be (h + l)/2^32 − 1 for the high and low
// halves h and l of output i of the generator seeded with the seed.
func TestDitherIsSplitMix64(t *testing.T) {
	// The first output for seed 0 as the reference splitmix64.c prints it.
	if got, want := ditherAt(0+ditherGamma), float64(0xE220A839+0x7B1DCDAF)/(1<<32)-1; got != want {
		t.Fatalf("dither of seed 0, index 0 = %v, want %v from output 0xe220a8397b1dcdaf", got, want)
	}
	for _, seed := range []uint64{0, 1, 0xDEADBEEF, math.MaxUint64} {
		src := prng.NewSplitMix64(seed)
		for i := range uint64(1000) {
			z := src.Uint64()
			want := float64(z>>32+z&0xFFFFFFFF)/(1<<32) - 1
			if got := ditherAt(seed + (i+1)*ditherGamma); got != want {
				t.Fatalf("seed %#x index %d: dither %v, want %v from output %#x", seed, i, got, want, z)
			}
		}
	}
}

// TestPackRefusesBadArguments: the assembly forms would write outside
// memory given too short a dst, so the exported functions panic first.
func TestPackRefusesBadArguments(t *testing.T) {
	for _, c := range []struct {
		name string
		pack func()
	}{
		{"20 bits", func() { PackPCM(make([]byte, 64), make([]float64, 4), PCM{Bits: 20}, 0) }},
		{"32 bits", func() { PackPCM(make([]byte, 64), make([]float64, 4), PCM{Bits: 32}, 0) }},
		{"short 24-bit dst", func() { PackPCM(make([]byte, 47), make([]float64, 16), PCM{Bits: 24}, 0) }},
		{"short float dst", func() { PackFloat32(make([]byte, 63), make([]float64, 16)) }},
	} {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("%s: no panic", c.name)
				}
			}()
			c.pack()
		}()
	}
}
