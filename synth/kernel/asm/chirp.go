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
	rowLowBits          // 2^63 − 1
	rowFoldAdd          // 2^10 + 1
	rowTaylor           // the Taylor coefficients of sin, x's first, then 10 more rows
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
	row(rowLowBits, same(1<<63-1))
	row(rowFoldAdd, same(1<<10+1))
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

// chirpState is one moving partial's lanes within a span: per part of
// the lanes its phases, their steps and its gains; growth and slope are
// the same in every lane.
type chirpState struct {
	phase, step, gain []reg.VecVirtual
	growth, slope     reg.VecVirtual
}

// chirpGroup adds one block of the g moving partials at jobs into block.
// AVX-512 holds all eight lanes in one register; AVX2 holds them in two
// and takes both through each step in lockstep, so that the processor
// has two independent chains of the sine's arithmetic to overlap.
func chirpGroup(s shape, g int, constants Mem, block, jobs reg.Register) {
	parts := s.halves()
	// at returns row r of the table for part q.
	at := func(r, q int) Mem { return constants.Offset(r*lanes*8 + q*s.width*8) }
	Commentf("%d moving partials, %d lanes at a time", g, s.width)
	consts := loadSinConstants(s, func(r int) Mem { return at(r, 0) })
	out, span, spans := GP64(), GP64(), GP64()
	MOVQ(block, out)
	MOVQ(jobs, span) // span m's fields are 8·m bytes on from span 0's
	MOVQ(U32(spansPerBlock), spans)
	loop := fmt.Sprintf("chirpSpan%d%s", g, s.suffix)
	Label(loop)
	st := make([]chirpState, g)
	for p := range g {
		field := func(name string) Mem { return Mem{Base: span, Disp: p*chirpJob.size + chirpJob.field(name)} }
		c := &st[p]
		rate, curve := s.vec(), s.vec()
		VPBROADCASTQ(field("Rate"), rate)
		VPBROADCASTQ(field("Curve"), curve)
		c.phase, c.step, c.gain = make([]reg.VecVirtual, parts), make([]reg.VecVirtual, parts), make([]reg.VecVirtual, parts)
		for q := range parts {
			Comment("phase = Phase + Rate·j + Curve·j²; step = 8·Rate + 64·Curve + 16·Curve·j")
			c.phase[q] = s.vec()
			VPBROADCASTQ(field("Phase"), c.phase[q])
			VPADDQ(mulLanes(s, rate, at(rowLane, q)), c.phase[q], c.phase[q])
			VPADDQ(mulLanes(s, curve, at(rowLaneSq, q)), c.phase[q], c.phase[q])
			c.step[q] = s.vec()
			t := s.vec()
			VPSLLQ(U8(3), rate, c.step[q])
			VPSLLQ(U8(6), curve, t)
			VPADDQ(t, c.step[q], c.step[q])
			VPADDQ(mulLanes(s, curve, at(rowLane16, q)), c.step[q], c.step[q])
		}
		Comment("the steps grow by 128·Curve")
		c.growth = s.vec()
		VPSLLQ(U8(7), curve, c.growth)
		Comment("the gain ramp across this span")
		lo, hi := s.vec(), s.vec()
		VBROADCASTSD(Mem{Base: span, Disp: p*chirpJob.size + chirpJob.field("From")}, lo)
		VBROADCASTSD(Mem{Base: span, Disp: p*chirpJob.size + chirpJob.field("To")}, hi)
		for q := range parts {
			c.gain[q] = s.vec()
			VMULPD(at(rowRampTo, q), hi, c.gain[q])
			VFMADD231PD(at(rowRampFrom, q), lo, c.gain[q])
		}
		c.slope = s.vec()
		VSUBPD(lo, hi, c.slope)
		VMULPD(at(rowRampStep, 0), c.slope, c.slope)
	}
	for v := range controlFrames / lanes {
		addr := func(q int) Mem { return Mem{Base: out, Disp: v*lanes*8 + q*s.width*8} }
		// The output is loaded once the first partial's sines are made,
		// when the registers their arithmetic used are free again.
		accs := make([]reg.VecVirtual, parts)
		for p := range g {
			sines := sinTurns(s, st[p].phase, consts)
			for q := range parts {
				if p == 0 {
					accs[q] = s.vec()
					VMOVUPD(addr(q), accs[q])
				}
				VFMADD231PD(sines[q], st[p].gain[q], accs[q])
			}
		}
		for q := range parts {
			VMOVUPD(accs[q], addr(q))
		}
		for p := range g {
			for q := range parts {
				VPADDQ(st[p].step[q], st[p].phase[q], st[p].phase[q])
				VPADDQ(st[p].growth, st[p].step[q], st[p].step[q])
				VADDPD(st[p].slope, st[p].gain[q], st[p].gain[q])
			}
		}
	}
	ADDQ(U32(controlFrames*8), out)
	ADDQ(U32(8), span)
	DECQ(spans)
	JNZ(LabelRef(loop))
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

// sinConstants are the operands sinTurns reads: registers where the
// set has enough of them (AVX-512's 32), else the constant table.
type sinConstants struct {
	quarter, half, exponent, offset, scale Op
	taylor                                 [taylorTerms]Op
	// AVX2 folds without a register for half a turn: ½ turn + 2^10 − t
	// is (t ^ (2^63 − 1)) + 2^10 + 1 for every t in [0, 2^63].
	lowBits, foldAdd Op
}

// loadSinConstants loads the constants of sinTurns for the first lanes
// of the table; AVX2 reads them from the table by each instruction.
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
	if s.width == 4 {
		c.lowBits, c.foldAdd = at(rowLowBits), at(rowFoldAdd)
	} else {
		half := s.vec()
		VMOVUPD(at(rowHalf), half)
		c.half = half
	}
	return c
}

