package synth

import (
	"cmp"
	"math"
	"slices"

	"sinter/patch"
)

// Loop is the sustain loop chosen for a note. Start and End are frame
// indices and End is inclusive (the last frame played before the jump back
// to Start), as the RIFF smpl chunk and SFZ's loop_end count them.
type Loop struct {
	Start, End int
	// Crossfade is the length of the equal-power crossfade baked into the
	// loop's last frames; 0 for a loop of whole cycles, which needs none.
	Crossfade int
	// Cents is the pitch error of a loop of whole cycles: how far the loop,
	// repeated, sounds from the note's exact pitch, because no whole number
	// of frames holds a whole number of cycles exactly.
	Cents float64
	// Retune is how far, in cents, the note was retuned so that its loop
	// holds whole cycles exactly (loop: {exact: true}); then Cents is 0.
	Retune float64
	// scale multiplies every partial frequency: 2^(Retune/1200).
	scale float64
}

// Frames returns the loop's length.
func (l Loop) Frames() int { return l.End - l.Start + 1 }

// harmonicTolerance is how close to a whole number a partial's ratio must
// be for the note to count as harmonic.
const harmonicTolerance = 1e-9

// PlanLoop chooses the loop for n, if n asks for one. A harmonic note (every
// partial at a whole multiple of F0) loops over k whole cycles of F0, with k
// chosen so that k·sampleRate/F0 is as close to a whole number of frames as
// the allowed lengths permit, preferring the longer half of that range. Any
// other note gets a crossfade loop of the longest allowed length.
func PlanLoop(n *patch.Note) (Loop, bool) {
	req := n.Loop
	if req.Mode == patch.LoopOff {
		return Loop{}, false
	}
	if !harmonic(n) {
		return crossfadeLoop(n), true
	}
	period := float64(n.SampleRate) / n.F0
	minLength := max(1, float64(req.MaxLength)/2)
	if float64(req.MaxLength)/2 < period {
		minLength = period
	}
	bestCycles, bestLength, bestMiss := 0, 0.0, math.Inf(1)
	for k := int(math.Ceil(minLength / period)); float64(k)*period <= float64(req.MaxLength); k++ {
		length := float64(k) * period
		if miss := math.Abs(length - math.Round(length)); miss < bestMiss {
			bestCycles, bestLength, bestMiss = k, length, miss
		}
	}
	if bestCycles == 0 {
		// Not even one cycle fits: fall back to a crossfade.
		return crossfadeLoop(n), true
	}
	frames := int(math.Round(bestLength))
	cents := 1200 * math.Log2(bestLength/float64(frames))
	loop := Loop{Start: req.Start, End: req.Start + frames - 1, Cents: cents, scale: 1}
	if req.Exact {
		loop.Retune, loop.Cents = cents, 0
		loop.scale = bestLength / float64(frames)
	}
	return loop, true
}

// harmonic reports whether every partial heard in the sustain is at a whole
// multiple of F0 and holds still; partials that have decayed to silence by
// then do not count.
func harmonic(n *patch.Note) bool {
	for _, p := range n.Partials {
		if p.Envelope.Sustain == 0 {
			continue
		}
		if p.Motion != nil {
			return false // a moving partial repeats no whole number of cycles
		}
		r := p.Hz / n.F0
		if math.Abs(r-math.Round(r)) > harmonicTolerance*max(1, r) {
			return false
		}
	}
	return true
}

// crossfadePartials is how many of the loudest sustained partials choose a
// crossfade loop's length.
const crossfadePartials = 8

