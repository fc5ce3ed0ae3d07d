package patch_test

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"math"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"sinter/patch"
)

func mustExpand(t *testing.T, src string, opts patch.ExpandOptions) *patch.Plan {
	t.Helper()
	p := mustParse(t, "plan.yaml", src)
	plan, err := p.Expand(opts)
	if err != nil {
		t.Fatalf("Expand:\n%v\nsource:\n%s", err, src)
	}
	return plan
}

// expandErrors expands src, which must parse, and returns the errors,
// failing unless Expand refused it with an ErrorList naming the file.
func expandErrors(t *testing.T, src string, opts patch.ExpandOptions) patch.ErrorList {
	t.Helper()
	const file = "plan.yaml"
	p := mustParse(t, file, src)
	plan, err := p.Expand(opts)
	if err == nil {
		t.Fatalf("Expand succeeded with %d notes; want an error", len(plan.Notes))
	}
	if plan != nil {
		t.Errorf("Expand returned a plan along with the error %v", err)
	}
	list, ok := err.(patch.ErrorList)
	if !ok || len(list) == 0 {
		t.Fatalf("Expand error is %T %v; want a non-empty patch.ErrorList", err, err)
	}
	for _, e := range list {
		if e.File != file {
			t.Errorf("error %v names file %q; want %q", e, e.File, file)
		}
	}
	return list
}

func near(a, b, tol float64) bool {
	return math.Abs(a-b) <= tol*math.Max(1, math.Max(math.Abs(a), math.Abs(b)))
}

func TestExpandNotes(t *testing.T) {
	src := `name: x
keys: [61, 60]
velocities: [100, 40]
hold: 0.5
tail: 0.25
partials:
  - harmonics: 3
`
	plan := mustExpand(t, src, patch.ExpandOptions{})
	sum := sha256.Sum256([]byte(src))
	if plan.Name != "x" || plan.PatchFile != "plan.yaml" || plan.PatchSHA256 != hex.EncodeToString(sum[:]) ||
		plan.SampleRate != 48000 || plan.BitDepth != 24 || plan.Channels != 1 || plan.OutputDir != filepath.Join("out", "x") {
		t.Errorf("plan header = %q %q %q %d %d %d %q", plan.Name, plan.PatchFile, plan.PatchSHA256,
			plan.SampleRate, plan.BitDepth, plan.Channels, plan.OutputDir)
	}
	// 12-TET check values, standards sheet §4: m60 261.625565 Hz; m61 is
	// 440·2^(−8/12) = 277.182631 Hz (computed).
	want := []struct {
		file     string
		key, vel int
		f0       float64
	}{
		{"x_060_C4_v040.wav", 60, 40, 261.625565},
		{"x_060_C4_v100.wav", 60, 100, 261.625565},
		{"x_061_Cs4_v040.wav", 61, 40, 277.182631},
		{"x_061_Cs4_v100.wav", 61, 100, 277.182631},
	}
	if len(plan.Notes) != len(want) {
		t.Fatalf("got %d notes; want %d (2 keys x 2 layers)", len(plan.Notes), len(want))
	}
	for i, w := range want {
		n := plan.Notes[i]
		if n.File != w.file || n.Key != w.key || n.Velocity != w.vel || !near(n.F0, w.f0, 1e-6) {
			t.Errorf("note %d = %s key %d vel %d f0 %.6f; want %s key %d vel %d f0 %.6f",
				i, n.File, n.Key, n.Velocity, n.F0, w.file, w.key, w.vel, w.f0)
		}
		// 0.75 s at 48 kHz is 36000 frames; note-off after 0.5 s at 24000.
		if n.SampleRate != 48000 || n.Channels != 1 || n.Frames != 36000 || n.NoteOff != 24000 {
			t.Errorf("note %d: rate %d, channels %d, frames %d, note-off %d; want 48000, 1, 36000, 24000",
				i, n.SampleRate, n.Channels, n.Frames, n.NoteOff)
		}
		if len(n.Partials) != 3 || n.Dropped != 0 || n.Faded != 0 {
			t.Errorf("note %d: %d partials, %d dropped, %d faded; want 3, 0, 0", i, len(n.Partials), n.Dropped, n.Faded)
		}
	}

	// Expanding is repeatable.
	if again := mustExpand(t, src, patch.ExpandOptions{}); !reflect.DeepEqual(plan, again) {
		t.Errorf("a second Expand gave a different plan")
	}

	// A tail shorter than a frame still makes a file of one frame.
	plan = mustExpand(t, "name: x\nhold: 0\ntail: 0.00001\npartials: [{ratio: 1}]\n", patch.ExpandOptions{})
	if n := plan.Notes[0]; n.Frames != 1 || n.NoteOff != 0 {
		t.Errorf("hold 0, tail 0.00001: frames %d, note-off %d; want 1, 0", n.Frames, n.NoteOff)
	}
	// 44.1 kHz stereo: 1.5 s + 0.25 s = 77175 frames, note-off at 66150.
	plan = mustExpand(t, "name: x\nsample_rate: 44100\nchannels: 2\nhold: 1.5\ntail: 0.25\npartials: [{ratio: 1}]\n", patch.ExpandOptions{})
	if n := plan.Notes[0]; n.SampleRate != 44100 || n.Channels != 2 || n.Frames != 77175 || n.NoteOff != 66150 {
		t.Errorf("44.1 kHz stereo note: rate %d, channels %d, frames %d, note-off %d", n.SampleRate, n.Channels, n.Frames, n.NoteOff)
	}
}

