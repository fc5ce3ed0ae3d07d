// Package synth renders a patch.Note into sample buffers: a bank of sine
// oscillators, each shaped by its ADSR envelope. It does no file I/O; every
// function is a pure function of the plan, so a note renders to the same
// bits on every run and on every number of cores.
//
// The oscillators are resonators, y[n+1] = 2·cos ω·y[n] − y[n−1], run in
// difference form (s += −4·sin²(ω/2)·y; y += s), which keeps its precision
// for low frequencies where 2·cos ω rounds towards 2; four partials interleaved so the processor overlaps their dependency chains.
// Every BlockFrames samples each resonator is re-seeded from an exact
// phase kept as a 64-bit fixed-point accumulator, so rounding error never
// grows with the length of the note and frequency may change per block
// with continuous phase. Envelopes are evaluated exactly at control points
// at most ControlFrames apart, and at every corner of the envelope, and
// followed linearly between them.
package synth

import (
	"math"
	"math/bits"
	"slices"

	"sinter/patch"
	"sinter/synth/kernel"
	"sinter/synth/noise"
)

// BlockFrames is how often, in samples, each oscillator is re-anchored to
// its exact phase.
const BlockFrames = kernel.BlockFrames

// ControlFrames is the longest span, in samples, over which an envelope is
// followed as a straight line between two exact values.
const ControlFrames = kernel.ControlFrames

// phaseUnit converts a 64-bit phase (2^64 = one cycle) to radians.
const phaseUnit = 2 * math.Pi / (1 << 64)

// Stats counts the work of one render.
type Stats struct {
	PartialSamples int64 // oscillator samples computed
	Nominal        int64 // partials × frames: the work without skipping silence
	// NoiseSamples are the samples of noise bands added, one for each band
	// and channel it sounds in; NoiseNominal what they would be without
	// skipping silence.
	NoiseSamples, NoiseNominal int64
}

// Add adds the work o to s.
func (s *Stats) Add(o Stats) {
	s.PartialSamples += o.PartialSamples
	s.Nominal += o.Nominal
	s.NoiseSamples += o.NoiseSamples
	s.NoiseNominal += o.NoiseNominal
}

// oscillator is the per-partial state of one render. The fields every
// block's set-up reads come first, so that they share as few cache lines
// as they can: a dense note has hundreds of oscillators, more than the
// first-level cache holds.
type oscillator struct {
	amp float64
	env envelope
	// endPos, endSeg and endLevel remember the envelope value computed at
	// the end of the last span, which the next span in the same segment
	// starts from, so each control point costs one evaluation.
	endPos, endSeg int
	endLevel       float64
	// endExp is the curve's exponential at endPos where the lanes' set-up
	// stepped to it, else 0.
	endExp float64
	// corner caches env.nextBreak: the next corner of the envelope after
	// the samples rendered so far.
	corner int
	// segKey is one more than the position whose segment seg holds, so
	// the zero value holds none: audible and the block's set-up ask for
	// the same block start in turn.
	segKey, seg int
	// Blocks starting in [loudFrom, loudTo) are known to be audible.
	loudFrom, loudTo int
	// A partial with motion has its increment taken at knots every
	// ControlFrames samples from the note's start: cellPhase is the exact
	// phase at the knot cellStart, cellInc the increment there and nextInc
	// the one at the next knot.
	motion *patch.Motion
	// anchorPos is the block start whose phase anchorSin and anchorCos
	// hold; turnSin and turnCos rotate it by one block.
	anchorPos                              int
	anchorSin, anchorCos, turnSin, turnCos float64
	phase0, inc                            uint64 // exact phase at sample 0 and per-sample increment

	// The scalar path's resonator: k is 4·sin²(ω/2), its coefficient in
	// difference form; sinW and versW are sin ω and 1 − cos ω, which seed
	// its first step; y is its output and step its last difference,
	// y[n] − y[n−1], within a block; gain and slope are the envelope times
	// amplitude across the current span.
	k, sinW, versW float64
	y, step        float64
	gain, slope    float64

	// shared holds the motion's pitch ratio at recent knots, computed once
	// for every partial that moves by it; baseInc is the increment before
	// the motion.
	shared                      *motionKnots
	baseInc                     float64
	cellStart                   int
	cellPhase, cellInc, nextInc uint64
}

