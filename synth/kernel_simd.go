//go:build goexperiment.simd && amd64

package synth

import (
	"math"
	"simd/archsimd"
)

// The vector kernel runs each partial as eight strided resonators: lane j
// holds samples b0+j, b0+j+8, … of one partial, so y[n+8] = 2·cos 8ω·y[n]
// − y[n−8] advances eight consecutive samples per step with no sum across
// lanes, and two partials share each load and store of the output. A block
// goes through three passes in this order, because scalar float code after
// 512-bit instructions runs many times slower until the upper halves of the
// registers are cleared: a scalar pass that anchors every partial and
// evaluates its envelope, a pass of vector instructions only, then
// archsimd.ClearAVXUpperBits before any scalar float code runs again.

// vectorLanes is the number of float64 lanes in one 512-bit vector.
const vectorLanes = 8

// spansPerBlock is how many envelope spans of ControlFrames fill a block.
const spansPerBlock = BlockFrames / ControlFrames

// useVectors is whether blocks may take the vector path; tests turn it off
// to compare the two paths in one build.
var useVectors = archsimd.X86.AVX512()

// Kernel names the oscillator kernel this build runs: "avx512" (float64 × 8
// lanes) where the processor has AVX-512, else "plain".
func Kernel() string {
	if useVectors {
		return "avx512"
	}
	return "plain"
}

// laneTable holds one partial's constants for the strided resonator:
// cos jω and sin jω rotate the anchor phase θ into the eight lanes' values
// sin(θ + jω); stepCos and stepSin give their first differences
// sin(θ + jω) − sin(θ + (j−8)ω); negK is −4·sin² 4ω broadcast.
type laneTable struct {
	cos, sin, stepCos, stepSin, negK [vectorLanes]float64
}

// laneJob is what the scalar pass hands the vector pass for one partial
// in one block: sin θ and cos θ of its phase at the block start, and
// amplitude × envelope at the control points 0, ControlFrames, … ,
// BlockFrames into the block. levels has room for a whole vector loaded
// at any control point.
type laneJob struct {
	anchor [vectorLanes]float64 // sin θ, cos θ, then unused
	levels [spansPerBlock + vectorLanes]float64
	table  int // index into laneBank.tables
}

// laneBank is the vector state of a Renderer.
type laneBank struct {
	tables []laneTable
	jobs   []laneJob // room for every partial; a block uses the first few
	rest   []int     // live partials the block leaves to the scalar path
}

// Constant vectors of the vector pass, loaded rather than built from
// scalars so that pass stays free of scalar float instructions.
var (
	// pickFirst and pickSecond broadcast lane 0 or lane 1 to every lane.
	pickFirst  = [vectorLanes]uint64{}
	pickSecond = [vectorLanes]uint64{1, 1, 1, 1, 1, 1, 1, 1}
	// rampFrom and rampTo weight a span's start and end levels for lane j
	// (1 − j/64 and j/64); rampStep is the fraction of a span one vector
	// step covers.
	rampFrom, rampTo, rampStep = func() (from, to, step [vectorLanes]float64) {
		for j := range from {
			to[j] = float64(j) / ControlFrames
			from[j] = 1 - to[j]
			step[j] = vectorLanes / float64(ControlFrames)
		}
		return from, to, step
	}()
)

func (l *laneBank) prepare(osc []oscillator) {
	if !useVectors {
		return
	}
	if cap(l.tables) < len(osc) {
		l.tables = make([]laneTable, len(osc))
	}
	l.tables = l.tables[:len(osc)]
	if cap(l.jobs) < len(osc) {
		l.jobs = make([]laneJob, len(osc))
	}
	l.jobs = l.jobs[:len(osc)]
	for i := range osc {
		t, inc := &l.tables[i], osc[i].inc
		sin4, _ := sinCos(4 * inc)
		for j := range vectorLanes {
			t.sin[j], t.cos[j] = sinCos(uint64(j) * inc)
			// sin(θ+jω) − sin(θ+(j−8)ω) = 2·sin 4ω·cos(θ + (j−4)ω), which
			// keeps full precision when ω is small.
			s, c := sinCos(uint64(j-4) * inc)
			t.stepCos[j], t.stepSin[j] = -2*sin4*s, 2*sin4*c
			t.negK[j] = -4 * sin4 * sin4
		}
		for j := range osc[i].env.segs {
			if s := &osc[i].env.segs[j]; s.curved && s.end > s.start && !math.IsInf(s.end, 1) {
				s.back = math.Exp(curveDepth * ControlFrames / (s.end - s.start))
			}
		}
	}
}

