package main

import (
	"fmt"

	. "github.com/mmcloughlin/avo/build"
	. "github.com/mmcloughlin/avo/operand"
	"github.com/mmcloughlin/avo/reg"
)

// Layout of the true-peak kernels' taps, and their shape, as the kernel
// package declares them. The kernels read Lanes stretches of signal laid
// side by side: row i holds value i of each, so a row is one vector (two
// halves for AVX2) and the next row is rowBytes further on.
var (
	interpolator = structLayout("interpolator")
	firstPairs   = intConst("FirstPairs")
	secondPairs  = intConst("SecondPairs")
	rowBlock     = intConst("rowBlock")
	spreadBlock  = intConst("spreadBlock")
	rowBytes     = lanes * float64Size
)

// truepeak writes the true-peak meter's kernels: the split of stereo
// frames, the stretches of a channel laid side by side, the first
// doubling, the second with its search, and the largest magnitude.
func truepeak() {
	abs := absMask()
	evensFirst := evensFirstIndex()
	for _, s := range []shape{avx512, avx2} {
		deinterleaveKernel(s, evensFirst)
		spreadKernel(s)
		midpointsKernel(s)
		quadruplePeakKernel(s, abs)
		peakKernel(s, abs)
	}
}

// absMask is every bit but the sign: ANDed with a value it leaves |value|.
func absMask() Mem {
	m := GLOBL("truepeakAbsMask", RODATA|NOPTR)
	DATA(0, U64(0x7fffffffffffffff))
	return m
}

// evensFirstIndex is the order VPERMPD takes lanes 0, 2, 4, 6, 1, 3, 5,
// 7 in.
func evensFirstIndex() Mem {
	m := GLOBL("truepeakEvensFirst", RODATA|NOPTR)
	for i, lane := range []uint64{0, 2, 4, 6, 1, 3, 5, 7} {
		DATA(i*8, U64(lane))
	}
	return m
}

// deinterleaveKernel writes the split of stereo frames into channels:
// the low and the high value of each pair of lanes, across two loads,
// are a channel's frames in the order 0, 2, 1, 3 within each 256 bits
// (VUNPCKLPD, VUNPCKHPD), which one permutation puts right.
func deinterleaveKernel(s shape, evensFirst Mem) {
	TEXT("deinterleave"+s.suffix, NOSPLIT, "func(left *float64, right *float64, stereo *float64, frames int)")
	Pragma("noescape")
	Doc(fmt.Sprintf("deinterleave%s is Deinterleave for frames > 0 frames, a multiple of %d.", s.suffix, lanes))
	left := Load(Param("left"), GP64())
	right := Load(Param("right"), GP64())
	stereo := Load(Param("stereo"), GP64())
	frames := Load(Param("frames"), GP64())
	var order reg.VecVirtual
	if s.width == lanes {
		order = s.vec()
		VMOVUPD(evensFirst, order)
	}
	top := "deinterleave" + s.suffix
	Label(top)
	for h := range s.halves() {
		a, b := s.vec(), s.vec()
		VMOVUPD(Mem{Base: stereo, Disp: 2 * h * s.width * float64Size}, a)
		VMOVUPD(Mem{Base: stereo, Disp: (2*h + 1) * s.width * float64Size}, b)
		for _, out := range []struct {
			dst    reg.Register
			unpack func(...Op)
		}{{left, VUNPCKLPD}, {right, VUNPCKHPD}} {
			v := s.vec()
			out.unpack(b, a, v)
			if s.width == lanes {
				VPERMPD(v, order, v)
			} else {
				VPERMPD(U8(0xd8), v, v) // lanes 0, 2, 1, 3
			}
			VMOVUPD(v, Mem{Base: out.dst, Disp: h * s.width * float64Size})
		}
	}
	ADDQ(U32(lanes*float64Size), left)
	ADDQ(U32(lanes*float64Size), right)
	ADDQ(U32(2*lanes*float64Size), stereo)
	SUBQ(U32(lanes), frames)
	JNZ(LabelRef(top))
	VZEROUPPER()
	RET()
}

