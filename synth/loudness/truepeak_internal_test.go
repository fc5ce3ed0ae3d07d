package loudness

import (
	"math"
	"testing"
)

// TestTruePeakSameAcrossChunkBoundaries moves a short burst, whose crest
// lies between samples, across the boundaries between the stretches
// TruePeak interpolates one at a time. Source: the definition: the
// reconstruction commutes with a shift by whole frames, so the reading
// must not depend on where in the buffer the burst sits.
func TestTruePeakSameAcrossChunkBoundaries(t *testing.T) {
	const burstFrames = 64
	burst := make([]float64, burstFrames)
	for n := range burst {
		hann := (1 - math.Cos(2*math.Pi*(float64(n)+0.5)/burstFrames)) / 2
		burst[n] = 0.9 * hann * math.Sin(2*math.Pi*0.35*float64(n)+0.4)
	}
	for _, rate := range []int{48000, 96000} {
		for _, channels := range []int{1, 2} {
			m := NewMeter(channels, rate)
			want := m.TruePeak(withBurst(channels, 3*burstFrames, burstFrames, burst))
			for start := chunkFrames - burstFrames - channelPad; start <= chunkFrames+channelPad; start++ {
				x := withBurst(channels, 2*chunkFrames, start, burst)
				if got := m.TruePeak(x); math.Abs(got-want) > 1e-12 {
					t.Fatalf("%d Hz %d ch, burst at frame %d: %.15f, alone %.15f", rate, channels, start, got, want)
				}
			}
		}
	}
}

// withBurst returns frames of silence with burst in the last channel from
// frame start.
func withBurst(channels, frames, start int, burst []float64) []float64 {
	x := make([]float64, channels*frames)
	for i, v := range burst {
		x[(start+i)*channels+channels-1] = v
	}
	return x
}
