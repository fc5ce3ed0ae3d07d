package analysis

import (
	"fmt"
	"math"

	"sinter/patch"
	"sinter/synth"
)

// Comparison is how far a patch's render lies from the recording it was
// measured from.
type Comparison struct {
	// SpectralDB is the RMS difference in dB between the two magnitude
	// spectrograms, over the frames and bins of the band from LowHz to
	// HighHz where the recording stands within 60 dB of its loudest bin
	// and 10 dB over its noise (which the patch does not hold).
	SpectralDB    float64
	LowHz, HighHz float64
	// EnergyDB is the recording's energy over the energy of the
	// difference between the two, sample by sample: high where the
	// waveforms agree, near 0 dB or below where the phases do not.
	EnergyDB float64
}

// Resynthesis renders the patch the draft writes at the result's key, as
// sinter render would before levelling: the YAML is read back by the
// language's own parser, so what is compared is what a designer gets.
func (res *Result) Resynthesis(d patch.Draft) ([]float64, *patch.Note, error) {
	p, err := patch.Parse(d.Name+".yaml", d.YAML())
	if err != nil {
		return nil, nil, fmt.Errorf("the patch written does not read back: %w", err)
	}
	plan, err := p.Expand(patch.ExpandOptions{Keys: []int{res.Key}})
	if err != nil {
		return nil, nil, fmt.Errorf("the patch written does not expand: %w", err)
	}
	n := &plan.Notes[0]
	buf := make([]float64, synth.Frames(n))
	var r synth.Renderer
	r.Render(buf, n)
	return buf, n, nil
}

// Compare measures how far render, a mono render starting at the note's
// onset, lies from the recording x.
func (res *Result) Compare(x, render []float64) Comparison {
	onset := int(math.Round(res.Onset * float64(res.SampleRate)))
	rec := x[min(onset, len(x)):]
	frames := min(len(rec), len(render))
	rec, ren := rec[:frames], render[:frames]
	var c Comparison
	var e, diff float64
	for i := range rec {
		e += rec[i] * rec[i]
		d := rec[i] - ren[i]
		diff += d * d
	}
	c.EnergyDB = 10 * math.Log10(e/max(diff, e*1e-30))
	c.LowHz, c.HighHz = math.Inf(1), 0
	for _, p := range res.Partials {
		c.LowHz, c.HighHz = min(c.LowHz, p.Hz/1.5), max(c.HighHz, p.Hz*1.25)
	}
	c.HighHz = min(c.HighHz, float64(res.SampleRate)/2)
	a, b := Spectrogram(rec, res.SampleRate, res.Window), Spectrogram(ren, res.SampleRate, res.Window)
	loudest := math.Inf(-1)
	for _, f := range a.DB {
		for _, v := range f {
			loudest = max(loudest, v)
		}
	}
	lo, hi := a.bin(c.LowHz), a.bin(c.HighHz)
	// White noise of variance σ² reads about 2σ·√Σw²/Σw in a bin, as
	// the bins are scaled here.
	w := newFrameWindow(res.Window)
	var w2 float64
	for _, v := range w.w {
		w2 += v * v
	}
	noiseDB := res.NoiseDB/2 + 20*math.Log10(2*math.Sqrt(w2)/w.sum)
	floor := max(loudest-60, noiseDB+10)
	var ss float64
	count := 0
	for m := range a.DB {
		for k := lo; k <= hi && k < len(a.DB[m]); k++ {
			if a.DB[m][k] < floor {
				continue
			}
			d := max(b.DB[m][k], loudest-100) - a.DB[m][k]
			ss += d * d
			count++
		}
	}
	if count > 0 {
		c.SpectralDB = math.Sqrt(ss / float64(count))
	}
	return c
}

// SpectrogramData is the magnitude of a signal's short-time spectrum.
type SpectrogramData struct {
	Times []float64   // frame centres, seconds
	BinHz float64     // bin spacing
	DB    [][]float64 // DB[frame][bin], level of a sinusoid there in dB of full scale
}

func (s *SpectrogramData) bin(hz float64) int { return int(math.Round(hz / s.BinHz)) }

// Spectrogram is the short-time spectrum of x with the analysis's
// first-pass window of n samples, a quarter window apart, each bin
// scaled to the amplitude of a sinusoid at its centre.
func Spectrogram(x []float64, rate, n int) SpectrogramData {
	st := newSTFT(x, n, 1)
	s := SpectrogramData{BinHz: float64(rate) / float64(n)}
	for m := range st.frames() {
		spec := st.transform(m)
		row := make([]float64, len(spec))
		for k, c := range spec {
			row[k] = 20 * math.Log10(2*math.Hypot(real(c), imag(c))/st.win.sum+1e-12)
		}
		s.DB = append(s.DB, row)
		s.Times = append(s.Times, st.centre(m)/float64(rate))
	}
	return s
}