// exactEvery is how many blocks may follow each other by rotation before
// an anchor is taken from the exact phase again: each rotation can add a
// unit in the last place or two, so the phase stays within 1e-14.
const exactEvery = 16

// Renderer renders notes, reusing its scratch memory between calls. A
// Renderer is not safe for concurrent use; give each goroutine its own.
type Renderer struct {
	mono []float64
	osc  []oscillator
	// segments holds the envelopes' segments of every oscillator.
	segments []segment
	// lanes holds what the resonator and chirp kernels need.
	lanes lanes
	// motions holds the knots of each motion in the note being rendered.
	motions []motionKnots
	// Scratch for RenderLooped: a retuned copy of the note, and the
	// continuation rendered after a crossfade loop.
	tuned         patch.Note
	tunedPartials []patch.Partial
	continuation  []float64
	// Scratch for stereo: the note of one channel pass and its partials.
	channelNote     patch.Note
	channelPartials []patch.Partial
	// Scratch for noise bands (bands.go): what makes their noise, its
	// voices, a period of two of them and a band's envelope.
	noiseMaker     noise.Maker
	voices         []noiseVoice
	noiseX, noiseY []float64
	bandSegments   []segment
}

// Frames returns the length of dst that Render needs for n.
func Frames(n *patch.Note) int { return n.Frames * n.Channels }

// Render writes note n into dst as interleaved frames at full scale ±1 and
// before any levelling gain: its partials, then its noise bands. dst must
// hold Frames(n) values; it is overwritten. A looped note is rendered as
// if it had no loop: RenderLooped renders it with its loop.
func (r *Renderer) Render(dst []float64, n *patch.Note) Stats {
	stats := r.renderFrom(dst, n, 0)
	stats.Add(r.addNoise(n, NoisePeriod(n, Loop{}), noiseTarget{dst, n, 0}))
	return stats
}

// renderFrom renders n's partials like Render from the block holding frame
// from on; the frames before that block are left at zero. Since every
// block starts from the exact phase, starting late costs nothing and
// changes no sample.
func (r *Renderer) renderFrom(dst []float64, n *patch.Note, from int) Stats {
	if len(dst) != Frames(n) {
		panic("synth: Render destination has the wrong length")
	}
	first := from / BlockFrames * BlockFrames
	if n.Channels == 1 {
		clear(dst)
		return r.renderMono(dst, n, first)
	}
	if cap(r.mono) < n.Frames {
		r.mono = make([]float64, n.Frames)
	}
	mono := r.mono[:n.Frames]
	var stats Stats
	clear(dst)
	// Partials at the centre are rendered once for both channels; the
	// others once per channel, each at its channel's gain.
	passes, scratch := stereoPasses(r.channelPartials[:0], n)
	r.channelPartials = scratch
	for pass, part := range passes {
		if len(part.partials) == 0 {
			continue
		}
		r.channelNote = *n
		r.channelNote.Partials = part.partials
		clear(mono)
		stats.Add(r.renderMono(mono, &r.channelNote, first))
		if pass == 0 {
			for i, v := range mono {
				dst[2*i] += v
				dst[2*i+1] += v
			}
			continue
		}
		for i, v := range mono {
			dst[2*i+part.channel] += v
		}
	}
	return stats
}

// PanGains returns the left and right gains of the constant-power pan law
// for a position from −1 (left) to 1 (right): cos and sin of
// (pan + 1)·π/4, so the power cos² + sin² is the same everywhere and the
// centre is √½ (−3 dB) in each channel (common practice).
func PanGains(pan float64) (left, right float64) {
	return math.Cos((pan + 1) * math.Pi / 4), math.Sin((pan + 1) * math.Pi / 4)
}

// stereoPass is one mono render of a stereo note: the partials with their
// channel gains applied, and the channel they go to (pass 0, the centre,
// goes to both).
type stereoPass struct {
	partials []patch.Partial
	channel  int
}

