//go:build goexperiment.simd && amd64

package synth

import (
	"math"
	"testing"

	"sinter/patch"
)

// vectorTolerance is how far the vector kernel may stray from the plain
// one, as a fraction of the note's Σ|amplitude|. Both sit within 1e-12 of
// math.Sin (TestOscillatorAccuracy runs in both builds); they differ by
// rounding alone: fused multiply-adds, the stride-8 recurrence and the
// order in which partials are summed.
const vectorTolerance = 1e-13

// TestVectorMatchesPlain renders notes with the vector kernel and with the
// plain kernel in the same build and compares every sample. The notes
// cover every envelope segment and both curves, a few moving partials,
// corners inside blocks (which the vector
// path leaves to the scalar one), an odd partial count, a last block
// shorter than BlockFrames and a partial next to the stride-8 worst case.
func TestVectorMatchesPlain(t *testing.T) {
	if !useVectors {
		t.Skip("this processor has no AVX-512; only the plain kernel runs")
	}
	env := patch.Envelope{Attack: 0.0123, Decay: 0.31, Sustain: 0.4, Release: 0.77}
	cases := []struct {
		name     string
		frames   int
		noteOff  int
		partials int
	}{
		{"pad", 4 * 48000, 3 * 48000, 64},
		{"odd-count-short-tail", 48000 + 77, 30000, 7},
		{"single", 2*48000 + 5, 48000 + 3, 1},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			n := &patch.Note{SampleRate: 48000, Channels: 1, Frames: c.frames, NoteOff: c.noteOff}
			sum := 0.0
			for h := 1; h <= c.partials; h++ {
				hz := 97.3 * float64(h) * math.Sqrt(1+1e-4*float64(h*h))
				if h == 3 {
					hz = 3000 * (1 + 1e-6)
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
				if h%7 == 5 { // moving partials take the scalar path beside the vector ones
					motion = &patch.Motion{Vibrato: patch.Vibrato{Rate: 5.5, Depth: 40, Delay: 0.2, Fade: 0.3}, MaxCents: 40}
				}
				n.Partials = append(n.Partials, patch.Partial{Hz: hz, Amplitude: 1 / float64(h), Phase: 0.37 * float64(h), Envelope: e, Motion: motion})
				sum += 1 / float64(h)
			}
			vector, plain := make([]float64, Frames(n)), make([]float64, Frames(n))
			var r Renderer
			vs := r.Render(vector, n)
			useVectors = false
			ps := r.Render(plain, n)
			useVectors = true
			if vs != ps {
				t.Errorf("stats differ: vector %+v, plain %+v", vs, ps)
			}
			worst, at := 0.0, 0
			for i := range vector {
				if d := math.Abs(vector[i] - plain[i]); d > worst {
					worst, at = d, i
				}
			}
			t.Logf("largest difference %.3g at sample %d (tolerance %.3g)", worst, at, vectorTolerance*sum)
			if worst > vectorTolerance*sum {
				t.Errorf("sample %d: vector %.17g, plain %.17g, apart by %.3g > %.3g", at, vector[at], plain[at], worst, vectorTolerance*sum)
			}
		})
	}
}
