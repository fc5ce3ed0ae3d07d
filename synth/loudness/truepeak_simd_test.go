//go:build goexperiment.simd && amd64

package loudness

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestTruePeakVectorMatchesPlain measures the same buffers with the vector
// twin and with the plain code: they add the same products in another
// order, so they may differ by rounding alone (1e-14 of full scale allows
// a few dozen units in the last place of values near 1).
func TestTruePeakVectorMatchesPlain(t *testing.T) {
	if !useVectors {
		t.Skip("this processor has no AVX-512; only the plain code runs")
	}
	rng := rand.New(rand.NewPCG(3, 4))
	for _, c := range []struct {
		channels, rate, frames int
	}{
		{1, 48000, 1}, {1, 48000, 50}, {1, 48000, 4096}, {1, 48000, 4097}, {2, 44100, 10000},
		{1, 48000, 48000 + 13}, {2, 48000, 3*4096 + 7}, {1, 88200, 9000},
	} {
		m := NewMeter(c.channels, c.rate)
		x := make([]float64, c.channels*c.frames)
		for i := range x {
			// Noise plus a sine whose crests fall between samples.
			x[i] = 0.3*(rng.Float64()*2-1) + 0.6*math.Sin(0.9*math.Pi*float64(i/c.channels)+0.3)
		}
		vector := m.TruePeak(x)
		useVectors = false
		plain := m.TruePeak(x)
		useVectors = true
		if math.Abs(vector-plain) > 1e-14 {
			t.Errorf("%d ch, %d Hz, %d frames: vector %.17g, plain %.17g", c.channels, c.rate, c.frames, vector, plain)
		}
	}
}