// stereoPasses splits n's partials into the centre pass and one pass per
// channel, appending the scaled copies to scratch, which it returns.
func stereoPasses(scratch []patch.Partial, n *patch.Note) ([3]stereoPass, []patch.Partial) {
	var passes [3]stereoPass
	start := len(scratch)
	for _, p := range n.Partials {
		if p.Pan == 0 {
			q := p
			q.Amplitude *= math.Sqrt2 / 2
			scratch = append(scratch, q)
		}
	}
	passes[0] = stereoPass{partials: scratch[start:len(scratch):len(scratch)]}
	for c := range 2 {
		start = len(scratch)
		for _, p := range n.Partials {
			if p.Pan != 0 {
				left, right := PanGains(p.Pan)
				gain := [2]float64{left, right}[c]
				if math.Abs(gain) < 1e-12 { // cos(π/2) rounds to 6e-17, not 0
					continue
				}
				q := p
				q.Amplitude *= gain
				scratch = append(scratch, q)
			}
		}
		passes[1+c] = stereoPass{partials: scratch[start:len(scratch):len(scratch)], channel: c}
	}
	return passes, scratch
}

func (r *Renderer) renderMono(out []float64, n *patch.Note, first int) Stats {
	rate := float64(n.SampleRate)
	r.osc = r.osc[:0]
	r.prepareMotions(n)
	need := 0
	for _, p := range n.Partials {
		need += segmentCount(p.Envelope)
	}
	if cap(r.segments) < need {
		r.segments = make([]segment, 0, need)
	}
	store := r.segments[:0]
	for _, p := range n.Partials {
		var env envelope
		env, store = newEnvelope(p.Envelope, rate, float64(n.NoteOff), store)
		inc := phaseIncrement(p.Hz, n.SampleRate)
		sinHalf := math.Sin(float64(inc) * phaseUnit / 2)
		r.osc = append(r.osc, oscillator{
			phase0: phaseFixed(p.Phase),
			inc:    inc, k: 4 * sinHalf * sinHalf, amp: p.Amplitude,
			sinW: math.Sin(float64(inc) * phaseUnit), versW: 2 * sinHalf * sinHalf,
			anchorPos: math.MinInt,
			env:       env,
			endPos:    -1,
		})
	}
	for i := range r.osc {
		o := &r.osc[i]
		o.turnSin, o.turnCos = sinCos(o.inc * BlockFrames)
		if m := n.Partials[i].Motion; m != nil {
			o.motion, o.shared, o.baseInc = m, r.knotsOf(m), float64(o.inc)
			o.cellPhase, o.cellInc, o.nextInc = o.phase0, o.incAt(0), o.incAt(ControlFrames)
		}
	}
	r.lanes.prepare(r.osc)
	frames := len(out)
	stats := Stats{Nominal: int64(len(n.Partials)) * int64(max(0, frames-first))}
	for b0 := first; b0 < frames; b0 += BlockFrames {
		b1 := min(b0+BlockFrames, frames)
		stats.PartialSamples += int64(r.renderBlock(out, b0, b1)) * int64(b1-b0)
	}
	return stats
}

// scalarBlock adds the partials live into out[b0:b1], four at a time
// where none of the four has a corner of its envelope inside the block.
// Each partial's envelope thus follows the same control points, every
// ControlFrames from the block start plus its own corners, whichever
// partials it is rendered beside and whichever kernel renders it.
func (r *Renderer) scalarBlock(out []float64, live []int, b0, b1 int) {
	for ; len(live) >= 4; live = live[4:] {
		switch r.groupKind(live[:4], b0, b1) {
		case groupStill:
			for _, i := range live[:4] {
				r.osc[i].anchor(b0)
			}
			r.block4(out, live[:4], b0, b1)
		case groupMoving:
			r.blockMoving4(out, live[:4], b0, b1)
		default:
			for _, i := range live[:4] {
				r.single(out, &r.osc[i], b0, b1)
			}
		}
	}
	for _, i := range live {
		r.single(out, &r.osc[i], b0, b1)
	}
}

// The ways a group of four partials can share a block.
const (
	groupStill  = iota // none moves and none has a corner: block4
	groupMoving        // all four move and none has a corner: blockMoving4
	groupMixed         // each on its own
)

// groupKind says how the partials idx can share the block [b0, b1).
func (r *Renderer) groupKind(idx []int, b0, b1 int) int {
	moving := 0
	for _, i := range idx {
		o := &r.osc[i]
		if o.nextCorner(b0) < b1 {
			return groupMixed
		}
		if o.motion != nil {
			moving++
		}
	}
	switch moving {
	case 0:
		return groupStill
	case len(idx):
		return groupMoving
	}
	return groupMixed
}

