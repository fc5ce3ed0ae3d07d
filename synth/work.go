package synth

import (
	"math"
	"sort"

	"sinter/patch"
)

// Work returns the work Render does for n, without rendering: for each
// partial, and each noise band's channel, the blocks in which it can
// reach SilenceLevel. For an envelope that never rises again once it has
// fallen those are a prefix, which a binary search over the blocks finds
// in a dozen envelope evaluations; other envelopes are checked block by
// block. WorkLooped counts what RenderLooped does.
func Work(n *patch.Note) Stats { return WorkLooped(n, Loop{}) }

// workFrom is the work of rendering n from the block holding frame from on,
// its noise repeating with period: its partials' as renderFrom renders
// them and its bands' as addNoise adds them.
func workFrom(n *patch.Note, from, period int) Stats {
	first := from / BlockFrames * BlockFrames
	stats := noiseWork(n, period, first)
	if n.Channels == 1 {
		stats.Add(workOf(n.Partials, n, first))
		return stats
	}
	passes, _ := stereoPasses(nil, n)
	for _, pass := range passes {
		s := workOf(pass.partials, n, first)
		stats.PartialSamples += s.PartialSamples
		if len(pass.partials) > 0 {
			stats.Nominal += s.Nominal
		}
	}
	return stats
}

// workOf counts the partials' audible samples from frame first, a block
// start, on.
func workOf(partials []patch.Partial, n *patch.Note, first int) Stats {
	stats := Stats{Nominal: int64(len(partials)) * int64(max(0, n.Frames-first))}
	blocks := (n.Frames + BlockFrames - 1) / BlockFrames
	var store []segment
	for _, p := range partials {
		var env envelope
		env, store = newEnvelope(p.Envelope, float64(n.SampleRate), float64(n.NoteOff), store[:0])
		o := oscillator{amp: p.Amplitude, env: env, endPos: -1}
		if o.env.risesLate {
			// Audible blocks need not be a prefix: count them one by one.
			for b := first / BlockFrames; b < blocks; b++ {
				if o.audible(b * BlockFrames) {
					stats.PartialSamples += int64(min(n.Frames, (b+1)*BlockFrames) - b*BlockFrames)
				}
			}
			continue
		}
		audible := sort.Search(blocks, func(b int) bool { return !o.audible(b * BlockFrames) })
		stats.PartialSamples += int64(max(0, min(n.Frames, audible*BlockFrames)-first))
	}
	return stats
}

// CrestFactor returns the peak over the RMS of buf, in dB (common
// practice: a sine is 3.01 dB); 0 for silence.
func CrestFactor(buf []float64) float64 {
	// Four running sums, so that each addition need not wait for the
	// last.
	var s [4]float64
	rest := buf
	for ; len(rest) >= 4; rest = rest[4:] {
		q := rest[:4:4]
		s[0] += q[0] * q[0]
		s[1] += q[1] * q[1]
		s[2] += q[2] * q[2]
		s[3] += q[3] * q[3]
	}
	for _, v := range rest {
		s[0] += v * v
	}
	sum := (s[0] + s[1]) + (s[2] + s[3])
	if sum == 0 {
		return 0
	}
	return 20 * math.Log10(Peak(buf)/math.Sqrt(sum/float64(len(buf))))
}

// timbreSeconds is how much of a note TimbreCrestFactor renders.
const timbreSeconds = 0.25

// TimbreCrestFactor returns the crest factor, in dB, of n's partials
// sounding together at full amplitude with no envelope, over the first
// quarter second (mixed to mono): what the partials' amplitudes and
// phases give, before the envelopes shape it. Phase rules change it; a
// lower crest factor lets peak levelling make a set louder at the same
// peak.
func TimbreCrestFactor(n *patch.Note) float64 {
	flat := *n
	flat.Channels = 1
	flat.Frames = min(n.Frames, max(1, int(timbreSeconds*float64(n.SampleRate))))
	flat.NoteOff = flat.Frames
	flat.Noise = nil // the partials' crest factor, as the phases give it
	flat.Partials = make([]patch.Partial, len(n.Partials))
	for i, p := range n.Partials {
		p.Envelope = patch.Envelope{Sustain: 1, Release: 1}
		flat.Partials[i] = p
	}
	buf := make([]float64, flat.Frames)
	var r Renderer
	r.Render(buf, &flat)
	return CrestFactor(buf)
}
