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