func TestExpandKeyRanges(t *testing.T) {
	// The documented split (Note.KeyLow/KeyHigh, plan.go): the keys between
	// two roots are shared half and half, an odd middle key going to the
	// upper root (it is reached by pitching down); the outermost roots
	// cover only themselves on their outer side.
	tests := []struct {
		keys string
		want [][2]int
	}{
		{"[60, 63, 67]", [][2]int{{60, 61}, {62, 64}, {65, 67}}},
		{"[60]", [][2]int{{60, 60}}},
		{"[60, 61]", [][2]int{{60, 60}, {61, 61}}},
		{"[60, 62]", [][2]int{{60, 60}, {61, 62}}},
		{"[60, 63]", [][2]int{{60, 61}, {62, 63}}},
		{"{from: 36, to: 42, step: 3}", [][2]int{{36, 37}, {38, 40}, {41, 42}}},
		{"[C3, C4, C5]", [][2]int{{48, 53}, {54, 65}, {66, 72}}},
		{"[0, 127]", [][2]int{{0, 63}, {64, 127}}},
	}
	for _, tt := range tests {
		plan := mustExpand(t, "name: x\nkeys: "+tt.keys+"\nvelocities: [30, 90]\npartials: [{ratio: 1}]\n", patch.ExpandOptions{})
		if len(plan.Notes) != 2*len(tt.want) {
			t.Fatalf("keys %s: %d notes; want %d", tt.keys, len(plan.Notes), 2*len(tt.want))
		}
		for i, n := range plan.Notes {
			if w := tt.want[i/2]; n.KeyLow != w[0] || n.KeyHigh != w[1] {
				t.Errorf("keys %s: root %d serves %d..%d; want %d..%d", tt.keys, n.Key, n.KeyLow, n.KeyHigh, w[0], w[1])
			}
		}
		// Every key from the lowest root to the highest is served once.
		next := plan.Notes[0].Key
		for i := 0; i < len(plan.Notes); i += 2 {
			n := plan.Notes[i]
			if n.KeyLow != next || n.KeyLow > n.Key || n.KeyHigh < n.Key {
				t.Errorf("keys %s: root %d serves %d..%d, leaving a gap or overlap before %d", tt.keys, n.Key, n.KeyLow, n.KeyHigh, next)
			}
			next = n.KeyHigh + 1
		}
	}
}

