package main

import (
	"fmt"
	"math"

	. "github.com/mmcloughlin/avo/build"
	. "github.com/mmcloughlin/avo/operand"
	"github.com/mmcloughlin/avo/reg"
)

// The packing kernels: PackPCM and PackFloat32 over whole steps of
// samples, the AVX-512 forms two 512-bit vectors a step, the AVX2 forms
// two 256-bit ones. Each lane does the Go form's arithmetic on its
// sample: the SplitMix64 state stepped by γ per sample, the dither's
// float built from its bits, one rounding of x·scale + d (a fused
// multiply-add: x·scale is exact), clamping to the code range, NaN to
// 0, and the conversion to an integer under the default rounding mode,
// to nearest even, which Go leaves set.

// The kernel package's dither constants and steps, read from its source.
var (
	ditherGamma    = uintConst("ditherGamma")
	ditherMul1     = uintConst("ditherMul1")
	ditherMul2     = uintConst("ditherMul2")
	ditherExponent = uintConst("ditherExponent")
	ditherOffset   = floatConst("ditherOffset")
	pcmStep        = map[string]int{"AVX512": intConst("pcmStepAVX512"), "AVX2": intConst("pcmStepAVX2")}
)

// packData is where the packing kernels' constants lie. Each scalar is
// there four times over, so that the AVX2 forms take it as a 256-bit
// memory operand; the AVX-512 forms broadcast its first copy.
type packData struct {
	// laneStates holds (j+1)·γ for each sample j of the longest step:
	// sample j of a step has the state before the step plus that.
	laneStates Mem
	// steps holds each form's step times γ, by suffix.
	steps                          map[string]Mem
	mul1, mul1High, mul2, mul2High Mem // SplitMix64's multipliers, and their high halves for VPMULUDQ
	low, exponent, offset          Mem // 0xFFFFFFFF, the bits of 2^20, 2^20 + 1
	// scale, top and bottom are 2^(bits−1), its largest code and its
	// smallest, by bits.
	scale, top, bottom map[int]Mem
	// shuffle24 takes the low three bytes of each 32-bit code of a
	// 128-bit lane to its first 12 bytes (32 bytes: both lanes of a
	// 256-bit register); permute24 then gathers the 32-bit words holding
	// them to the front of the register.
	shuffle24, permute24 Mem
}

// packConstants lays out packData, in increasing offset order as the
// assembler requires.
func packConstants() packData {
	m := GLOBL("packConstants", RODATA|NOPTR)
	offset := 0
	words := func(ws ...uint64) Mem {
		at := m.Offset(offset)
		for _, w := range ws {
			DATA(offset, U64(w))
			offset += 8
		}
		return at
	}
	four := func(w uint64) Mem { return words(w, w, w, w) }
	var d packData
	lanes := make([]uint64, max(pcmStep["AVX512"], pcmStep["AVX2"]))
	for j := range lanes {
		lanes[j] = uint64(j+1) * ditherGamma
	}
	d.laneStates = words(lanes...)
	d.steps = map[string]Mem{}
	for _, s := range []string{"AVX512", "AVX2"} {
		d.steps[s] = four(uint64(pcmStep[s]) * ditherGamma)
	}
	d.mul1, d.mul1High = four(ditherMul1), four(ditherMul1>>32)
	d.mul2, d.mul2High = four(ditherMul2), four(ditherMul2>>32)
	d.low, d.exponent, d.offset = four(0xFFFFFFFF), four(ditherExponent), four(math.Float64bits(ditherOffset))
	d.scale, d.top, d.bottom = map[int]Mem{}, map[int]Mem{}, map[int]Mem{}
	for _, bits := range []int{16, 24} {
		scale := float64(int(1) << (bits - 1))
		d.scale[bits] = four(math.Float64bits(scale))
		d.top[bits] = four(math.Float64bits(scale - 1))
		d.bottom[bits] = four(math.Float64bits(-scale))
	}
	// Bytes 0–2, 4–6, 8–10, 12–14, then four zeros (0x80 clears a byte).
	d.shuffle24 = words(0x0908060504020100, 0x808080800e0d0c0a, 0x0908060504020100, 0x808080800e0d0c0a)
	// 32-bit words 0–2, 4–6, 8–10, 12–14, then the rest.
	d.permute24 = words(dwords(0, 1, 2, 4, 5, 6, 8, 9, 10, 12, 13, 14, 3, 7, 11, 15)...)
	return d
}

