package chart

import (
	"bytes"
	"image/png"
	"math"
	"testing"
)

// TestSpectrumLevels: a sine on a bin reads its amplitude in dBFS, a
// full-scale sine 0 dBFS (common practice: a windowed bin's magnitude,
// doubled, over the window's sum, is the amplitude of a sine centred on
// it), and the peak stands at the sine's frequency; a second channel
// holding another sine reads its own. Checked with math.Sin and the
// amplitude's decibels, 20·log10(a).
func TestSpectrumLevels(t *testing.T) {
	const rate, n = 48000, spectrumFrames
	cases := []struct {
		bin       int
		amplitude float64
	}{{341, 0.5}, {1200, 1}, {37, 0.01}}
	for _, c := range cases {
		hz := float64(c.bin) * rate / n
		data := make([]float64, 2*(n+5000))
		for i := range len(data) / 2 {
			data[2*i] = c.amplitude * math.Sin(2*math.Pi*hz*float64(i)/rate)
			data[2*i+1] = 0.25 * math.Sin(2*math.Pi*3000*float64(i)/rate)
		}
		lines, start, frames := spectrumLines(Samples{Data: data, Channels: 2, SampleRate: rate, Steady: 5000})
		if start != 5000 || frames != n {
			t.Fatalf("spectrum of %d frames from %d, want %d from 5000", frames, start, n)
		}
		for ch, want := range []struct{ hz, db float64 }{{hz, 20 * math.Log10(c.amplitude)}, {3000, 20 * math.Log10(0.25)}} {
			best := lines[ch][0]
			for _, p := range lines[ch] {
				if p.Y > best.Y {
					best = p
				}
			}
			// 3000 Hz is bin 1024: on a bin too.
			if math.Abs(best.X-want.hz) > 1e-9 || math.Abs(best.Y-want.db) > 0.01 {
				t.Errorf("channel %d: peak %.3f dBFS at %.2f Hz, want %.3f at %.2f", ch, best.Y, best.X, want.db, want.hz)
			}
		}
	}
}

// TestWriteSamplesDraws: a picture of the asked size comes out, for a file
// shorter than the spectrum's stretch too.
func TestWriteSamplesDraws(t *testing.T) {
	data := make([]float64, 3000)
	for i := range data {
		data[i] = 0.5 * math.Sin(float64(i)/10)
	}
	var b bytes.Buffer
	if err := WriteSamples(&b, Samples{Data: data, Channels: 1, SampleRate: 44100, F0: 44100 / (20 * math.Pi), Steady: 100, Title: "x"}, 400, 300); err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(&b)
	if err != nil {
		t.Fatal(err)
	}
	if size := img.Bounds().Size(); size.X != 400 || size.Y != 300 {
		t.Errorf("picture of %v, want 400 × 300", size)
	}
}