// single renders one partial's block.
func (r *Renderer) single(out []float64, o *oscillator, b0, b1 int) {
	if o.motion != nil {
		r.blockMoving(out, o, b0, b1)
		return
	}
	o.anchor(b0)
	r.block1(out, o, b0, b1)
}

// incAt is the per-sample phase increment at knot pos: the partial's
// frequency moved by its motion at that time. It adds the change to the
// exact increment, so a motion at 0 cents leaves the frequency exact.
func (o *oscillator) incAt(pos int) uint64 {
	return o.inc + uint64(int64(math.Round(o.baseInc*o.shared.change(pos))))
}

// motionKnots is one motion's pitch change at the knots (every
// ControlFrames samples) a render has reached lately: the partials that
// share the motion ask for the same knots block after block, so a small
// ring of them spares all but the first the exponential and the motion's
// own evaluation.
type motionKnots struct {
	motion  *patch.Motion
	rate    float64
	knots   [8]int // knot number held in each slot, or −1
	changes [8]float64
}

// change returns 2^(cents/1200) − 1 of the motion at knot pos, to full
// relative precision when the change is small.
func (m *motionKnots) change(pos int) float64 {
	knot := pos / ControlFrames
	slot := knot % len(m.knots)
	if m.knots[slot] != knot {
		m.knots[slot], m.changes[slot] = knot, math.Expm1(m.motion.Cents(float64(pos)/m.rate)*(math.Ln2/1200))
	}
	return m.changes[slot]
}

// prepareMotions gathers the distinct motions of n's partials into
// r.motions, reusing its memory, before any oscillator points into it.
// Motions are told apart by value: the plan gives each partial a motion
// of its own, and the partials of a group usually move alike (a drift,
// whose seed is each partial's own, never does).
func (r *Renderer) prepareMotions(n *patch.Note) {
	r.motions = r.motions[:0]
	for _, p := range n.Partials {
		if p.Motion != nil && r.knotsOf(p.Motion) == nil {
			k := motionKnots{motion: p.Motion, rate: float64(n.SampleRate)}
			for i := range k.knots {
				k.knots[i] = -1
			}
			r.motions = append(r.motions, k)
		}
	}
}

// knotsOf returns the shared knots of a motion equal to m, or nil.
func (r *Renderer) knotsOf(m *patch.Motion) *motionKnots {
	for i := range r.motions {
		if k := r.motions[i].motion; k == m || sameMotion(k, m) {
			return &r.motions[i]
		}
	}
	return nil
}

// sameMotion reports whether a and b move a partial alike.
func sameMotion(a, b *patch.Motion) bool {
	return a.Vibrato == b.Vibrato && a.Drift == b.Drift && slices.Equal(a.Pitch, b.Pitch)
}

// blockMoving renders a block of a moving partial. Its frequency is taken
// at knots every ControlFrames samples from the note's start and runs
// linearly between them, so it has no steps; the phase is the exact
// integral of that, kept in 64-bit fixed point at each knot, so it is
// continuous however the frequency moves and whichever blocks are skipped
// as silent. Within a span a complex rotation follows the chirp.
func (r *Renderer) blockMoving(out []float64, o *oscillator, b0, b1 int) {
	for pos := b0; pos < b1; {
		end := o.spanEnd(pos, min(b1, o.cellFrom(pos)+ControlFrames))
		c := o.chirpAt(pos, end)
		kernelChirp(out[pos:end], &c)
		pos = end
	}
}

// blockMoving4 renders a block of four moving partials none of which has
// a corner of its envelope in it: their cells share one grid, so each
// cell is one span for all four, and the four rotations run interleaved.
func (r *Renderer) blockMoving4(out []float64, idx []int, b0, b1 int) {
	p0, p1, p2, p3 := &r.osc[idx[0]], &r.osc[idx[1]], &r.osc[idx[2]], &r.osc[idx[3]]
	for pos := b0; pos < b1; {
		end := min(b1, p0.cellFrom(pos)+ControlFrames)
		p1.cellFrom(pos)
		p2.cellFrom(pos)
		p3.cellFrom(pos)
		c := [4]chirp{p0.chirpAt(pos, end), p1.chirpAt(pos, end), p2.chirpAt(pos, end), p3.chirpAt(pos, end)}
		kernelChirp4(out[pos:end], &c)
		pos = end
	}
}

