package main

import (
	"fmt"
	"math"

	. "github.com/mmcloughlin/avo/build"
	. "github.com/mmcloughlin/avo/operand"
	"github.com/mmcloughlin/avo/reg"
)

// chirpJob is the layout of kernel.ChirpJob.
var chirpJob = structLayout("ChirpJob")

// How many moving partials share each load and store of the output.
var chirpGroups = map[string]int{"AVX512": 2, "AVX2": 1}

// The rows of the chirp kernels' constant table, each eight lanes wide
// (64 bytes) so that AVX2 reads its halves the way AVX-512 reads the
// whole. The values are those of kernel.sinTurns and kernel.chirpLanes.
const (
	rowLane      = iota // j
	rowLaneSq           // j²
	rowLane16           // 16·j
	rowQuarter          // 2^62, a quarter turn
	rowHalf             // 2^63 + 2^10, half a turn and the fold's rounding
	rowExponent         // the bits of 2^52
	rowOffset           // 2^52 + 2^51
	rowTurnScale        // 2π / 2^53
	rowRampFrom         // 1 − j/64
	rowRampTo           // j/64
	rowRampStep         // 8/64
	rowTaylor           // the Taylor coefficients of sin, x's first
	chirpRows    = rowTaylor + taylorTerms
)

// taylorTerms is the number of odd powers up to x^21.
const taylorTerms = 11

// sineTaylor are (−1)^k/(2k+1)! for k = 0 … 10, computed as the kernel
// package computes them, so the bits agree (a test holds the vector forms
// to the Go form bit for bit).
func sineTaylor() (c [taylorTerms]float64) {
	f := 1.0
	for k := range c {
		if k > 0 {
			f *= float64(2*k) * float64(2*k+1)
		}
		c[k] = math.Pow(-1, float64(k)) / f
	}
	return c
}

func chirpConstants() Mem {
	m := GLOBL("chirpConstants", RODATA|NOPTR)
	row := func(r int, f func(j int) uint64) {
		for j := range lanes {
			DATA((r*lanes+j)*8, U64(f(j)))
		}
	}
	same := func(v uint64) func(int) uint64 { return func(int) uint64 { return v } }
	bits := func(x float64) func(int) uint64 { return same(math.Float64bits(x)) }
	to := func(j int) float64 { return float64(j) / float64(controlFrames) }
	row(rowLane, func(j int) uint64 { return uint64(j) })
	row(rowLaneSq, func(j int) uint64 { return uint64(j * j) })
	row(rowLane16, func(j int) uint64 { return uint64(16 * j) })
	row(rowQuarter, same(1<<62))
	row(rowHalf, same(1<<63+1<<10))
	row(rowExponent, same(0x4330000000000000))
	row(rowOffset, bits(1<<52+1<<51))
	row(rowTurnScale, bits(2*math.Pi/(1<<53)))
	row(rowRampFrom, func(j int) uint64 { return math.Float64bits(1 - to(j)) })
	row(rowRampTo, func(j int) uint64 { return math.Float64bits(to(j)) })
	row(rowRampStep, bits(float64(lanes)/float64(controlFrames)))
	for k, c := range sineTaylor() {
		row(rowTaylor+k, bits(c))
	}
	return m
}

func chirp() {
	constants := chirpConstants()
	chirpKernel(avx512, constants)
	chirpKernel(avx2, constants)
}

func chirpKernel(s shape, constants Mem) {
	group := chirpGroups[s.suffix]
	TEXT("addChirps"+s.suffix, NOSPLIT, "func(block *[256]float64, jobs *ChirpJob, n int)")
	Doc(fmt.Sprintf("addChirps%s is AddChirps for n > 0 jobs, %d partials per pass over the output.", s.suffix, group))
	block := Load(Param("block"), GP64())
	jobs := Load(Param("jobs"), GP64())
	n := Load(Param("n"), GP64())
	for g := group; g >= 1; g /= 2 {
		top, done := fmt.Sprintf("chirp%d", g), fmt.Sprintf("chirp%dDone", g)
		Label(top)
		CMPQ(n, U32(g))
		JL(LabelRef(done))
		chirpGroup(s, g, constants, block, jobs)
		ADDQ(U32(g*chirpJob.size), jobs)
		SUBQ(U32(g), n)
		if g == group {
			JMP(LabelRef(top))
		}
		Label(done)
	}
	VZEROUPPER()
	RET()
}

// chirpState is one moving partial's lanes within a span.
type chirpState struct {
	phase, step, growth, gain, slope reg.VecVirtual
}

