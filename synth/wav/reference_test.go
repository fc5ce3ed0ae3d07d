package wav

import (
	"math"
)

// The documented definition of the integer samples Encode writes, as
// plain as it can be written, which every set of kernels is held to
// byte for byte. It is written out here, apart from the kernels, so that
// a change to them cannot change the reference too.

// quantizeScalar stores in dst the integer code of each sample of src for
// a format of bits bits, with TPDF dither tpdf(seed, first+i) LSB added
// when dither is set; first is the index of src[0] in the whole file, so
// the noise does not depend on how the samples are split into blocks. It
// returns dst.
//
// The noise is added at full scale, x + d·2^−(bits−1), and quantize then
// scales by 2^(bits−1): scaling by a power of two is exact and rounding
// commutes with it, so the code is the rounding of the float64
// x · 2^(bits−1) + d; values so large that the scaling overflows clip
// either way. The product d·2^−(bits−1) is exact too, so a compiler fusing
// the multiply and the add cannot change the result.
func quantizeScalar(dst []int32, src []float64, bits int, dither bool, seed, first uint64) []int32 {
	scale := math.Ldexp(1, bits-1)
	dst = dst[:len(src)]
	for i, x := range src {
		if dither {
			x += tpdf(seed, first+uint64(i)) * math.Ldexp(1, 1-bits)
		}
		dst[i] = quantize(x, scale)
	}
	return dst
}

// SplitMix64 constants: the increment γ is the odd integer nearest 2^64
// divided by the golden ratio; the multipliers are those of the reference
// splitmix64.c (prng.di.unimi.it).
const (
	splitMixGamma = 0x9E3779B97F4A7C15
	splitMixMul1  = 0xBF58476D1CE4E5B9
	splitMixMul2  = 0x94D049BB133111EB
)

// tpdf returns the dither for interleaved sample index i, in LSB: a value
// in [−1, 1) with a triangular density, the sum of two independent uniform
// values in [−½, ½).
//
// The generator is counter-based so the noise is a function of (seed, i)
// alone, whatever the block size, and is written out here so that no
// library change can alter the bytes of a file. It is output i (counting
// from 0) of SplitMix64 (Steele, Lea & Flood, "Fast splittable
// pseudorandom number generators", OOPSLA 2014) seeded with seed, whose
// state before that output is seed + (i+1)·γ:
//
//	z = seed + (i+1)·0x9E3779B97F4A7C15 (mod 2^64)
//	z = (z ^ z>>30) · 0xBF58476D1CE4E5B9
//	z = (z ^ z>>27) · 0x94D049BB133111EB
//	z = z ^ z>>31
//	d = (z>>32)/2^32 − ½ + (z & 0xFFFFFFFF)/2^32 − ½
func tpdf(seed, i uint64) float64 {
	return triangular(splitMix64(seed + (i+1)*splitMixGamma))
}

// splitMix64 is the SplitMix64 output function of state z.
func splitMix64(z uint64) uint64 {
	z = (z ^ z>>30) * splitMixMul1
	z = (z ^ z>>27) * splitMixMul2
	return z ^ z>>31
}

// triangular sums the uniforms h/2^32 − ½ and l/2^32 − ½ made of the high
// and low halves h and l of z as (h + l)/2^32 − 1. h + l < 2^33 fits a
// float64 mantissa, so the result is exact.
func triangular(z uint64) float64 {
	return float64(z>>32+uint64(uint32(z)))*0x1p-32 - 1
}

// roundMagic is 1.5·2⁵²: adding it to any |y| < 2⁵¹ lands in [2⁵², 2⁵³),
// where float64 holds only integers, so the addition itself rounds y to an
// integer, half to even, as IEEE 754 arithmetic does by default.
const roundMagic = 3 << 51

// quantize maps x (full scale ±1) to the integer code of a format whose
// smallest code is −scale, a power of two: round half to even, which is
// unbiased. Larger |y| and infinities pass through roughly unchanged and
// clip; clamping comes before the conversion because Go leaves
// out-of-range float-to-int conversions implementation-defined. NaN fails
// every comparison and becomes 0.
func quantize(x, scale float64) int32 {
	// The conversion rounds the product, so it cannot be fused with the
	// addition; the product of a power of two is exact anyway.
	r := (float64(x*scale) + roundMagic) - roundMagic
	switch {
	case r >= scale:
		return int32(scale) - 1
	case r <= -scale:
		return -int32(scale)
	case r == r:
		return int32(r)
	}
	return 0
}

// packReference stores each code in bits/8 bytes, least significant
// first: two's complement, little-endian, as the WAVE format stores PCM
// of more than 8 bits (standards sheet §1, [KABAL]).
func packReference(codes []int32, bits int) []byte {
	b := make([]byte, 0, len(codes)*bits/8)
	for _, v := range codes {
		for k := 0; k < bits; k += 8 {
			b = append(b, byte(v>>k))
		}
	}
	return b
}

// floatReference stores each sample as float32(x), IEEE 754 single
// precision, little-endian, as the WAVE format stores IEEE float samples
// (standards sheet §1, [KABAL]).
func floatReference(src []float64) []byte {
	b := make([]byte, 0, 4*len(src))
	for _, x := range src {
		v := math.Float32bits(float32(x))
		b = append(b, byte(v), byte(v>>8), byte(v>>16), byte(v>>24))
	}
	return b
}