func TestExpandVelocityLayers(t *testing.T) {
	// MIDI 1.0 Detailed Specification: note-on velocity is 1..127 (0 is a
	// note-off). Each layer serves the velocities above the layer below it
	// up to its own; the top layer reaches 127.
	tests := []struct {
		vels string
		want [][2]int
	}{
		{"[40, 80, 120]", [][2]int{{1, 40}, {41, 80}, {81, 127}}},
		{"[100]", [][2]int{{1, 127}}},
		{"[127]", [][2]int{{1, 127}}},
		{"[1, 127]", [][2]int{{1, 1}, {2, 127}}},
		{"[127, 64]", [][2]int{{1, 64}, {65, 127}}},
	}
	for _, tt := range tests {
		plan := mustExpand(t, "name: x\nkeys: [60, 72]\nvelocities: "+tt.vels+"\npartials: [{ratio: 1}]\n", patch.ExpandOptions{})
		if len(plan.Notes) != 2*len(tt.want) {
			t.Fatalf("velocities %s: %d notes; want %d", tt.vels, len(plan.Notes), 2*len(tt.want))
		}
		for i, n := range plan.Notes {
			if w := tt.want[i%len(tt.want)]; n.VelLow != w[0] || n.VelHigh != w[1] || n.Velocity < n.VelLow || n.Velocity > n.VelHigh {
				t.Errorf("velocities %s: layer %d serves %d..%d; want %d..%d", tt.vels, n.Velocity, n.VelLow, n.VelHigh, w[0], w[1])
			}
		}
	}
}

// partialsOf expands src and returns the partials of the note for key and
// velocity.
func partialsOf(t *testing.T, src string, key, vel int) patch.Note {
	t.Helper()
	plan := mustExpand(t, src, patch.ExpandOptions{})
	for _, n := range plan.Notes {
		if n.Key == key && n.Velocity == vel {
			return n
		}
	}
	t.Fatalf("no note for key %d velocity %d", key, vel)
	return patch.Note{}
}

func TestExpandPartialFrequencies(t *testing.T) {
	src := `name: x
keys: [57, 69]
partials:
  - harmonics: 4
  - ratio: 2.756539
`
	// Standards sheet §4: m57 = 220 Hz, m69 = 440 Hz. Harmonic n sits at
	// n·f0; a ratio partial at ratio·f0 (2.756539 is the second mode of a
	// free-free bar, standards sheet §8).
	for _, f0 := range []struct {
		key int
		hz  float64
	}{{57, 220}, {69, 440}} {
		n := partialsOf(t, src, f0.key, 100)
		want := []struct {
			hz, harmonic float64
			group        int
		}{
			{1 * f0.hz, 1, 0}, {2 * f0.hz, 2, 0}, {3 * f0.hz, 3, 0}, {4 * f0.hz, 4, 0},
			{2.756539 * f0.hz, 1, 1},
		}
		if len(n.Partials) != len(want) {
			t.Fatalf("key %d: %d partials; want %d", f0.key, len(n.Partials), len(want))
		}
		for i, w := range want {
			p := n.Partials[i]
			if !near(p.Hz, w.hz, 1e-9) || p.Harmonic != w.harmonic || p.Group != w.group {
				t.Errorf("key %d partial %d: %.6f Hz, n=%g, group %d; want %.6f Hz, n=%g, group %d",
					f0.key, i, p.Hz, p.Harmonic, p.Group, w.hz, w.harmonic, w.group)
			}
		}
	}

	// The tuning reference moves every key: with A4 = 432 Hz, A5 is 864 Hz.
	n := partialsOf(t, "name: x\ntuning: {a4: 432}\nkeys: [A4, A5]\npartials: [{ratio: 1.5}]\n", 81, 100)
	if !near(n.F0, 864, 1e-12) || !near(n.Partials[0].Hz, 1296, 1e-12) {
		t.Errorf("A5 at a4 432: f0 %v, partial %v Hz; want 864 and 1296", n.F0, n.Partials[0].Hz)
	}
}

func TestExpandSeries(t *testing.T) {
	tests := []struct {
		harmonics string
		want      []float64
	}{
		// Fourier series of a square wave: odd harmonics only (standards sheet §7).
		{"{count: 4, first: 1, step: 2}", []float64{1, 3, 5, 7}},
		{"{count: 3, first: 2, step: 2}", []float64{2, 4, 6}},
		{"{count: 5, first: 3}", []float64{3, 4, 5, 6, 7}},
		{"{count: 2, step: 5}", []float64{1, 6}},
		{"3", []float64{1, 2, 3}},
	}
	for _, tt := range tests {
		n := partialsOf(t, "name: x\nkeys: [A4]\npartials:\n  - harmonics: "+tt.harmonics+"\n", 69, 100)
		var got []float64
		for _, p := range n.Partials {
			got = append(got, p.Harmonic)
			if !near(p.Hz, p.Harmonic*440, 1e-12) {
				t.Errorf("harmonics %s: n=%g at %v Hz; want %v", tt.harmonics, p.Harmonic, p.Hz, p.Harmonic*440)
			}
		}
		if fmt.Sprint(got) != fmt.Sprint(tt.want) {
			t.Errorf("harmonics %s: n = %v; want %v", tt.harmonics, got, tt.want)
		}
	}
}