// sinTurns returns the sine of the phases in each register of xs, step
// for step as kernel.sinTurns computes it, the registers taken through
// each step together.
func sinTurns(s shape, xs []reg.VecVirtual, c sinConstants) []reg.VecVirtual {
	n := len(xs)
	each := func(f func(q int)) {
		for q := range n {
			f(q)
		}
	}

	t := make([]reg.VecVirtual, n)
	each(func(q int) { t[q] = s.vec(); VPSUBQ(c.quarter, xs[q], t[q]) })
	if s.width == 8 {
		each(func(q int) { VPABSQ(t[q], t[q]) })
		each(func(q int) { VPSUBQ(t[q], c.half, t[q]) })
	} else {
		// |t| = (t ^ m) − m, m all ones where t < 0: the sign of each
		// quadword's high half, spread over both halves.
		each(func(q int) {
			m := s.vec()
			VPSRAD(U8(31), t[q], m)
			VPSHUFD(U8(0xF5), m, m)
			VPXOR(m, t[q], t[q])
			VPSUBQ(m, t[q], t[q])
		})
		each(func(q int) { VPXOR(c.lowBits, t[q], t[q]) })
		each(func(q int) { VPADDQ(c.foldAdd, t[q], t[q]) })
	}
	each(func(q int) { VPSRLQ(U8(11), t[q], t[q]) })
	each(func(q int) { VPADDQ(c.exponent, t[q], t[q]) })
	each(func(q int) { VSUBPD(c.offset, t[q], t[q]) })
	each(func(q int) { VMULPD(c.scale, t[q], t[q]) }) // t is now a, in radians
	z, p := make([]reg.VecVirtual, n), make([]reg.VecVirtual, n)
	each(func(q int) { z[q] = s.vec(); VMULPD(t[q], t[q], z[q]) })
	Comment("Horner's rule, from the x^21 term down, as kernel.sinTurns")
	each(func(q int) { p[q] = s.vec(); VMOVUPD(c.taylor[9], p[q]) })
	each(func(q int) { VFMADD231PD(c.taylor[10], z[q], p[q]) })
	for k := 8; k >= 0; k-- {
		each(func(q int) { VFMADD213PD(c.taylor[k], z[q], p[q]) })
	}
	each(func(q int) { VMULPD(t[q], p[q], p[q]) })
	return p
}
