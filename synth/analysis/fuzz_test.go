package analysis_test

import (
	"encoding/binary"
	"errors"
	"math"
	"testing"

	"sinter/synth/analysis"
)

// FuzzAnalyze: any recording, read as 16-bit samples at 8 kHz (two
// seconds at most), is either
// refused with an error, or measured into a patch that reads back, renders
// and holds finite numbers; never a panic.
func FuzzAnalyze(f *testing.F) {
	const rate = 8000
	seed := func(gen func(i int) float64, n int) []byte {
		b := make([]byte, 0, 2*n)
		for i := range n {
			b = binary.LittleEndian.AppendUint16(b, uint16(int16(32767*max(-1, min(1, gen(i))))))
		}
		return b
	}
	f.Add(seed(func(int) float64 { return 0 }, rate))
	f.Add(seed(func(i int) float64 { return 0.5 * math.Sin(2*math.Pi*440*float64(i)/rate) }, rate))
	f.Add(seed(func(i int) float64 {
		t := float64(i) / rate
		return math.Exp(-3*t) * (0.4*math.Sin(2*math.Pi*220*t) + 0.2*math.Sin(2*math.Pi*606.4*t))
	}, rate))
	f.Add(seed(func(i int) float64 { return math.Sin(float64(i*i) * 0.37) }, rate/2))
	f.Add(seed(func(i int) float64 { return float64(i%3) - 1 }, rate))
	f.Fuzz(func(t *testing.T, data []byte) {
		// Two seconds at most: longer recordings take longer, not other
		// paths.
		x := make([]float64, min(len(data)/2, 2*rate))
		for i := range x {
			x[i] = float64(int16(binary.LittleEndian.Uint16(data[2*i:]))) / 32768
		}
		res, err := analysis.Analyze(x, rate, analysis.Options{})
		if err != nil {
			var in *analysis.InputError
			if !errors.As(err, &in) && !errors.Is(err, analysis.ErrNoPartial) {
				t.Fatalf("an error of no known kind: %v", err)
			}
			return
		}
		for _, p := range res.Partials {
			if math.IsNaN(p.Hz) || math.IsInf(p.ErrCents, 0) || math.IsNaN(p.Level) || math.IsNaN(p.Envelope.Decay) {
				t.Fatalf("a partial of numbers that are not: %+v", p)
			}
		}
		d := res.Draft("fuzz", analysis.Recording{Name: "fuzz.wav", Channel: "mono"})
		if _, _, err := res.Resynthesis(d); err != nil {
			t.Fatalf("%v\n%s", err, d.YAML())
		}
	})
}
