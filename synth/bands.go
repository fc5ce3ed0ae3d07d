package synth

import (
	"math"

	"sinter/patch"
	"sinter/synth/noise"
)

// A note's noise bands are made by package noise, one period of each
// channel's noise at a time, and added here under their envelopes. The
// noise repeats with a period that depends on the note and its loop
// alone: the loop's length, which PlanLoop chose from the partials, so
// that the noise repeats exactly over the loop, and otherwise the note's
// length rounded up to a length the FFT takes fast. The work is plain Go, the same on every
// kernel, added after the partials, so a note renders to the same bits on
// every processor.

// MaxNoisePeriod is the longest noise period of a note without a loop, in
// samples (21.8 s at 48 kHz): a longer note repeats its noise after that
// many samples, which keeps the memory making a band takes, under 100
// bytes a sample of its period, within about 100 MB.
const MaxNoisePeriod = 1 << 20

// NoisePeriod is how many samples the noise of note n repeats after,
// rendered with loop (the zero Loop for none): the loop's length, or the
// smallest length of at least the note's that the FFT takes fast, at most
// MaxNoisePeriod.
func NoisePeriod(n *patch.Note, loop Loop) int {
	if loop != (Loop{}) {
		return loop.Frames()
	}
	return min(noise.Smooth(max(n.Frames, 1)), MaxNoisePeriod)
}

// noiseVoice is one noise a band makes, and the channels it sounds in: a
// mono band's one, both of a stereo band whose channels are the same
// (width 0), or one of a stereo band whose channels differ.
type noiseVoice struct {
	noise noise.Noise
	band  *patch.NoiseBand
	outs  [2]noiseOut
	count int
}

// noiseOut is a channel a voice sounds in: its gain by the pan law, and
// the most the voice can reach there, which says where it is silent.
type noiseOut struct {
	channel     int
	gain, bound float64
}

// noiseVoices lists the noises n's bands make with period, appending to
// voices. In stereo the two channels' phases are turned apart by
// θ = arccos(1 − width), so they correlate by 1 − width over a period.
func noiseVoices(voices []noiseVoice, n *patch.Note, period int) []noiseVoice {
	for i := range n.Noise {
		b := &n.Noise[i]
		s := noise.Noise{Band: noise.Band{Low: b.Low, High: b.High, Slope: b.Slope, Amplitude: b.Amplitude, Gain: b}, Seed: b.Seed}
		// Cauchy–Schwarz: a sum of sines peaks below √bins times its
		// amplitudes' root sum of squares, which Gain raises at most to
		// MaxGain·|Amplitude|.
		bound := math.Sqrt(float64(noise.Bins(b.Low, b.High, period, n.SampleRate))) * math.Abs(b.Amplitude) * b.MaxGain()
		if n.Channels == 1 {
			voices = append(voices, noiseVoice{noise: s, band: b, outs: [2]noiseOut{{0, 1, bound}}, count: 1})
			continue
		}
		left, right := PanGains(b.Pan)
		gains := [2]float64{left, right}
		if b.Width == 0 {
			v := noiseVoice{noise: s, band: b}
			for c, g := range gains {
				if math.Abs(g) >= 1e-12 { // cos(π/2) rounds to 6e-17, not 0
					v.outs[v.count] = noiseOut{c, g, bound * math.Abs(g)}
					v.count++
				}
			}
			voices = append(voices, v)
			continue
		}
		theta := math.Acos(1 - b.Width)
		for c, g := range gains {
			if math.Abs(g) < 1e-12 {
				continue
			}
			v := noiseVoice{noise: s, band: b, outs: [2]noiseOut{{c, g, bound * math.Abs(g)}}, count: 1}
			v.noise.Turn = [2]float64{-theta / 2, theta / 2}[c]
			voices = append(voices, v)
		}
	}
	return voices
}

// noiseTarget is a buffer addNoise adds a note's bands into: note's
// interleaved frames, from the block holding frame from on.
type noiseTarget struct {
	buf  []float64
	note *patch.Note
	from int
}

