package patch_test

import (
	"math"
	"regexp"
	"slices"
	"testing"

	"sinter/patch"
)

var fuzzPatchSeeds = []string{
	minimalPatch,
	`name: puzzle-pad
sample_rate: 44100
bit_depth: 16
channels: 2
tuning: {a4: 442}
keys: {from: C2, to: C6, step: 12}
velocities: [40, 100]
hold: 0.5
tail: 0.5
normalize: {peak: -3 dBFS}
envelope: &soft {attack: 0.2, release: 1.5}
partials:
  - &body
    harmonics: {count: 12, first: 1, step: 2}
    amplitude: -3*log2(n) dB
    phase: n*90
    envelope: {<<: *soft, decay: 0.3, sustain: -6 dB}
  - <<: *body
    harmonics: 4
  - ratio: 2.756539
    amplitude: "min(1, 440/hz) * vel"
output: {dir: renders}
`,
	"name: harbor-glass\nsampel_rate: 48000\npartials: [{harmonics: 8, ratio: 2}]\n",
	"name: harbor-glass\nhold: .nan\ntail: -.inf\nkeys: [C4, 60, H4]\nvelocities: [0, 200, 64, 64]\npartials: []\n",
	"name: harbor-glass\npartials:\n  - harmonics: 8\n\t  amplitude: 0.5\n",
	"name: harbor-glass\npartials:\n  - harmonics: 4\n    amplitude: \"1/(n\"\n  - ratio: 1\n    amplitude: >-\n      1/(n-1)\n",
	"name: x\nkeys: [&k C4, *k]\npartials:\n  - &g {ratio: 1}\n  - {<<: [*g, *g]}\n  - &s {<<: *s, ratio: 2}\n",
	"name: x\npartials:\n  - {harmonics: 4, amplitude: 1/(n-1), envelope: {sustain: 1.5, attack: -1}}\n",
	"name: bells\nchannels: 2\nbody: [[300, 0], [2500, 9]]\npartials:\n  - {modes: bar, count: 4, detune: 3, unison: {voices: 3, spread: 12}, pan: {rule: ratio, width: 0.7}}\n  - {spectrum: square, count: 9, stiffness: \"1e-4*key\", tilt: -3, phase: schroeder}\n  - {ratios: [1, 2.4], amplitudes: [1, -9 dB], phase: random}\n  - {cluster: {count: 6, from: 2, to: 9}, pan: -0.3}\n",
	"name: breath\nchannels: 2\npartials:\n  - {noise: {low: 1.5, high: 6000 Hz, slope: -3, width: 0.4}, amplitude: -18 dB, pan: 0.2}\n  - {noise: {low: 800 Hertz, high: .5}, tilt: 3}\n",
	"name: x\nvelocities: [40, 90]\nlayer_crossfade: 12\ntuning: {scale: tunings/none.scl, keymap: 4}\npartials: [{ratio: 1}]\n",
	"",
	"- a\n- b\n",
	"{",
}

var fuzzNamePattern = regexp.MustCompile(`^[a-z0-9][a-z0-9._-]*$`)

