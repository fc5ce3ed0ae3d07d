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
	// corners are still partials whose spans with an envelope corner
	// inside are left to the scalar path, the rest of the block to the
	// kernel.
	corners []cornerSpans
}

// cornerSpans is a partial whose spans in mask (bit m for span m) have a
// corner of its envelope inside.
type cornerSpans struct {
	osc, mask int
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
	l.rest, l.corners = l.rest[:0], l.corners[:0]
	jobs, chirps := l.jobs[:0], l.chirps[:0]
	full := b1-b0 == BlockFrames
	live := 0
	for i := range r.osc {
		o := &r.osc[i]
		if !o.audible(b0) {
			continue
		}
		live++
		corner := o.nextCorner(b0) < b1
		if !full || (corner && o.motion != nil) {
			// A note's last, short block, and a moving partial's block with
			// a corner of its envelope inside, take the scalar path whole:
			// a corner needs a span that ends off the control grid.
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
		if corner {
			l.corners = append(l.corners, cornerSpans{osc: i, mask: o.cornerLevels(&job.From, &job.To, b0)})
			continue
		}
		o.blockLevels(&job.From, &job.To, b0)
	}
	if len(jobs)+len(chirps) > 0 {
		block := (*[BlockFrames]float64)(out[b0:b1])
		kernel.AddResonators(block, jobs, l.tables)
		kernel.AddChirps(block, chirps)
	}
	r.scalarBlock(out, l.rest, b0, b1)
	for _, c := range l.corners {
		for m := range kernel.SpansPerBlock {
			if c.mask&(1<<m) != 0 {
				from := b0 + m*ControlFrames
				r.single(out, &r.osc[c.osc], from, from+ControlFrames)
			}
		}
	}
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
	o.blockLevels(&job.From, &job.To, b0)
}

// blockLevels sets from and to to the partial's amplitude × envelope at
// the start and end of each span of the block at b0, which lies in one
// envelope segment. On a curved segment the curve's exponential steps
// from one control point to the next by one multiplication, carried on
// from the block before and taken afresh with math.Exp at every
// exactEvery-th block, so no level strays more than a few dozen units in
// the last place from the curve.
func (o *oscillator) blockLevels(from, to *[kernel.SpansPerBlock]float64, b0 int) {
	var lv [kernel.SpansPerBlock + 1]float64
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
	switch {
	case seg >= e.done():
		o.endLevel = 0
	case e.segs[seg].from == e.segs[seg].to || math.IsInf(e.segs[seg].end, 1): // flat
		for m := 1; m <= kernel.SpansPerBlock; m++ {
			lv[m] = o.amp * e.segs[seg].from
		}
		o.endLevel = e.segs[seg].from
	case !e.segs[seg].curved:
		s := &e.segs[seg]
		for m := 1; m <= kernel.SpansPerBlock; m++ {
			o.endLevel = s.at(float64(b0 + m*ControlFrames))
			lv[m] = o.amp * o.endLevel
		}
	default:
		s := &e.segs[seg]
		if exp == 0 {
			exp = math.Exp(-curveDepth * (float64(b0) - s.start) / (s.end - s.start))
		}
		for m := 1; m <= kernel.SpansPerBlock; m++ {
			exp *= s.step
			lv[m] = o.amp * s.fromExp(exp)
		}
		o.endLevel, o.endExp = s.fromExp(exp), exp
	}
	copy(from[:], lv[:kernel.SpansPerBlock])
	copy(to[:], lv[1:])
}

// cornerLevels sets from and to for a block at b0 that has a corner of
// the partial's envelope inside: each span without one gets its levels
// from its own segment, exactly; each span with one gets zeros, which
// leaves it to the scalar path, and a bit in the mask returned.
func (o *oscillator) cornerLevels(from, to *[kernel.SpansPerBlock]float64, b0 int) (mask int) {
	for m := range kernel.SpansPerBlock {
		start, end := b0+m*ControlFrames, b0+(m+1)*ControlFrames
		// Not nextCorner, whose cache must stay at the block's first
		// corner for the scalar path to come.
		if o.env.nextBreak(float64(start)) < end {
			from[m], to[m] = 0, 0
			mask |= 1 << m
			continue
		}
		seg := o.segmentAt(start)
		from[m] = o.amp * o.levelAt(seg, start)
		level := o.env.levelIn(seg, float64(end))
		to[m] = o.amp * level
		o.endPos, o.endSeg, o.endLevel, o.endExp = end, seg, level, 0
	}
	return mask
}