// spreadKernel writes the copy of Lanes stretches of a signal into rows
// side by side: a block of rows is loaded a stretch a vector and
// transposed in registers, so that loads and stores are whole vectors.
func spreadKernel(s shape) {
	TEXT("spread"+s.suffix, NOSPLIT, "func(lanes *float64, x *float64, starts *[8]int, rows int)")
	Pragma("noescape")
	Doc(fmt.Sprintf("spread%s copies rows > 0 values of x from each start into rows of lanes, rows a multiple of %d.", s.suffix, spreadBlock))
	out := Load(Param("lanes"), GP64())
	x := Load(Param("x"), GP64())
	starts := Load(Param("starts"), GP64())
	rows := Load(Param("rows"), GP64())
	// The stretches' first values, and the row all of them are at.
	bases := make([]reg.GPVirtual, lanes)
	for l := range bases {
		bases[l] = GP64()
		MOVQ(Mem{Base: starts, Disp: l * 8}, bases[l])
		LEAQ(Mem{Base: x, Index: bases[l], Scale: 8}, bases[l])
	}
	row := GP64()
	XORQ(row, row)
	top := "spread" + s.suffix
	Label(top)
	at := func(l, i int) Mem { return Mem{Base: bases[l], Index: row, Scale: 8, Disp: i * float64Size} }
	store := func(v reg.VecVirtual, i, lane int) {
		VMOVUPD(v, Mem{Base: out, Disp: i*rowBytes + lane*float64Size})
	}
	if s.width == lanes {
		Comment("eight rows: one vector from each stretch, transposed in three rounds of pairs")
		v := make([]reg.VecVirtual, lanes)
		for l := range v {
			v[l] = s.vec()
			VMOVUPD(at(l, 0), v[l])
		}
		// Round 1 pairs single values, round 2 pairs of them, round 3
		// fours: each output row gathers element i of every stretch.
		t := make([]reg.VecVirtual, lanes)
		for p := 0; p < lanes; p += 2 {
			t[p], t[p+1] = s.vec(), s.vec()
			VUNPCKLPD(v[p+1], v[p], t[p])
			VUNPCKHPD(v[p+1], v[p], t[p+1])
		}
		for _, odd := range []int{0, 1} {
			u := [4]reg.VecVirtual{s.vec(), s.vec(), s.vec(), s.vec()}
			VSHUFF64X2(U8(0x88), t[2+odd], t[odd], u[0])
			VSHUFF64X2(U8(0xdd), t[2+odd], t[odd], u[1])
			VSHUFF64X2(U8(0x88), t[6+odd], t[4+odd], u[2])
			VSHUFF64X2(U8(0xdd), t[6+odd], t[4+odd], u[3])
			for q, i := range []int{0, 4, 2, 6} {
				r := s.vec()
				VSHUFF64X2(U8([]uint8{0x88, 0xdd}[q%2]), u[2+q/2], u[q/2], r)
				store(r, i+odd, 0)
			}
		}
	} else {
		for half := range spreadBlock / s.width {
			for group := range lanes / s.width {
				Commentf("rows %d to %d of stretches %d to %d: a 4×4 transpose", half*4, half*4+3, group*4, group*4+3)
				v := make([]reg.VecVirtual, s.width)
				for l := range v {
					v[l] = s.vec()
					VMOVUPD(at(group*4+l, half*4), v[l])
				}
				t := make([]reg.VecVirtual, s.width)
				for p := 0; p < s.width; p += 2 {
					t[p], t[p+1] = s.vec(), s.vec()
					VUNPCKLPD(v[p+1], v[p], t[p])
					VUNPCKHPD(v[p+1], v[p], t[p+1])
				}
				for i := range s.width {
					r := s.vec()
					VPERM2F128(U8([]uint8{0x20, 0x31}[i/2]), t[2+i%2], t[i%2], r)
					store(r, half*4+i, group*4)
				}
			}
		}
	}
	ADDQ(U32(spreadBlock), row)
	ADDQ(U32(spreadBlock*rowBytes), out)
	SUBQ(U32(spreadBlock), rows)
	JNZ(LabelRef(top))
	VZEROUPPER()
	RET()
}