// cellFrom moves the partial's cells on to the one holding pos and returns
// its start.
func (o *oscillator) cellFrom(pos int) int {
	for pos >= o.cellStart+ControlFrames {
		// The trapezoid is exact for a frequency linear in time:
		// ControlFrames·(inc + next)/2.
		o.cellPhase += (o.cellInc + o.nextInc) * (ControlFrames / 2)
		o.cellStart += ControlFrames
		o.cellInc, o.nextInc = o.nextInc, o.incAt(o.cellStart+ControlFrames)
	}
	return o.cellStart
}

// chirp is the state of one moving partial over a span: z = e^(iθ), the
// turn w per sample, the turn d of w per sample, and the gain ramp.
type chirp struct {
	zr, zi, wr, wi, dr, di, gain, slope float64
}

// chirpAt sets up the span [pos, end) of a moving partial, which lies in
// its current cell.
func (o *oscillator) chirpAt(pos, end int) chirp {
	n := uint64(pos - o.cellStart)
	diff := int64(o.nextInc - o.cellInc) // change of the increment over the cell
	var c chirp
	c.zi, c.zr = sinCos(o.cellPhase + o.cellInc*n + chirpPhase(diff, n*n))
	// The step from sample n to n+1 is inc + diff·(2n+1)/(2·ControlFrames)
	// and grows by diff/ControlFrames each sample.
	c.wi, c.wr = sinCos(o.cellInc + chirpPhase(diff, 2*n+1))
	c.di, c.dr = sinCos(uint64(diff / ControlFrames))
	o.span(pos, end)
	c.gain, c.slope = o.gain, o.slope
	return c
}

// chirpPhase is diff·m/(2·ControlFrames) modulo 2^64, in 128-bit
// arithmetic so no product overflows: with m = n² it is the phase a linear
// change of the increment by diff over a cell adds in its first n samples,
// with m = 2n+1 what it adds to the step from sample n to n+1.
func chirpPhase(diff int64, m uint64) uint64 {
	mag := uint64(diff)
	if diff < 0 {
		mag = -mag
	}
	hi, lo := bits.Mul64(mag, m)
	const shift = 7
	var _ = [1]struct{}{}[2*ControlFrames-1<<shift] // 2·ControlFrames = 2^shift
	q := lo>>shift | hi<<(64-shift)
	if diff < 0 {
		q = -q
	}
	return q
}

// kernelChirp adds one moving partial into out: z = e^(iθ) turns by w
// each sample and w by d, and the sample is the gain times Im z = sin θ.
func kernelChirp(out []float64, c *chirp) {
	zr, zi, wr, wi, dr, di, g, slope := c.zr, c.zi, c.wr, c.wi, c.dr, c.di, c.gain, c.slope
	for i := range out {
		out[i] += g * zi
		zr, zi = zr*wr-zi*wi, zr*wi+zi*wr
		wr, wi = wr*dr-wi*di, wr*di+wi*dr
		g += slope
	}
}

// kernelChirp4 is kernelChirp for four partials at once, whose chains the
// processor overlaps.
func kernelChirp4(out []float64, c *[4]chirp) {
	a, b := c[0], c[1]
	e, f := c[2], c[3]
	for i := range out {
		out[i] += (a.gain*a.zi + b.gain*b.zi) + (e.gain*e.zi + f.gain*f.zi)
		a.zr, a.zi = a.zr*a.wr-a.zi*a.wi, a.zr*a.wi+a.zi*a.wr
		b.zr, b.zi = b.zr*b.wr-b.zi*b.wi, b.zr*b.wi+b.zi*b.wr
		e.zr, e.zi = e.zr*e.wr-e.zi*e.wi, e.zr*e.wi+e.zi*e.wr
		f.zr, f.zi = f.zr*f.wr-f.zi*f.wi, f.zr*f.wi+f.zi*f.wr
		a.wr, a.wi = a.wr*a.dr-a.wi*a.di, a.wr*a.di+a.wi*a.dr
		b.wr, b.wi = b.wr*b.dr-b.wi*b.di, b.wr*b.di+b.wi*b.dr
		e.wr, e.wi = e.wr*e.dr-e.wi*e.di, e.wr*e.di+e.wi*e.dr
		f.wr, f.wi = f.wr*f.dr-f.wi*f.di, f.wr*f.di+f.wi*f.dr
		a.gain += a.slope
		b.gain += b.slope
		e.gain += e.slope
		f.gain += f.slope
	}
}