// dwords packs 32-bit values two to a little-endian 64-bit word.
func dwords(v ...uint32) []uint64 {
	w := make([]uint64, len(v)/2)
	for i := range w {
		w[i] = uint64(v[2*i]) | uint64(v[2*i+1])<<32
	}
	return w
}

func quantize() {
	d := packConstants()
	for _, bits := range []int{16, 24} {
		for _, dither := range []bool{false, true} {
			pcmAVX512(d, bits, dither)
			pcmAVX2(d, bits, dither)
		}
	}
	float32Kernel(avx512)
	float32Kernel(avx2)
}

// pcmText opens a PCM kernel and loads its arguments.
func pcmText(suffix string, bits int, dither bool) (dst, src, n, state reg.Register) {
	name, with, signature := fmt.Sprintf("packPCM%d", bits), "", "func(dst *byte, src *float64, n int)"
	if dither {
		name, with, signature = name+"Dither", ", dithered from generator state state", "func(dst *byte, src *float64, n int, state uint64)"
	}
	TEXT(name+suffix, NOSPLIT, signature)
	Doc(fmt.Sprintf("%s%s is PackPCM of n > 0 samples, a multiple of %d, to %d-bit codes%s.", name, suffix, pcmStep[suffix], bits, with))
	dst, src, n = Load(Param("dst"), GP64()), Load(Param("src"), GP64()), Load(Param("n"), GP64())
	if dither {
		state = Load(Param("state"), GP64())
	}
	return dst, src, n, state
}

// loopEnd advances the pointers past one step of samples written in
// bits bits each, loops while samples are left, and returns.
func loopEnd(loop string, suffix string, bits int, dst, src, n reg.Register) {
	step := pcmStep[suffix]
	ADDQ(U32(step*bits/8), dst)
	ADDQ(U32(step*float64Size), src)
	SUBQ(U32(step), n)
	JNZ(LabelRef(loop))
	VZEROUPPER()
	RET()
}

// each emits f for every vector of a step in turn, so that the step's
// independent vectors sit side by side in the instruction stream for the
// processor to overlap.
func each(n int, f func(h int)) {
	for h := range n {
		f(h)
	}
}

// vectors returns n new virtual registers of one kind.
func vectors(n int, kind func() reg.VecVirtual) []reg.VecVirtual {
	v := make([]reg.VecVirtual, n)
	for h := range v {
		v[h] = kind()
	}
	return v
}

