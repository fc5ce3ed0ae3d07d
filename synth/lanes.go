package synth

import (
	"math"

	"sinter/synth/kernel"
)

// The still partials of a block, those with no corner of their envelope
// inside it, go to kernel.AddResonators, which runs each as eight
// strided resonators (lane j holds samples j, j+8, … of the block) in the
// widest instruction set the processor has. The blocks and partials that
// take that path do not depend on the instruction set, and every set
// gives the same bits, so a note renders the same on every processor.
// The rest, blocks with a corner inside and moving partials, take the
// scalar path in render.go.

// lanes is the resonator kernel's part of a Renderer: one table per
// oscillator, built once a note, and the jobs of the block at hand.
type lanes struct {
	tables []kernel.ResonatorTable
	jobs   []kernel.ResonatorJob // room for every partial; a block uses the first few
	rest   []int                 // live partials the block leaves to the scalar path
}

// prepare builds the tables for a note's oscillators and the step of
// each curved segment's exponential from one control point to the next.
func (l *lanes) prepare(osc []oscillator) {
	if cap(l.tables) < len(osc) {
		l.tables = make([]kernel.ResonatorTable, len(osc))
		l.jobs = make([]kernel.ResonatorJob, len(osc))
	}
	l.tables, l.jobs = l.tables[:len(osc)], l.jobs[:len(osc)]
	for i := range osc {
		t, inc := &l.tables[i], osc[i].inc
		sin4, _ := sinCos(kernel.Lanes / 2 * inc)
		for j := range kernel.Lanes {
			t.Sin[j], t.Cos[j] = sinCos(uint64(j) * inc)
			// sin(θ+jω) − sin(θ+(j−8)ω) = 2·sin 4ω·cos(θ + (j−4)ω), which
			// keeps full precision when ω is small.
			s, c := sinCos(uint64(j-kernel.Lanes/2) * inc)
			t.StepCos[j], t.StepSin[j] = -2*sin4*s, 2*sin4*c
		}
		t.NegK = -4 * sin4 * sin4
		for j := range osc[i].env.segs {
			if s := &osc[i].env.segs[j]; s.curved && s.end > s.start && !math.IsInf(s.end, 1) {
				s.step = math.Exp(-curveDepth * ControlFrames / (s.end - s.start))
			}
		}
	}
}

// renderBlock adds the live partials' block [b0, b1) into out.
func (r *Renderer) renderBlock(out []float64, b0, b1 int) {
	if b1-b0 != BlockFrames {
		r.scalarBlock(out, r.live, b0, b1)
		return
	}
	l := &r.lanes
	l.rest = l.rest[:0]
	jobs := l.jobs[:0]
	for _, i := range r.live {
		o := &r.osc[i]
		if o.motion != nil || o.nextCorner(b0) < b1 {
			// A corner of the envelope inside the block needs a span that
			// ends off the control grid; a moving partial changes frequency
			// every ControlFrames, which the tables cannot follow.
			l.rest = append(l.rest, i)
			continue
		}
		jobs = jobs[:len(jobs)+1] // lanes has room for every partial
		job := &jobs[len(jobs)-1]
		job.Table = i
		o.laneParams(job, b0)
	}
	kernel.AddResonators((*[BlockFrames]float64)(out[b0:b1]), jobs, l.tables)
	r.scalarBlock(out, l.rest, b0, b1)
}

// laneParams fills job with the partial's phase at b0 and its levels at
// the block's control points; the block lies in one envelope segment. On
// a curved segment the curve's exponential steps from one control point
// to the next by one multiplication, carried on from the block before and
// taken afresh with math.Exp at every exactEvery-th block, so no level
// strays more than a few dozen units in the last place from the curve.
func (o *oscillator) laneParams(job *kernel.ResonatorJob, b0 int) {
	job.Sin, job.Cos = o.phaseAt(b0)
	e := &o.env
	seg := e.segment(float64(b0))
	lv := &job.Levels
	lv[0] = o.amp * o.levelAt(seg, b0)
	end := b0 + BlockFrames
	if seg >= e.done() || !e.segs[seg].curved {
		for m := 1; m <= kernel.SpansPerBlock; m++ {
			lv[m] = o.amp * e.levelIn(seg, float64(b0+m*ControlFrames))
		}
		o.endPos, o.endSeg, o.endLevel, o.endExp = end, seg, e.levelIn(seg, float64(end)), 0
		return
	}
	s := &e.segs[seg]
	exp := o.endExp
	if o.endPos != b0 || o.endSeg != seg || exp == 0 || b0%(exactEvery*BlockFrames) == 0 {
		exp = math.Exp(-curveDepth * (float64(b0) - s.start) / (s.end - s.start))
	}
	for m := 1; m <= kernel.SpansPerBlock; m++ {
		exp *= s.step
		lv[m] = o.amp * s.fromExp(exp)
	}
	o.endPos, o.endSeg, o.endLevel, o.endExp = end, seg, s.fromExp(exp), exp
}