// midpointsKernel writes the first doubling, as midpointsGo does it for
// each lane: midpoint k is one chain of multiply-adds over its pairs
// x[k+16+j] + x[k+15−j], from j = 15 down to 0. It makes rowBlock rows at
// a time. The pairs of row k+r at step j are rows k+r+15−j and
// k+r+16+j; from one step to the next each of these two runs of rows
// moves by one, so a step loads two rows and reuses the rest.
func midpointsKernel(s shape) {
	TEXT("midpoints"+s.suffix, NOSPLIT, "func(mid *float64, lanes *float64, f *interpolator, rows int)")
	Pragma("noescape")
	Doc(fmt.Sprintf("midpoints%s writes the midpoints of rows > 0 rows of lanes, rows a multiple of %d.", s.suffix, rowBlock))
	mid := Load(Param("mid"), GP64())
	x := Load(Param("lanes"), GP64())
	f := Load(Param("f"), GP64())
	rows := Load(Param("rows"), GP64())
	tapAt := func(j int) Mem { return Mem{Base: f, Disp: interpolator.field("first") + j*rowBytes} }
	// AVX-512 keeps the taps in registers; AVX2 has too few and loads
	// each once a step.
	var held []reg.VecVirtual
	if s.width == lanes {
		for j := range firstPairs {
			held = append(held, s.vec())
			VMOVUPD(tapAt(j), held[j])
		}
	}
	top := "midpoints" + s.suffix
	Label(top)
	for h := range s.halves() {
		lane := h * s.width * float64Size
		Commentf("lanes %d to %d, rows k to k+%d", h*s.width, (h+1)*s.width-1, rowBlock-1)
		loaded := map[int]reg.VecVirtual{}
		row := func(i int) reg.VecVirtual {
			if r, ok := loaded[i]; ok {
				return r
			}
			r := s.vec()
			VMOVUPD(Mem{Base: x, Disp: i*rowBytes + lane}, r)
			loaded[i] = r
			return r
		}
		sums := make([]reg.VecVirtual, rowBlock)
		for j := firstPairs - 1; j >= 0; j-- {
			var tap Op
			if held != nil {
				tap = held[j]
			} else {
				t := s.vec()
				VBROADCASTSD(tapAt(j), t)
				tap = t
			}
			for r := range sums {
				pair := s.vec()
				VADDPD(row(r+firstPairs+j), row(r+firstPairs-1-j), pair)
				if j == firstPairs-1 {
					sums[r] = s.vec()
					VMULPD(tap, pair, sums[r])
				} else {
					VFMADD231PD(tap, pair, sums[r])
				}
			}
		}
		for r, sum := range sums {
			VMOVUPD(sum, Mem{Base: mid, Disp: r*rowBytes + lane})
		}
	}
	ADDQ(U32(rowBlock*rowBytes), x)
	ADDQ(U32(rowBlock*rowBytes), mid)
	SUBQ(U32(rowBlock), rows)
	JNZ(LabelRef(top))
	VZEROUPPER()
	RET()
}

// quadruplePeakKernel writes the second doubling's search, as
// quadruplePeakGo does it for each lane, a row at a time.
func quadruplePeakKernel(s shape, abs Mem) {
	TEXT("quadruplePeak"+s.suffix, NOSPLIT, "func(s *float64, m *float64, f *interpolator, rows int, peak float64) float64")
	Pragma("noescape")
	Doc(fmt.Sprintf("quadruplePeak%s folds into peak the four points of rows > 0 rows of lanes, s and m at the first, reading 3 rows either side.", s.suffix))
	sp := Load(Param("s"), GP64())
	mp := Load(Param("m"), GP64())
	f := Load(Param("f"), GP64())
	rows := Load(Param("rows"), GP64())
	mask := s.vec()
	VBROADCASTSD(abs, mask)
	// Two running maxima, one for s[k] and the midpoint after it, one
	// for m[k] and the midpoint after it, so that each waits on two
	// maxima a row, not four.
	peaks := [2]reg.VecVirtual{s.vec(), s.vec()}
	VBROADCASTSD(paramAddr("peak"), peaks[0])
	VMOVAPD(peaks[0], peaks[1])
	taps := make([]reg.VecVirtual, secondPairs)
	for j := range taps {
		taps[j] = s.vec()
		VBROADCASTSD(Mem{Base: f, Disp: interpolator.field("second") + j*rowBytes}, taps[j])
	}
	top := "quadruplePeak" + s.suffix
	Label(top)
	for h := range s.halves() {
		lane := h * s.width * float64Size
		Commentf("lanes %d to %d", h*s.width, (h+1)*s.width-1)
		// Each row is loaded once, where first used; the steps of both
		// midpoints alternate so that a row is done with soon after.
		type place struct {
			base reg.Register
			i    int
		}
		loaded := map[place]reg.VecVirtual{}
		value := func(base reg.Register, i int) reg.VecVirtual {
			p := place{base, i}
			if r, ok := loaded[p]; ok {
				return r
			}
			r := s.vec()
			VMOVUPD(Mem{Base: base, Disp: i*rowBytes + lane}, r)
			loaded[p] = r
			return r
		}
		S := func(i int) reg.VecVirtual { return value(sp, i) }
		M := func(i int) reg.VecVirtual { return value(mp, i) }
		fold := func(peak, v reg.VecVirtual) {
			a := s.vec()
			VANDPD(v, mask, a)
			VMAXPD(peak, a, peak) // a > peak ? a : peak, which passes over NaN
		}
		even, odd := s.vec(), s.vec()
		step := func(sum reg.VecVirtual, j int, a, b func(int) reg.VecVirtual, i, k int) {
			pair := s.vec()
			VADDPD(b(k), a(i), pair)
			if j == 0 {
				VMULPD(taps[j], pair, sum)
			} else {
				VFMADD231PD(taps[j], pair, sum)
			}
		}
		Comment("pair j of the midpoint after s[k] and of the one after m[k], j = 0 … 5")
		step(even, 0, M, S, 0, 0)
		step(odd, 0, S, M, 1, 0)
		fold(peaks[0], S(0))
		fold(peaks[1], M(0))
		step(even, 1, S, M, 1, -1)
		step(odd, 1, M, S, 1, 0)
		step(even, 2, M, S, 1, -1)
		step(odd, 2, S, M, 2, -1)
		step(even, 3, S, M, 2, -2)
		step(odd, 3, M, S, 2, -1)
		step(even, 4, M, S, 2, -2)
		step(odd, 4, S, M, 3, -2)
		step(even, 5, S, M, 3, -3)
		step(odd, 5, M, S, 3, -2)
		fold(peaks[0], even)
		fold(peaks[1], odd)
	}
	ADDQ(U32(rowBytes), sp)
	ADDQ(U32(rowBytes), mp)
	DECQ(rows)
	JNZ(LabelRef(top))
	VMAXPD(peaks[1], peaks[0], peaks[0]) // neither holds a NaN
	reduceMax(s, peaks[0])
	VMOVSD(peaks[0].AsX(), returnAddr())
	VZEROUPPER()
	RET()
}