// pcmAVX512 writes packPCM{bits}[Dither]AVX512: 16 samples a step, each
// 8 in a 512-bit vector.
func pcmAVX512(d packData, bits int, dither bool) {
	const suffix = "AVX512"
	vecs := pcmStep[suffix] / 8
	dst, src, n, state := pcmText(suffix, bits, dither)
	broadcast := func(m Mem) reg.VecVirtual {
		z := ZMM()
		VPBROADCASTQ(m, z)
		return z
	}
	scale, top, bottom := broadcast(d.scale[bits]), broadcast(d.top[bits]), broadcast(d.bottom[bits])
	var states []reg.VecVirtual
	var step, mul1, mul2, low, exponent, offset reg.VecVirtual
	if dither {
		Comment("lane j of vector h starts at the state of sample 8h + j")
		start := ZMM()
		VPBROADCASTQ(state, start)
		states = vectors(vecs, ZMM)
		each(vecs, func(h int) { VPADDQ(d.laneStates.Offset(64*h), start, states[h]) })
		step, mul1, mul2 = broadcast(d.steps[suffix]), broadcast(d.mul1), broadcast(d.mul2)
		low, exponent, offset = broadcast(d.low), broadcast(d.exponent), broadcast(d.offset)
	}
	var shuffle, permute reg.VecVirtual
	if bits == 24 {
		shuffle, permute = ZMM(), ZMM()
		VBROADCASTI32X4(d.shuffle24, shuffle)
		VMOVDQU64(d.permute24, permute)
	}
	Label("loop" + suffix)
	x := func(h int) Mem { return Mem{Base: src, Disp: 64 * h} }
	y := vectors(vecs, ZMM)
	if dither {
		Comment("the dither d, then x·scale + d rounded once")
		z, t := vectors(vecs, ZMM), vectors(vecs, ZMM)
		each(vecs, func(h int) { VPSRLQ(U8(30), states[h], t[h]) })
		each(vecs, func(h int) { VPXORQ(t[h], states[h], z[h]) })
		each(vecs, func(h int) { VPADDQ(step, states[h], states[h]) })
		each(vecs, func(h int) { VPMULLQ(mul1, z[h], z[h]) })
		each(vecs, func(h int) { VPSRLQ(U8(27), z[h], t[h]) })
		each(vecs, func(h int) { VPXORQ(t[h], z[h], z[h]) })
		each(vecs, func(h int) { VPMULLQ(mul2, z[h], z[h]) })
		each(vecs, func(h int) { VPSRLQ(U8(31), z[h], t[h]) })
		each(vecs, func(h int) { VPXORQ(t[h], z[h], z[h]) })
		each(vecs, func(h int) { VPSRLQ(U8(32), z[h], t[h]) })
		each(vecs, func(h int) { VPTERNLOGQ(U8(0xEA), exponent, low, z[h]) }) // (z & low) | exponent
		each(vecs, func(h int) { VPADDQ(t[h], z[h], z[h]) })
		each(vecs, func(h int) { VSUBPD(offset, z[h], y[h]) })
		each(vecs, func(h int) { VFMADD231PD(x(h), scale, y[h]) })
	} else {
		Comment("x·scale")
		each(vecs, func(h int) { VMULPD(x(h), scale, y[h]) })
	}
	Comment("clamp, round half to even, NaN to 0")
	ordered, codes := make([]reg.OpmaskVirtual, vecs), vectors(vecs, YMM)
	each(vecs, func(h int) { ordered[h] = K(); VCMPPD(U8(7), y[h], y[h], ordered[h]) })
	each(vecs, func(h int) { VMINPD(top, y[h], y[h]) })
	each(vecs, func(h int) { VMAXPD(bottom, y[h], y[h]) })
	each(vecs, func(h int) { VCVTPD2DQ_Z(y[h], ordered[h], codes[h]) })
	for p := 0; p < vecs; p += 2 {
		out := Mem{Base: dst, Disp: p * 8 * bits / 8}
		all := ZMM()
		VINSERTI64X4(U8(1), codes[p+1], codes[p].AsZ(), all)
		if bits == 16 {
			Comment("store the low 16 bits of each code")
			packed := YMM()
			VPMOVDW(all, packed)
			VMOVDQU64(packed, out)
		} else {
			Comment("store the low 24 bits of each code: 48 bytes")
			VPSHUFB(shuffle, all, all)
			VPERMD(all, permute, all)
			VMOVDQU64(all.AsY(), out)
			VEXTRACTI32X4(U8(2), all, out.Offset(32))
		}
	}
	loopEnd("loop"+suffix, suffix, bits, dst, src, n)
}

