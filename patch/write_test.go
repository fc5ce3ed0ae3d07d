package patch

import (
	"math"
	"strings"
	"testing"
)

// TestDraftReadsBack writes a draft with every kind of group and setting
// the writer knows and parses it with Parse, the language's own reader,
// checking each value where the plan puts it.
func TestDraftReadsBack(t *testing.T) {
	d := Draft{
		Comment:    []string{"measured from glass.wav", "sha256 00ff"},
		Name:       "glass",
		SampleRate: 44100, BitDepth: 24,
		Keys: KeyRange{From: 57, To: 81, Step: 3},
		Hold: 1.25, Tail: 0.5,
		BandLimit: 0.5, BandFade: 0.02,
		Groups: []DraftGroup{
			{Comment: []string{"harmonic series"}, Harmonics: &Series{Count: 4, First: 1, Step: 2},
				Stiffness: 2.5e-4, Detune: 3.25, Phase: 90, Tilt: -1.5, Amplitude: "-6 - 6.0206*log2(n) dB",
				Envelope: DraftEnvelope{Attack: "0.003", Decay: "1.2 / n^0.5", Sustain: "0", Release: "0.25"}},
			{Ratios: []float64{2.756539, 5.403918}, Amplitudes: []string{"-12 dB", "0.125"},
				Envelope: DraftEnvelope{Attack: "0.001", Decay: "0.8", Sustain: "-6 dB", Release: "0.1"}},
			{Ratios: []float64{3.0001}, Amplitude: "-20 dB",
				Envelope: DraftEnvelope{Points: [][2]float64{{0, 0}, {0.05, 1}, {0.4, 0.25}}, Release: "0.3"}},
		},
	}
	src := d.YAML()
	p, err := Parse("glass.yaml", src)
	if err != nil {
		t.Fatalf("%v\n%s", err, src)
	}
	if !strings.HasPrefix(string(src), "# measured from glass.wav\n# sha256 00ff\nname: glass\n") {
		t.Errorf("the file does not open with its comment:\n%s", src)
	}
	plan, err := p.Expand(ExpandOptions{Keys: []int{69}})
	if err != nil {
		t.Fatal(err)
	}
	n := plan.Notes[0]
	f0 := 440.0
	near := func(what string, got, want float64) {
		t.Helper()
		if math.Abs(got-want) > 1e-9*max(1, math.Abs(want)) {
			t.Errorf("%s = %v, want %v", what, got, want)
		}
	}
	if len(n.Partials) != 7 {
		t.Fatalf("%d partials, want 7:\n%s", len(n.Partials), src)
	}
	// Harmonic 3 of the odd series: Fletcher's stiff string, detuned.
	h := n.Partials[1]
	near("harmonic 3's frequency", h.Hz, 3*f0*math.Sqrt(1+2.5e-4*9)*math.Exp2(3.25/1200))
	near("harmonic 3's level", 20*math.Log10(h.Amplitude), -6-6.0206*math.Log2(3)-1.5*math.Log2(3*math.Sqrt(1+2.5e-4*9)))
	near("harmonic 3's decay", h.Envelope.Decay, 1.2/math.Sqrt(3))
	near("harmonic 3's phase", h.Phase, math.Pi/2)
	near("bar mode's frequency", n.Partials[4].Hz, 2.756539*f0)
	near("bar mode's level", n.Partials[4].Amplitude, math.Pow(10, -12.0/20))
	near("second mode's level", n.Partials[5].Amplitude, 0.125)
	near("bar mode's sustain", n.Partials[4].Envelope.Sustain, math.Pow(10, -6.0/20))
	pts := n.Partials[6].Envelope.Points
	if len(pts) != 3 || pts[1] != (EnvelopePoint{0.05, 1}) || n.Partials[6].Envelope.Release != 0.3 {
		t.Errorf("points %v, release %v", pts, n.Partials[6].Envelope.Release)
	}
	if p.Hold != 1.25 || p.Tail != 0.5 || p.BandLimit != 0.5 || p.BandFade != 0.02 || p.SampleRate != 44100 || len(p.Keys) != 9 {
		t.Errorf("top level read back as hold %v tail %v band %v/%v rate %v keys %v", p.Hold, p.Tail, p.BandLimit, p.BandFade, p.SampleRate, p.Keys)
	}
}
