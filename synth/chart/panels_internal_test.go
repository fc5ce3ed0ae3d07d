package chart

import (
	"context"
	"fmt"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"sinter/patch"
	"sinter/synth"
	"sinter/synth/sampleset"
)

func expand(t *testing.T, src string) *patch.Plan {
	t.Helper()
	p, err := patch.Parse("panels.yaml", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	plan, err := p.Expand(patch.ExpandOptions{})
	if err != nil {
		t.Fatal(err)
	}
	return plan
}

// TestPeriodOnFileScale: the waveform panel shows the note as its file
// holds it. A note whose partials sum to far above full scale, levelled
// to −3 dBFS, is drawn within ±1 on an axis of ±1, and the title gives
// the peak the manifest of a real render records for that file.
func TestPeriodOnFileScale(t *testing.T) {
	plan := expand(t, "name: panels\nkeys: [A3, A4]\nhold: 0.5\ntail: 0.2\nloop: {crossfade: 0.05, length: 0.2}\nnormalize: {peak: -3 dBFS}\n"+
		"partials: [{harmonics: 10}, {ratio: 2.01, amplitude: 0.5}]\n")
	plan.OutputDir = filepath.Join(t.TempDir(), "set")
	res, err := sampleset.Build(context.Background(), plan, sampleset.Options{Jobs: 2})
	if err != nil {
		t.Fatal(err)
	}
	for i := range plan.Notes {
		n := &plan.Notes[i]
		gain, err := sampleset.Gain(context.Background(), plan, i, 2)
		if err != nil {
			t.Fatal(err)
		}
		loop, _ := synth.PlanLoop(n)
		p := period(n, gain, loop)
		want := fmt.Sprintf("the file peaks at %.1f dBFS", res.Manifest.Files[i].PeakDBFS)
		if !strings.Contains(p.Title.Text, want) {
			t.Errorf("%s: title %q, want %q", n.File, p.Title.Text, want)
		}
		if p.Y.Min != -1 || p.Y.Max != 1 {
			t.Errorf("%s: vertical axis %g..%g, want full scale -1..1", n.File, p.Y.Min, p.Y.Max)
		}
		if gain > 0.5 {
			t.Errorf("%s: gain %g; the case wants partials summing well above full scale", n.File, gain)
		}
	}
}

// TestEnvelopeMarkers: the envelope panel marks the note-off and, for a
// looped note, the loop's start and end, each at its time in seconds and
// labelled; its level axis is in dBFS.
func TestEnvelopeMarkers(t *testing.T) {
	plan := expand(t, "name: panels\nkeys: [A3]\nsample_rate: 8000\nhold: 1.5\ntail: 0.5\nloop: {crossfade: 0.05, length: 0.5}\n"+
		"partials: [{ratios: [1, 2.3], envelope: {attack: 0.1, decay: 0.2, sustain: 0.5, release: 0.3}}]\n")
	n := &plan.Notes[0]
	loop, looped := synth.PlanLoop(n)
	if !looped || loop.Crossfade == 0 {
		t.Fatalf("the case wants a crossfade loop, got %+v", loop)
	}
	got := markers(n, loop, looped)
	want := []marker{{1.5, "note-off"}, {float64(loop.Start) / 8000, "loop start"}, {float64(loop.End+1) / 8000, "loop end"}}
	if len(got) != len(want) {
		t.Fatalf("markers %v, want %v", got, want)
	}
	for i := range want {
		if got[i].label != want[i].label || math.Abs(got[i].seconds-want[i].seconds) > 1e-12 {
			t.Errorf("marker %d: %v, want %v", i, got[i], want[i])
		}
	}
	if loop.Start < int(0.3*8000) || loop.End >= 12000 {
		t.Errorf("loop %d..%d should lie between the envelopes settling and note-off", loop.Start, loop.End)
	}
	unlooped := *n
	unlooped.Loop = patch.LoopRequest{}
	if m := markers(&unlooped, synth.Loop{}, false); len(m) != 1 || m[0].label != "note-off" {
		t.Errorf("an unlooped note's markers: %v", m)
	}
	p := envelopes(n, 1, got)
	if p.Y.Label.Text != "level (dBFS)" || p.X.Label.Text != "time (s)" || p.Y.Min != floorDB || p.Y.Max != 6 { // the partials reach 0 dBFS: 6 dB of headroom above
		t.Errorf("axes %q %g..%g, %q", p.Y.Label.Text, p.Y.Min, p.Y.Max, p.X.Label.Text)
	}
}

// TestBandOutline: a noise band is drawn from its low edge to its high
// one, or to the band limit, which cuts it off; its top is the level of a
// sine of its power at its centre (20·log10 of its amplitude times the
// levelling gain), tilted by its slope in dB per octave; the spectrum
// panel's axes take it in, also for a note of noise alone.
func TestBandOutline(t *testing.T) {
	plan := expand(t, "name: panels\nkeys: [A3]\npartials:\n  - {noise: {low: 500 Hz, high: 8000 Hz, slope: -3}, amplitude: 0.1}\n  - {noise: {low: 15000 Hz, high: 30000 Hz}, amplitude: 0.01}\n")
	n := &plan.Notes[0]
	if len(n.Partials) != 0 || len(n.Noise) != 2 {
		t.Fatalf("note %+v", n)
	}
	top := func(outline []struct{ X, Y float64 }, hz float64) float64 {
		for _, pt := range outline {
			if math.Abs(pt.X-hz) < 1e-9*hz && pt.Y > floorDB {
				return pt.Y
			}
		}
		return math.NaN()
	}
	var outline []struct{ X, Y float64 }
	for _, pt := range bandOutline(&n.Noise[0], 0.5) {
		outline = append(outline, struct{ X, Y float64 }{pt.X, pt.Y})
	}
	centre := 20 * math.Log10(0.1*0.5) // the centre is 2000 Hz, two octaves above 500 and below 8000
	for _, c := range [][2]float64{{500, centre + 6}, {2000, centre}, {8000, centre - 6}} {
		if got := top(outline, c[0]); math.Abs(got-c[1]) > 1e-9 {
			t.Errorf("top at %g Hz: %.4f dBFS, want %.4f", c[0], got, c[1])
		}
	}
	if first, last := outline[0], outline[len(outline)-1]; first.X != 500 || last.X != 8000 || first.Y != floorDB || last.Y != floorDB {
		t.Errorf("outline runs from %v to %v; want from 500 to 8000 Hz, closed at the floor", first, last)
	}
	clipped := bandOutline(&n.Noise[1], 1)
	if last := clipped[len(clipped)-1]; last.X != 21600 {
		t.Errorf("the clipped band's outline ends at %g Hz, want the band limit, 21600", last.X)
	}
	p := spectrum(n, 0.5)
	if p.X.Min > 500 || p.X.Max < 21600 || !strings.Contains(p.Title.Text, "2 noise bands") {
		t.Errorf("spectrum axis %g..%g Hz, title %q", p.X.Min, p.X.Max, p.Title.Text)
	}
}
