//go:build ignore

// Command make-dulcimer makes examples/recordings/dulcimer-d4.wav, the
// recording the README's worked example analyses: a string of a hammered
// dulcimer found in a museum storeroom, struck once at D4 a few cents
// sharp and damped after 1.3 s, for the score of a period drama. No
// microphone was involved: the tone is built here, sample by sample, as a
// stiff string (H. Fletcher, 1964: partial n at n·f0·√(1 + B·n²)) whose
// partials decay faster the higher they are, struck a ninth of the way
// along (which thins every ninth partial), with a hammer's thump, a
// short lead-in and the hiss of a quiet room.
//
//	go run examples/recordings/make-dulcimer.go
package main

import (
	"log"
	"math"
	"math/rand/v2"
	"os"

	"sinter/synth/wav"
)

func main() {
	const (
		rate    = 32000
		seconds = 1.8
		lead    = 0.12             // silence before the stroke
		damp    = 1.3              // the damper falls, seconds after the stroke
		f0      = 293.665 * 1.0040 // D4, 7 cents sharp
		b       = 4e-4
	)
	x := make([]float64, int(seconds*rate))
	for n := 1; n <= 18; n++ {
		nn := float64(n)
		hz := nn * f0 * math.Sqrt(1+b*nn*nn)
		amp := 0.35 / nn * math.Abs(math.Sin(math.Pi*nn/9+0.2))
		t60 := 2.4 / math.Pow(nn, 0.7)
		release := 0.12
		phase := 2 * math.Pi * rand.New(rand.NewPCG(uint64(n), 3)).Float64()
		for i := range x {
			t := float64(i)/rate - lead
			if t < 0 {
				continue
			}
			env := math.Min(1, t/0.002) * math.Pow(1e-3, t/t60)
			if t > damp {
				env = math.Pow(1e-3, damp/t60) * math.Pow(1e-3, (t-damp)/release)
			}
			x[i] += amp * env * math.Sin(2*math.Pi*hz*t+phase)
		}
	}
	r := rand.New(rand.NewPCG(11, 13))
	thump := 0.0
	for i := range x {
		t := float64(i)/rate - lead
		if t >= 0 && t < 0.01 {
			// The hammer's felt: noise low-passed by a one-pole filter,
			// gone in 10 ms.
			thump = 0.9*thump + 0.1*r.NormFloat64()
			x[i] += 0.25 * thump * math.Exp(-t/0.003)
		}
		x[i] += 0.0005 * r.NormFloat64() // a quiet room, about −66 dBFS
	}
	f, err := os.Create("examples/recordings/dulcimer-d4.wav")
	if err != nil {
		log.Fatal(err)
	}
	if err := wav.Encode(f, x, wav.Options{SampleRate: rate, BitDepth: 16, Channels: 1, Dither: true, DitherSeed: 1}); err != nil {
		log.Fatal(err)
	}
	if err := f.Close(); err != nil {
		log.Fatal(err)
	}
}