func TestExpandBandLimit(t *testing.T) {
	// Nyquist: partials must stay below half the sample rate (standards
	// sheet §9, band-limiting). The patch keeps partials below
	// band_limit·sample_rate (0.45 · 48000 = 21600 Hz) and tapers the last
	// band_fade of it with a raised cosine, 0.5(1+cos(π(f−fs0)/(limit−fs0))),
	// from fs0 = 21600·(1−0.1) = 19440 Hz (standards sheet §9: proposed
	// default, a design choice).
	const limit, fs0 = 21600.0, 19440.0
	taper := func(f float64) float64 { return 0.5 * (1 + math.Cos(math.Pi*(f-fs0)/(limit-fs0))) }

	// With A4 = 400 Hz, key 69 is exactly 400 Hz, so ratio·400 is exact.
	src := `name: x
tuning: {a4: 400}
keys: [69]
partials:
  - ratio: 48     # 19200 Hz: below the fade, untouched
  - ratio: 50     # 20000 Hz: faded
  - ratio: 53.5   # 21400 Hz: faded, nearly gone
  - ratio: 54     # 21600 Hz: at the limit, dropped
  - ratio: 55     # 22000 Hz: above it, dropped
    amplitude: 0.5
`
	n := partialsOf(t, src, 69, 100)
	want := []struct{ hz, amp float64 }{
		{19200, 1},
		{20000, taper(20000)},
		{21400, taper(21400)},
	}
	if n.Dropped != 2 || n.Faded != 2 || len(n.Partials) != len(want) {
		t.Fatalf("got %d partials, %d dropped, %d faded; want 3, 2, 2", len(n.Partials), n.Dropped, n.Faded)
	}
	for i, w := range want {
		if p := n.Partials[i]; p.Hz != w.hz || !near(p.Amplitude, w.amp, 1e-12) {
			t.Errorf("partial %d: %v Hz amplitude %v; want %v Hz amplitude %v", i, p.Hz, p.Amplitude, w.hz, w.amp)
		}
	}
	if a := taper(21400); a <= 0 || a >= 0.05 {
		t.Fatalf("taper check value %v; want a small positive gain near the limit", a)
	}

	// A series crossing the limit: 60 harmonics of 400 Hz keep n ≤ 53
	// (21200 Hz < 21600), fade n = 49..53 (above 19440 Hz) and drop 54..60.
	n = partialsOf(t, "name: x\ntuning: {a4: 400}\nkeys: [69]\npartials:\n  - harmonics: 60\n    amplitude: 1/n\n", 69, 100)
	if len(n.Partials) != 53 || n.Dropped != 7 || n.Faded != 5 {
		t.Errorf("60 harmonics of 400 Hz: %d kept, %d dropped, %d faded; want 53, 7, 5", len(n.Partials), n.Dropped, n.Faded)
	}
	for _, p := range n.Partials {
		want := 1 / p.Harmonic
		if p.Hz > fs0 {
			want *= taper(p.Hz)
		}
		if !near(p.Amplitude, want, 1e-12) {
			t.Errorf("harmonic %g (%v Hz): amplitude %v; want %v", p.Harmonic, p.Hz, p.Amplitude, want)
		}
	}

	// The limit follows the sample rate and band_limit: at 44.1 kHz and
	// 0.5, 22050 Hz is dropped, and band_fade 0 fades nothing.
	n = partialsOf(t, "name: x\nsample_rate: 44100\nband_limit: 0.5\nband_fade: 0\ntuning: {a4: 450}\nkeys: [69]\npartials:\n  - ratio: 48.9\n  - ratio: 49\n", 69, 100)
	if len(n.Partials) != 1 || n.Dropped != 1 || n.Faded != 0 || n.Partials[0].Amplitude != 1 {
		t.Errorf("44.1 kHz, limit 0.5, no fade: %d kept, %d dropped, %d faded, partials %+v", len(n.Partials), n.Dropped, n.Faded, n.Partials)
	}
}