// addNoise makes the noise of n's bands with period, two voices to a
// transform, and adds each under its band's envelope into every target;
// n and the targets' notes share their bands. It returns the work.
func (r *Renderer) addNoise(n *patch.Note, period int, targets ...noiseTarget) Stats {
	var stats Stats
	if len(n.Noise) == 0 {
		return stats
	}
	r.voices = noiseVoices(r.voices[:0], n, period)
	if cap(r.noiseX) < period {
		r.noiseX, r.noiseY = make([]float64, period), make([]float64, period)
	}
	x, y := r.noiseX[:period], r.noiseY[:period]
	for i := 0; i < len(r.voices); i += 2 {
		a := &r.voices[i]
		if i+1 == len(r.voices) {
			r.noiseMaker.Periods(x, nil, n.SampleRate, &a.noise, nil)
			stats.Add(r.addVoice(a, x, targets))
			continue
		}
		b := &r.voices[i+1]
		r.noiseMaker.Periods(x, y, n.SampleRate, &a.noise, &b.noise)
		stats.Add(r.addVoice(a, x, targets))
		stats.Add(r.addVoice(b, y, targets))
	}
	return stats
}

// addVoice adds one voice's period into each of its channels of every
// target.
func (r *Renderer) addVoice(v *noiseVoice, period []float64, targets []noiseTarget) Stats {
	var stats Stats
	for _, t := range targets {
		rate := float64(t.note.SampleRate)
		var env envelope
		env, r.bandSegments = newEnvelope(v.band.Envelope, rate, float64(t.note.NoteOff), r.bandSegments[:0])
		first := t.from / BlockFrames * BlockFrames
		for _, out := range v.outs[:v.count] {
			o := oscillator{amp: out.bound, env: env, endPos: -1}
			stats.NoiseNominal += int64(max(0, t.note.Frames-first))
			stats.NoiseSamples += addBand(t.buf, t.note.Channels, out.channel, period, &o, out.gain, first, t.note.Frames)
		}
	}
	return stats
}

// addBand adds gain × the envelope of o × the periodic noise into channel
// c of the interleaved buf, block by block from frame first to frames,
// skipping blocks in which o is silent, and returns the samples added.
// The envelope is exact at every control point and corner and straight
// between, as the partials' is.
func addBand(buf []float64, channels, c int, period []float64, o *oscillator, gain float64, first, frames int) int64 {
	var added int64
	p := len(period)
	for b0 := first; b0 < frames; b0 += BlockFrames {
		b1 := min(b0+BlockFrames, frames)
		if !o.audible(b0) {
			continue
		}
		added += int64(b1 - b0)
		for pos := b0; pos < b1; {
			end := o.spanEnd(pos, min(b1, pos+ControlFrames))
			seg := o.env.segment(float64(pos))
			g := gain * o.env.levelIn(seg, float64(pos))
			slope := (gain*o.env.levelIn(seg, float64(end)) - g) / float64(end-pos)
			at := pos % p
			for i := pos*channels + c; i < end*channels; i += channels {
				buf[i] += g * period[at]
				g += slope
				if at++; at == p {
					at = 0
				}
			}
			pos = end
		}
	}
	return added
}

// noiseWork counts the samples addNoise adds for n's bands with period
// from frame first, a block start, on, without making any noise: the
// blocks each voice's channel is audible in, as Work counts a partial's.
func noiseWork(n *patch.Note, period, first int) Stats {
	var stats Stats
	var channels []patch.Partial
	for _, v := range noiseVoices(nil, n, period) {
		for _, out := range v.outs[:v.count] {
			channels = append(channels, patch.Partial{Amplitude: out.bound, Envelope: v.band.Envelope})
		}
	}
	w := workOf(channels, n, first)
	stats.NoiseSamples, stats.NoiseNominal = w.PartialSamples, w.Nominal
	return stats
}
