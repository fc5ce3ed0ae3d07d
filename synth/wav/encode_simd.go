//go:build goexperiment.simd && amd64

package wav

import (
	"math"
	"simd/archsimd"
)

// useVectors is whether quantizeBlock runs its vector loop; tests turn it
// off to compare the two.
var useVectors = archsimd.X86.AVX512()

// The vector twin of quantizeScalar: eight samples per step, the same
// SplitMix64 states, the same exact arithmetic for the dither, and
// rounding half to even by instruction instead of by the magic number, so
// every code is the same as the scalar loop's (tested). Scalar float code
// runs only after archsimd.ClearAVXUpperBits, for the last few samples.

// Lane constants, loaded from memory so the vector loop holds no scalar
// float work.
var (
	laneIndex  = [8]uint64{1, 2, 3, 4, 5, 6, 7, 8}
	laneGammas = [8]uint64{splitMixGamma, splitMixGamma, splitMixGamma, splitMixGamma, splitMixGamma, splitMixGamma, splitMixGamma, splitMixGamma}
)

func quantizeBlock(dst []int32, src []float64, bits int, dither bool, seed, first uint64) []int32 {
	dst = dst[:len(src)]
	vectorEnd := len(src) &^ 7
	if !useVectors || vectorEnd == 0 {
		return quantizeScalar(dst, src, bits, dither, seed, first)
	}
	scale := math.Ldexp(1, bits-1)
	// Scalars the loop needs, broadcast before any vector work.
	consts := [8]float64{scale, scale - 1, -scale, 0x1p-32, 1}
	var seeds [8]uint64
	for j := range seeds {
		seeds[j] = seed + first*splitMixGamma
	}
	quantizeLanes(dst[:vectorEnd], src[:vectorEnd], dither, &consts, &seeds)
	archsimd.ClearAVXUpperBits()
	quantizeScalar(dst[vectorEnd:], src[vectorEnd:], bits, dither, seed, first+uint64(vectorEnd))
	return dst
}

// quantizeLanes is the vector loop of quantizeBlock over a multiple of 8
// samples. consts holds scale, scale − 1, −scale, 2^−32 and 1; seeds holds
// the SplitMix64 state before sample 0 in every lane.
func quantizeLanes(dst []int32, src []float64, dither bool, consts *[8]float64, seeds *[8]uint64) {
	c := archsimd.LoadFloat64x8(consts)
	pick := func(i uint64) archsimd.Float64x8 {
		return c.Permute(archsimd.BroadcastUint64x8(i))
	}
	scale, top, bottom, unit, one := pick(0), pick(1), pick(2), pick(3), pick(4)
	var zero archsimd.Float64x8
	gamma := archsimd.LoadUint64x8(&laneGammas)
	// Lane j of the first step is sample j, whose state is seed + (j+1)·γ.
	state := archsimd.LoadUint64x8(seeds).Add(archsimd.LoadUint64x8(&laneIndex).Mul(gamma))
	step := gamma.ShiftAllLeft(3) // 8·γ
	mul1 := archsimd.BroadcastUint64x8(splitMixMul1)
	mul2 := archsimd.BroadcastUint64x8(splitMixMul2)
	low := archsimd.BroadcastUint64x8(0xFFFFFFFF)
	for i := 0; i+8 <= len(src); i += 8 {
		v := archsimd.LoadFloat64x8Slice(src[i:]).Mul(scale)
		if dither {
			z := state
			z = z.Xor(z.ShiftAllRight(30)).Mul(mul1)
			z = z.Xor(z.ShiftAllRight(27)).Mul(mul2)
			z = z.Xor(z.ShiftAllRight(31))
			d := z.ShiftAllRight(32).Add(z.And(low)).ConvertToFloat64().Mul(unit).Sub(one)
			v = v.Add(d)
			state = state.Add(step)
		}
		number := v.Equal(v) // false for NaN, which becomes 0
		v = v.RoundToEvenScaled(0).Min(top).Max(bottom).Merge(zero, number)
		v.ConvertToInt32().StoreSlice(dst[i:])
	}
}