// crossfadeLoop chooses a crossfade loop for an inharmonic note. An
// equal-power crossfade keeps the level of uncorrelated material, but two
// copies of one sine add by their phase difference, so the length, among
// the longer half of the allowed lengths, is the one that brings the
// loudest sustained partials back closest to their phase at the start:
// the crossfade then joins near-identical signals.
func crossfadeLoop(n *patch.Note) Loop {
	req := n.Loop
	type weighted struct{ cyclesPerFrame, weight float64 }
	var loud []weighted
	for _, p := range n.Partials {
		if w := math.Abs(p.Amplitude) * p.Envelope.Sustain; w > 0 {
			loud = append(loud, weighted{p.Hz / float64(n.SampleRate), w})
		}
	}
	slices.SortFunc(loud, func(a, b weighted) int { return cmp.Compare(b.weight, a.weight) })
	loud = loud[:min(len(loud), crossfadePartials)]
	// A vibrato must come back to its phase too, or the loop would jump
	// in pitch at the seam: its cycles count, weighted by the partials that
	// carry it, as strongly as all the partials' phases together.
	var vibratos []weighted
	total := 0.0
	for _, p := range n.Partials {
		w := math.Abs(p.Amplitude) * p.Envelope.Sustain
		total += w
		if m := p.Motion; m != nil && m.Vibrato.Depth > 0 && w > 0 {
			vibratos = append(vibratos, weighted{m.Vibrato.Rate / float64(n.SampleRate), w})
		}
	}
	loudTotal := 0.0
	for _, p := range loud {
		loudTotal += p.weight
	}
	bestLength, bestMismatch := req.MaxLength, math.Inf(1)
	for length := req.MaxLength; length >= max(2*req.Crossfade, req.MaxLength/2); length-- {
		mismatch := 0.0
		for _, p := range loud {
			cycles := p.cyclesPerFrame * float64(length)
			mismatch += p.weight / loudTotal * (1 - math.Cos(2*math.Pi*(cycles-math.Round(cycles))))
		}
		for _, v := range vibratos {
			cycles := v.cyclesPerFrame * float64(length)
			mismatch += v.weight / total * (1 - math.Cos(2*math.Pi*(cycles-math.Round(cycles))))
		}
		if mismatch < bestMismatch {
			bestLength, bestMismatch = length, mismatch
		}
	}
	return Loop{Start: req.Start, End: req.Start + bestLength - 1, Crossfade: req.Crossfade, scale: 1}
}

// RenderLooped renders n like Render, shaped for the sustain loop loop
// (from PlanLoop; the zero Loop for a note without one). A retuned note is
// rendered at its retuned pitch. Its noise bands repeat with the loop's
// length, so they repeat exactly over the loop. For a
// crossfade loop the loop's last Crossfade frames fade, at equal power,
// into the frames just before Start, so playback flows on from End to
// Start (see equalPowerGains); the frames after End then continue from Start, so that a sampler
// that leaves the loop at note-off plays on without a seam, into a release
// at the note's own note-off frame.
func (r *Renderer) RenderLooped(dst []float64, n *patch.Note, loop Loop) Stats {
	if loop.Retune != 0 {
		r.tuned = *n
		r.tuned.Partials = append(r.tunedPartials[:0], n.Partials...)
		for i := range r.tuned.Partials {
			r.tuned.Partials[i].Hz *= loop.scale
		}
		r.tunedPartials = r.tuned.Partials
		n = &r.tuned
	}
	period := NoisePeriod(n, loop)
	stats := r.renderFrom(dst, n, 0)
	if loop.Crossfade == 0 {
		stats.Add(r.addNoise(n, period, noiseTarget{dst, n, 0}))
		return stats
	}
	ch := n.Channels
	cont := continuation(n, loop)
	if cap(r.continuation) < Frames(&cont) {
		r.continuation = make([]float64, Frames(&cont))
	}
	after := r.continuation[:Frames(&cont)]
	stats.Add(r.renderFrom(after, &cont, loop.Start))
	// The continuation's noise is the same periodic noise: each period is
	// made once for both.
	stats.Add(r.addNoise(n, period, noiseTarget{dst, n, 0}, noiseTarget{after, &cont, loop.Start}))

	x := loop.Crossfade
	fadeOut, fadeIn := (loop.End-x+1)*ch, (loop.Start-x)*ch
	rho := correlation(dst[fadeOut:fadeOut+x*ch], dst[fadeIn:fadeIn+x*ch])
	for j := range x {
		keep, take := equalPowerGains(float64(j+1)/float64(x), rho)
		for c := range ch {
			i := j*ch + c
			dst[fadeOut+i] = dst[fadeOut+i]*keep + dst[fadeIn+i]*take
		}
	}
	copy(dst[(loop.End+1)*ch:], after[loop.Start*ch:])
	return stats
}