func TestExpandExpressionVariables(t *testing.T) {
	src := `name: x
keys: [64]
velocities: [64, 127]
envelope:
  release: key/32
partials:
  - {ratio: 1.5, amplitude: vel}
  - {ratio: 1.5, amplitude: key}
  - {ratio: 1.5, amplitude: ratio}
  - {ratio: 1.5, amplitude: hz}
  - {ratio: 1.5, amplitude: f0}
  - {ratio: 1.5, amplitude: n}
  - {harmonics: {count: 3, first: 2}, amplitude: n}
  - {harmonics: {count: 3, first: 2}, amplitude: ratio}
  - {harmonics: {count: 3, first: 2}, amplitude: hz/f0, envelope: {attack: 0.01*n}}
`
	// 12-TET: m64 = 440·2^(−5/12) = 329.627557 Hz (computed, standards sheet §4).
	const f0 = 329.6275569128699
	for _, vel := range []int{64, 127} {
		n := partialsOf(t, src, 64, vel)
		want := []float64{
			float64(vel) / 127, // vel is the velocity over 127: 1 for the top layer
			64,                 // key is the MIDI key
			1.5,                // ratio
			1.5 * f0,           // hz
			f0,                 // f0
			1,                  // n is 1 for a ratio partial
			2, 3, 4,            // n of the series
			2, 3, 4, // ratio of a harmonic is n
			2, 3, 4, // hz/f0
		}
		if len(n.Partials) != len(want) {
			t.Fatalf("velocity %d: %d partials; want %d", vel, len(n.Partials), len(want))
		}
		for i, w := range want {
			if p := n.Partials[i]; !near(p.Amplitude, w, 1e-9) {
				t.Errorf("velocity %d, partial %d (group %d, n=%g): amplitude %v; want %v", vel, i, p.Group, p.Harmonic, p.Amplitude, w)
			}
		}
		if vel == 127 && n.Partials[0].Amplitude != 1 {
			t.Errorf("amplitude vel at velocity 127 = %v; want exactly 1", n.Partials[0].Amplitude)
		}
		for i, p := range n.Partials {
			if p.Envelope.Release != 2 {
				t.Errorf("partial %d: release key/32 = %v; want 2", i, p.Envelope.Release)
			}
		}
		for i, p := range n.Partials[12:] {
			if want := 0.01 * p.Harmonic; !near(p.Envelope.Attack, want, 1e-12) {
				t.Errorf("series partial %d: attack 0.01*n = %v; want %v", i, p.Envelope.Attack, want)
			}
		}
	}
}

func TestExpandSquareWaveSeries(t *testing.T) {
	// Fourier series of a ±1 square wave: (4/π) Σ_{k odd} sin(kx)/k
	// (standards sheet §7). Written as an expression, the even harmonics
	// have amplitude 0 and must not sound.
	n := partialsOf(t, "name: x\nkeys: [A2]\npartials:\n  - harmonics: 9\n    amplitude: 4/pi * (n % 2) / n\n", 45, 100)
	odd := 0
	for _, p := range n.Partials {
		k := int(p.Harmonic)
		want := 0.0
		if k%2 == 1 {
			want = 4 / (math.Pi * float64(k))
			odd++
		}
		if !near(p.Amplitude, want, 1e-12) {
			t.Errorf("harmonic %d: amplitude %v; want %v", k, p.Amplitude, want)
		}
	}
	if odd != 5 {
		t.Errorf("got %d odd harmonics of 9; want 5", odd)
	}
}

func TestExpandPhase(t *testing.T) {
	// Degrees to radians: θ·π/180 (definition of the radian).
	tests := []struct {
		phase string
		want  func(n float64) float64
	}{
		{"90", func(float64) float64 { return math.Pi / 2 }},
		{"-180", func(float64) float64 { return -math.Pi }},
		{"45", func(float64) float64 { return math.Pi / 4 }},
		{"n*90", func(n float64) float64 { return n * math.Pi / 2 }},
		{"0", func(float64) float64 { return 0 }},
	}
	for _, tt := range tests {
		n := partialsOf(t, "name: x\npartials:\n  - harmonics: 4\n    phase: "+tt.phase+"\n", 60, 100)
		for _, p := range n.Partials {
			if w := tt.want(p.Harmonic); !near(p.Phase, w, 1e-12) {
				t.Errorf("phase %s: harmonic %g has phase %v rad; want %v", tt.phase, p.Harmonic, p.Phase, w)
			}
		}
	}
	// Without a phase, a partial starts at 0 rad.
	if n := partialsOf(t, "name: x\npartials: [{ratio: 1}]\n", 60, 100); n.Partials[0].Phase != 0 {
		t.Errorf("default phase = %v; want 0", n.Partials[0].Phase)
	}
}

