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
// (image/png), of the size asked for, with ink on it, for a plain mono
// note, a looped stereo one and one of noise alone at several sizes;
// sizes that cannot be drawn are refused.
func TestWriteDecodes(t *testing.T) {
	patches := []string{
		"name: chart\nkeys: [A3]\nhold: 0.5\ntail: 0.3\npartials:\n  - {harmonics: 12, amplitude: \"1/n\", envelope: {attack: 0.01, decay: \"0.3/n\", sustain: 0.4, release: 0.2}}\n",
		"name: chart\nkeys: [C5]\nchannels: 2\nhold: 1\ntail: 0.3\nloop: {crossfade: 0.05, length: 0.4}\npartials:\n  - {ratios: [1, 2.76, 5.4], pan: {rule: alternate}, envelope: {attack: 0.05, release: 0.2}}\n",
		"name: chart\nkeys: [C3]\nhold: 0.5\ntail: 0.3\npartials:\n  - {noise: {low: 2, high: 40, slope: -3}, envelope: {attack: 0.01, decay: 0.2, sustain: 0.3, release: 0.2}}\n",
	}
	sizes := [][2]int{{800, 1000}, {1200, 1500}, {300, 400}}
	for i, src := range patches {
		p, err := patch.Parse("chart.yaml", []byte(src))
		if err != nil {
			t.Fatal(err)
		}
		plan, err := p.Expand(patch.ExpandOptions{})
		if err != nil {
			t.Fatal(err)
		}
		for _, size := range sizes {
			var buf bytes.Buffer
			if err := chart.Write(&buf, &plan.Notes[0], chart.Options{Width: size[0], Height: size[1], Gain: 0.5}); err != nil {
				t.Fatal(err)
			}
			img, err := png.Decode(&buf)
			if err != nil {
				t.Fatalf("image/png cannot read the picture: %v", err)
			}
			if b := img.Bounds(); b.Dx() != size[0] || b.Dy() != size[1] {
				t.Errorf("patch %d: picture is %d × %d; want %d × %d", i, b.Dx(), b.Dy(), size[0], size[1])
			}
			dark := 0
			for y := 0; y < size[1]; y += 4 {
				for x := 0; x < size[0]; x += 4 {
					if r, g, b, _ := img.At(x, y).RGBA(); r+g+b < 3*0x8000 {
						dark++
					}
				}
			}
			if dark < size[0]*size[1]/16/200 {
				t.Errorf("patch %d at %v: only %d dark sample points; the picture looks empty", i, size, dark)
			}
		}
		var buf bytes.Buffer
		if err := chart.Write(&buf, &plan.Notes[0], chart.Options{Width: 50, Height: 1000}); err == nil || !strings.Contains(err.Error(), "not drawable") {
			t.Errorf("a 50-pixel-wide picture: %v; want it refused", err)
		}
	}
}