// pcmAVX2 writes packPCM{bits}[Dither]AVX2: 8 samples a step, each 4 in
// a 256-bit vector. AVX2 has neither a 64-bit multiply nor a 64-bit
// integer conversion: the multiplies are put together from 32-bit ones,
// and the dither's float never needs the conversion. Constants stay in
// memory so that no more than 16 registers are live.
func pcmAVX2(d packData, bits int, dither bool) {
	const suffix = "AVX2"
	vecs := pcmStep[suffix] / 4
	dst, src, n, state := pcmText(suffix, bits, dither)
	scale := YMM()
	VBROADCASTSD(d.scale[bits], scale)
	var states []reg.VecVirtual
	if dither {
		Comment("lane j of vector h starts at the state of sample 4h + j")
		start := YMM()
		VMOVQ(state, start.AsX())
		VPBROADCASTQ(start.AsX(), start)
		states = vectors(vecs, YMM)
		each(vecs, func(h int) { VPADDQ(d.laneStates.Offset(32*h), start, states[h]) })
	}
	var permute reg.VecVirtual
	if bits == 24 {
		permute = YMM()
		VMOVDQU(d.permute24, permute)
	}
	Label("loop" + suffix)
	x := func(h int) Mem { return Mem{Base: src, Disp: 32 * h} }
	y := vectors(vecs, YMM)
	if dither {
		Comment("the dither d, then x·scale + d rounded once")
		z, t := vectors(vecs, YMM), vectors(vecs, YMM)
		each(vecs, func(h int) { VPSRLQ(U8(30), states[h], t[h]) })
		each(vecs, func(h int) { VPXOR(t[h], states[h], z[h]) })
		each(vecs, func(h int) { VPADDQ(d.steps[suffix], states[h], states[h]) })
		multiply64(z, d.mul1, d.mul1High)
		each(vecs, func(h int) { VPSRLQ(U8(27), z[h], t[h]) })
		each(vecs, func(h int) { VPXOR(t[h], z[h], z[h]) })
		multiply64(z, d.mul2, d.mul2High)
		each(vecs, func(h int) { VPSRLQ(U8(31), z[h], t[h]) })
		each(vecs, func(h int) { VPXOR(t[h], z[h], z[h]) })
		each(vecs, func(h int) { VPSRLQ(U8(32), z[h], t[h]) })
		each(vecs, func(h int) { VPBLENDD(U8(0xAA), d.exponent, z[h], z[h]) }) // the high halves from the exponent
		each(vecs, func(h int) { VPADDQ(t[h], z[h], z[h]) })
		each(vecs, func(h int) { VSUBPD(d.offset, z[h], y[h]) })
		each(vecs, func(h int) { VFMADD231PD(x(h), scale, y[h]) })
	} else {
		Comment("x·scale")
		each(vecs, func(h int) { VMULPD(x(h), scale, y[h]) })
	}
	Comment("clamp, round half to even, NaN to 0")
	ordered, codes := vectors(vecs, YMM), vectors(vecs, XMM)
	each(vecs, func(h int) { VCMPPD(U8(7), y[h], y[h], ordered[h]) })
	each(vecs, func(h int) { VMINPD(d.top[bits], y[h], y[h]) })
	each(vecs, func(h int) { VMAXPD(d.bottom[bits], y[h], y[h]) })
	each(vecs, func(h int) { VANDPD(ordered[h], y[h], y[h]) })
	each(vecs, func(h int) { VCVTPD2DQY(y[h], codes[h]) })
	for p := 0; p < vecs; p += 2 {
		out := Mem{Base: dst, Disp: p * 4 * bits / 8}
		if bits == 16 {
			Comment("store the low 16 bits of each code")
			packed := XMM()
			VPACKSSDW(codes[p+1], codes[p], packed) // the codes are in range: no saturation
			VMOVDQU(packed, out)
		} else {
			Comment("store the low 24 bits of each code: 24 bytes")
			all, high := YMM(), XMM()
			VINSERTI128(U8(1), codes[p+1], codes[p].AsY(), all)
			VPSHUFB(d.shuffle24, all, all)
			VPERMD(all, permute, all)
			VMOVDQU(all.AsX(), out)
			VEXTRACTI128(U8(1), all, high)
			VMOVQ(high, out.Offset(16))
		}
	}
	loopEnd("loop"+suffix, suffix, bits, dst, src, n)
}

// multiply64 sets each 64-bit lane of each z to z·m (mod 2^64) from
// 32×32-bit products: lo(z)·lo(m) + (hi(z)·lo(m) + lo(z)·hi(m))·2^32. m
// holds m in every lane and high its high half.
func multiply64(z []reg.VecVirtual, m, high Mem) {
	low, cross := vectors(len(z), YMM), vectors(len(z), YMM)
	each(len(z), func(h int) { VPMULUDQ(m, z[h], low[h]) })
	each(len(z), func(h int) { VPSRLQ(U8(32), z[h], cross[h]) })
	each(len(z), func(h int) { VPMULUDQ(m, cross[h], cross[h]) })
	each(len(z), func(h int) { VPMULUDQ(high, z[h], z[h]) })
	each(len(z), func(h int) { VPADDQ(cross[h], z[h], z[h]) })
	each(len(z), func(h int) { VPSLLQ(U8(32), z[h], z[h]) })
	each(len(z), func(h int) { VPADDQ(low[h], z[h], z[h]) })
}

// float32Kernel writes packFloat32 for s: 2·s.width samples a step, each
// vector converted and stored as it is.
func float32Kernel(s shape) {
	TEXT("packFloat32"+s.suffix, NOSPLIT, "func(dst *byte, src *float64, n int)")
	step := pcmStep[s.suffix]
	Doc(fmt.Sprintf("packFloat32%s is PackFloat32 of n > 0 samples, a multiple of %d.", s.suffix, step))
	dst, src, n := Load(Param("dst"), GP64()), Load(Param("src"), GP64()), Load(Param("n"), GP64())
	Label("loop" + s.suffix)
	for h := range step / s.width {
		in, out := Mem{Base: src, Disp: h * s.width * float64Size}, Mem{Base: dst, Disp: h * s.width * 4}
		if s.width == 8 {
			y := YMM()
			VCVTPD2PS(in, y)
			VMOVUPS(y, out)
		} else {
			x := XMM()
			VCVTPD2PSY(in, x)
			VMOVUPS(x, out)
		}
	}
	loopEnd("loop"+s.suffix, s.suffix, 32, dst, src, n)
}
