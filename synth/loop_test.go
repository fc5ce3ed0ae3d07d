package synth_test

import (
	"bytes"
	"math"
	"testing"

	goaudio "github.com/go-audio/wav"
	"gonum.org/v1/gonum/dsp/fourier"
	"gonum.org/v1/gonum/dsp/window"

	"sinter/patch"
	"sinter/synth"
	"sinter/synth/wav"
)

// loopNote builds a held note with the given partial ratios (amplitude 1/i)
// and a loop request like the one patch.Expand makes.
func loopNote(key int, ratios []float64, exact bool) patch.Note {
	const rate = 48000
	n := patch.Note{Key: key, F0: patch.KeyFrequency(key, 440), SampleRate: rate, Channels: 1,
		Frames: 3 * rate, NoteOff: 2 * rate}
	for i, r := range ratios {
		n.Partials = append(n.Partials, patch.Partial{Hz: r * n.F0, Amplitude: 0.5 / float64(i+1), Phase: float64(i),
			Envelope: patch.Envelope{Attack: 0.01, Decay: 0.2, Sustain: 0.6, Release: 0.5}})
	}
	crossfade := rate / 20
	start := int(math.Ceil(0.21*rate)) + crossfade
	n.Loop = patch.LoopRequest{Mode: patch.LoopAuto, Start: start, MaxLength: min(rate, n.NoteOff-start), Crossfade: crossfade, Exact: exact}
	return n
}

// readBack encodes buf as a 32-bit float WAV and decodes it with go-audio/wav,
// an independent reader, returning the samples and the smpl loop.
func readBack(t *testing.T, buf []float64, loop synth.Loop) ([]float64, goaudio.SampleLoop) {
	t.Helper()
	var file bytes.Buffer
	opts := wav.Options{SampleRate: 48000, BitDepth: 32, Channels: 1,
		Sampler: &wav.Sampler{UnityNote: 60, Loops: []wav.Loop{{Start: uint32(loop.Start), End: uint32(loop.End)}}}}
	if err := wav.Encode(&file, buf, opts); err != nil {
		t.Fatal(err)
	}
	dec := goaudio.NewDecoder(bytes.NewReader(file.Bytes()))
	pcm, err := dec.FullPCMBuffer()
	if err != nil {
		t.Fatal(err)
	}
	dec.ReadMetadata()
	if dec.Metadata == nil || dec.Metadata.SamplerInfo == nil || len(dec.Metadata.SamplerInfo.Loops) != 1 {
		t.Fatal("go-audio/wav finds no smpl loop")
	}
	out := make([]float64, len(buf)) // the decoder may count a pad byte as a sample
	for i := range out {
		// go-audio/wav returns float32 samples as raw bit patterns.
		out[i] = float64(math.Float32frombits(uint32(pcm.Data[i])))
	}
	return out, *dec.Metadata.SamplerInfo.Loops[0]
}

// spectrum returns the Blackman-Harris windowed magnitude spectrum of x.
func spectrum(x []float64) []float64 {
	w := window.NewValues(window.BlackmanHarris, len(x))
	seq := make([]float64, len(x))
	w.TransformTo(seq, x)
	coef := fourier.NewFFT(len(x)).Coefficients(nil, seq)
	mag := make([]float64, len(coef))
	for i, c := range coef {
		mag[i] = math.Hypot(real(c), imag(c))
	}
	return mag
}

// TestLoopSeam plays each loop as a sampler would, from the loop's end
// straight into its start, and checks the seam against the loop's inside:
// the step across it is no larger than the largest step inside (the
// criterion for a click-free splice: a seam with no first-difference
// outlier, common practice in sample looping), and the spectrum of a
// window across the seam matches the spectrum of a window inside.
func TestLoopSeam(t *testing.T) {
	cases := []struct {
		name      string
		key       int
		ratios    []float64
		exact     bool
		crossfade bool
		// specTol is the largest difference allowed between the two spectra,
		// in dB, at each partial's peak bin.
		specTol float64
	}{
		{"harmonic C4", 60, []float64{1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12}, false, false, 0.05},
		{"harmonic A0 exact", 21, []float64{1, 2, 3, 5, 8, 13, 21, 34}, true, false, 0.05},
		{"harmonic C7", 96, []float64{1, 2, 3, 4}, false, false, 0.05},
		// Free-free bar mode ratios (Fletcher & Rossing, via the standards sheet §8).
		{"inharmonic bar", 57, []float64{1, 2.756539, 5.403918, 8.932950}, false, true, 0.2},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			n := loopNote(c.key, c.ratios, c.exact)
			loop, ok := synth.PlanLoop(&n)
			if !ok {
				t.Fatal("no loop planned")
			}
			if (loop.Crossfade > 0) != c.crossfade {
				t.Fatalf("crossfade %d, want crossfade=%v", loop.Crossfade, c.crossfade)
			}
			if loop.Start < n.Loop.Start || loop.End >= n.NoteOff {
				t.Fatalf("loop %d..%d is not inside the settled sustain %d..%d", loop.Start, loop.End, n.Loop.Start, n.NoteOff)
			}
			buf := make([]float64, synth.Frames(&n))
			var r synth.Renderer
			r.RenderLooped(buf, &n, loop)
			x, smpl := readBack(t, buf, loop)
			if int(smpl.Start) != loop.Start || int(smpl.End) != loop.End {
				t.Fatalf("smpl loop %d..%d read back, want %d..%d", smpl.Start, smpl.End, loop.Start, loop.End)
			}
			seam, inside := synth.SeamStep(x, 1, loop)
			if seam > inside {
				t.Errorf("seam step %.3g is larger than the largest step inside the loop %.3g", seam, inside)
			}
			// What a sampler plays around the seam: the loop's last frames, then its first.
			const half = 2048
			across := append(append([]float64{}, x[loop.End+1-half:loop.End+1]...), x[loop.Start:loop.Start+half]...)
			mid := loop.Start + loop.Frames()/2
			within := x[mid-half : mid+half]
			sa, sw := spectrum(across), spectrum(within)
			binHz := 48000.0 / (2 * half)
			for _, ratio := range c.ratios {
				bin := int(math.Round(ratio * n.F0 / binHz))
				if bin >= len(sa) {
					continue
				}
				a, w := peakNear(sa, bin), peakNear(sw, bin)
				if d := math.Abs(20 * math.Log10(a/w)); d > c.specTol {
					t.Errorf("partial at ratio %g: %.3f dB across the seam vs inside the loop", ratio, d)
				}
			}
			if math.Abs(loop.Cents) >= 0.1 {
				t.Errorf("loop pitch error %.4f cents; the target is under 0.1 cent", loop.Cents)
			}
		})
	}
}