func TestExpandEnvelopeDefaults(t *testing.T) {
	// The documented default envelope (groups.go): 5 ms attack, no decay,
	// full sustain, 0.1 s release.
	n := partialsOf(t, "name: x\npartials: [{ratio: 1}]\n", 60, 100)
	if want := (patch.Envelope{Attack: 0.005, Decay: 0, Sustain: 1, Release: 0.1}); !reflect.DeepEqual(n.Partials[0].Envelope, want) {
		t.Errorf("default envelope %+v; want %+v", n.Partials[0].Envelope, want)
	}
}

func TestExpandNotFinite(t *testing.T) {
	src := `name: harbor-glass
keys: [60, 72]
velocities: [64, 127]
partials:
  - harmonics: 4
    amplitude: "1/(n-1)"
`
	// 1/(n−1) is +Inf at n = 1, at every key and layer; it is reported
	// once, at the first, and where it was written (the expression starts
	// after the quote, column 17).
	list := expandErrors(t, src, patch.ExpandOptions{})
	if len(list) != 1 {
		t.Fatalf("got %d errors; want 1:\n%v", len(list), list)
	}
	e := list[0]
	if e.Line != 6 || e.Column != 17 || e.Path != "partials[0].amplitude" {
		t.Errorf("error at %d:%d path %q; want 6:17 partials[0].amplitude", e.Line, e.Column, e.Path)
	}
	for _, want := range []string{`"1/(n-1)"`, "+Inf", "not a finite number", "harmonic n=1", "261.63 Hz", "key C4", "velocity 64"} {
		if !strings.Contains(e.Msg, want) {
			t.Errorf("message %q lacks %q", e.Msg, want)
		}
	}

	// NaN: sqrt of a negative number, first at n = 3.
	list = expandErrors(t, "name: x\npartials:\n  - harmonics: 4\n    amplitude: sqrt(2-n)\n", patch.ExpandOptions{})
	if e := list[0]; len(list) != 1 || e.Line != 4 || e.Column != 16 || !strings.Contains(e.Msg, "NaN") || !strings.Contains(e.Msg, "n=3") {
		t.Errorf("sqrt(2-n): got %v; want one error at 4:16 naming NaN and n=3", list)
	}
}

