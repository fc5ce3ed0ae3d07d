package synth

import (
	"math"

	"sinter/patch"
)

// curveDepth shapes decay and release: the normalised curve
// (e^(−k·u) − e^(−k)) / (1 − e^(−k)) falls like an exponential, straight in
// dB, to −60 dB of its range near the end (k = ln 1000), and the offset
// makes it land exactly on its target at u = 1 instead of approaching it
// forever.
var (
	curveDepth = math.Log(1000)
	curveFloor = math.Exp(-curveDepth)
)

// Envelope segments.
const (
	segAttack = iota
	segDecay
	segSustain
	segRelease
	segDone
)

// envelope is a patch.Envelope in sample units with its breakpoints, so it
// can be evaluated at any sample and split into straight spans.
type envelope struct {
	attack, decayEnd, noteOff, releaseEnd float64 // sample positions
	sustain                               float64
	offLevel                              float64 // level reached at note-off
	linear                                bool    // straight decay and release
}

// newEnvelope scales e's times by sampleRate; noteOff is already in samples.
func newEnvelope(e patch.Envelope, sampleRate, noteOff float64) envelope {
	env := envelope{
		attack:  e.Attack * sampleRate,
		sustain: e.Sustain,
		noteOff: noteOff,
		linear:  e.Linear,
	}
	env.decayEnd = env.attack + e.Decay*sampleRate
	env.releaseEnd = env.noteOff + e.Release*sampleRate
	env.offLevel = env.held(env.noteOff)
	return env
}

// segment returns which part of the envelope sample t falls in.
func (e *envelope) segment(t float64) int {
	switch {
	case t >= e.releaseEnd:
		return segDone
	case t >= e.noteOff:
		return segRelease
	case t < e.attack:
		return segAttack
	case t < e.decayEnd:
		return segDecay
	}
	return segSustain
}

// held is the level while the key is down: linear attack from 0 to 1, the
// curve from 1 down to sustain, then sustain.
func (e *envelope) held(t float64) float64 {
	switch {
	case t < e.attack:
		return t / e.attack
	case t < e.decayEnd:
		return e.levelIn(segDecay, t)
	}
	return e.sustain
}

// levelIn evaluates segment seg's formula at t, also beyond the segment's
// end, so a span's end value continues the span's own segment.
func (e *envelope) levelIn(seg int, t float64) float64 {
	switch seg {
	case segAttack:
		return t / e.attack
	case segDecay:
		u := (t - e.attack) / (e.decayEnd - e.attack)
		if e.linear {
			return e.sustain + (1-e.sustain)*(1-u)
		}
		return e.fromExp(seg, math.Exp(-curveDepth*(t-e.attack)/(e.decayEnd-e.attack)))
	case segSustain:
		return e.sustain
	case segRelease:
		u := (t - e.noteOff) / (e.releaseEnd - e.noteOff)
		if e.linear {
			return e.offLevel * (1 - u)
		}
		return e.fromExp(seg, math.Exp(-curveDepth*(t-e.noteOff)/(e.releaseEnd-e.noteOff)))
	}
	return 0
}

// fromExp is the level of a decay or release whose exponential
// e^(−k·u) is x, so code that steps the exponential by multiplication
// meets levelIn bit for bit where it takes the exponential exactly.
func (e *envelope) fromExp(seg int, x float64) float64 {
	c := (x - curveFloor) / (1 - curveFloor)
	if seg == segDecay {
		return e.sustain + (1-e.sustain)*c
	}
	return e.offLevel * c
}

// nextBreak returns the first whole sample after t at which the segment
// changes, so spans never straddle a corner of the envelope.
func (e *envelope) nextBreak(t float64) int {
	next := math.Inf(1)
	for _, b := range [...]float64{e.attack, e.decayEnd, e.noteOff, e.releaseEnd} {
		if b > t && b < next {
			next = b
		}
	}
	if math.IsInf(next, 1) {
		return math.MaxInt
	}
	return int(math.Ceil(next))
}

// At returns the level of envelope e at t seconds for a note released at
// noteOff seconds: the exact curve that Render meets at its control points.
func At(e patch.Envelope, t, noteOff float64) float64 {
	env := newEnvelope(e, 1, noteOff)
	return env.levelIn(env.segment(t), t)
}
