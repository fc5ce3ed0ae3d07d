package patch_test

import (
	"math"
	"strings"
	"testing"

	"sinter/patch"
)

// TestNoiseBadInput: one problem a case in a noise group, with where the
// first error must point and what it says; the last cases are rules
// across keys that only Expand can judge, at a key where they fail.
func TestNoiseBadInput(t *testing.T) {
	cases := []struct {
		name, group  string
		line, column int
		path, msg    string
		expand       bool
	}{
		{"no high", "noise: {low: 1.5}", 3, 12, "partials[0].noise", "a noise band needs low and high", false},
		{"edges the wrong way round", "noise: {low: 6, high: 1.5}", 3, 12, "partials[0].noise", "the band runs from 6 down to 1.5; give low below high", false},
		{"equal edges in Hz", "noise: {low: 800 Hz, high: 800 Hz}", 3, 12, "partials[0].noise", "the band runs from 800 Hz down to 800 Hz", false},
		{"another unit", "noise: {low: 800 Hertz, high: 6}", 3, 18, "partials[0].noise.low", `expected a ratio to the fundamental such as 1.5, or a frequency such as "800 Hz", found the text "800 Hertz"`, false},
		{"a frequency below 1 Hz", "noise: {low: 0.5 Hz, high: 6}", 3, 18, "partials[0].noise.low", "0.5 Hz is out of range: expected 1..200000 Hz", false},
		{"a ratio of 0", "noise: {low: 0, high: 6}", 3, 18, "partials[0].noise.low", "0 is out of range: expected 1e-06..1e+06", false},
		{"a list for an edge", "noise: {low: [1, 2], high: 6}", 3, 18, "partials[0].noise.low", "found a list", false},
		{"slope too steep", "noise: {low: 1, high: 6, slope: -80}", 3, 37, "partials[0].noise.slope", "-80 dB/octave is out of range: expected -60..60 dB/octave", false},
		{"width above 1", "noise: {low: 1, high: 6, width: 1.5}", 3, 37, "partials[0].noise.width", "1.5 is out of range: expected 0..1", false},
		{"misspelt key", "noise: {low: 1, high: 6, slop: -3}", 3, 30, "partials[0].noise.slop", `unknown key "slop" (did you mean "slope"?)`, false},
		{"not a mapping", "noise: 3", 3, 12, "partials[0].noise", "expected a mapping of keys (low, high, slope, width)", false},
		{"noise and a ratio", "{noise: {low: 1, high: 6}, ratio: 1}", 3, 5, "partials[0]", "a group needs exactly one of harmonics, ratio, ratios, modes, spectrum, cluster, noise; found noise and ratio", false},
		{"tilt", "{noise: {low: 1, high: 6}, tilt: 3}", 3, 38, "partials[0].tilt", "tilt does not apply to a noise group", false},
		{"vibrato", "{noise: {low: 1, high: 6}, vibrato: {rate: 5}}", 3, 41, "partials[0].vibrato", "vibrato does not apply to a noise group", false},
		{"phase", "{noise: {low: 1, high: 6}, phase: random}", 3, 39, "partials[0].phase", "phase does not apply to a noise group", false},
		{"unison", "{noise: {low: 1, high: 6}, unison: {voices: 2}}", 3, 40, "partials[0].unison", "unison does not apply to a noise group", false},
		// 400 Hz lies above 1.5 × C2's 65.41 Hz, so at C2 the band runs backwards.
		{"edges in two units cross at a key", "noise: {low: 400 Hz, high: 1.5}", 3, 12, "partials[0].noise",
			"at key C2 (65.41 Hz) the band runs from 400 Hz (400.00 Hz) down to 1.5 (98.11 Hz); give low below high at every key", true},
		{"an amplitude that is not finite", "{noise: {low: 1, high: 2}, amplitude: \"1/(vel-vel)\"}", 3, 44, "partials[0].amplitude", "is +Inf, not a finite number, for harmonic n=1", true},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			src := "name: x\npartials:\n  - " + c.group + "\nkeys: [C2, C4]\n"
			var list patch.ErrorList
			if c.expand {
				list = expandErrors(t, src, patch.ExpandOptions{})
			} else {
				list = parseErrors(t, "plan.yaml", src)
			}
			e := list[0]
			if len(list) != 1 || e.Line != c.line || e.Column != c.column || e.Path != c.path || !strings.Contains(e.Msg, c.msg) {
				t.Errorf("got\n%v\nwant one error at %d:%d, path %q, containing %q", list, c.line, c.column, c.path, c.msg)
			}
		})
	}
}