// continuation is what RenderLooped renders after a crossfade loop: the
// same note released one loop earlier, which, read from the loop's Start
// on (only that part is rendered), lands its release at the original
// note-off frame.
func continuation(n *patch.Note, loop Loop) patch.Note {
	cont := *n
	cont.NoteOff -= loop.Frames()
	cont.Frames -= loop.Frames()
	return cont
}

// WorkLooped returns the work RenderLooped does for n with loop (the zero
// Loop for none), without rendering: Work's, with the noise's period the
// loop's, and after a crossfade loop that of the continuation from the
// loop's start. Retuning moves no partial's level, so it changes no work.
func WorkLooped(n *patch.Note, loop Loop) Stats {
	period := NoisePeriod(n, loop)
	stats := workFrom(n, 0, period)
	if loop.Crossfade == 0 {
		return stats
	}
	cont := continuation(n, loop)
	stats.Add(workFrom(&cont, loop.Start, period))
	return stats
}

// equalPowerGains returns the gains of the fading-out and fading-in sides at
// fraction t of a crossfade between signals of correlation rho, chosen so
// that the power of the mix, keep² + take² + 2·rho·keep·take, stays 1.
// For uncorrelated material that is the cos/sin curve; for identical
// material it becomes a constant-sum fade, which is what keeps coherent
// partials from swelling by 3 dB in the middle of the fade.
func equalPowerGains(t, rho float64) (keep, take float64) {
	take = math.Sin(math.Pi / 2 * t)
	return -rho*take + math.Sqrt(1-take*take*(1-rho*rho)), take
}

// correlation is the normalised correlation of a and b, clamped to 0..1:
// anticorrelated sides are faded as if uncorrelated.
func correlation(a, b []float64) float64 {
	var ab, aa, bb float64
	for i := range a {
		ab += a[i] * b[i]
		aa += a[i] * a[i]
		bb += b[i] * b[i]
	}
	if aa == 0 || bb == 0 {
		return 0
	}
	return min(1, max(0, ab/math.Sqrt(aa*bb)))
}

// SeamStep returns the step across the loop's seam, from frame End to frame
// Start, and the largest step between neighbouring frames inside the loop,
// both over every channel: a seamless loop's seam is no larger than its
// inside.
func SeamStep(buf []float64, channels int, loop Loop) (seam, inside float64) {
	for c := range channels {
		seam = max(seam, math.Abs(buf[loop.Start*channels+c]-buf[loop.End*channels+c]))
		for i := loop.Start + 1; i <= loop.End; i++ {
			inside = max(inside, math.Abs(buf[i*channels+c]-buf[(i-1)*channels+c]))
		}
	}
	return seam, inside
}

// tailFadeSeconds is the fade that ends an automatic tail.
const tailFadeSeconds = 0.005

// TrimTail ends an automatic tail: it finds the last frame at or above
// until (a linear level), moves on to the next zero crossing of the first
// channel, fades the last few milliseconds out with a raised cosine, and
// returns the new frame count. The file never ends before notBefore.
func TrimTail(buf []float64, channels, sampleRate int, until float64, notBefore int) int {
	frames := len(buf) / channels
	last := -1
	for i := frames - 1; i >= 0 && last < 0; i-- {
		for c := range channels {
			if math.Abs(buf[i*channels+c]) >= until {
				last = i
				break
			}
		}
	}
	end := max(last+1, notBefore)
	for end < frames && end > 0 && !crossesZero(buf[(end-1)*channels], buf[end*channels]) {
		end++
	}
	end = min(end+1, frames)
	fade := min(end, int(tailFadeSeconds*float64(sampleRate)))
	for j := range fade {
		g := 0.5 * (1 + math.Cos(math.Pi*float64(j+1)/float64(fade)))
		i := end - fade + j
		for c := range channels {
			buf[i*channels+c] *= g
		}
	}
	return end
}

func crossesZero(a, b float64) bool { return a == 0 || (a < 0) != (b < 0) }
