package chart

import (
	"errors"
	"fmt"
	"io"
	"math"
	"math/cmplx"

	"gonum.org/v1/gonum/dsp/fourier"
	"gonum.org/v1/gonum/dsp/window"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// Samples is a file's audio as the file holds it, full scale ±1, for the
// pictures of a set's files.
type Samples struct {
	Data       []float64 // interleaved frames
	Channels   int
	SampleRate int
	F0         float64 // the root's fundamental, Hz
	// Steady is the first frame of the part to look at: the loop's start,
	// or where the sound has settled.
	Steady int
	Title  string
}

// spectrumFrames is the length of the stretch the spectrum is taken
// over: 0.34 s at 48 kHz, a bin of 2.9 Hz.
const spectrumFrames = 1 << 14

// WriteSamples draws the spectrum and one period of a file's samples as a
// PNG of width × height pixels (zero: 900 × 700): the panels sinter plot
// draws from a note's partials, here measured from the samples
// themselves, so a picture shows what the file holds.
func WriteSamples(w io.Writer, s Samples, width, height int) error {
	if width == 0 {
		width = 900
	}
	if height == 0 {
		height = 700
	}
	if width < 200 || height < 200 || width > 10000 || height > 10000 {
		return fmt.Errorf("chart: a picture of %d × %d pixels is not drawable; use 200..10000 on each side", width, height)
	}
	if s.Channels < 1 || len(s.Data) < 2*s.Channels || s.SampleRate < 1 {
		return errors.New("chart: too few samples to draw")
	}
	panels := []*plot.Plot{measuredSpectrum(s), filePeriod(s)}
	img := vgimg.NewWith(vgimg.UseWH(vg.Length(width)/dpi*vg.Inch, vg.Length(height)/dpi*vg.Inch), vgimg.UseDPI(dpi))
	dc := draw.New(img)
	tiles := draw.Tiles{Rows: len(panels), Cols: 1, PadTop: vg.Points(8), PadBottom: vg.Points(8), PadLeft: vg.Points(8), PadRight: vg.Points(12), PadY: vg.Points(14)}
	canvases := plot.Align([][]*plot.Plot{{panels[0]}, {panels[1]}}, tiles, dc)
	for i, p := range panels {
		p.Draw(canvases[i][0])
	}
	_, err := vgimg.PngCanvas{Canvas: img}.WriteTo(w)
	return err
}

// measuredSpectrum draws the level of each channel against frequency (see
// spectrumLines).
func measuredSpectrum(s Samples) *plot.Plot {
	lines, start, n := spectrumLines(s)
	p := plot.New()
	p.Title.Text = fmt.Sprintf("%s: spectrum of %d frames from %.3f s", s.Title, n, float64(start)/float64(s.SampleRate))
	p.X.Label.Text = "frequency (Hz)"
	p.Y.Label.Text = "level (dBFS)"
	p.X.Scale, p.X.Tick.Marker = plot.LogScale{}, FrequencyTicks{}
	loudest := float64(floorDB)
	for c, line := range lines {
		for _, pt := range line {
			loudest = max(loudest, pt.Y)
		}
		l, _ := plotter.NewLine(line)
		l.Color = palette[c]
		p.Add(l)
		if s.Channels == 2 {
			p.Legend.Add([]string{"left", "right"}[c], l)
		}
	}
	p.Legend.Top = true
	p.Add(plotter.NewGrid())
	p.X.Min, p.X.Max = lines[0][0].X, float64(s.SampleRate)/2
	p.Y.Min, p.Y.Max = floorDB, headroom(loudest)
	return p
}

// spectrumLines returns each channel's level in dBFS against frequency
// from 20 Hz (or the first bin above 0) to half the rate, from a
// Blackman-Harris windowed FFT of n frames from start: s.Steady, or
// earlier where the file is too short. A sine of full-scale amplitude on
// a bin reads 0 dBFS: twice the bin's magnitude over the window's sum
// (common practice).
func spectrumLines(s Samples) (lines []plotter.XYs, start, n int) {
	frames := len(s.Data) / s.Channels
	n = spectrumFrames
	for n > frames {
		n /= 2
	}
	start = max(0, min(s.Steady, frames-n))
	win := window.BlackmanHarris(ones(n))
	sum := 0.0
	for _, v := range win {
		sum += v
	}
	fft := fourier.NewFFT(n)
	binHz := float64(s.SampleRate) / float64(n)
	lowest := max(20, binHz)
	buf := make([]float64, n)
	for c := range s.Channels {
		for i := range buf {
			buf[i] = s.Data[(start+i)*s.Channels+c] * win[i]
		}
		coeffs := fft.Coefficients(nil, buf)
		line := make(plotter.XYs, 0, len(coeffs))
		for k, x := range coeffs {
			if hz := float64(k) * binHz; hz >= lowest {
				line = append(line, plotter.XY{X: hz, Y: decibels(2 * cmplx.Abs(x) / sum)})
			}
		}
		lines = append(lines, line)
	}
	return lines, start, n
}

func ones(n int) []float64 {
	v := make([]float64, n)
	for i := range v {
		v[i] = 1
	}
	return v
}

// filePeriod draws one period of the root's fundamental from s.Steady,
// every channel, full scale ±1, with the file's peak in the title.
func filePeriod(s Samples) *plot.Plot {
	frames := len(s.Data) / s.Channels
	period := max(2, int(math.Round(float64(s.SampleRate)/s.F0)))
	if !(s.F0 > 0) {
		period = min(frames, s.SampleRate/100)
	}
	start := max(0, min(s.Steady, frames-period))
	peak := 0.0
	for _, v := range s.Data {
		peak = max(peak, math.Abs(v))
	}
	p := plot.New()
	p.Title.Text = fmt.Sprintf("one period (%.2f Hz) from %.3f s; the file peaks at %.1f dBFS", s.F0, float64(start)/float64(s.SampleRate), 20*math.Log10(peak))
	if peak == 0 {
		p.Title.Text = fmt.Sprintf("one period (%.2f Hz) from %.3f s; the file is silent", s.F0, float64(start)/float64(s.SampleRate))
	}
	p.X.Label.Text = "time (ms)"
	p.Y.Label.Text = "sample (full scale ±1)"
	for c := range s.Channels {
		line := make(plotter.XYs, 0, period)
		for i := start; i < min(frames, start+period); i++ {
			line = append(line, plotter.XY{X: 1000 * float64(i-start) / float64(s.SampleRate), Y: s.Data[i*s.Channels+c]})
		}
		l, _ := plotter.NewLine(line)
		l.Width = vg.Points(1.5)
		l.Color = palette[c]
		p.Add(l)
		if s.Channels == 2 {
			p.Legend.Add([]string{"left", "right"}[c], l)
		}
	}
	p.Legend.Top = true
	p.Add(plotter.NewGrid())
	p.Y.Min, p.Y.Max = -max(1, peak), max(1, peak)
	return p
}
