package chart

import (
	"fmt"
	"image"
	"image/color"
	"io"
	"math"

	"gonum.org/v1/plot"
	gonumpalette "gonum.org/v1/plot/palette"
	"gonum.org/v1/plot/palette/moreland"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// Spectrogram is one panel of a spectrogram picture: a short-time
// spectrum, levels in dB of full scale, and the tracks of partials to lay
// over it.
type Spectrogram struct {
	Title  string
	Times  []float64   // frame centres, seconds
	BinHz  float64     // bin spacing
	DB     [][]float64 // DB[frame][bin]
	Tracks []Track
}

// Track is a partial's path: its frequency over the stretches of time it
// sounds.
type Track struct {
	Hz    float64
	Spans [][2]float64 // seconds it sounds, from and to
}

// SpectrogramOptions sets the picture's size in pixels (zero fields
// take 1600 × 700), the band drawn in Hz, and the levels the colours
// span: the top in dB of full scale and the range below it.
type SpectrogramOptions struct {
	Width, Height  int
	LowHz, HighHz  float64
	TopDB, RangeDB float64
}

// WriteSpectrogramFile draws panels side by side into the PNG file path,
// through a temporary name, so a failed drawing leaves no half picture.
func WriteSpectrogramFile(path string, panels []Spectrogram, opts SpectrogramOptions) error {
	return writePNG(path, func(w io.Writer) error { return WriteSpectrograms(w, panels, opts) })
}

// WriteSpectrograms draws panels side by side as a PNG into w: each a
// spectrogram on a logarithmic frequency axis, labelled as people read
// frequency, in the colours of gonum's extended black-body map from
// opts.TopDB − opts.RangeDB (black) to opts.TopDB (white), with the
// tracks drawn over it as thin lines.
func WriteSpectrograms(w io.Writer, panels []Spectrogram, opts SpectrogramOptions) error {
	width, height := opts.Width, opts.Height
	if width == 0 {
		width = 1600
	}
	if height == 0 {
		height = 700
	}
	if width < 300 || height < 200 || width > 10000 || height > 10000 {
		return fmt.Errorf("chart: a picture of %d × %d pixels is not drawable; use 300..10000 wide and 200..10000 high", width, height)
	}
	if !(opts.LowHz > 0) || !(opts.HighHz > opts.LowHz) || len(panels) == 0 {
		return fmt.Errorf("chart: nothing to draw between %g and %g Hz", opts.LowHz, opts.HighHz)
	}
	if opts.RangeDB <= 0 {
		opts.RangeDB = 100
	}
	colours := moreland.ExtendedBlackBody()
	colours.SetMin(opts.TopDB - opts.RangeDB)
	colours.SetMax(opts.TopDB)
	plots := make([]*plot.Plot, len(panels))
	for i, s := range panels {
		p := plot.New()
		p.Title.Text = s.Title
		p.X.Label.Text = "time (s)"
		p.Y.Label.Text = "frequency (Hz)"
		p.Y.Scale, p.Y.Tick.Marker = plot.LogScale{}, FrequencyTicks{}
		end := 0.0
		if len(s.Times) > 0 {
			end = s.Times[len(s.Times)-1]
		}
		p.Add(&logImage{img: s.image(colours, opts.LowHz, opts.HighHz), x0: 0, x1: max(end, 1e-3), y0: opts.LowHz, y1: opts.HighHz})
		for _, tr := range s.Tracks {
			for _, span := range tr.Spans {
				l, err := plotter.NewLine(plotter.XYs{{X: span[0], Y: tr.Hz}, {X: span[1], Y: tr.Hz}})
				if err != nil {
					continue
				}
				l.Color = trackColour
				l.Width = vg.Points(0.6)
				p.Add(l)
			}
		}
		p.X.Min, p.X.Max = 0, max(end, 1e-3)
		p.Y.Min, p.Y.Max = opts.LowHz, opts.HighHz
		plots[i] = p
	}
	img := vgimg.NewWith(vgimg.UseWH(vg.Length(width)/dpi*vg.Inch, vg.Length(height)/dpi*vg.Inch), vgimg.UseDPI(dpi))
	dc := draw.New(img)
	tiles := draw.Tiles{Rows: 1, Cols: len(plots), PadTop: vg.Points(8), PadBottom: vg.Points(8), PadLeft: vg.Points(8), PadRight: vg.Points(12), PadX: vg.Points(14)}
	canvases := plot.Align([][]*plot.Plot{plots}, tiles, dc)
	for i, p := range plots {
		p.Draw(canvases[0][i])
	}
	_, err := vgimg.PngCanvas{Canvas: img}.WriteTo(w)
	return err
}

// trackColour draws tracks: a cyan that stands out on black and on the
// map's reds and yellows.
var trackColour = color.RGBA{R: 0x30, G: 0xd0, B: 0xff, A: 0xff}

// spectrogramRows is how many rows of the log-frequency grid the image
// has; the picture scales it to the panel.
const spectrogramRows = 600

// image resamples the spectrogram onto a grid even in log frequency, a
// column per frame, taking in each row the loudest bin it spans (so a
// partial stays visible however many bins a row covers).
func (s *Spectrogram) image(colours gonumpalette.ColorMap, lo, hi float64) image.Image {
	cols := max(1, len(s.DB))
	img := image.NewRGBA(image.Rect(0, 0, cols, spectrogramRows))
	span := math.Log(hi / lo)
	for c, frame := range s.DB {
		for r := range spectrogramRows {
			// Row r (from the top) covers frequencies f0..f1.
			f1 := lo * math.Exp(span*float64(spectrogramRows-r)/spectrogramRows)
			f0 := lo * math.Exp(span*float64(spectrogramRows-r-1)/spectrogramRows)
			k0, k1 := int(math.Round(f0/s.BinHz)), int(math.Round(f1/s.BinHz))
			level := math.Inf(-1)
			for k := max(0, k0); k <= k1 && k < len(frame); k++ {
				level = max(level, frame[k])
			}
			v := min(colours.Max(), max(colours.Min(), level))
			col, err := colours.At(v)
			if err != nil {
				col = color.Black
			}
			img.Set(c, r, col)
		}
	}
	return img
}

// logImage draws an image already laid out on the plot's axes (a grid
// even in log frequency on a log axis) into the rectangle of its data
// range, as it is: gonum's own image plotter would warp it again.
type logImage struct {
	img            image.Image
	x0, x1, y0, y1 float64
}

// Plot draws the image into its rectangle (plot.Plotter).
func (l *logImage) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	c.DrawImage(vg.Rectangle{Min: vg.Point{X: trX(l.x0), Y: trY(l.y0)}, Max: vg.Point{X: trX(l.x1), Y: trY(l.y1)}}, l.img)
}

// DataRange is the rectangle the image covers (plot.DataRanger).
func (l *logImage) DataRange() (xmin, xmax, ymin, ymax float64) { return l.x0, l.x1, l.y0, l.y1 }