func peakNear(mag []float64, bin int) float64 {
	peak := 0.0
	for i := max(0, bin-3); i <= min(len(mag)-1, bin+3); i++ {
		peak = max(peak, mag[i])
	}
	return peak
}

// TestExactLoopContinues checks that a retuned harmonic loop holds whole
// cycles: the frame after the loop's end equals its first frame, as it does
// for a periodic signal (the periodicity of a sum of harmonics is common
// practice), and that the pitch error left for the unretuned loop is small
// everywhere on the keyboard.
func TestExactLoopContinues(t *testing.T) {
	for key := 21; key <= 108; key += 7 {
		n := loopNote(key, []float64{1, 2, 3}, true)
		loop, _ := synth.PlanLoop(&n)
		if loop.Cents != 0 || math.Abs(loop.Retune) >= 0.1 {
			t.Errorf("key %d: exact loop with pitch error %g and retune %g cents", key, loop.Cents, loop.Retune)
		}
		buf := make([]float64, synth.Frames(&n))
		var r synth.Renderer
		r.RenderLooped(buf, &n, loop)
		if d := math.Abs(buf[loop.End+1] - buf[loop.Start]); d > 1e-9 {
			t.Errorf("key %d: the frame after the loop differs from its first by %g", key, d)
		}
		plain := loopNote(key, []float64{1, 2, 3}, false)
		if l, _ := synth.PlanLoop(&plain); math.Abs(l.Cents) >= 0.1 || l.Retune != 0 {
			t.Errorf("key %d: loop pitch error %g cents", key, l.Cents)
		}
	}
}

// TestTrimTail checks an automatic tail ends after the last loud frame, at
// zero, and never before notBefore.
func TestTrimTail(t *testing.T) {
	const rate = 48000
	buf := make([]float64, rate)
	for i := range buf {
		buf[i] = math.Exp(-float64(i)/2000) * math.Sin(2*math.Pi*441*float64(i)/rate)
	}
	until := math.Pow(10, -90.0/20)
	last := 0
	for i, v := range buf {
		if math.Abs(v) >= until {
			last = i
		}
	}
	end := synth.TrimTail(buf, 1, rate, until, 100)
	if end <= last || end > last+rate/441+2 {
		t.Errorf("tail ends at %d; the last frame above −90 dBFS is %d", end, last)
	}
	if buf[end-1] != 0 {
		t.Errorf("the last frame is %g, not 0", buf[end-1])
	}
	quiet := make([]float64, 1000)
	if end := synth.TrimTail(quiet, 1, rate, until, 500); end < 500 {
		t.Errorf("a silent tail ends at %d, before note-off at 500", end)
	}
}

// TestLoopWithVibrato: a note whose partials carry a vibrato loops only
// once the vibrato has reached full depth, over close to a whole number of
// vibrato periods, so the pitch does not jump at the seam.
func TestLoopWithVibrato(t *testing.T) {
	const rate = 48000
	n := patch.Note{SampleRate: rate, Channels: 1, Frames: 4 * rate, NoteOff: 3 * rate, F0: 220}
	for h := 1; h <= 6; h++ {
		n.Partials = append(n.Partials, patch.Partial{Hz: 220 * float64(h), Amplitude: 1 / float64(h),
			Envelope: patch.Envelope{Attack: 0.05, Decay: 0.1, Sustain: 0.8, Release: 0.3},
			Motion:   &patch.Motion{Vibrato: patch.Vibrato{Rate: 5.3, Depth: 12, Delay: 0.4, Fade: 0.5}, MaxCents: 12}})
	}
	n.Loop = patch.LoopRequest{Mode: patch.LoopAuto, Start: int(0.9*rate) + 4800, MaxLength: rate, Crossfade: 4800}
	loop, ok := synth.PlanLoop(&n)
	if !ok || loop.Crossfade == 0 {
		t.Fatalf("loop %+v, %v; want a crossfade loop (moving partials repeat no whole cycles)", loop, ok)
	}
	cycles := 5.3 * float64(loop.End-loop.Start+1) / rate
	if math.Abs(cycles-math.Round(cycles)) > 0.02 {
		t.Errorf("the loop holds %.3f vibrato cycles; want a whole number", cycles)
	}
}
