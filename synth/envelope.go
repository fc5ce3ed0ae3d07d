package synth

import (
	"math"

	"sinter/patch"
)

// curveDepth shapes curved segments: the normalised curve
// (e^(−k·u) − e^(−k)) / (1 − e^(−k)) falls like an exponential, straight in
// dB, to −60 dB of its range near the end (k = ln 1000), and the offset
// makes it land exactly on its target at u = 1 instead of approaching it
// forever.
var (
	curveDepth = math.Log(1000)
	curveFloor = math.Exp(-curveDepth)
)

// segmentCount is how many segments newEnvelope makes for e: the held
// ones (attack, decay and hold; or one before the first point, one
// between each pair of points and the hold after the last) and the
// release.
func segmentCount(e patch.Envelope) int {
	if len(e.Points) == 0 {
		return 4
	}
	return len(e.Points) + 2
}

// segment is one piece of an envelope, from level from at sample start to
// level to at sample end, straight or along the curve.
type segment struct {
	start, end float64
	from, to   float64
	curved     bool
	// step moves the curve's exponential on by ControlFrames samples,
	// e^(−k·ControlFrames/(end − start)); the lanes' set-up sets it, as
	// only it steps curves.
	step float64
}

// at is the segment's formula at t, also beyond its ends, so a span's end
// value continues the span's own segment.
func (s *segment) at(t float64) float64 {
	switch {
	case s.from == s.to || math.IsInf(s.end, 1):
		return s.from
	case s.curved:
		return s.fromExp(math.Exp(-curveDepth * (t - s.start) / (s.end - s.start)))
	}
	return s.from + (s.to-s.from)*(t-s.start)/(s.end-s.start)
}

// fromExp is the level of a curved segment whose exponential e^(−k·u) is
// x, so code that steps the exponential by multiplication meets at bit for
// bit where it takes the exponential exactly.
func (s *segment) fromExp(x float64) float64 {
	return s.to + (s.from-s.to)*((x-curveFloor)/(1-curveFloor))
}

// rising reports whether the level grows along the segment.
func (s *segment) rising() bool { return s.to > s.from }

// envelope is a patch.Envelope in sample units: the held segments from
// note-on, cut at note-off, then the release from the level reached to 0.
// Segment numbers 0 … held−1 are the held ones, held the release and
// held+1 the silence after it.
type envelope struct {
	segs       []segment // the held ones, then the release
	held       int
	noteOff    float64
	releaseEnd float64
	risesLate  bool // a segment rises after one has fallen
}

// newEnvelope scales e's times by sampleRate (noteOff is already in
// samples), keeping its segments in store, which must have room for
// segmentCount(e) more: the oscillators of a note share one store, so
// each stays small enough for many to sit in the processor's cache.
func newEnvelope(e patch.Envelope, sampleRate, noteOff float64, store []segment) (envelope, []segment) {
	first := len(store)
	env := envelope{noteOff: noteOff}
	add := func(start, end, from, to float64, curved bool) {
		if end <= start {
			return
		}
		store = append(store, segment{start: start, end: end, from: from, to: to, curved: curved && from != to})
		env.held++
	}
	if len(e.Points) == 0 {
		attack, decayEnd := e.Attack*sampleRate, (e.Attack+e.Decay)*sampleRate
		add(0, attack, 0, 1, false)
		add(attack, decayEnd, 1, e.Sustain, !e.Linear)
		add(decayEnd, math.Inf(1), e.Sustain, e.Sustain, false)
	} else {
		pts, stretch := e.Points, e.Stretch*sampleRate
		add(0, pts[0].Time*stretch, pts[0].Level, pts[0].Level, false)
		for i := 1; i < len(pts); i++ {
			add(pts[i-1].Time*stretch, pts[i].Time*stretch, pts[i-1].Level, pts[i].Level, !e.Linear)
		}
		last := pts[len(pts)-1]
		add(last.Time*stretch, math.Inf(1), last.Level, last.Level, false)
	}
	env.segs = store[first:]
	fallen := false
	for _, s := range env.segs[:env.held] {
		env.risesLate = env.risesLate || (fallen && s.rising())
		fallen = fallen || s.to < s.from
	}
	env.releaseEnd = noteOff + e.Release*sampleRate
	release := segment{start: noteOff, end: env.releaseEnd, from: env.segs[env.heldAt(noteOff)].at(noteOff), curved: !e.Linear}
	store = append(store, release)
	env.segs = store[first:len(store):len(store)]
	return env, store
}

// heldAt is the held segment holding t; the last one holds for ever.
func (e *envelope) heldAt(t float64) int {
	for i := range e.held - 1 {
		if t < e.segs[i].end {
			return i
		}
	}
	return e.held - 1
}

// release and done number the release and the silence after it.
func (e *envelope) release() int { return e.held }
func (e *envelope) done() int    { return e.held + 1 }

// segment returns the number of the segment sample t falls in.
func (e *envelope) segment(t float64) int {
	switch {
	case t >= e.releaseEnd:
		return e.done()
	case t >= e.noteOff:
		return e.release()
	}
	return e.heldAt(t)
}

// levelIn evaluates segment seg's formula at t, also beyond the segment's
// end, so a span's end value continues the span's own segment.
func (e *envelope) levelIn(seg int, t float64) float64 {
	if seg >= e.done() {
		return 0
	}
	return e.segs[seg].at(t)
}

// nextBreak returns the first whole sample after t at which the segment
// changes, so spans never straddle a corner of the envelope.
func (e *envelope) nextBreak(t float64) int {
	next := math.Inf(1)
	for _, s := range e.segs[:e.held] {
		if s.end > t && s.end < e.noteOff {
			next = s.end
			break
		}
	}
	for _, b := range [...]float64{e.noteOff, e.releaseEnd} {
		if b > t && b < next {
			next = b
		}
	}
	if math.IsInf(next, 1) {
		return math.MaxInt
	}
	return int(math.Ceil(next))
}

// peakIn returns the highest level in [t0, t1), given the level at t0:
// the envelope is continuous, so only the ends of rising segments can
// pass the start.
func (e *envelope) peakIn(t0, t1, atStart float64) float64 {
	peak := atStart
	for i := e.segment(t0); i < e.release() && e.segs[i].start < min(t1, e.noteOff); i++ {
		if s := &e.segs[i]; s.rising() {
			peak = max(peak, s.at(min(s.end, t1, e.noteOff)))
		}
	}
	return peak
}

// At returns the level of envelope e at t seconds for a note released at
// noteOff seconds: the exact curve that Render meets at its control points.
func At(e patch.Envelope, t, noteOff float64) float64 {
	var store [patch.MaxEnvelopePoints + 2]segment
	env, _ := newEnvelope(e, 1, noteOff, store[:0])
	return env.levelIn(env.segment(t), t)
}
