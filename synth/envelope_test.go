package synth_test

import (
	"math"
	"testing"

	"sinter/patch"
	"sinter/synth"
)

// TestAt checks synth.At at the corners of the envelope and on its curves.
// The corners follow the ADSR convention (common practice): a linear rise
// from 0 to 1 over the attack, a fall to the sustain level over the decay,
// the sustain level until note-off, and a fall from the level reached at
// note-off to 0 over the release. The curve values are a self-consistency
// check of the formula documented in envelope.go,
// (e^(−k·u) − e^(−k))/(1 − e^(−k)) with k = ln 1000, not an outside
// reference: at u = ½ e^(−k/2) = 1000^(−½) = 10^(−1.5), at u = ⅓ it is 10^(−1),
// at u = ⅔ it is 10^(−2), and e^(−k) = 10^(−3).
func TestAt(t *testing.T) {
	curve := func(p float64) float64 { // the documented curve at u where e^(−k·u) = 10^p
		return (math.Pow(10, p) - 1e-3) / (1 - 1e-3)
	}
	e := patch.Envelope{Attack: 0.1, Decay: 0.2, Sustain: 0.25, Release: 0.4}
	const off = 1.0
	s := e.Sustain
	early := patch.Envelope{Attack: 0.1, Decay: 0.2, Sustain: 0.25, Release: 0.4}
	const earlyOff = 0.05 // released half way up the attack
	straight := e
	straight.Linear = true
	// A breakpoint envelope that rises, falls and rises again.
	points := patch.Envelope{Points: []patch.EnvelopePoint{{Time: 0.006, Level: 0.2}, {Time: 0.01, Level: 1}, {Time: 0.1, Level: 0.2}, {Time: 0.3, Level: 0.6}},
		Stretch: 1, Release: 0.2, Linear: true}
	curvedPoints := points
	curvedPoints.Linear = false
	stretched := points
	stretched.Stretch = 2
	cases := []struct {
		name    string
		env     patch.Envelope
		t, off  float64
		want    float64
		formula string
	}{
		{"start", e, 0, off, 0, "attack starts at 0"},
		{"attack-quarter", e, 0.025, off, 0.25, "linear attack"},
		{"attack-half", e, 0.05, off, 0.5, "linear attack"},
		{"attack-end", e, 0.1, off, 1, "attack reaches 1"},
		{"decay-third", e, 0.1 + 0.2/3, off, s + (1-s)*curve(-1), "s + (1−s)·(10^−1 − 10^−3)/(1 − 10^−3)"},
		{"decay-mid", e, 0.2, off, s + (1-s)*curve(-1.5), "s + (1−s)·(10^−1.5 − 10^−3)/(1 − 10^−3)"},
		{"decay-two-thirds", e, 0.1 + 0.4/3, off, s + (1-s)*curve(-2), "s + (1−s)·(10^−2 − 10^−3)/(1 − 10^−3)"},
		{"decay-end", e, 0.3, off, s, "decay reaches sustain"},
		{"sustain", e, 0.7, off, s, "sustain holds"},
		{"note-off", e, off, off, s, "release starts from sustain"},
		{"release-third", e, off + 0.4/3, off, s * curve(-1), "s·(10^−1 − 10^−3)/(1 − 10^−3)"},
		{"release-mid", e, off + 0.2, off, s * curve(-1.5), "s·(10^−1.5 − 10^−3)/(1 − 10^−3)"},
		{"release-end", e, off + 0.4, off, 0, "release reaches 0"},
		{"after", e, off + 5, off, 0, "silent after the release"},
		{"zero-attack", patch.Envelope{Attack: 0, Decay: 0.2, Sustain: 0.5, Release: 0.1}, 0, off, 1, "no attack: full level at once"},
		{"zero-decay", patch.Envelope{Attack: 0.1, Decay: 0, Sustain: 0.5, Release: 0.1}, 0.1, off, 0.5, "no decay: sustain from the end of the attack"},
		{"zero-release-before", patch.Envelope{Attack: 0.1, Decay: 0.1, Sustain: 0.5, Release: 0}, off - 1e-9, off, 0.5, "held until note-off"},
		{"zero-release", patch.Envelope{Attack: 0.1, Decay: 0.1, Sustain: 0.5, Release: 0}, off, off, 0, "no release: silent at note-off"},
		{"early-off", early, earlyOff, earlyOff, 0.5, "released during the attack: the level reached, 0.05/0.1"},
		{"early-off-release-mid", early, earlyOff + 0.2, earlyOff, 0.5 * curve(-1.5), "0.5·(10^−1.5 − 10^−3)/(1 − 10^−3)"},
		{"early-off-release-end", early, earlyOff + 0.4, earlyOff, 0, "release reaches 0"},
		{"decay-off", e, 0.2, 0.2, s + (1-s)*curve(-1.5), "released mid-decay: the level reached"},
		{"decay-off-release-mid", e, 0.4, 0.2, (s + (1-s)*curve(-1.5)) * curve(-1.5), "release of the level reached mid-decay"},
		{"linear-decay-mid", straight, 0.2, off, s + (1-s)*0.5, "curve: linear, half way down the decay"},
		{"points-before-first", points, 0.005, off, 0.2, "the first point's level before it"},
		{"points-fall-mid", points, 0.055, off, 0.6, "straight from 1 at 0.01 s to 0.2 at 0.1 s"},
		{"points-rise-again", points, 0.2, off, 0.4, "straight from 0.2 at 0.1 s up to 0.6 at 0.3 s"},
		{"points-hold", points, 0.7, off, 0.6, "the last point holds until note-off"},
		{"points-release", points, off + 0.1, off, 0.3, "straight release from 0.6 over 0.2 s"},
		{"points-curved-mid", curvedPoints, 0.055, off, 0.2 + 0.8*curve(-1.5), "curved from 1 to 0.2: 0.2 + 0.8·(10^−1.5 − 10^−3)/(1 − 10^−3)"},
		{"points-stretched", stretched, 0.11, off, 0.6, "times doubled: half way from 1 at 0.02 s to 0.2 at 0.2 s"},
		{"linear-release-quarter", straight, off + 0.1, off, s * 0.75, "curve: linear, a quarter into the release"},
	}
	for _, c := range cases {
		if got := synth.At(c.env, c.t, c.off); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("%s: At(%+v, t=%g, noteOff=%g) = %.15g, want %.15g (%s)", c.name, c.env, c.t, c.off, got, c.want, c.formula)
		}
	}
}

