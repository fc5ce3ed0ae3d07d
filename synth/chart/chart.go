// Package chart draws a note of a plan as a PNG: the spectrum of its
// partials after the band limit, the amplitude envelopes of its loudest
// partials, and one period of its waveform, so a designer can see what a
// patch makes before listening. It draws with gonum's plot package.
package chart

import (
	"errors"
	"fmt"
	"image/color"
	"io"
	"math"
	"os"
	"sort"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"

	"sinter/patch"
	"sinter/synth"
)

// Options sets the picture's size in pixels (zero fields take
// 1200 × 1500) and the levelling gain the note's file gets, which puts
// the levels on the file's own scale, full scale being 1 (0 dBFS); a Gain
// of 0 stands for none.
type Options struct {
	Width, Height int
	Gain          float64
}

// WriteFile draws note n into the PNG file path through a temporary
// name, so a failed drawing leaves no half picture.
func WriteFile(path string, n *patch.Note, opts Options) error {
	return writePNG(path, func(w io.Writer) error { return Write(w, n, opts) })
}

// writePNG writes a picture drawn by draw into path through a temporary
// name, which it removes if drawing or writing fails.
func writePNG(path string, draw func(io.Writer) error) error {
	tmp := path + ".partial"
	f, err := os.Create(tmp)
	if err != nil {
		return fmt.Errorf("cannot create %s: %w", tmp, err)
	}
	err = errors.Join(draw(f), f.Close())
	if err == nil {
		err = os.Rename(tmp, path)
	}
	if err != nil {
		os.Remove(tmp)
		return fmt.Errorf("cannot write %s: %w", path, err)
	}
	return nil
}

// envelopeLines is how many of the loudest partials the envelope panel
// draws.
const envelopeLines = 6

// dpi is the resolution the picture is drawn at.
const dpi = 96

// floorDB is the bottom of the spectrum panel.
const floorDB = -120

// Write draws note n as a PNG into w.
func Write(w io.Writer, n *patch.Note, opts Options) error {
	width, height := opts.Width, opts.Height
	if width == 0 {
		width = 1200
	}
	if height == 0 {
		height = 1500
	}
	if width < 200 || height < 300 || width > 10000 || height > 10000 {
		return fmt.Errorf("chart: a picture of %d × %d pixels is not drawable; use 200..10000 wide and 300..10000 high", width, height)
	}
	if len(n.Partials) == 0 && len(n.Noise) == 0 {
		return fmt.Errorf("chart: the note at key %s has no partials or noise bands below the band limit", patch.NoteName(n.Key))
	}
	gain := opts.Gain
	if gain == 0 {
		gain = 1
	}
	loop, looped := synth.PlanLoop(n)
	panels := []*plot.Plot{spectrum(n, gain), envelopes(n, gain, markers(n, loop, looped)), period(n, gain, loop)}
	img := vgimg.NewWith(vgimg.UseWH(vg.Length(width)/dpi*vg.Inch, vg.Length(height)/dpi*vg.Inch), vgimg.UseDPI(dpi))
	dc := draw.New(img)
	tiles := draw.Tiles{Rows: len(panels), Cols: 1, PadTop: vg.Points(8), PadBottom: vg.Points(8), PadLeft: vg.Points(8), PadRight: vg.Points(12), PadY: vg.Points(14)}
	canvases := plot.Align([][]*plot.Plot{{panels[0]}, {panels[1]}, {panels[2]}}, tiles, dc)
	for i, p := range panels {
		p.Draw(canvases[i][0])
	}
	_, err := vgimg.PngCanvas{Canvas: img}.WriteTo(w)
	return err
}

func decibels(a float64) float64 { return max(floorDB, 20*math.Log10(math.Abs(a))) }

