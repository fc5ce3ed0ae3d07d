package synth_test

import (
	"math"
	"testing"

	"sinter/patch"
	"sinter/synth"
)

// TestSilentSpansCostNothing checks that a partial is not computed once its
// level stays below synth.SilenceLevel: a struck partial that decays to a
// sustain of 0 costs its decay, not the length of the file, while the output
// matches a render in which it never decays (up to the level skipped).
func TestSilentSpansCostNothing(t *testing.T) {
	const rate = 48000
	struck := patch.Note{SampleRate: rate, Channels: 1, Frames: 4 * rate, NoteOff: 3 * rate, F0: 440,
		Partials: []patch.Partial{{Hz: 440, Amplitude: 0.5, Envelope: patch.Envelope{Attack: 0.001, Decay: 0.5, Sustain: 0, Release: 0.2}}}}
	buf := make([]float64, synth.Frames(&struck))
	var r synth.Renderer
	stats := r.Render(buf, &struck)
	if stats.Nominal != 4*rate {
		t.Fatalf("nominal %d, want %d", stats.Nominal, 4*rate)
	}
	// The decay lasts 0.501 s; one block of slack either side.
	if limit := int64(0.501*rate) + 2*synth.BlockFrames; stats.PartialSamples > limit {
		t.Errorf("computed %d partial-samples for a partial audible for %d", stats.PartialSamples, limit)
	}
	for i := int(0.51 * rate); i < len(buf); i++ {
		if math.Abs(buf[i]) >= synth.SilenceLevel {
			t.Fatalf("sample %d is %g after the partial fell silent", i, buf[i])
		}
	}
}

// TestWorkMatchesRender: synth.Work, which only evaluates envelopes,
// counts exactly the partial-samples Render computes.
func TestWorkMatchesRender(t *testing.T) {
	const rate = 48000
	env := func(a, d, s, r float64) patch.Envelope {
		return patch.Envelope{Attack: a, Decay: d, Sustain: s, Release: r}
	}
	notes := []patch.Note{
		{SampleRate: rate, Channels: 1, Frames: 4 * rate, NoteOff: 3 * rate},
		{SampleRate: rate, Channels: 2, Frames: rate + 77, NoteOff: rate / 2},
		{SampleRate: 44100, Channels: 1, Frames: 10 * 44100, NoteOff: 44100},
	}
	for i := range notes {
		for h := 1; h <= 40; h++ {
			notes[i].Partials = append(notes[i].Partials, patch.Partial{
				Hz: 55 * float64(h), Amplitude: 1 / float64(h*h*h),
				Envelope: env(0.001*float64(h), 2/float64(h), float64(i%2)*0.3/float64(h), 0.05*float64(i+1)),
			})
		}
	}
	// A partial whose breakpoint envelope dies away and swells again late:
	// its audible blocks are not a prefix.
	swell := patch.Note{SampleRate: rate, Channels: 1, Frames: 3 * rate, NoteOff: 3 * rate}
	swell.Partials = []patch.Partial{{Hz: 330, Amplitude: 0.5, Envelope: patch.Envelope{Stretch: 1, Release: 0.1,
		Points: []patch.EnvelopePoint{{Time: 0, Level: 1}, {Time: 0.2, Level: 0}, {Time: 2, Level: 0}, {Time: 2.5, Level: 1}}}}}
	notes = append(notes, swell)
	// Noise bands: struck (silent after its decay), held, and in stereo
	// at two widths, one panned hard right, and with a late swell.
	band := func(pan, width float64, e patch.Envelope) patch.NoiseBand {
		return patch.NoiseBand{Low: 200, High: 5000, Slope: -3, Amplitude: 0.1, Envelope: e, Pan: pan, Width: width, Seed: 9, Limit: 21600, FadeFrom: 19440}
	}
	notes[0].Noise = []patch.NoiseBand{band(0, 1, env(0.001, 0.3, 0, 0.1)), band(0, 1, env(0.01, 0.2, 0.5, 0.3))}
	notes[1].Noise = []patch.NoiseBand{band(0.3, 1, env(0.001, 0.1, 0, 0.1)), band(1, 0, env(0.01, 0.2, 0.5, 0.3)), band(-0.2, 0.6, env(0.1, 0.1, 0.2, 0.2))}
	swell.Noise = []patch.NoiseBand{band(0, 1, swell.Partials[0].Envelope)}
	notes[len(notes)-1] = swell
	var r synth.Renderer
	for i := range notes {
		n := &notes[i]
		got := synth.Work(n)
		want := r.Render(make([]float64, synth.Frames(n)), n)
		if got != want {
			t.Errorf("note %d: Work %+v, Render %+v", i, got, want)
		}
		if got.PartialSamples >= got.Nominal {
			t.Errorf("note %d: nothing skipped (%+v); the case does not test culling", i, got)
		}
		if len(n.Noise) > 0 && got.NoiseSamples >= got.NoiseNominal {
			t.Errorf("note %d: no noise skipped (%+v); the case does not test culling", i, got)
		}
	}
}