func FuzzParse(f *testing.F) {
	for _, s := range fuzzPatchSeeds {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		const file = "fuzz.yaml"
		p, err := patch.Parse(file, data)
		if err != nil {
			checkErrorList(t, "Parse", err, file)
			if p != nil {
				t.Fatalf("Parse returned a patch along with an error")
			}
			return
		}
		if p == nil {
			t.Fatalf("Parse returned neither a patch nor an error")
		}
		// What a valid patch promises.
		if !fuzzNamePattern.MatchString(p.Name) {
			t.Fatalf("accepted name %q", p.Name)
		}
		if len(p.Keys) == 0 || p.Keys[0] < 0 || p.Keys[len(p.Keys)-1] > 127 || !strictlyAscending(p.Keys) {
			t.Fatalf("accepted keys %v", p.Keys)
		}
		if len(p.Velocities) == 0 || p.Velocities[0] < 1 || p.Velocities[len(p.Velocities)-1] > 127 || !strictlyAscending(p.Velocities) {
			t.Fatalf("accepted velocities %v", p.Velocities)
		}
		if p.SampleRate < patch.MinSampleRate || p.SampleRate > patch.MaxSampleRate ||
			!slices.Contains([]int{16, 24, 32}, p.BitDepth) || p.Channels < 1 || p.Channels > 2 {
			t.Fatalf("accepted format %d Hz, %d bits, %d channels", p.SampleRate, p.BitDepth, p.Channels)
		}
		if !(p.Hold >= 0 && p.Tail >= 0 && p.Hold+p.Tail <= patch.MaxSeconds) {
			t.Fatalf("accepted hold %v, tail %v", p.Hold, p.Tail)
		}
		if !(p.A4 >= 100 && p.A4 <= 1000 && p.BandLimit > 0 && p.BandLimit <= 0.5 && p.BandFade >= 0 && p.BandFade <= 1) {
			t.Fatalf("accepted a4 %v, band limit %v, band fade %v", p.A4, p.BandLimit, p.BandFade)
		}
		if len(p.Groups) == 0 {
			t.Fatalf("accepted a patch without partials")
		}
		partials := 0
		for _, g := range p.Groups {
			before := partials
			switch g.Kind {
			case patch.KindSeries:
				if g.Count < 1 || g.Count > patch.MaxSeries || g.First < 1 || g.Step < 1 {
					t.Fatalf("accepted series %+v", g)
				}
				partials += g.Count
			case patch.KindRatio:
				if !(g.Ratio > 0) || math.IsInf(g.Ratio, 0) {
					t.Fatalf("accepted ratio %v", g.Ratio)
				}
				partials++
			case patch.KindRatios:
				partials += len(g.Ratios)
			case patch.KindCluster:
				partials += g.Cluster.Count
			default:
				partials += g.Count
			}
			if g.Unison.Voices < 1 || g.Unison.Voices > patch.MaxUnison {
				t.Fatalf("accepted %d unison voices", g.Unison.Voices)
			}
			partials = before + (partials-before)*g.Unison.Voices
		}

		// Expand only evaluates expressions, but keep each input cheap.
		notes := len(p.Keys) * len(p.Velocities) * max(1, p.RoundRobin)
		if notes > 80 || notes*partials > 100_000 {
			return
		}
		plan, err := p.Expand(patch.ExpandOptions{})
		if err != nil {
			checkErrorList(t, "Expand", err, file)
			return
		}
		if len(plan.Notes) != notes {
			t.Fatalf("Expand made %d notes; want %d", len(plan.Notes), notes)
		}
		limit := p.BandLimit * float64(p.SampleRate)
		for _, n := range plan.Notes {
			if n.KeyLow > n.Key || n.KeyHigh < n.Key || n.VelLow > n.Velocity || n.VelHigh < n.Velocity {
				t.Fatalf("note %s serves keys %d..%d, velocities %d..%d", n.File, n.KeyLow, n.KeyHigh, n.VelLow, n.VelHigh)
			}
			for _, part := range n.Partials {
				e := part.Envelope
				if !(part.Hz > 0 && part.Hz < limit) || !finite(part.Amplitude) || !finite(part.Phase) ||
					!(e.Attack >= 0 && e.Decay >= 0 && e.Release >= 0 && e.Sustain >= 0 && e.Sustain <= 1) {
					t.Fatalf("note %s has partial %+v (limit %v Hz)", n.File, part, limit)
				}
			}
		}
	})
}

func FuzzParseNote(f *testing.F) {
	for _, s := range []string{"C4", "c-1", "G9", "G#9", "F#3", "Fs3", "Bb2", "C##4", "Cb-1", "B#3", "60", "-1", "128", "", "H4", "C4x", " A0 ", "+60", "C-0", "\xff4"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		m, err := patch.ParseNote(s)
		if err != nil {
			if err.Error() == "" {
				t.Fatalf("ParseNote(%q) failed with an empty message", s)
			}
			return
		}
		// MIDI 1.0 Detailed Specification: note numbers are 0..127.
		if m < 0 || m > 127 {
			t.Fatalf("ParseNote(%q) = %d, outside 0..127", s, m)
		}
		for _, name := range []string{patch.NoteName(m), patch.FileNoteName(m)} {
			if back, err := patch.ParseNote(name); err != nil || back != m {
				t.Fatalf("ParseNote(%q) = %d, but its name %q parses as %d, %v", s, m, name, back, err)
			}
		}
	})
}

func checkErrorList(t *testing.T, what string, err error, file string) {
	t.Helper()
	list, ok := err.(patch.ErrorList)
	if !ok || len(list) == 0 {
		t.Fatalf("%s error is %T %v; want a non-empty patch.ErrorList", what, err, err)
	}
	for _, e := range list {
		if e == nil || e.File != file || e.Line < 0 || e.Column < 0 || e.Msg == "" {
			t.Fatalf("%s error entry %#v; want File %q, Line and Column ≥ 0 and a message", what, e, file)
		}
	}
	if err.Error() == "" {
		t.Fatalf("%s error has an empty message", what)
	}
}

func strictlyAscending(s []int) bool {
	for i := 1; i < len(s); i++ {
		if s[i] <= s[i-1] {
			return false
		}
	}
	return true
}

func finite(x float64) bool {
	return !math.IsNaN(x) && !math.IsInf(x, 0)
}