// chirpGroup adds one block of the g moving partials at jobs into block.
func chirpGroup(s shape, g int, constants Mem, block, jobs reg.Register) {
	for h := range s.halves() {
		lane := h * s.width * 8
		at := func(r int) Mem { return constants.Offset(r*lanes*8 + lane) }
		Commentf("%d moving partials, lanes %d to %d", g, h*s.width, (h+1)*s.width-1)
		consts := loadSinConstants(s, at)
		out, span, spans := GP64(), GP64(), GP64()
		LEAQ(Mem{Base: block, Disp: lane}, out)
		MOVQ(jobs, span) // span m's fields are 8·m bytes on from span 0's
		MOVQ(U32(spansPerBlock), spans)
		loop := fmt.Sprintf("chirpSpan%d%s%d", g, s.suffix, h)
		Label(loop)
		st := make([]chirpState, g)
		for p := range g {
			field := func(name string) Mem { return Mem{Base: span, Disp: p*chirpJob.size + chirpJob.field(name)} }
			c := &st[p]
			rate, curve := s.vec(), s.vec()
			VPBROADCASTQ(field("Rate"), rate)
			VPBROADCASTQ(field("Curve"), curve)
			Comment("phase = Phase + Rate·j + Curve·j²")
			c.phase = s.vec()
			VPBROADCASTQ(field("Phase"), c.phase)
			VPADDQ(mulLanes(s, rate, at(rowLane)), c.phase, c.phase)
			VPADDQ(mulLanes(s, curve, at(rowLaneSq)), c.phase, c.phase)
			Comment("step = 8·Rate + 64·Curve + 16·Curve·j, growing by 128·Curve")
			c.step, c.growth = s.vec(), s.vec()
			VPSLLQ(U8(3), rate, c.step)
			VPSLLQ(U8(6), curve, c.growth)
			VPADDQ(c.growth, c.step, c.step)
			VPADDQ(mulLanes(s, curve, at(rowLane16)), c.step, c.step)
			VPSLLQ(U8(7), curve, c.growth)
			Comment("the gain ramp across this span")
			lo, hi := s.vec(), s.vec()
			VBROADCASTSD(Mem{Base: span, Disp: p*chirpJob.size + chirpJob.field("Levels")}, lo)
			VBROADCASTSD(Mem{Base: span, Disp: p*chirpJob.size + chirpJob.field("Levels") + 8}, hi)
			c.gain, c.slope = s.vec(), s.vec()
			VMULPD(at(rowRampTo), hi, c.gain)
			VFMADD231PD(at(rowRampFrom), lo, c.gain)
			VSUBPD(lo, hi, c.slope)
			VMULPD(at(rowRampStep), c.slope, c.slope)
		}
		for v := range controlFrames / lanes {
			acc := s.vec()
			addr := Mem{Base: out, Disp: v * lanes * 8}
			VMOVUPD(addr, acc)
			for p := range g {
				VFMADD231PD(sinTurn(s, st[p].phase, consts), st[p].gain, acc)
			}
			VMOVUPD(acc, addr)
			for p := range g {
				VPADDQ(st[p].step, st[p].phase, st[p].phase)
				VPADDQ(st[p].growth, st[p].step, st[p].step)
				VADDPD(st[p].slope, st[p].gain, st[p].gain)
			}
		}
		ADDQ(U32(controlFrames*8), out)
		ADDQ(U32(8), span)
		DECQ(spans)
		JNZ(LabelRef(loop))
	}
}

// mulLanes returns x times the small per-lane integers at m (each below
// 2^32): one VPMULLQ with AVX-512, the low and high halves of x by
// VPMULUDQ with AVX2, which has no 64-bit multiply. Both are exact.
func mulLanes(s shape, x reg.VecVirtual, m Mem) reg.VecVirtual {
	r := s.vec()
	if s.width == 8 {
		VPMULLQ(m, x, r)
		return r
	}
	hi := s.vec()
	VPMULUDQ(m, x, r)
	VPSRLQ(U8(32), x, hi)
	VPMULUDQ(m, hi, hi)
	VPSLLQ(U8(32), hi, hi)
	VPADDQ(hi, r, r)
	return r
}

// chirpConstants are the operands sinTurn reads: registers where the
// set has enough of them (AVX-512's 32), else the constant table.
type sinConstants struct {
	quarter, half, exponent, offset, scale Op
	taylor                                 [taylorTerms]Op
	zero                                   reg.VecVirtual // AVX2's |x| needs it
}

// loadSinConstants loads the constants of sinTurn for the lanes at; with
// 16 registers only half and zero are kept in registers, the rest are read
// from the table by each instruction.
func loadSinConstants(s shape, at func(int) Mem) sinConstants {
	var c sinConstants
	keep := func(r int) Op {
		if s.width == 4 {
			return at(r)
		}
		v := s.vec()
		VMOVUPD(at(r), v)
		return v
	}
	c.quarter, c.exponent, c.offset, c.scale = keep(rowQuarter), keep(rowExponent), keep(rowOffset), keep(rowTurnScale)
	for k := range c.taylor {
		c.taylor[k] = keep(rowTaylor + k)
	}
	half := s.vec()
	VMOVUPD(at(rowHalf), half)
	c.half = half
	if s.width == 4 {
		c.zero = s.vec()
		VPXOR(c.zero, c.zero, c.zero)
	}
	return c
}

// sinTurn returns the sine of the phases in x, step for step as
// kernel.sinTurns computes it.
func sinTurn(s shape, x reg.VecVirtual, c sinConstants) reg.VecVirtual {
	t := s.vec()
	VPSUBQ(c.quarter, x, t)
	if s.width == 8 {
		VPABSQ(t, t)
	} else {
		// |t| = (t ^ m) − m with m all ones where t < 0.
		m := s.vec()
		VPCMPGTQ(t, c.zero, m)
		VPXOR(m, t, t)
		VPSUBQ(m, t, t)
	}
	VPSUBQ(t, c.half, t)
	VPSRLQ(U8(11), t, t)
	VPADDQ(c.exponent, t, t)
	a := s.vec()
	VSUBPD(c.offset, t, a)
	VMULPD(c.scale, a, a)
	z, p := s.vec(), s.vec()
	VMULPD(a, a, z)
	Comment("Horner's rule, from the x^21 term down, as kernel.sinTurns")
	VMOVUPD(c.taylor[9], p)
	VFMADD231PD(c.taylor[10], z, p)
	for k := 8; k >= 0; k-- {
		VFMADD213PD(c.taylor[k], z, p)
	}
	VMULPD(a, p, p)
	return p
}
