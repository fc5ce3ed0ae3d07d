package main

import (
	"fmt"
	"math"

	. "github.com/mmcloughlin/avo/build"
	. "github.com/mmcloughlin/avo/operand"
	"github.com/mmcloughlin/avo/reg"
)

// shape is how a set of kernels holds one vector of lanes float64
// lanes: in one register (AVX-512) or as halves in two passes (AVX2).
type shape struct {
	suffix string
	width  int // float64 lanes per register
	vec    func() reg.VecVirtual
	// group is how many partials share each load and store of the
	// output: as many as the registers hold.
	group int
}

var (
	avx512 = shape{suffix: "AVX512", width: 8, vec: ZMM, group: 4}
	avx2   = shape{suffix: "AVX2", width: 4, vec: YMM, group: 2}
)

// halves is how many passes a block takes: one per register-wide part of
// the lanes.
func (s shape) halves() int { return lanes / s.width }

// Layouts of the kernel package's types, read from its source.
var (
	job         = structLayout("ResonatorJob")
	table       = structLayout("ResonatorTable")
	float64Size = 8
)

func resonator() {
	ramp := rampConstants()
	resonatorKernel(avx512, ramp)
	resonatorKernel(avx2, ramp)
}

// rampConstants lays out the gain ramp's lane weights, as in the Go form:
// 1 − j/64, then j/64, then the step 8/64 in every lane.
func rampConstants() Mem {
	m := GLOBL("resonatorRamp", RODATA|NOPTR)
	fill := func(f func(j int) float64, first int) {
		for j := range lanes {
			DATA((first+j)*float64Size, float64Bits(f(j)))
		}
	}
	to := func(j int) float64 { return float64(j) / float64(controlFrames) }
	fill(func(j int) float64 { return 1 - to(j) }, 0)
	fill(to, lanes)
	fill(func(int) float64 { return float64(lanes) / float64(controlFrames) }, 2*lanes)
	return m
}

// float64Bits is x as the assembler must be given it: by its bits,
// because it reads a whole number such as $(1) as an integer.
func float64Bits(x float64) Constant { return U64(math.Float64bits(x)) }

func resonatorKernel(s shape, ramp Mem) {
	TEXT("addResonators"+s.suffix, NOSPLIT, "func(block *[256]float64, jobs *ResonatorJob, tables *ResonatorTable, n int)")
	Doc(fmt.Sprintf("addResonators%s is AddResonators for n > 0 jobs, %d partials per pass over the output.", s.suffix, s.group))
	block := Load(Param("block"), GP64())
	jobs := Load(Param("jobs"), GP64())
	tables := Load(Param("tables"), GP64())
	n := Load(Param("n"), GP64())
	// Groups of s.group partials while there are that many, then one
	// group of each smaller power of two for the rest.
	for g := s.group; g >= 1; g /= 2 {
		top, done := fmt.Sprintf("group%d", g), fmt.Sprintf("group%dDone", g)
		Label(top)
		CMPQ(n, U32(g))
		JL(LabelRef(done))
		resonatorGroup(s, g, ramp, block, jobs, tables)
		ADDQ(U32(g*job.size), jobs)
		SUBQ(U32(g), n)
		if g == s.group {
			JMP(LabelRef(top))
		}
		Label(done)
	}
	VZEROUPPER()
	RET()
}

// resonatorGroup adds one block of the g partials at jobs into block.
func resonatorGroup(s shape, g int, ramp Mem, block, jobs, tables reg.Register) {
	for h := range s.halves() {
		lane := h * s.width * float64Size // byte offset of this half's lanes
		Commentf("%d partials, lanes %d to %d: seed each resonator", g, h*s.width, (h+1)*s.width-1)
		y, st, k := make([]reg.VecVirtual, g), make([]reg.VecVirtual, g), make([]reg.VecVirtual, g)
		for p := range g {
			t := GP64()
			MOVQ(Mem{Base: jobs, Disp: p*job.size + job.field("Table")}, t)
			IMUL3Q(U32(table.size), t, t)
			ADDQ(tables, t)
			sin, cos := s.vec(), s.vec()
			VBROADCASTSD(Mem{Base: jobs, Disp: p*job.size + job.field("Sin")}, sin)
			VBROADCASTSD(Mem{Base: jobs, Disp: p*job.size + job.field("Cos")}, cos)
			// y = sin θ·cos jω + (cos θ·sin jω), s likewise: math.FMA(sin, c, cos·s).
			y[p], st[p], k[p] = s.vec(), s.vec(), s.vec()
			VMULPD(Mem{Base: t, Disp: table.field("Sin") + lane}, cos, y[p])
			VFMADD231PD(Mem{Base: t, Disp: table.field("Cos") + lane}, sin, y[p])
			VMULPD(Mem{Base: t, Disp: table.field("StepSin") + lane}, cos, st[p])
			VFMADD231PD(Mem{Base: t, Disp: table.field("StepCos") + lane}, sin, st[p])
			VBROADCASTSD(Mem{Base: t, Disp: table.field("NegK")}, k[p])
		}
		out, levels, spans := GP64(), GP64(), GP64()
		LEAQ(Mem{Base: block, Disp: lane}, out)
		MOVQ(jobs, levels) // span m's gains are 8·m bytes on from span 0's
		MOVQ(U32(spansPerBlock), spans)
		span := fmt.Sprintf("span%d%s%d", g, s.suffix, h)
		Label(span)
		Comment("the gain ramp across this span: lo·(1 − j/64) + (hi·j/64), stepping (hi − lo)·8/64")
		gain, slope := make([]reg.VecVirtual, g), make([]reg.VecVirtual, g)
		for p := range g {
			lo, hi := s.vec(), s.vec()
			VBROADCASTSD(Mem{Base: levels, Disp: p*job.size + job.field("From")}, lo)
			VBROADCASTSD(Mem{Base: levels, Disp: p*job.size + job.field("To")}, hi)
			gain[p], slope[p] = s.vec(), s.vec()
			VMULPD(ramp.Offset(lanes*float64Size+lane), hi, gain[p])
			VFMADD231PD(ramp.Offset(lane), lo, gain[p])
			VSUBPD(lo, hi, slope[p])
			VMULPD(ramp.Offset(2*lanes*float64Size+lane), slope[p], slope[p])
		}
		for v := range controlFrames / lanes {
			acc := s.vec()
			at := Mem{Base: out, Disp: v * lanes * float64Size}
			VMOVUPD(at, acc)
			for p := range g {
				VFMADD231PD(y[p], gain[p], acc)
			}
			VMOVUPD(acc, at)
			for p := range g {
				VFMADD231PD(y[p], k[p], st[p])
				VADDPD(st[p], y[p], y[p])
				VADDPD(slope[p], gain[p], gain[p])
			}
		}
		ADDQ(U32(controlFrames*float64Size), out)
		ADDQ(U32(float64Size), levels)
		DECQ(spans)
		JNZ(LabelRef(span))
	}
}