// TestAtShape checks properties of At over a fine grid: levels stay in
// [0, 1], rise during the attack, never rise after it, and the curve is
// straight in dB as envelope.go documents: without the offset that lands it
// on 0, the release would fall by 60 dB (k = ln 1000) over its length, so
// equal steps in time give equal ratios of (level + c) for c = offLevel·e^(−k)/(1 − e^(−k)).
func TestAtShape(t *testing.T) {
	e := patch.Envelope{Attack: 0.05, Decay: 0.3, Sustain: 0.6, Release: 0.5}
	const off = 1.0
	prev := -1.0
	for i := 0; i <= 20000; i++ {
		tt := float64(i) * 1e-4 // 0 … 2 s
		v := synth.At(e, tt, off)
		if v < 0 || v > 1 {
			t.Fatalf("At(t=%g) = %g, outside [0, 1]", tt, v)
		}
		switch {
		case tt < e.Attack && i > 0 && v <= prev:
			t.Fatalf("attack does not rise at t=%g: %g after %g", tt, v, prev)
		case tt > e.Attack && v > prev+1e-15:
			t.Fatalf("level rises after the attack at t=%g: %g after %g", tt, v, prev)
		}
		prev = v
	}
	// Straight in dB: ratio of (level + c) over each tenth of the release
	// is 1000^(−1/10) = 10^(−0.3).
	c := e.Sustain * 1e-3 / (1 - 1e-3)
	for j := range 10 {
		t0 := off + float64(j)*e.Release/10
		t1 := t0 + e.Release/10
		ratio := (synth.At(e, t1, off) + c) / (synth.At(e, t0, off) + c)
		if math.Abs(ratio-math.Pow(10, -0.3)) > 1e-12 {
			t.Errorf("release step %d: level ratio %.15g, want 10^(−0.3) = %.15g", j, ratio, math.Pow(10, -0.3))
		}
	}
}
