package kernel

import (
	"encoding/binary"
	"fmt"
	"math"
)

// PCM is an integer sample format for PackPCM.
type PCM struct {
	// Bits is 16 or 24: the code of a sample is a two's complement
	// integer of that many bits, stored little-endian in Bits/8 bytes.
	Bits int
	// Dither adds TPDF dither of ±1 LSB before rounding, from a
	// counter-based generator seeded with Seed.
	Dither bool
	Seed   uint64
}

// PackPCM writes the code of each sample of src (full scale ±1) into dst
// and returns dst[:len(src)·Bits/8]. The code of x is
//
//	round-half-to-even(x·2^(Bits−1) + d), clamped to [−2^(Bits−1), 2^(Bits−1)−1],
//
// the sum rounded to float64 first, and 0 for NaN; ±Inf and values too
// large to scale clip. Without Dither d is 0. With it, d is the dither
// for the sample's index i in the whole stream, first + its index in
// src, so that the noise does not depend on how a stream is cut into
// blocks: output i (counting from 0) of SplitMix64 (Steele, Lea & Flood,
// "Fast splittable pseudorandom number generators", OOPSLA 2014) seeded
// with Seed,
//
//	z = Seed + (i+1)·0x9E3779B97F4A7C15 (mod 2^64)
//	z = (z ^ z>>30) · 0xBF58476D1CE4E5B9
//	z = (z ^ z>>27) · 0x94D049BB133111EB
//	z = z ^ z>>31
//	d = (z>>32 + z&0xFFFFFFFF)/2^32 − 1,
//
// the sum of two uniform values in [−½, ½): a triangular density over
// [−1, 1). Every set of kernels gives the same bytes: all the arithmetic
// before the one rounding of the sum is exact. PackPCM panics if Bits is
// neither 16 nor 24 or dst is too short.
func PackPCM(dst []byte, src []float64, format PCM, first uint64) []byte {
	if format.Bits != 16 && format.Bits != 24 {
		panic(fmt.Sprintf("kernel: PackPCM of %d bits (16 or 24)", format.Bits))
	}
	size := len(src) * format.Bits / 8
	if len(dst) < size {
		panic(fmt.Sprintf("kernel: PackPCM of %d samples into %d bytes", len(src), len(dst)))
	}
	dst = dst[:size]
	if len(src) == 0 {
		return dst
	}
	var state uint64 // the generator state before src[0]
	if format.Dither {
		state = format.Seed + first*ditherGamma
	}
	packPCM(active, dst, src, format.Bits, format.Dither, state)
	return dst
}

// PackFloat32 writes each sample of src as a little-endian IEEE 754
// single, float32(x), into dst and returns dst[:4·len(src)]. Every set of
// kernels gives the same bytes, NaN payloads included: the conversion
// instruction is the same, rounding to nearest even. It panics if dst is
// too short.
func PackFloat32(dst []byte, src []float64) []byte {
	if len(dst) < 4*len(src) {
		panic(fmt.Sprintf("kernel: PackFloat32 of %d samples into %d bytes", len(src), len(dst)))
	}
	dst = dst[:4*len(src)]
	if len(src) > 0 {
		packFloat32(active, dst, src)
	}
	return dst
}

// SplitMix64's constants: the increment γ is the odd integer nearest
// 2^64 divided by the golden ratio; the multipliers are those of the
// reference splitmix64.c (prng.di.unimi.it).
const (
	ditherGamma = 0x9E3779B97F4A7C15
	ditherMul1  = 0xBF58476D1CE4E5B9
	ditherMul2  = 0x94D049BB133111EB
)

// The dither's float is built from its bits instead of converted from an
// integer, because AVX2 has no 64-bit integer conversion and the forms
// must agree: h + l < 2^33 placed in the low mantissa bits of 2^20, whose
// last bit is worth 2^−32, is exactly 2^20 + (h + l)/2^32, and taking
// 2^20 + 1 away leaves exactly d.
const (
	ditherExponent = 0x4130000000000000 // the bits of 2^20
	ditherOffset   = 0x1p20 + 1
)

// roundMagic is 1.5·2^52: adding it to any |y| < 2^51 lands in
// [2^52, 2^53), where float64 holds only integers, so the addition itself
// rounds y to an integer, half to even, and leaves it in two's complement
// in the low bits of the sum's mantissa.
const roundMagic = 3 << 51

// ditherAt returns the dither of the sample whose generator state is z.
func ditherAt(z uint64) float64 {
	z = (z ^ z>>30) * ditherMul1
	z = (z ^ z>>27) * ditherMul2
	z ^= z >> 31
	return math.Float64frombits(ditherExponent|z&0xFFFFFFFF+z>>32) - ditherOffset
}

// code rounds y to the nearest integer, half to even, within
// [bottom, top] (integers), or to 0 if y is NaN, and returns it in
// two's complement. Clamping first keeps y where roundMagic works; it
// gives the same result as clamping after rounding because the bounds
// are integers.
func code(y, top, bottom float64) uint32 {
	switch {
	case y >= top:
		y = top
	case y <= bottom:
		y = bottom
	case y != y:
		y = 0
	}
	return uint32(math.Float64bits(y + roundMagic))
}

// packPCMGo is the plain form of PackPCM from generator state state,
// four samples at a time. x·scale is exact, so the compiler may fuse it
// with the addition of the dither or not: the sum rounds once either way,
// as in the vector forms, which fuse it.
func packPCMGo(dst []byte, src []float64, bits int, dither bool, state uint64) {
	scale := float64(int(1) << (bits - 1))
	top, bottom := scale-1, -scale
	gamma := uint64(ditherGamma) // a variable, so that its multiples wrap
	i := 0
	for ; i+4 <= len(src); i += 4 {
		x := (*[4]float64)(src[i : i+4])
		y0, y1, y2, y3 := x[0]*scale, x[1]*scale, x[2]*scale, x[3]*scale
		if dither {
			// Four states from the one before them, rather than one
			// from the next, so the four samples' work is independent.
			y0 += ditherAt(state + gamma)
			y1 += ditherAt(state + 2*gamma)
			y2 += ditherAt(state + 3*gamma)
			y3 += ditherAt(state + 4*gamma)
			state += 4 * gamma
		}
		a, b, c, e := code(y0, top, bottom), code(y1, top, bottom), code(y2, top, bottom), code(y3, top, bottom)
		if bits == 16 {
			binary.LittleEndian.PutUint64(dst[2*i:], uint64(a&0xFFFF)|uint64(b&0xFFFF)<<16|uint64(c&0xFFFF)<<32|uint64(e)<<48)
			continue
		}
		// Four 3-byte codes fill exactly three 32-bit words.
		out := (*[12]byte)(dst[3*i : 3*i+12])
		binary.LittleEndian.PutUint32(out[0:], a&0xFFFFFF|b<<24)
		binary.LittleEndian.PutUint32(out[4:], b>>8&0xFFFF|c<<16)
		binary.LittleEndian.PutUint32(out[8:], c>>16&0xFF|e<<8)
	}
	for ; i < len(src); i++ {
		y := src[i] * scale
		if dither {
			state += ditherGamma
			y += ditherAt(state)
		}
		v := code(y, top, bottom)
		dst[i*bits/8], dst[i*bits/8+1] = byte(v), byte(v>>8)
		if bits == 24 {
			dst[3*i+2] = byte(v >> 16)
		}
	}
}

// packFloat32Go is the plain form of PackFloat32.
func packFloat32Go(dst []byte, src []float64) {
	for i, x := range src {
		binary.LittleEndian.PutUint32(dst[4*i:], math.Float32bits(float32(x)))
	}
}