func (r *Renderer) renderBlock(out []float64, b0, b1 int) {
	if !useVectors || b1-b0 != BlockFrames {
		r.scalarBlock(out, r.live, b0, b1)
		return
	}
	l := &r.lanes
	l.rest = l.rest[:0]
	jobs := 0
	for _, i := range r.live {
		o := &r.osc[i]
		if o.motion != nil || o.nextCorner(b0) < b1 {
			// A corner of the envelope inside the block needs a span that
			// ends off the vector grid; a moving partial changes frequency
			// every ControlFrames, which the lane tables cannot follow.
			l.rest = append(l.rest, i)
			continue
		}
		job := &l.jobs[jobs]
		jobs++
		job.table = i
		o.laneParams(job, b0)
	}
	block := (*[BlockFrames]float64)(out[b0:b1])
	for j := 0; j+1 < jobs; j += 2 {
		a, b := &l.jobs[j], &l.jobs[j+1]
		vectorPair(block, a, &l.tables[a.table], b, &l.tables[b.table])
	}
	if jobs%2 == 1 {
		a := &l.jobs[jobs-1]
		vectorPair(block, a, &l.tables[a.table], a, &l.tables[a.table])
	}
	archsimd.ClearAVXUpperBits()
	r.scalarBlock(out, l.rest, b0, b1)
}

// laneParams fills the scalar pass's part of job for the block at b0,
// which lies in one envelope segment. On a curved segment it takes one
// exponential, at the block's end, and steps it back to the inner control
// points, one multiplication each, which keeps every level within a few
// units in the last place of the exact curve.
func (o *oscillator) laneParams(job *laneJob, b0 int) {
	job.anchor[0], job.anchor[1] = o.phaseAt(b0)
	e := &o.env
	seg := e.segment(float64(b0))
	lv := &job.levels
	lv[0] = o.amp * o.levelAt(seg, b0)
	end := b0 + BlockFrames
	if seg >= e.done() || !e.segs[seg].curved {
		for m := 1; m <= spansPerBlock; m++ {
			lv[m] = o.amp * e.levelIn(seg, float64(b0+m*ControlFrames))
		}
		o.endPos, o.endSeg, o.endLevel = end, seg, e.levelIn(seg, float64(end))
		return
	}
	s := &e.segs[seg]
	exp := math.Exp(-curveDepth * (float64(end) - s.start) / (s.end - s.start))
	// The end level, which the next block starts from, is levelIn's to
	// the bit.
	o.endPos, o.endSeg, o.endLevel = end, seg, s.fromExp(exp)
	for m := spansPerBlock; m >= 1; m-- {
		lv[m] = o.amp * s.fromExp(exp)
		exp *= s.back
	}
}

// vectorPair adds one block of partials a and b into block. Given the
// same job twice it adds that partial once: the second copy runs at zero
// gain, which costs the same as a kernel for one.
func vectorPair(block *[BlockFrames]float64, a *laneJob, ta *laneTable, b *laneJob, tb *laneTable) {
	ya, sa, ka := seedLanes(a, ta)
	yb, sb, kb := seedLanes(b, tb)
	from := archsimd.LoadFloat64x8(&rampFrom)
	to := archsimd.LoadFloat64x8(&rampTo)
	step := archsimd.LoadFloat64x8(&rampStep)
	first := archsimd.LoadUint64x8(&pickFirst)
	second := archsimd.LoadUint64x8(&pickSecond)
	var zero archsimd.Float64x8
	for m := range spansPerBlock {
		ga, da := ramp(archsimd.LoadFloat64x8Slice(a.levels[m:]), first, second, from, to, step)
		gb, db := ramp(archsimd.LoadFloat64x8Slice(b.levels[m:]), first, second, from, to, step)
		if a == b {
			gb, db = zero, zero
		}
		span := block[m*ControlFrames : (m+1)*ControlFrames]
		for v := 0; v < ControlFrames; v += vectorLanes {
			dst := (*[vectorLanes]float64)(span[v : v+vectorLanes])
			acc := archsimd.LoadFloat64x8(dst)
			acc = gb.MulAdd(yb, ga.MulAdd(ya, acc))
			acc.Store(dst)
			sa = ka.MulAdd(ya, sa)
			sb = kb.MulAdd(yb, sb)
			ya = ya.Add(sa)
			yb = yb.Add(sb)
			ga = ga.Add(da)
			gb = gb.Add(db)
		}
	}
}

// seedLanes returns the lanes' values and first differences at the block
// start, and the recurrence coefficient.
func seedLanes(j *laneJob, t *laneTable) (y, s, negK archsimd.Float64x8) {
	anchor := archsimd.LoadFloat64x8(&j.anchor)
	sin := anchor.Permute(archsimd.LoadUint64x8(&pickFirst))
	cos := anchor.Permute(archsimd.LoadUint64x8(&pickSecond))
	y = sin.MulAdd(archsimd.LoadFloat64x8(&t.cos), cos.Mul(archsimd.LoadFloat64x8(&t.sin)))
	s = sin.MulAdd(archsimd.LoadFloat64x8(&t.stepCos), cos.Mul(archsimd.LoadFloat64x8(&t.stepSin)))
	return y, s, archsimd.LoadFloat64x8(&t.negK)
}

// ramp returns a span's gain lanes, from the levels at its start and end
// (lanes 0 and 1 of levels), and their change per vector step.
func ramp(levels archsimd.Float64x8, first, second archsimd.Uint64x8, from, to, step archsimd.Float64x8) (gain, delta archsimd.Float64x8) {
	l, h := levels.Permute(first), levels.Permute(second)
	return l.MulAdd(from, h.Mul(to)), h.Sub(l).Mul(step)
}
