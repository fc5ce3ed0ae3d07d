// Package synth renders a patch.Note into sample buffers: a bank of sine
// oscillators, each shaped by its ADSR envelope. It does no file I/O; every
// function is a pure function of the plan, so a note renders to the same
// bits on every run and on every number of cores.
//
// The oscillators are resonators, y[n+1] = 2·cos ω·y[n] − y[n−1], four
// partials interleaved so the processor overlaps their dependency chains.
// Every BlockFrames samples each resonator is re-seeded from an exact
// phase kept as a 64-bit fixed-point accumulator, so rounding error never
// grows with the length of the note and frequency may change per block
// with continuous phase. Envelopes are evaluated exactly at control points
// at most ControlFrames apart, and at every corner of the envelope, and
// followed linearly between them.
package synth

import (
	"math"

	"sinter/patch"
)

// BlockFrames is how often, in samples, each oscillator is re-anchored to
// its exact phase.
const BlockFrames = 256

// ControlFrames is the longest span, in samples, over which an envelope is
// followed as a straight line between two exact values.
const ControlFrames = 64

// phaseUnit converts a 64-bit phase (2^64 = one cycle) to radians.
const phaseUnit = 2 * math.Pi / (1 << 64)

// Stats counts the work of one render.
type Stats struct {
	PartialSamples int64 // oscillator samples computed
	Nominal        int64 // partials × frames: the work without skipping silence
}

// oscillator is the per-partial state of one render.
type oscillator struct {
	phase0, inc uint64  // exact phase at sample 0 and per-sample increment
	coef        float64 // 2·cos ω
	sinW, cosW  float64
	amp         float64
	env         envelope
	// y and yPrev are the resonator's last two outputs within a block.
	y, yPrev float64
	// gain and slope are the envelope times amplitude across the current span.
	gain, slope float64
	// endPos, endSeg and endLevel remember the envelope value computed at
	// the end of the last span, which the next span in the same segment
	// starts from, so each control point costs one evaluation.
	endPos, endSeg int
	endLevel       float64
}

// Renderer renders notes, reusing its scratch memory between calls. A
// Renderer is not safe for concurrent use; give each goroutine its own.
type Renderer struct {
	mono []float64
	osc  []oscillator
	live []int
	// Scratch for RenderLooped: a retuned copy of the note, and the
	// continuation rendered after a crossfade loop.
	tuned         patch.Note
	tunedPartials []patch.Partial
	continuation  []float64
}

// Frames returns the length of dst that Render needs for n.
func Frames(n *patch.Note) int { return n.Frames * n.Channels }

// Render writes note n into dst as interleaved frames at full scale ±1 and
// before any levelling gain. dst must hold Frames(n) values; it is
// overwritten.
func (r *Renderer) Render(dst []float64, n *patch.Note) Stats {
	if len(dst) != Frames(n) {
		panic("synth: Render destination has the wrong length")
	}
	mono := dst
	if n.Channels > 1 {
		if cap(r.mono) < n.Frames {
			r.mono = make([]float64, n.Frames)
		}
		mono = r.mono[:n.Frames]
	}
	clear(mono)
	stats := r.renderMono(mono, n)
	if n.Channels > 1 {
		// Partials have no position in the field yet, so every channel
		// carries the same signal.
		for i, v := range mono {
			for c := range n.Channels {
				dst[i*n.Channels+c] = v
			}
		}
	}
	return stats
}

func (r *Renderer) renderMono(out []float64, n *patch.Note) Stats {
	rate := float64(n.SampleRate)
	r.osc = r.osc[:0]
	for _, p := range n.Partials {
		inc := uint64(math.Round(p.Hz / rate * (1 << 64)))
		w := float64(inc) * phaseUnit
		sinW, cosW := math.Sincos(w)
		r.osc = append(r.osc, oscillator{
			phase0: phaseFixed(p.Phase),
			inc:    inc, coef: 2 * cosW, sinW: sinW, cosW: cosW, amp: p.Amplitude,
			env:    newEnvelope(p.Envelope, rate, float64(n.NoteOff)),
			endPos: -1,
		})
	}
	stats := Stats{Nominal: int64(len(n.Partials)) * int64(n.Frames)}
	frames := len(out)
	for b0 := 0; b0 < frames; b0 += BlockFrames {
		b1 := min(b0+BlockFrames, frames)
		r.live = r.live[:0]
		for i := range r.osc {
			o := &r.osc[i]
			if o.env.releaseEnd > float64(b0) {
				o.anchor(b0)
				r.live = append(r.live, i)
			}
		}
		live := r.live
		for len(live) >= 4 {
			stats.PartialSamples += 4 * int64(b1-b0)
			r.block4(out, live[:4], b0, b1)
			live = live[4:]
		}
		for _, i := range live {
			stats.PartialSamples += int64(b1 - b0)
			r.block1(out, &r.osc[i], b0, b1)
		}
	}
	return stats
}