// TestExpandNoise: a noise group resolves, key by key, into a band in Hz
// (edges as ratios follow the key, edges in Hz stay put) with its slope,
// level, envelope, pan and width, and the band limit's numbers for its
// fade; its expressions see the band's centre; each note, group and round
// robin draws its own seed; a band starting at or above the band limit is
// dropped and counted.
func TestExpandNoise(t *testing.T) {
	plan := mustExpand(t, `name: x
sample_rate: 48000
channels: 2
keys: [A3, A7]
velocities: [64, 127]
round_robin: 2
body: [[100, 0], [10000, -6]]
partials:
  - noise: {low: 1.5, high: 6000 Hz, slope: -3, width: 0.5}
    amplitude: "vel * hz / 1000"
    pan: 0.25
    envelope: {attack: 0.05, decay: 0.2, sustain: 0.3, release: 0.4}
  - noise: {low: 30, high: 40}
`, patch.ExpandOptions{})
	limit, fadeFrom := 0.45*48000, 0.45*48000*0.9
	seeds := map[uint64]bool{}
	for _, n := range plan.Notes {
		a3 := n.Key == 57
		if len(n.Noise) != map[bool]int{true: 2, false: 1}[a3] || n.NoiseDropped != map[bool]int{true: 0, false: 1}[a3] {
			t.Fatalf("key %d: %d bands, %d dropped", n.Key, len(n.Noise), n.NoiseDropped)
		}
		b := n.Noise[0]
		if low, high := 1.5*n.F0, 6000.0; !near(b.Low, low, 1e-12) || b.High != high {
			t.Errorf("key %d: band %g..%g Hz, want %g..%g", n.Key, b.Low, b.High, low, high)
		}
		centre := math.Sqrt(b.Low * b.High)
		if want := float64(n.Velocity) / 127 * centre / 1000; !near(b.Amplitude, want, 1e-12) {
			t.Errorf("key %d: amplitude %g, want vel·hz/1000 at the band's centre = %g", n.Key, b.Amplitude, want)
		}
		if b.Slope != -3 || b.Width != 0.5 || b.Pan != 0.25 || b.Envelope.Sustain != 0.3 || b.Envelope.Release != 0.4 || b.Group != 0 {
			t.Errorf("key %d: band %+v", n.Key, b)
		}
		if b.Limit != limit || !near(b.FadeFrom, fadeFrom, 1e-12) || len(b.Body) != 2 {
			t.Errorf("key %d: limit %g, fade from %g, body %v", n.Key, b.Limit, b.FadeFrom, b.Body)
		}
		for _, band := range n.Noise {
			if seeds[band.Seed] {
				t.Errorf("key %d velocity %d variation %d group %d: seed %x drawn before", n.Key, n.Velocity, n.Variation, band.Group, band.Seed)
			}
			seeds[band.Seed] = true
		}
	}
}

// TestNoiseBandGain: Gain is the body's gain times the raised-cosine fade
// below the band limit, as the partials get them (README, "Band limit"):
// 1 below the fade, ½ halfway through it, 0 at and above the limit.
func TestNoiseBandGain(t *testing.T) {
	b := patch.NoiseBand{Limit: 20000, FadeFrom: 18000}
	for _, c := range [][2]float64{{100, 1}, {18000, 1}, {19000, 0.5}, {20000, 0}, {30000, 0}} {
		if got := b.Gain(c[0]); math.Abs(got-c[1]) > 1e-12 {
			t.Errorf("Gain(%g) = %g, want %g", c[0], got, c[1])
		}
	}
	b.Body = []patch.BodyPoint{{Hz: 100, DB: 6}, {Hz: 1000, DB: -6}}
	// Halfway in log frequency between the points: 0 dB.
	if got := b.Gain(math.Sqrt(100 * 1000)); math.Abs(got-1) > 1e-12 {
		t.Errorf("Gain between the body's points = %g, want 1", got)
	}
	if got, want := b.MaxGain(), math.Pow(10, 6.0/20); math.Abs(got-want) > 1e-12 {
		t.Errorf("MaxGain = %g, want the body's loudest point %g", got, want)
	}
	for _, c := range []struct {
		high           float64
		faded, clipped bool
	}{{17000, false, false}, {19000, true, false}, {25000, true, true}} {
		b.High = c.high
		if b.Faded() != c.faded || b.Clipped() != c.clipped {
			t.Errorf("a band up to %g Hz: faded %v, clipped %v; want %v, %v", c.high, b.Faded(), b.Clipped(), c.faded, c.clipped)
		}
	}
}
