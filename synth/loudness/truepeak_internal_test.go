package loudness

import (
	"math"
	"testing"

	"sinter/synth/kernel"
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

// TestSkippedChunksKeepTheReading measures decaying notes, whose quiet
// stretches the meter skips, with the skip and with it switched off (an
// infinite gain bound never lets a stretch pass), and requires the same
// bits. Source: the definition of a maximum, which leaving out values no
// larger than it cannot change; what this checks is that the skip leaves
// out nothing larger.
func TestSkippedChunksKeepTheReading(t *testing.T) {
	for _, c := range []struct{ channels, rate int }{{1, 48000}, {2, 44100}, {2, 96000}} {
		frames := 3 * c.rate
		x := make([]float64, c.channels*frames)
		for i := range x {
			n := float64(i / c.channels)
			// A plucked note: partials with crests between samples, the
			// level falling 60 dB a second.
			x[i] = math.Exp(-6.9*n/float64(c.rate)) * (0.6*math.Sin(2*math.Pi*1234.5*n/float64(c.rate)+float64(i%c.channels)) +
				0.3*math.Sin(2*math.Pi*0.45*n+0.7))
		}
		m := NewMeter(c.channels, c.rate)
		got := m.TruePeak(x)
		// The note must let most stretches be skipped, or the test would
		// not be testing the skip.
		skippable := 0
		for first := 0; first < frames; first += chunkFrames {
			lo, hi := max(first-channelPad, 0), min(first+chunkFrames+channelPad, frames)
			if kernel.Peak(x[lo*c.channels:hi*c.channels], 0)*m.gainBound <= got {
				skippable++
			}
		}
		if stretches := (frames + chunkFrames - 1) / chunkFrames; 2*skippable < stretches {
			t.Fatalf("%d ch, %d Hz: only %d of %d stretches could be skipped", c.channels, c.rate, skippable, stretches)
		}
		m.gainBound = math.Inf(1)
		if want := m.TruePeak(x); math.Float64bits(got) != math.Float64bits(want) {
			t.Errorf("%d ch, %d Hz: %.17g with stretches skipped, %.17g with none", c.channels, c.rate, got, want)
		}
	}
}

// TestGainBoundHolds drives the interpolator as hard as it goes. Source:
// the triangle inequality: a point Σ h_i·x_i of samples within ±1 is at
// most Σ|h_i|, reached where every sample has its weight's sign. For a
// midpoint of one doubling h is its taps, twice each; for a point of the
// second doubling it is found here by measuring the point's response to
// each sample, with both doublings written out plainly. The meter must
// read each such signal at least at that point's value (less rounding)
// and never above its bound.
func TestGainBoundHolds(t *testing.T) {
	const length, k = 80, 24 // samples; the interval of the first doubling in the middle
	// first is the first doubling's midpoint of interval i, between
	// x[i+15] and x[i+16]; point returns the second doubling's midpoint
	// after u[2k+side] in u = s[0], m[0], s[1], …, with s[i] = x[i+15].
	first := func(x []float64, i int) float64 {
		sum := 0.0
		for j, tap := range firstTaps {
			sum += tap * (x[i+firstHalfTaps+j] + x[i+firstHalfTaps-1-j])
		}
		return sum
	}
	u := func(x []float64, c int) float64 {
		if c%2 == 0 {
			return x[c/2+firstHalfTaps-1]
		}
		return first(x, c/2)
	}
	point := func(x []float64, side int) float64 {
		c, sum := 2*k+side, 0.0
		for j, tap := range secondTaps {
			sum += tap * (u(x, c+1+j) + u(x, c-j))
		}
		return sum
	}
	worstFor := func(value func([]float64) float64) ([]float64, float64) {
		worst, reach := make([]float64, length), 0.0
		for i := range worst {
			impulse := make([]float64, length)
			impulse[i] = 1
			h := value(impulse)
			worst[i] = math.Copysign(1, h)
			reach += math.Abs(h)
		}
		return worst, reach
	}
	cases := []struct {
		name  string
		rate  int
		value func([]float64) float64
	}{
		{"2×, a first-doubling midpoint", 96000, func(x []float64) float64 { return first(x, k) }},
		{"4×, the midpoint after a sample", 48000, func(x []float64) float64 { return point(x, 0) }},
		{"4×, the midpoint after a midpoint", 48000, func(x []float64) float64 { return point(x, 1) }},
	}
	for _, c := range cases {
		m := NewMeter(1, c.rate)
		worst, reach := worstFor(c.value)
		got := m.TruePeak(worst)
		t.Logf("%s: reaches %.6f, reads %.6f, bound %.6f", c.name, reach, got, m.gainBound)
		if got < reach*(1-1e-12) || got > m.gainBound {
			t.Errorf("%s: reads %.17g; the point reaches %.17g and the bound is %.17g", c.name, got, reach, m.gainBound)
		}
	}
}
