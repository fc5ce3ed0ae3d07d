package chart_test

import (
	"bytes"
	"image"
	"image/png"
	"math"
	"testing"

	"sinter/synth/chart"
)

// TestSpectrogramsDecode: two panels side by side make a PNG that Go's
// own decoder reads (image/png), of the size asked for, where a partial
// at 3.16 kHz stands out bright against the black of silence three
// quarters up the log axis from 100 Hz to 10 kHz; pictures that cannot be
// drawn are refused.
func TestSpectrogramsDecode(t *testing.T) {
	const binHz = 10
	panel := chart.Spectrogram{Title: "a partial at 3.16 kHz", BinHz: binHz, Tracks: []chart.Track{{Hz: 3162, Spans: [][2]float64{{0, 1}}}}}
	for m := range 50 {
		row := make([]float64, 2000)
		for k := range row {
			row[k] = -150
			if k == 3162/binHz {
				row[k] = -6
			}
		}
		panel.Times = append(panel.Times, float64(m)/49)
		panel.DB = append(panel.DB, row)
	}
	opts := chart.SpectrogramOptions{Width: 900, Height: 400, LowHz: 100, HighHz: 10000, TopDB: 0, RangeDB: 100}
	var buf bytes.Buffer
	if err := chart.WriteSpectrograms(&buf, []chart.Spectrogram{panel, panel}, opts); err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(&buf)
	if err != nil {
		t.Fatalf("image/png cannot read the picture: %v", err)
	}
	if b := img.Bounds(); b.Dx() != 900 || b.Dy() != 400 {
		t.Fatalf("picture of %v, want 900 × 400", b)
	}
	// Down the left panel's middle column, the brightest pixel with the
	// black of silence 20 rows above and below (inside the panel, away
	// from the white page around it) is about a quarter of the way down
	// from the top of the 400 rows, margins included.
	bright, at := 0.0, 0
	col := img.Bounds().Dx() / 4
	for y := 20; y < img.Bounds().Dy()-20; y++ {
		if l := luminance(img, col, y); l > bright && luminance(img, col, y-20) < 0.1 && luminance(img, col, y+20) < 0.1 {
			bright, at = l, y
		}
	}
	if bright < 0.5 || math.Abs(float64(at)-110) > 40 {
		t.Errorf("the brightest pixel of column %d is %.2f at row %d; want a bright partial near row 110", col, bright, at)
	}
	for _, bad := range []chart.SpectrogramOptions{{Width: 100, Height: 400, LowHz: 100, HighHz: 1000}, {LowHz: 1000, HighHz: 100}} {
		if err := chart.WriteSpectrograms(&buf, []chart.Spectrogram{panel}, bad); err == nil {
			t.Errorf("%+v drew a picture", bad)
		}
	}
}

// luminance is the pixel's brightness, 0 to 1.
func luminance(img image.Image, x, y int) float64 {
	r, g, b, _ := img.At(x, y).RGBA()
	return (0.2126*float64(r) + 0.7152*float64(g) + 0.0722*float64(b)) / 65535
}