// TestCrestFactor: peak over RMS in dB for signals whose value is known in
// closed form (common practice): a sine over whole cycles, sampled at
// its crests, is √2, 3.01 dB;
// a square wave 0 dB; a pulse of one sample in n is √n; silence reads 0.
// Lengths off a multiple of four reach the loop's tail.
func TestCrestFactor(t *testing.T) {
	sine := func(n, period int) []float64 {
		x := make([]float64, n)
		for i := range x {
			x[i] = 0.5 * math.Cos(2*math.Pi*float64(i)/float64(period)) // a crest on every period
		}
		return x
	}
	square := []float64{0.7, -0.7, 0.7, -0.7, 0.7, -0.7, 0.7}
	pulse := make([]float64, 101)
	pulse[57] = -0.25
	cases := []struct {
		name string
		buf  []float64
		want float64
	}{
		{"sine", sine(4800, 48), 20 * math.Log10(math.Sqrt2)},
		{"sine, odd length", sine(4803, 3), 20 * math.Log10(math.Sqrt2)},
		{"square", square, 0},
		{"pulse", pulse, 20 * math.Log10(math.Sqrt(101))},
		{"silence", make([]float64, 9), 0},
	}
	for _, c := range cases {
		if got := synth.CrestFactor(c.buf); math.Abs(got-c.want) > 1e-9 {
			t.Errorf("%s: %.12f dB, want %.12f", c.name, got, c.want)
		}
	}
}

// TestWorkLoopedMatchesRenderLooped: synth.WorkLooped counts exactly the
// partial-samples RenderLooped computes, for each kind of loop: a
// crossfade (whose continuation after the loop Work alone leaves out, so
// that a drone with a long hold rendered nearly twice what check
// planned), whole cycles, whole cycles retuned, none; mono and stereo.
func TestWorkLoopedMatchesRenderLooped(t *testing.T) {
	cases := []struct{ name, src string }{
		{"crossfade drone", "hold: 3\ntail: 1\nloop: {crossfade: 0.2}\npartials: [{ratios: [1, 2.41, 3.7], envelope: {attack: 0.1, decay: 0.2, sustain: 0.6, release: 0.5}}]"},
		{"crossfade, stereo, decaying partials", "channels: 2\nhold: 2\ntail: 0.5\nloop: {length: 0.6, crossfade: 0.1}\npartials: [{harmonics: 12, amplitude: \"1/n\", pan: {rule: alternate, width: 0.5}, envelope: {attack: 0.01, decay: \"0.2/n\", sustain: \"max(0, 4 - n)/3\", release: 0.3}}, {ratio: 2.001, amplitude: -20 dB}]"},
		{"crossfade, late swell", "hold: 2\ntail: 0.3\nloop: {crossfade: 0.05, start: 1.2, length: 0.5}\npartials: [{ratio: 1.5, envelope: {points: [[0, 1], [0.2, 0], [0.6, 0], [0.9, 1]]}}]"},
		{"whole cycles", "hold: 2\ntail: 0.5\nloop: auto\npartials: [{harmonics: 8, envelope: {attack: 0.01, decay: 0.2, sustain: 0.5, release: 0.2}}]"},
		{"whole cycles, retuned", "hold: 2\ntail: 0.5\nloop: {exact: on}\npartials: [{harmonics: 8}]"},
		{"no loop", "hold: 1\ntail: auto\npartials: [{harmonics: 8, envelope: {attack: 0.001, decay: \"1/n\", sustain: 0, release: 0.2}}]"},
		{"noise, crossfade, stereo", "channels: 2\nhold: 2\ntail: 0.5\nloop: {length: 0.6, crossfade: 0.1}\npartials: [{ratio: 1.7}, {noise: {low: 2, high: 9, width: 0.5}, pan: 0.4, envelope: {attack: 0.01, decay: 0.2, sustain: 0.3, release: 0.2}}, {noise: {low: 1, high: 3}, envelope: {decay: 0.1, sustain: 0, release: 0.1}}]"},
		{"noise, whole cycles", "hold: 2\ntail: 0.5\nloop: auto\npartials: [{harmonics: 4}, {noise: {low: 2, high: 9}}]"},
	}
	var r synth.Renderer
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p, err := patch.Parse("work.yaml", []byte("name: work\nkeys: [A3]\n"+c.src+"\n"))
			if err != nil {
				t.Fatal(err)
			}
			plan, err := p.Expand(patch.ExpandOptions{})
			if err != nil {
				t.Fatal(err)
			}
			n := &plan.Notes[0]
			loop, _ := synth.PlanLoop(n)
			got := synth.WorkLooped(n, loop)
			want := r.RenderLooped(make([]float64, synth.Frames(n)), n, loop)
			if got != want {
				t.Errorf("WorkLooped %+v, RenderLooped %+v (Work alone %+v)", got, want, synth.Work(n))
			}
		})
	}
}