func TestExpandOutOfRange(t *testing.T) {
	tests := []struct {
		name, src    string
		line, column int
		path         string
		msg          []string
	}{
		{
			// Sustain is a level from 0 to 1 (EnvelopeSpec).
			name: "sustain 1.5",
			src:  "name: x\nenvelope: {sustain: 1.5}\npartials:\n  - harmonics: 8\n",
			line: 2, column: 21, path: "envelope.sustain", msg: []string{"1.5 is outside 0..1", "n=1"},
		},
		{
			// +6 dB is a gain of 10^(6/20) ≈ 1.995, above full sustain.
			name: "sustain +6 dB in a group",
			src:  "name: x\npartials:\n  - harmonics: 8\n    envelope: {sustain: 6 dB}\n",
			line: 4, column: 25, path: "partials[0].envelope.sustain", msg: []string{`"6 dB" 1.99526`, "is outside 0..1"},
		},
		{
			name: "negative attack",
			src:  "name: x\nenvelope: {attack: -1}\npartials: [{ratio: 1}]\n",
			line: 2, column: 20, path: "envelope.attack", msg: []string{"-1 is outside 0..600 s"},
		},
		{
			name: "release beyond 600 s",
			src:  "name: x\nenvelope: {release: 700}\npartials: [{ratio: 1}]\n",
			line: 2, column: 21, path: "envelope.release", msg: []string{"700 is outside 0..600 s"},
		},
		{
			name: "decay negative for the low harmonics",
			src:  "name: x\npartials:\n  - harmonics: 4\n    envelope: {decay: n - 3}\n",
			line: 4, column: 23, path: "partials[0].envelope.decay", msg: []string{`"n - 3" -2 is outside 0..600 s`, "harmonic n=1"},
		},
		{
			name: "vibrato deeper than an octave",
			src:  "name: x\npartials:\n  - {ratio: 1, vibrato: {depth: \"3000*vel\"}}\n",
			line: 3, column: 34, path: "partials[0].vibrato.depth", msg: []string{"is outside 0..1200 cents"},
		},
		{
			name: "stiffness negative",
			src:  "name: x\npartials:\n  - {harmonics: 3, stiffness: -0.01}\n",
			line: 3, column: 31, path: "partials[0].stiffness", msg: []string{"-0.01 is outside 0..1"},
		},
		{
			name: "pan past the right",
			src:  "name: x\nchannels: 2\npartials:\n  - {harmonics: 3, pan: \"n/2\"}\n",
			line: 4, column: 26, path: "partials[0].pan", msg: []string{`"n/2" 1.5 is outside -1..1`, "harmonic n=3"},
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			list := expandErrors(t, strings.Replace(tt.src, "name: x\n", "name: x\nkeys: [48, 60]\n", 1), patch.ExpandOptions{})
			if len(list) != 1 {
				t.Fatalf("got %d errors; want 1 (each setting is reported once):\n%v", len(list), list)
			}
			e := list[0]
			if e.Line != tt.line+1 || e.Column != tt.column || e.Path != tt.path {
				t.Errorf("got %v; want at %d:%d path %q", e, tt.line+1, tt.column, tt.path)
			}
			for _, m := range tt.msg {
				if !strings.Contains(e.Msg, m) {
					t.Errorf("message %q lacks %q", e.Msg, m)
				}
			}
		})
	}

	// Two failing settings give two errors.
	list := expandErrors(t, "name: x\nenvelope: {sustain: 2}\npartials:\n  - {harmonics: 3, amplitude: 1/(n-2)}\n", patch.ExpandOptions{})
	if len(list) != 2 {
		t.Errorf("got %d errors; want 2:\n%v", len(list), list)
	}
}

func TestExpandKeysOption(t *testing.T) {
	src := "name: x\nkeys: [C3, C4, C5]\nvelocities: [64, 127]\npartials: [{ratio: 1}]\n"
	plan := mustExpand(t, src, patch.ExpandOptions{Keys: []int{72, 60, 60}})
	var got []string
	for _, n := range plan.Notes {
		got = append(got, fmt.Sprintf("%d/%d", n.Key, n.Velocity))
	}
	if want := "[60/64 60/127 72/64 72/127]"; fmt.Sprint(got) != want {
		t.Errorf("Keys [72 60 60] renders %v; want %s", got, want)
	}
	if plan := mustExpand(t, src, patch.ExpandOptions{}); len(plan.Notes) != 6 {
		t.Errorf("no Keys renders %d notes; want all 6", len(plan.Notes))
	}

	list := expandErrors(t, src, patch.ExpandOptions{Keys: []int{60, 61}})
	if e := list[0]; len(list) != 1 || e.Line != 0 || !strings.Contains(e.Msg, "key C#4 (61) is not one of the patch's keys [C3 C4 C5]") {
		t.Errorf("Keys [60 61]: got %v; want one error naming C#4 and the patch's keys", list)
	}
}

// TestExpandEnvelopePoints: a breakpoint envelope reaches the plan with
// its stretch evaluated per partial; it settles at its last point, whose
// level is the sustain.
func TestExpandEnvelopePoints(t *testing.T) {
	n := partialsOf(t, `name: x
partials:
  - harmonics: 2
    envelope: {points: [[0, 0], [0.05, 1], [0.5, 0.3]], stretch: "1/n", release: 0.4, curve: linear}
`, 60, 100)
	for i, p := range n.Partials {
		e := p.Envelope
		if len(e.Points) != 3 || e.Stretch != 1/float64(i+1) || e.Sustain != 0.3 || e.Release != 0.4 || !e.Linear {
			t.Errorf("partial %d envelope %+v", i, e)
		}
		if got, want := e.Settled(), 0.5/float64(i+1); got != want {
			t.Errorf("partial %d settles at %v s; want %v", i, got, want)
		}
	}
}