// phaseFixed converts radians to the 64-bit phase, at 2^-53 of a cycle: the
// precision of a float64 fraction. A fraction that rounds up to a whole
// cycle wraps to 0 in the shift, as a phase should.
func phaseFixed(radians float64) uint64 {
	cycles := radians / (2 * math.Pi)
	frac := cycles - math.Floor(cycles)
	return uint64(math.Round(frac*(1<<53))) << 11
}

// SilenceLevel is the level, as a fraction of full scale before levelling,
// below which a partial is not computed: −140 dBFS, under the smallest step
// of a 24-bit file.
const SilenceLevel = 1e-7

// audible reports whether the partial can reach SilenceLevel in the block
// starting at b0: its level at b0 or, where a segment rises within the
// block, at the end of that rise.
func (o *oscillator) audible(b0 int) bool {
	if b0 >= o.loudFrom && b0 < o.loudTo {
		return true
	}
	a := math.Abs(o.amp)
	seg := o.segmentAt(b0)
	level := o.levelAt(seg, b0)
	if a*level >= SilenceLevel {
		o.loudSpan(seg, a)
		return true
	}
	return a*o.env.peakIn(float64(b0), float64(b0+BlockFrames), level) >= SilenceLevel
}

// loudSpan notes, for a segment the partial is audible in, the block
// starts at which it is sure to stay audible: the whole segment, if its
// level at both ends clears SilenceLevel with room to spare (a segment
// is straight or a monotonic curve, so it clears it everywhere between),
// so that audible need not evaluate the envelope block after block.
func (o *oscillator) loudSpan(seg int, a float64) {
	e := &o.env
	if seg >= e.done() {
		return
	}
	s := &e.segs[seg]
	start, end := s.start, min(s.end, e.noteOff)
	if seg == e.release() {
		start, end = e.noteOff, e.releaseEnd
	}
	const margin = 1 + 1e-9 // so that rounding cannot put the two answers apart
	if math.IsInf(end, 1) || a*min(s.at(start), s.at(end)) < SilenceLevel*margin {
		return
	}
	o.loudFrom, o.loudTo = int(math.Ceil(start)), int(math.Ceil(end))
}

// segmentAt returns the number of the envelope segment pos falls in.
func (o *oscillator) segmentAt(pos int) int {
	if o.segKey != pos+1 {
		o.segKey, o.seg = pos+1, o.env.segment(float64(pos))
	}
	return o.seg
}

// levelAt is the envelope at pos by segment seg's formula, taken from the
// end of the last span where that is the same point.
func (o *oscillator) levelAt(seg, pos int) float64 {
	if o.endPos == pos && o.endSeg == seg {
		return o.endLevel
	}
	return o.env.levelIn(seg, float64(pos))
}

// nextCorner returns the first sample after pos at which the envelope
// changes segment. Positions only grow within a render, so a corner still
// ahead of pos is still the next one.
func (o *oscillator) nextCorner(pos int) int {
	if pos >= o.corner {
		o.corner = o.env.nextBreak(float64(pos))
	}
	return o.corner
}

// anchor seeds the resonator at sample b0 from the exact phase.
func (o *oscillator) anchor(b0 int) {
	sin, cos := o.phaseAt(b0)
	o.y = sin
	// sin θ − sin(θ − ω), written so it keeps full precision when ω is small.
	o.step = cos*o.sinW + sin*o.versW
}

// phaseAt returns sin and cos of the oscillator's phase at block start b0:
// the block before it turned by one block where that block was anchored
// too, which takes four multiplications, else from the exact phase, which
// takes a table look-up and two series, and always at every exactEvery-th
// block, so rounding cannot build up.
func (o *oscillator) phaseAt(b0 int) (sin, cos float64) {
	if b0 == o.anchorPos+BlockFrames && b0%(exactEvery*BlockFrames) != 0 {
		s, c := o.anchorSin, o.anchorCos
		sin, cos = s*o.turnCos+c*o.turnSin, c*o.turnCos-s*o.turnSin
	} else {
		sin, cos = sinCos(o.phase0 + o.inc*uint64(b0))
	}
	o.anchorPos, o.anchorSin, o.anchorCos = b0, sin, cos
	return sin, cos
}

