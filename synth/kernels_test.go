package synth

import (
	"math"
	"testing"

	"sinter/patch"
	"sinter/synth/kernel"
)

// TestEveryKernelSameBits renders notes with every set of kernels this
// processor runs and requires the plain set's bits exactly: each set does
// the same arithmetic in the same order on every lane, so a patch renders
// to the same files on every processor. The notes cover every envelope
// segment and both curves, moving partials, corners inside blocks (which
// take the scalar path), an odd partial count, a last block shorter than
// BlockFrames, a partial next to the stride-8 worst case, stereo, and noise
// bands (mono; stereo at widths 1 and 0.4, one panned hard left), which
// are added after the partials in plain Go.
func TestEveryKernelSameBits(t *testing.T) {
	env := patch.Envelope{Attack: 0.0123, Decay: 0.31, Sustain: 0.4, Release: 0.77}
	cases := []struct {
		name               string
		frames, noteOff    int
		partials, channels int
	}{
		{"pad", 4 * 48000, 3 * 48000, 64, 1},
		{"odd-count-short-tail", 48000 + 77, 30000, 7, 1},
		{"single", 2*48000 + 5, 48000 + 3, 1, 1},
		{"stereo", 48000 + 300, 30000, 23, 2},
	}
	for _, c := range cases {
		n := &patch.Note{SampleRate: 48000, Channels: c.channels, Frames: c.frames, NoteOff: c.noteOff}
		for h := 1; h <= c.partials; h++ {
			hz := 97.3 * float64(h) * math.Sqrt(1+1e-4*float64(h*h))
			if h == 3 {
				hz = 3000 * (1 + 1e-6) // 8ω next to a multiple of π: the strided resonator's worst case
			}
			e := env
			e.Attack *= float64(h%5 + 1)
			e.Decay *= float64(h%3 + 1)
			e.Linear = h%4 == 0
			if h%5 == 2 {
				e.Points = []patch.EnvelopePoint{{Time: 0.01, Level: 1}, {Time: 0.4, Level: 0.2}, {Time: 0.9, Level: 0.7}}
				e.Stretch = 1
			}
			var motion *patch.Motion
			if h%7 == 5 {
				motion = &patch.Motion{Vibrato: patch.Vibrato{Rate: 5.5, Depth: 40, Delay: 0.2, Fade: 0.3}, MaxCents: 40}
			}
			pan := 0.0
			if c.channels == 2 {
				pan = float64(h%5)/2 - 1
			}
			n.Partials = append(n.Partials, patch.Partial{Hz: hz, Amplitude: 1 / float64(h), Phase: 0.37 * float64(h), Envelope: e, Motion: motion, Pan: pan})
		}
		if c.name == "pad" || c.name == "stereo" {
			for i, width := range []float64{1, 0.4, 1} {
				n.Noise = append(n.Noise, patch.NoiseBand{Low: 300 * float64(i+1), High: 4000 * float64(i+1), Slope: -3, Amplitude: 0.2,
					Envelope: env, Pan: float64(i) - 1, Width: width, Seed: uint64(i + 1), Limit: 21600, FadeFrom: 19440})
			}
		}
		want := make([]float64, Frames(n))
		previous := kernel.Use(kernel.Plain)
		var r Renderer
		wantStats := r.Render(want, n)
		for _, isa := range kernel.Supported()[1:] {
			kernel.Use(isa)
			got := make([]float64, Frames(n))
			if stats := r.Render(got, n); stats != wantStats {
				t.Errorf("%s, %s: stats %+v, plain %+v", c.name, isa, stats, wantStats)
			}
			for i := range got {
				if math.Float64bits(got[i]) != math.Float64bits(want[i]) {
					t.Errorf("%s, %s: sample %d is %.17g, plain %.17g", c.name, isa, i, got[i], want[i])
					break
				}
			}
		}
		kernel.Use(previous)
	}
}
