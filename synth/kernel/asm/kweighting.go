package main

import (
	"fmt"

	. "github.com/mmcloughlin/avo/build"
	. "github.com/mmcloughlin/avo/operand"
	"github.com/mmcloughlin/avo/reg"
)

// Layouts of the K-weighting kernel's types, read from the kernel package.
var (
	kWeightingType = structLayout("KWeighting")
	kBiquadType    = structLayout("kBiquad")
	kStateType     = structLayout("KState")
)

// kweighting writes the K-weighting kernels: one for mono, a scalar lane,
// and one for stereo, both channels in the two lanes of an X register.
// There is no AVX-512 form: two lanes fill neither width.
func kweighting() {
	kWeightKernel("Mono", 1)
	kWeightKernel("Stereo", 2)
}

// kLanes is how a K-weighting kernel moves and computes its lanes: scalar
// instructions for one channel, packed ones for two.
type kLanes struct {
	load, store        func(src, dst Op)
	add, sub, mul, fma func(a, b, dst Op)
}

func kWeightKernel(name string, channels int) {
	TEXT("kWeight"+name+"AVX2", NOSPLIT, "func(x *float64, frames int, f *KWeighting, st *KState, energy *[2]float64)")
	Pragma("noescape")
	Doc(fmt.Sprintf("kWeight%sAVX2 is KWeight for frames > 0 frames of %s.", name, map[int]string{1: "one channel", 2: "two channels"}[channels]))
	l := kLanes{
		load:  func(src, dst Op) { VMOVSD(src, dst) },
		store: func(src, dst Op) { VMOVSD(src, dst) },
		add:   func(a, b, dst Op) { VADDSD(a, b, dst) },
		sub:   func(a, b, dst Op) { VSUBSD(a, b, dst) },
		mul:   func(a, b, dst Op) { VMULSD(a, b, dst) },
		fma:   func(a, b, dst Op) { VFMADD231SD(a, b, dst) },
	}
	if channels == 2 {
		l = kLanes{
			load:  func(src, dst Op) { VMOVUPD(src, dst) },
			store: func(src, dst Op) { VMOVUPD(src, dst) },
			add:   func(a, b, dst Op) { VADDPD(a, b, dst) },
			sub:   func(a, b, dst Op) { VSUBPD(a, b, dst) },
			mul:   func(a, b, dst Op) { VMULPD(a, b, dst) },
			fma:   func(a, b, dst Op) { VFMADD231PD(a, b, dst) },
		}
	}
	x := Load(Param("x"), GP64())
	frames := Load(Param("frames"), GP64())
	f := Load(Param("f"), GP64())
	st := Load(Param("st"), GP64())
	energy := Load(Param("energy"), GP64())

	Comment("the filters' memory and the running sums, lane c for channel c")
	state := map[string]reg.VecVirtual{}
	for _, field := range []string{"X1", "X2", "Y1", "Y2", "Z1", "Z2"} {
		state[field] = XMM()
		l.load(Mem{Base: st, Disp: kStateType.field(field)}, state[field])
	}
	sum := XMM()
	l.load(Mem{Base: energy}, sum)
	coefficient := func(stage, name string) Mem {
		return Mem{Base: f, Disp: kWeightingType.field(stage) + kBiquadType.field(name)}
	}

	Label("frame" + name)
	Comment("shelf: y = b2·x2 + b1·x1 + b0·x − a2·y2 − a1·y1, one rounding per term")
	x0, y, z := XMM(), XMM(), XMM()
	l.load(Mem{Base: x}, x0)
	l.mul(coefficient("shelf", "b2"), state["X2"], y)
	l.fma(coefficient("shelf", "b1"), state["X1"], y)
	l.fma(coefficient("shelf", "b0"), x0, y)
	l.fma(coefficient("shelf", "negA2"), state["Y2"], y)
	l.fma(coefficient("shelf", "negA1"), state["Y1"], y)
	Comment("high-pass: z = (y2 − (y1 + y1)) + y − a2·z2 − a1·z1, then sum += z·z")
	l.add(state["Y1"], state["Y1"], z)
	l.sub(z, state["Y2"], z)
	l.add(y, z, z)
	l.fma(Mem{Base: f, Disp: kWeightingType.field("highPassNegA2")}, state["Z2"], z)
	l.fma(Mem{Base: f, Disp: kWeightingType.field("highPassNegA1")}, state["Z1"], z)
	l.fma(z, z, sum)
	Comment("shift the memories by one frame")
	VMOVAPD(state["X1"], state["X2"])
	VMOVAPD(x0, state["X1"])
	VMOVAPD(state["Y1"], state["Y2"])
	VMOVAPD(y, state["Y1"])
	VMOVAPD(state["Z1"], state["Z2"])
	VMOVAPD(z, state["Z1"])
	ADDQ(U32(channels*float64Size), x)
	DECQ(frames)
	JNZ(LabelRef("frame" + name))

	for _, field := range []string{"X1", "X2", "Y1", "Y2", "Z1", "Z2"} {
		l.store(state[field], Mem{Base: st, Disp: kStateType.field(field)})
	}
	l.store(sum, Mem{Base: energy})
	VZEROUPPER()
	RET()
}
