package chart_test

import (
	"bytes"
	"image/png"
	"strings"
	"testing"

	"sinter/patch"
	"sinter/synth/chart"
)

// TestWriteDecodes: the picture is a PNG that Go's own decoder reads
// (image/png), of the size asked for, with ink on it; sizes that cannot
// be drawn are refused.
func TestWriteDecodes(t *testing.T) {
	p, err := patch.Parse("chart.yaml", []byte("name: chart\nkeys: [A3]\nhold: 0.5\ntail: 0.3\npartials:\n  - {harmonics: 12, amplitude: \"1/n\", envelope: {attack: 0.01, decay: \"0.3/n\", sustain: 0.4, release: 0.2}}\n"))
	if err != nil {
		t.Fatal(err)
	}
	plan, err := p.Expand(patch.ExpandOptions{})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := chart.Write(&buf, &plan.Notes[0], chart.Options{Width: 800, Height: 1000}); err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(&buf)
	if err != nil {
		t.Fatalf("image/png cannot read the picture: %v", err)
	}
	if b := img.Bounds(); b.Dx() != 800 || b.Dy() != 1000 {
		t.Errorf("picture is %d × %d; want 800 × 1000", b.Dx(), b.Dy())
	}
	dark := 0
	for y := 0; y < 1000; y += 4 {
		for x := 0; x < 800; x += 4 {
			if r, g, b, _ := img.At(x, y).RGBA(); r+g+b < 3*0x8000 {
				dark++
			}
		}
	}
	if dark < 200 {
		t.Errorf("only %d dark sample points; the picture looks empty", dark)
	}
	if err := chart.Write(&buf, &plan.Notes[0], chart.Options{Width: 50, Height: 1000}); err == nil || !strings.Contains(err.Error(), "not drawable") {
		t.Errorf("a 50-pixel-wide picture: %v; want it refused", err)
	}
}