// spectrum draws each partial as a stem at its frequency, its level in
// dBFS, and each noise band as a shaded region from its low edge to its
// high one (or the band limit), on a log frequency axis labelled as
// people read frequency.
func spectrum(n *patch.Note, gain float64) *plot.Plot {
	p := plot.New()
	p.Title.Text = fmt.Sprintf("%s (%.2f Hz), velocity %d: %d partials, %d faded and %d dropped by the band limit",
		patch.NoteName(n.Key), n.F0, n.Velocity, len(n.Partials), n.Faded, n.Dropped)
	if len(n.Noise)+n.NoiseDropped > 0 {
		p.Title.Text += fmt.Sprintf("; %d noise bands, shaded", len(n.Noise))
	}
	p.X.Label.Text = "frequency (Hz)"
	p.Y.Label.Text = "level (dBFS)"
	p.X.Scale, p.X.Tick.Marker = plot.LogScale{}, FrequencyTicks{}
	lowest, highest, loudest := math.Inf(1), 0.0, float64(floorDB)
	for i := range n.Noise {
		b := &n.Noise[i]
		outline := bandOutline(b, gain)
		shade, _ := plotter.NewPolygon(outline)
		shade.Color = bandShade
		shade.LineStyle.Color = bandEdge
		p.Add(shade)
		lowest, highest = min(lowest, b.Low), max(highest, min(b.High, b.Limit))
		for _, pt := range outline {
			loudest = max(loudest, pt.Y)
		}
	}
	points := make(plotter.XYs, len(n.Partials))
	for i, part := range n.Partials {
		points[i] = plotter.XY{X: part.Hz, Y: decibels(part.Amplitude * gain)}
		lowest, highest, loudest = min(lowest, part.Hz), max(highest, part.Hz), max(loudest, points[i].Y)
		stem, _ := plotter.NewLine(plotter.XYs{{X: part.Hz, Y: floorDB}, points[i]})
		stem.Color = plotterGrey
		p.Add(stem)
	}
	dots, _ := plotter.NewScatter(points)
	dots.Radius = vg.Points(2)
	p.Add(dots, plotter.NewGrid())
	p.X.Min, p.X.Max = lowest/1.2, highest*1.2
	p.Y.Min, p.Y.Max = floorDB, headroom(loudest)
	return p
}

// bandSteps is how many points the top of a band's outline is drawn
// through.
const bandSteps = 64

// bandOutline is the region a noise band is drawn as: from its low edge
// to its high one or the band limit, from the bottom of the panel up to
// the level of a sine of the band's power (a band at amplitude A has a
// sine's RMS, A/√2) at the band's centre, tilted by its slope in dB per
// octave and shaped as the band limit's fade and the body shape the
// band.
func bandOutline(b *patch.NoiseBand, gain float64) plotter.XYs {
	low, high := b.Low, min(b.High, b.Limit)
	centre := math.Sqrt(b.Low * b.High)
	outline := plotter.XYs{{X: low, Y: floorDB}}
	for i := range bandSteps + 1 {
		f := low * math.Pow(high/low, float64(i)/bandSteps)
		level := decibels(b.Amplitude*gain*b.Gain(f)) + b.Slope*math.Log2(f/centre)
		outline = append(outline, plotter.XY{X: f, Y: max(floorDB, level)})
	}
	return append(outline, plotter.XY{X: high, Y: floorDB})
}

// headroom is the top of a level axis: 6 dB above the highest level,
// rounded up to 6 dB, and no lower than 0 dBFS.
func headroom(db float64) float64 { return max(0, 6*math.Ceil((db+6)/6)) }

// marker is a moment of the note drawn across the envelope panel.
type marker struct {
	seconds float64
	label   string
}

// markers are the note-off and, for a looped note, the loop's first and
// last frame, in seconds.
func markers(n *patch.Note, loop synth.Loop, looped bool) []marker {
	rate := float64(n.SampleRate)
	list := []marker{{float64(n.NoteOff) / rate, "note-off"}}
	if looped {
		list = append(list, marker{float64(loop.Start) / rate, "loop start"}, marker{float64(loop.End+1) / rate, "loop end"})
	}
	return list
}

// shaped is a partial or a noise band as the envelope panel draws it.
type shaped struct {
	label     string
	amplitude float64
	envelope  patch.Envelope
}

// envelopes draws the level of the loudest partials and noise bands over
// the file's length, in dBFS, with the markers as labelled vertical
// lines; a band's level is a sine's of the same power.
func envelopes(n *patch.Note, gain float64, marks []marker) *plot.Plot {
	p := plot.New()
	p.Title.Text = "envelopes of the loudest partials"
	if len(n.Noise) > 0 {
		p.Title.Text = "envelopes of the loudest partials and noise bands"
	}
	p.X.Label.Text = "time (s)"
	p.Y.Label.Text = "level (dBFS)"
	var all []shaped
	for _, part := range n.Partials {
		all = append(all, shaped{fmt.Sprintf("%.1f Hz", part.Hz), part.Amplitude, part.Envelope})
	}
	for _, b := range n.Noise {
		all = append(all, shaped{fmt.Sprintf("noise %.0f–%.0f Hz", b.Low, min(b.High, b.Limit)), b.Amplitude, b.Envelope})
	}
	sort.SliceStable(all, func(a, b int) bool { return math.Abs(all[a].amplitude) > math.Abs(all[b].amplitude) })
	rate := float64(n.SampleRate)
	length, off := float64(n.Frames)/rate, float64(n.NoteOff)/rate
	const steps = 400
	loudest := float64(floorDB)
	for rank, sh := range all[:min(envelopeLines, len(all))] {
		line := make(plotter.XYs, steps+1)
		for s := range line {
			t := length * float64(s) / steps
			line[s] = plotter.XY{X: t, Y: decibels(sh.amplitude * gain * synth.At(sh.envelope, t, off))}
			loudest = max(loudest, line[s].Y)
		}
		l, _ := plotter.NewLine(line)
		l.Color = palette[rank%len(palette)]
		l.Width = vg.Points(1.5)
		p.Add(l)
		p.Legend.Add(sh.label, l)
	}
	p.Legend.Top = true
	p.Legend.Left = true
	p.X.Min, p.X.Max = 0, length
	p.Y.Min, p.Y.Max = floorDB, headroom(loudest)
	labels := plotter.XYLabels{}
	for _, m := range marks {
		line, _ := plotter.NewLine(plotter.XYs{{X: m.seconds, Y: p.Y.Min}, {X: m.seconds, Y: p.Y.Max}})
		line.Color = markerGrey
		line.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
		p.Add(line)
		// Labels stand at the bottom, out of the way of the lines' tops.
		labels.XYs = append(labels.XYs, plotter.XY{X: m.seconds, Y: p.Y.Min + 0.04*(p.Y.Max-p.Y.Min)*float64(1+len(labels.XYs))})
		labels.Labels = append(labels.Labels, " "+m.label)
	}
	if text, err := plotter.NewLabels(labels); err == nil && len(marks) > 0 {
		p.Add(text)
	}
	p.Add(plotter.NewGrid())
	return p
}

