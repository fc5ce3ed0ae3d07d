package synth

import (
	"math"

	"sinter/synth/kernel"
)

// The partials of a whole block with no corner of their envelope inside
// it go to the kernels, which run eight lanes of samples (lane j holds
// samples j, j+8, … of the block) in the widest instruction set the
// processor has: still partials to kernel.AddResonators, each as eight
// strided resonators, moving ones to kernel.AddChirps, each cell's exact
// phase and a sine per sample. Which blocks and partials take that path
// does not depend on the instruction set, and every set gives the same
// bits, so a note renders the same on every processor. The rest, blocks
// with a corner inside and a note's last, short block, take the scalar
// path in render.go.

// lanes is the resonator kernel's part of a Renderer: one table per
// oscillator, built once a note, and the jobs of the block at hand.
type lanes struct {
	tables []kernel.ResonatorTable
	jobs   []kernel.ResonatorJob // room for every partial; a block uses the first few
	chirps []kernel.ChirpJob     // the same for moving partials
	rest   []int                 // live partials the block leaves to the scalar path
}

// prepare builds the tables for a note's oscillators and the step of
// each curved segment's exponential from one control point to the next.
func (l *lanes) prepare(osc []oscillator) {
	if cap(l.tables) < len(osc) {
		l.tables = make([]kernel.ResonatorTable, len(osc))
		l.jobs = make([]kernel.ResonatorJob, len(osc))
		l.chirps = make([]kernel.ChirpJob, len(osc))
	}
	l.tables, l.jobs, l.chirps = l.tables[:len(osc)], l.jobs[:len(osc)], l.chirps[:len(osc)]
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

// renderBlock adds the block [b0, b1) of the partials that can be heard
// in it into out, and returns how many those are. It looks at each
// oscillator once a block: whether it is audible, and which path its
// block takes.
func (r *Renderer) renderBlock(out []float64, b0, b1 int) int {
	l := &r.lanes
	l.rest = l.rest[:0]
	jobs, chirps := l.jobs[:0], l.chirps[:0]
	live := 0
	for i := range r.osc {
		o := &r.osc[i]
		if !o.audible(b0) {
			continue
		}
		live++
		if b1-b0 != BlockFrames || o.nextCorner(b0) < b1 {
			// A corner of the envelope inside the block needs a span that
			// ends off the control grid, and so does a note's last, short
			// block.
			l.rest = append(l.rest, i)
			continue
		}
		// l.jobs and l.chirps have room for every partial.
		if o.motion != nil {
			chirps = chirps[:len(chirps)+1]
			o.chirpParams(&chirps[len(chirps)-1], b0)
			continue
		}
		jobs = jobs[:len(jobs)+1]
		job := &jobs[len(jobs)-1]
		job.Table = i
		job.Sin, job.Cos = o.phaseAt(b0)
		o.blockLevels(&job.Levels, b0)
	}
	if len(jobs)+len(chirps) > 0 {
		block := (*[BlockFrames]float64)(out[b0:b1])
		kernel.AddResonators(block, jobs, l.tables)
		kernel.AddChirps(block, chirps)
	}
	r.scalarBlock(out, l.rest, b0, b1)
	return live
}

// chirpParams fills job with a moving partial's cells over the block at
// b0, whose spans are its cells, and its levels.
func (o *oscillator) chirpParams(job *kernel.ChirpJob, b0 int) {
	for m := range kernel.SpansPerBlock {
		o.cellFrom(b0 + m*ControlFrames)
		job.Phase[m], job.Rate[m] = o.cellPhase, o.cellInc
		// The cell's phase is cellPhase + cellInc·n + diff·n²/128 (see
		// chirpAt); the kernel takes the whole part of diff/128. What it
		// leaves out moves no sample by more than 2^−52 turns, and the
		// next cell starts again from the exact phase.
		job.Curve[m] = uint64(int64(o.nextInc-o.cellInc) >> 7)
	}
	o.blockLevels(&job.Levels, b0)
}

// blockLevels sets lv to the partial's amplitude × envelope at the
// block's control points, 0, ControlFrames, …, BlockFrames from b0; the
// block lies in one envelope segment. On a curved segment the curve's
// exponential steps from one control point to the next by one
// multiplication, carried on from the block before and taken afresh with
// math.Exp at every exactEvery-th block, so no level strays more than a
// few dozen units in the last place from the curve.
func (o *oscillator) blockLevels(lv *[kernel.SpansPerBlock + 1]float64, b0 int) {
	e := &o.env
	seg := o.segmentAt(b0)
	lv[0] = o.amp * o.levelAt(seg, b0)
	end := b0 + BlockFrames
	// The curve carries on from the block before where that one ended here.
	exp := o.endExp
	if o.endPos != b0 || o.endSeg != seg || b0%(exactEvery*BlockFrames) == 0 {
		exp = 0
	}
	o.endPos, o.endSeg, o.endExp = end, seg, 0
	if seg >= e.done() {
		*lv = [kernel.SpansPerBlock + 1]float64{}
		o.endLevel = 0
		return
	}
	s := &e.segs[seg]
	switch {
	case s.from == s.to || math.IsInf(s.end, 1): // flat
		for m := 1; m <= kernel.SpansPerBlock; m++ {
			lv[m] = o.amp * s.from
		}
		o.endLevel = s.from
	case !s.curved:
		for m := 1; m <= kernel.SpansPerBlock; m++ {
			o.endLevel = s.at(float64(b0 + m*ControlFrames))
			lv[m] = o.amp * o.endLevel
		}
	default:
		if exp == 0 {
			exp = math.Exp(-curveDepth * (float64(b0) - s.start) / (s.end - s.start))
		}
		for m := 1; m <= kernel.SpansPerBlock; m++ {
			exp *= s.step
			lv[m] = o.amp * s.fromExp(exp)
		}
		o.endLevel, o.endExp = s.fromExp(exp), exp
	}
}