// phaseIncrement returns the per-sample phase step of hz at rate, rounded to
// the nearest 2^-64 of a cycle. It divides in integers, since the float64
// quotient hz/rate carries a relative error of 2^-53, which would become a
// phase drift that grows with the length of the note.
func phaseIncrement(hz float64, rate int) uint64 {
	mant, exp := math.Frexp(hz) // hz = mant · 2^exp, 0.5 <= mant < 1
	m := uint64(mant * (1 << 53))
	shift := exp - 53 + 64 // hz · 2^64 = m · 2^shift
	var hi, lo uint64
	switch {
	case hz <= 0:
		return 0
	case shift >= 64:
		hi, lo = m<<(shift-64), 0
	case shift > 0:
		hi, lo = m>>(64-shift), m<<shift
	default:
		lo = m >> -shift
	}
	// hz < rate/2, so the quotient fits in 64 bits (hi < rate).
	q, rem := bits.Div64(hi, lo, uint64(rate))
	if 2*rem >= uint64(rate) {
		q++
	}
	return q
}

// span sets the oscillator's gain ramp for samples [from, to), which lie in
// one envelope segment.
func (o *oscillator) span(from, to int) {
	seg := o.segmentAt(from)
	g0 := o.levelAt(seg, from)
	g1 := o.env.levelIn(seg, float64(to))
	o.endPos, o.endSeg, o.endLevel, o.endExp = to, seg, g1, 0
	o.gain = o.amp * g0
	o.slope = o.amp * (g1 - g0) / float64(to-from)
}

// spanEnd is where the current span starting at pos must stop.
func (o *oscillator) spanEnd(pos, limit int) int {
	return min(limit, o.nextCorner(pos))
}

func (r *Renderer) block4(out []float64, idx []int, b0, b1 int) {
	p0, p1, p2, p3 := &r.osc[idx[0]], &r.osc[idx[1]], &r.osc[idx[2]], &r.osc[idx[3]]
	for pos := b0; pos < b1; {
		end := min(b1, pos+ControlFrames)
		p0.span(pos, end)
		p1.span(pos, end)
		p2.span(pos, end)
		p3.span(pos, end)
		kernel4(out[pos:end], p0, p1, p2, p3)
		pos = end
	}
}

func (r *Renderer) block1(out []float64, o *oscillator, b0, b1 int) {
	for pos := b0; pos < b1; {
		end := o.spanEnd(pos, min(b1, pos+ControlFrames))
		o.span(pos, end)
		kernel1(out[pos:end], o)
		pos = end
	}
}

// kernel4 adds four partials into out. Keeping every state in locals lets
// the compiler hold them in registers; the four chains are independent.
func kernel4(out []float64, p0, p1, p2, p3 *oscillator) {
	y0, s0, k0, g0, d0 := p0.y, p0.step, p0.k, p0.gain, p0.slope
	y1, s1, k1, g1, d1 := p1.y, p1.step, p1.k, p1.gain, p1.slope
	y2, s2, k2, g2, d2 := p2.y, p2.step, p2.k, p2.gain, p2.slope
	y3, s3, k3, g3, d3 := p3.y, p3.step, p3.k, p3.gain, p3.slope
	for i := range out {
		out[i] += (g0*y0 + g1*y1) + (g2*y2 + g3*y3)
		s0 -= k0 * y0
		s1 -= k1 * y1
		s2 -= k2 * y2
		s3 -= k3 * y3
		y0 += s0
		y1 += s1
		y2 += s2
		y3 += s3
		g0 += d0
		g1 += d1
		g2 += d2
		g3 += d3
	}
	p0.y, p0.step = y0, s0
	p1.y, p1.step = y1, s1
	p2.y, p2.step = y2, s2
	p3.y, p3.step = y3, s3
}

func kernel1(out []float64, o *oscillator) {
	y, s, k, g, d := o.y, o.step, o.k, o.gain, o.slope
	for i := range out {
		out[i] += g * y
		s -= k * y
		y += s
		g += d
	}
	o.y, o.step = y, s
}

// Peak returns the largest absolute sample value in buf; NaN values are
// passed over.
func Peak(buf []float64) float64 { return kernel.Peak(buf, 0) }

// Scale multiplies every sample of buf by gain.
func Scale(buf []float64, gain float64) {
	for i := range buf {
		buf[i] *= gain
	}
}