// period draws one period of the fundamental of the note as its file
// holds it — rendered with its loop, times its levelling gain, full scale
// ±1 — from the moment every envelope has settled (or as late as the file
// allows), with the file's peak in dBFS in the title.
func period(n *patch.Note, gain float64, loop synth.Loop) *plot.Plot {
	buf := make([]float64, synth.Frames(n))
	var r synth.Renderer
	r.RenderLooped(buf, n, loop)
	synth.Scale(buf, gain)
	peak := synth.Peak(buf)
	rate := float64(n.SampleRate)
	frames := max(2, int(math.Round(rate/n.F0)))
	settled := 0.0
	for _, part := range n.Partials {
		settled = max(settled, part.Envelope.Settled())
	}
	for _, b := range n.Noise {
		settled = max(settled, b.Envelope.Settled())
	}
	start := max(0, min(int(settled*rate), n.NoteOff-frames, n.Frames-frames))
	p := plot.New()
	p.Title.Text = fmt.Sprintf("one period of the waveform from %.3f s; the file peaks at %.1f dBFS", float64(start)/rate, 20*math.Log10(peak))
	if peak == 0 {
		p.Title.Text = fmt.Sprintf("one period of the waveform from %.3f s; the file is silent", float64(start)/rate)
	}
	p.X.Label.Text = "time (ms)"
	p.Y.Label.Text = "sample (full scale ±1)"
	for c := range n.Channels {
		line := make(plotter.XYs, 0, frames)
		for i := start; i < min(n.Frames, start+frames); i++ {
			line = append(line, plotter.XY{X: 1000 * float64(i-start) / rate, Y: buf[i*n.Channels+c]})
		}
		l, _ := plotter.NewLine(line)
		l.Width = vg.Points(1.5)
		l.Color = palette[c]
		p.Add(l)
		if n.Channels == 2 {
			p.Legend.Add([]string{"left", "right"}[c], l)
		}
	}
	p.Legend.Top = true
	p.Add(plotter.NewGrid())
	// The file's own scale: ±1 is full scale, wider only for a float file
	// that goes past it.
	p.Y.Min, p.Y.Max = -max(1, peak), max(1, peak)
	return p
}

// plotterGrey draws the spectrum's stems, bandShade and bandEdge its noise
// bands, markerGrey the envelope panel's markers, palette the envelope
// lines and the waveform's channels.
var (
	plotterGrey = color.Gray{Y: 160}
	markerGrey  = color.Gray{Y: 90}
	bandShade   = color.NRGBA{R: 0x2e, G: 0x8b, B: 0x57, A: 0x50}
	bandEdge    = color.NRGBA{R: 0x2e, G: 0x8b, B: 0x57, A: 0xc0}
	palette     = []color.Color{
		color.RGBA{R: 0x1f, G: 0x5a, B: 0x96, A: 0xff},
		color.RGBA{R: 0xc0, G: 0x50, B: 0x1a, A: 0xff},
		color.RGBA{R: 0x2e, G: 0x8b, B: 0x57, A: 0xff},
		color.RGBA{R: 0x8e, G: 0x3b, B: 0x9e, A: 0xff},
		color.RGBA{R: 0x9a, G: 0x7b, B: 0x10, A: 0xff},
		color.RGBA{R: 0x44, G: 0x44, B: 0x44, A: 0xff},
	}
)