// peakKernel writes the largest magnitude, as peakGo finds it.
func peakKernel(s shape, abs Mem) {
	TEXT("peak"+s.suffix, NOSPLIT, "func(x *float64, n int, peak float64) float64")
	Pragma("noescape")
	Doc(fmt.Sprintf("peak%s is Peak for n > 0 values, n a multiple of %d.", s.suffix, 4*lanes))
	x := Load(Param("x"), GP64())
	n := Load(Param("n"), GP64())
	mask := s.vec()
	VBROADCASTSD(abs, mask)
	// Four running maxima, so that the maxima do not wait on each other.
	var peaks [4]reg.VecVirtual
	for i := range peaks {
		peaks[i] = s.vec()
		if i == 0 {
			VBROADCASTSD(paramAddr("peak"), peaks[0])
		} else {
			VMOVAPD(peaks[0], peaks[i])
		}
	}
	top := "peak" + s.suffix
	Label(top)
	for i := range 4 * s.halves() {
		a := s.vec()
		VANDPD(Mem{Base: x, Disp: i * s.width * float64Size}, mask, a)
		VMAXPD(peaks[i%4], a, peaks[i%4]) // a > peak ? a : peak, which passes over NaN
	}
	ADDQ(U32(4*lanes*float64Size), x)
	SUBQ(U32(4*lanes), n)
	JNZ(LabelRef(top))
	Comment("none of the maxima holds a NaN, so their order does not matter")
	VMAXPD(peaks[1], peaks[0], peaks[0])
	VMAXPD(peaks[3], peaks[2], peaks[2])
	VMAXPD(peaks[2], peaks[0], peaks[0])
	reduceMax(s, peaks[0])
	VMOVSD(peaks[0].AsX(), returnAddr())
	VZEROUPPER()
	RET()
}

// reduceMax leaves in the lowest lane of v the largest of its lanes, none
// of which may be NaN.
func reduceMax(s shape, v reg.VecVirtual) {
	t := s.vec()
	if s.width == 8 {
		VEXTRACTF64X4(U8(1), v, t.AsY())
		VMAXPD(t.AsY(), v.AsY(), v.AsY())
	}
	VEXTRACTF128(U8(1), v.AsY(), t.AsX())
	VMAXPD(t.AsX(), v.AsX(), v.AsX())
	VPERMILPD(U8(1), v.AsX(), t.AsX())
	VMAXPD(t.AsX(), v.AsX(), v.AsX())
}

// paramAddr is the address of a parameter, for the VEX moves avo's Load
// would not choose for a float64 (it writes a legacy SSE MOVSD).
func paramAddr(name string) Mem {
	b, err := Param(name).Resolve()
	must(err)
	return b.Addr
}

// returnAddr is the address of the return value, likewise.
func returnAddr() Mem {
	b, err := ReturnIndex(0).Resolve()
	must(err)
	return b.Addr
}
