package analysis_test

import (
	"math"
	"math/rand/v2"
	"testing"

	"sinter/synth/analysis"
)

// benchRecording is ten seconds at 48 kHz of a plucked tone of 64
// partials, built with math.Sin: a stiff string at 110 Hz (B = 1e-4),
// levels falling as 1/n, each a 4 ms straight attack into an exponential
// decay with T60 = 6/√n s, over white noise 70 dB below the signal.
func benchRecording() []float64 {
	const rate = 48000
	x := make([]float64, 10*rate)
	for n := 1; n <= 64; n++ {
		nn := float64(n)
		omega := 2 * math.Pi * 110 * nn * math.Sqrt(1+1e-4*nn*nn) / rate
		a, tau, attack := 0.4/nn, 6/math.Sqrt(nn)/math.Log(1000), 0.004
		for i := range x {
			t := float64(i) / rate
			env := math.Exp(-(t - attack) / tau)
			if t < attack {
				env = t / attack
			}
			x[i] += a * env * math.Sin(omega*float64(i))
		}
	}
	r := rand.New(rand.NewPCG(5, 6))
	for i := range x {
		x[i] += 1e-4 * r.NormFloat64()
	}
	return x
}

// BenchmarkAnalyze10s is the target: a ten-second, 48 kHz mono
// recording analysed in under a second on one core (the analysis runs on
// one goroutine).
func BenchmarkAnalyze10s(b *testing.B) {
	x := benchRecording()
	for b.Loop() {
		if _, err := analysis.Analyze(x, 48000, analysis.Options{}); err != nil {
			b.Fatal(err)
		}
	}
}
