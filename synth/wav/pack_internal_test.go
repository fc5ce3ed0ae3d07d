package wav

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"sinter/synth/kernel"
)

// packCase returns samples that reach every branch of the definition at
// bits bits: exact halves of an LSB (ties, which go to the even code),
// values a hair either side of them, ±1, full scale and past it, the
// largest and the smallest float64 values, subnormals, ±0, ±Inf and NaN,
// quiet and ordinary signals. With dither, some samples are placed so
// that x·2^(bits−1) + d is itself a tie for the dither at their index.
func packCase(rng *rand.Rand, n, bits int, dither bool, seed, first uint64) []float64 {
	scale := math.Ldexp(1, bits-1)
	special := []float64{
		0, math.Copysign(0, -1), 1, -1, 0.5, -0.5, 1.5, -1.5, 2, -2,
		math.Inf(1), math.Inf(-1), math.NaN(), math.Float64frombits(0x7FF8000000000001), math.Float64frombits(0xFFF0000000000001),
		math.MaxFloat64, -math.MaxFloat64, 1e300, -1e300, 0x1p51 / scale, -0x1p51 / scale, 0x1p52 / scale, -0x1.8p52 / scale, 0x1p53 / scale,
		math.SmallestNonzeroFloat64, -math.SmallestNonzeroFloat64, 0x1p-1022, -0x1p-1022, 0x1.8p-1030, 1e-300, -1e-310,
		(scale - 0.5) / scale, -(scale + 0.5) / scale, (scale - 1.5) / scale, -(scale - 0.5) / scale, (scale - 1) / scale, -(scale + 1) / scale,
		math.Nextafter(1, 2), math.Nextafter(-1, -2), math.Nextafter(1, 0), math.Nextafter(-1, 0),
		0.5 / scale, -0.5 / scale, 1.5 / scale, -1.5 / scale, 2.5 / scale, -2.5 / scale,
		math.Nextafter(0.5/scale, 1), math.Nextafter(0.5/scale, 0), math.Nextafter(-0.5/scale, -1), math.Nextafter(-0.5/scale, 0),
	}
	src := make([]float64, n)
	for i := range src {
		switch i % 8 {
		case 0, 5:
			src[i] = special[rng.IntN(len(special))]
		case 1: // a tie at bits bits
			src[i] = (float64(rng.IntN(int(2*scale))) - scale + 0.5) / scale
		case 2: // −100 dBFS
			src[i] = 1e-5 * (2*rng.Float64() - 1)
		case 3: // within a few LSB of 0
			src[i] = float64(rng.IntN(9)-4) / 2 / scale
		case 4: // a tie of x·2^(bits−1) + d, exact for codes under 2^20
			if dither {
				k := float64(rng.IntN(1<<12) - 1<<11)
				src[i] = (k + 0.5 - tpdf(seed, first+uint64(i))) / scale
			} else {
				src[i] = (float64(rng.IntN(1<<12)-1<<11) + 0.5) / scale
			}
		default:
			src[i] = 2.2*rng.Float64() - 1.1
		}
	}
	return src
}

// TestEveryKernelPacksTheReference runs every set of kernels this
// processor has over blocks that start anywhere in a file and end off the
// vector width, and requires the bytes of the definition for every
// sample: the codes of quantizeScalar (reference: quantizeScalar, the
// definition in the package doc) stored two's complement, little-endian
// (reference: packReference, standards sheet §1), and for float files
// float32(x) (reference: floatReference). It also requires that nothing
// past the block's bytes is written.
func TestEveryKernelPacksTheReference(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	const n = 1100
	blocks := [][2]int{{0, n}, {0, 0}, {3, 0}} // start, length
	for start := range 19 {
		for _, length := range []int{1, 2, 3, 4, 5, 7, 8, 9, 15, 16, 17, 23, 24, 31, 32, 33, 47, 48, 49, 64, 100, 1000} {
			blocks = append(blocks, [2]int{start, length})
		}
	}
	for _, bits := range []int{16, 24, 32} {
		for _, dither := range []bool{false, true} {
			for _, first := range []uint64{0, 13, 1 << 40, math.MaxUint64 - 600} {
				const seed = 0xC0FFEE
				src := packCase(rng, n, bits, dither, seed, first)
				var want []byte
				if bits == 32 {
					want = floatReference(src)
				} else {
					want = packReference(quantizeScalar(make([]int32, n), src, bits, dither, seed, first), bits)
				}
				width := bits / 8
				for _, isa := range kernel.Supported() {
					previous := kernel.Use(isa)
					for _, b := range blocks {
						start, length := b[0], b[1]
						name := fmt.Sprintf("%s, %d bits, dither %v, first %d, samples %d to %d", isa, bits, dither, first, start, start+length)
						dst := bytes.Repeat([]byte{0xA5}, (length+1)*width)
						block := src[start : start+length]
						var got []byte
						if bits == 32 {
							got = kernel.PackFloat32(dst, block)
						} else {
							got = kernel.PackPCM(dst, block, kernel.PCM{Bits: bits, Dither: dither, Seed: seed}, first+uint64(start))
						}
						if len(got) != length*width {
							t.Fatalf("%s: %d bytes, want %d", name, len(got), length*width)
						}
						if !bytes.Equal(got, want[start*width:(start+length)*width]) {
							for i := range length {
								g, w := got[i*width:(i+1)*width], want[(start+i)*width:(start+i+1)*width]
								if !bytes.Equal(g, w) {
									t.Fatalf("%s: sample %d (%v) packs as % x, the definition as % x", name, start+i, src[start+i], g, w)
								}
							}
						}
						if tail := dst[length*width:]; !bytes.Equal(tail, bytes.Repeat([]byte{0xA5}, width)) {
							t.Fatalf("%s: wrote past the block: % x", name, tail)
						}
					}
					kernel.Use(previous)
				}
			}
		}
	}
}

// TestReferenceCatchesAWrongKernel shows the check above can fail: codes
// rounded half away from zero, as math.Round does, differ from the
// definition on the ties it holds.
func TestReferenceCatchesAWrongKernel(t *testing.T) {
	src := packCase(rand.New(rand.NewPCG(13, 14)), 1000, 16, false, 0, 0)
	want := quantizeScalar(make([]int32, len(src)), src, 16, false, 0, 0)
	differ := 0
	for i, x := range src {
		if math.IsNaN(x) {
			continue
		}
		if c := int32(max(-32768, min(32767, math.Round(x*32768)))); c != want[i] {
			differ++
		}
	}
	if differ == 0 {
		t.Fatal("rounding half away from zero gives the definition's codes on every sample: the case has no ties")
	}
}
