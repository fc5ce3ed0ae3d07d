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
// decayBack and releaseBack step the exponential of those segments' curve
// back by ControlFrames.
type laneTable struct {
	cos, sin, stepCos, stepSin, negK [vectorLanes]float64
	decayBack, releaseBack           float64
}

// laneJob is what the scalar pass hands the vector pass for one partial
// in one block: sin θ, cos θ, and amplitude × envelope at the five control
// points 0, 64, …, 256 samples into the block.
type laneJob struct {
	params [vectorLanes]float64
	table  *laneTable
}

// laneBank is the vector state of a Renderer.
type laneBank struct {
	tables []laneTable
	jobs   []laneJob
	rest   []int // live partials the block leaves to the scalar path
}

// Indexes into laneJob.params.
const (
	paramSin = iota
	paramCos
	paramLevel // paramLevel+m is the level at control point m
)

// Constant vectors of the vector pass, loaded rather than built from
// scalars so that pass stays free of scalar float instructions.
var (
	// broadcast[i] picks params[i] into every lane.
	broadcast = func() (b [paramLevel + spansPerBlock + 1][vectorLanes]uint64) {
		for i := range b {
			for j := range b[i] {
				b[i][j] = uint64(i)
			}
		}
		return b
	}()
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
		e := &osc[i].env
		t.decayBack = math.Exp(curveDepth * ControlFrames / (e.decayEnd - e.attack))
		t.releaseBack = math.Exp(curveDepth * ControlFrames / (e.releaseEnd - e.noteOff))
	}
}

func (r *Renderer) renderBlock(out []float64, b0, b1 int) {
	if !useVectors || b1-b0 != BlockFrames {
		r.scalarBlock(out, r.live, b0, b1)
		return
	}
	l := &r.lanes
	l.jobs, l.rest = l.jobs[:0], l.rest[:0]
	for _, i := range r.live {
		o := &r.osc[i]
		if o.nextCorner(b0) < b1 {
			// A corner of the envelope inside the block needs a span that
			// ends off the vector grid.
			l.rest = append(l.rest, i)
			continue
		}
		l.jobs = append(l.jobs, laneJob{table: &l.tables[i]})
		o.laneParams(&l.jobs[len(l.jobs)-1], b0)
	}
	block := (*[BlockFrames]float64)(out[b0:b1])
	jobs := l.jobs
	for len(jobs) >= 2 {
		vectorPair(block, &jobs[0], &jobs[1])
		jobs = jobs[2:]
	}
	if len(jobs) == 1 {
		vectorPair(block, &jobs[0], nil)
	}
	archsimd.ClearAVXUpperBits()
	r.scalarBlock(out, l.rest, b0, b1)
}

// laneParams fills the scalar pass's part of job for the block at b0,
// which lies in one envelope segment. In a decay or release it takes one
// exponential, at the block's end, and steps it back to the inner control
// points: three multiplications, a few units in the last place.
func (o *oscillator) laneParams(job *laneJob, b0 int) {
	p := &job.params
	p[paramSin], p[paramCos] = sinCos(o.phase0 + o.inc*uint64(b0))
	e := &o.env
	seg := e.segment(float64(b0))
	p[paramLevel] = o.amp * o.levelAt(seg, b0)
	end := b0 + BlockFrames
	var back, scale, offset float64
	var exp float64
	switch seg {
	case segDecay:
		u := (float64(end) - e.attack) / (e.decayEnd - e.attack)
		exp, back = math.Exp(-curveDepth*u), job.table.decayBack
		scale, offset = (1-e.sustain)/(1-curveFloor), e.sustain
	case segRelease:
		u := (float64(end) - e.noteOff) / (e.releaseEnd - e.noteOff)
		exp, back = math.Exp(-curveDepth*u), job.table.releaseBack
		scale, offset = e.offLevel/(1-curveFloor), 0
	default:
		for m := 1; m <= spansPerBlock; m++ {
			p[paramLevel+m] = o.amp * e.levelIn(seg, float64(b0+m*ControlFrames))
		}
		o.endPos, o.endSeg, o.endLevel = end, seg, e.levelIn(seg, float64(end))
		return
	}
	level := offset + scale*(exp-curveFloor)
	o.endPos, o.endSeg, o.endLevel = end, seg, level
	for m := spansPerBlock; m >= 1; m-- {
		p[paramLevel+m] = o.amp * (offset + scale*(exp-curveFloor))
		exp *= back
	}
}

// vectorPair adds one block of partials a and b (b may be nil) into block.
func vectorPair(block *[BlockFrames]float64, a, b *laneJob) {
	ya, sa, ka, pa := seedLanes(a)
	var yb, sb, kb, pb archsimd.Float64x8
	if b != nil {
		yb, sb, kb, pb = seedLanes(b)
	}
	from := archsimd.LoadFloat64x8(&rampFrom)
	to := archsimd.LoadFloat64x8(&rampTo)
	step := archsimd.LoadFloat64x8(&rampStep)
	for m := range spansPerBlock {
		lo := archsimd.LoadUint64x8(&broadcast[paramLevel+m])
		hi := archsimd.LoadUint64x8(&broadcast[paramLevel+m+1])
		ga, da := ramp(pa, lo, hi, from, to, step)
		gb, db := ramp(pb, lo, hi, from, to, step)
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
// start, the recurrence coefficient and the job's parameters as a vector.
func seedLanes(j *laneJob) (y, s, negK, params archsimd.Float64x8) {
	params = archsimd.LoadFloat64x8(&j.params)
	sin := params.Permute(archsimd.LoadUint64x8(&broadcast[paramSin]))
	cos := params.Permute(archsimd.LoadUint64x8(&broadcast[paramCos]))
	t := j.table
	y = sin.MulAdd(archsimd.LoadFloat64x8(&t.cos), cos.Mul(archsimd.LoadFloat64x8(&t.sin)))
	s = sin.MulAdd(archsimd.LoadFloat64x8(&t.stepCos), cos.Mul(archsimd.LoadFloat64x8(&t.stepSin)))
	return y, s, archsimd.LoadFloat64x8(&t.negK), params
}

// ramp returns a span's gain lanes, from the levels that lo and hi pick
// out of params, and their change per vector step.
func ramp(params archsimd.Float64x8, lo, hi archsimd.Uint64x8, from, to, step archsimd.Float64x8) (gain, delta archsimd.Float64x8) {
	l, h := params.Permute(lo), params.Permute(hi)
	return l.MulAdd(from, h.Mul(to)), h.Sub(l).Mul(step)
}