// phaseFixed converts radians to the 64-bit phase, at 2^-53 of a cycle: the
// precision of a float64 fraction. A fraction that rounds up to a whole
// cycle wraps to 0 in the shift, as a phase should.
func phaseFixed(radians float64) uint64 {
	cycles := radians / (2 * math.Pi)
	frac := cycles - math.Floor(cycles)
	return uint64(math.Round(frac*(1<<53))) << 11
}

// anchor seeds the resonator at sample b0 from the exact phase.
func (o *oscillator) anchor(b0 int) {
	theta := float64(int64(o.phase0+o.inc*uint64(b0))) * phaseUnit
	s, c := math.Sincos(theta)
	o.y = s
	o.yPrev = s*o.cosW - c*o.sinW // sin(θ − ω)
}

// span sets the oscillator's gain ramp for samples [from, to), which lie in
// one envelope segment.
func (o *oscillator) span(from, to int) {
	seg := o.env.segment(float64(from))
	g0 := o.endLevel
	if o.endPos != from || o.endSeg != seg {
		g0 = o.env.levelIn(seg, float64(from))
	}
	g1 := o.env.levelIn(seg, float64(to))
	o.endPos, o.endSeg, o.endLevel = to, seg, g1
	o.gain = o.amp * g0
	o.slope = o.amp * (g1 - g0) / float64(to-from)
}

// spanEnd is where the current span starting at pos must stop.
func (o *oscillator) spanEnd(pos, limit int) int {
	return min(limit, o.env.nextBreak(float64(pos)))
}

func (r *Renderer) block4(out []float64, idx []int, b0, b1 int) {
	p0, p1, p2, p3 := &r.osc[idx[0]], &r.osc[idx[1]], &r.osc[idx[2]], &r.osc[idx[3]]
	for pos := b0; pos < b1; {
		end := min(b1, pos+ControlFrames)
		end = p3.spanEnd(pos, p2.spanEnd(pos, p1.spanEnd(pos, p0.spanEnd(pos, end))))
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
	y0, q0, c0, g0, d0 := p0.y, p0.yPrev, p0.coef, p0.gain, p0.slope
	y1, q1, c1, g1, d1 := p1.y, p1.yPrev, p1.coef, p1.gain, p1.slope
	y2, q2, c2, g2, d2 := p2.y, p2.yPrev, p2.coef, p2.gain, p2.slope
	y3, q3, c3, g3, d3 := p3.y, p3.yPrev, p3.coef, p3.gain, p3.slope
	for i := range out {
		out[i] += (g0*y0 + g1*y1) + (g2*y2 + g3*y3)
		y0, q0 = c0*y0-q0, y0
		y1, q1 = c1*y1-q1, y1
		y2, q2 = c2*y2-q2, y2
		y3, q3 = c3*y3-q3, y3
		g0 += d0
		g1 += d1
		g2 += d2
		g3 += d3
	}
	p0.y, p0.yPrev = y0, q0
	p1.y, p1.yPrev = y1, q1
	p2.y, p2.yPrev = y2, q2
	p3.y, p3.yPrev = y3, q3
}

func kernel1(out []float64, o *oscillator) {
	y, q, c, g, d := o.y, o.yPrev, o.coef, o.gain, o.slope
	for i := range out {
		out[i] += g * y
		y, q = c*y-q, y
		g += d
	}
	o.y, o.yPrev = y, q
}

// Peak returns the largest absolute sample value in buf.
func Peak(buf []float64) float64 {
	peak := 0.0
	for _, v := range buf {
		peak = max(peak, math.Abs(v))
	}
	return peak
}

// Scale multiplies every sample of buf by gain.
func Scale(buf []float64, gain float64) {
	for i := range buf {
		buf[i] *= gain
	}
}
