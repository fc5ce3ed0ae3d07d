package mapping_test

import (
	"bytes"
	"math"
	"testing"

	"sinter/synth/mapping"
)

// TestPitchOffset: an offset in cents splits into whole semitones and
// whole cents with tune within ±50 (inside every player's ±100, the SFZ
// format's range for tune) and at most half a cent lost, the most whole
// cents can miss by.
func TestPitchOffset(t *testing.T) {
	cases := []struct {
		cents           float64
		transpose, tune int
	}{
		{0, 0, 0},
		{13.7, 0, 14},
		{-46.3, 0, -46},
		{149.9, 1, 50},
		{150.1, 2, -50},
		{601.955, 6, 2},
		{-1234.5678, -12, -35},
	}
	for _, c := range cases {
		tr, tu := mapping.PitchOffset(c.cents)
		if tr != c.transpose || tu != c.tune {
			t.Errorf("%g cents: transpose %d tune %d, want %d and %d", c.cents, tr, tu, c.transpose, c.tune)
		}
	}
	for c := -12700.0; c <= 12700; c += 0.37 {
		tr, tu := mapping.PitchOffset(c)
		if miss := math.Abs(float64(100*tr+tu) - c); miss > 0.5 || tu < -50 || tu > 50 {
			t.Fatalf("%g cents: transpose %d tune %d misses by %g", c, tr, tu, miss)
		}
	}
}

// TestWriteSFZOpcodes writes regions with a per-key tuning and velocity
// crossfades and reads them back with ReadSFZ, as verify does: each
// opcode is where a sampler reads it (sfzformat.com: transpose, tune,
// xfin_lovel, xfin_hivel, xfout_lovel, xfout_hivel, xf_velcurve), and a
// region without them writes none.
func TestWriteSFZOpcodes(t *testing.T) {
	regions := []mapping.Region{
		{Sample: "a low.wav", Root: 60, LowKey: 61, HighKey: 61, LowVel: 1, HighVel: 48, Transpose: 1, Tune: -14, FadeOut: [2]int{32, 49}},
		{Sample: "a high.wav", Root: 60, LowKey: 61, HighKey: 61, LowVel: 33, HighVel: 127, Transpose: 1, Tune: -14, FadeIn: [2]int{32, 49}},
		{Sample: "b.wav", Root: 62, LowKey: 62, HighKey: 62, LowVel: 1, HighVel: 127},
	}
	var buf bytes.Buffer
	if err := mapping.WriteSFZ(&buf, regions, mapping.Options{Title: "t", Release: 0.5}); err != nil {
		t.Fatal(err)
	}
	got, err := mapping.ReadSFZ(&buf)
	if err != nil {
		t.Fatal(err)
	}
	want := []map[string]string{
		{"transpose": "1", "tune": "-14", "xfout_lovel": "32", "xfout_hivel": "49", "xfin_lovel": "", "hivel": "48", "xf_velcurve": "power"},
		{"transpose": "1", "tune": "-14", "xfin_lovel": "32", "xfin_hivel": "49", "xfout_lovel": "", "lovel": "33", "xf_velcurve": "power"},
		{"transpose": "", "tune": "", "xfin_lovel": "", "xfout_hivel": "", "sample": "b.wav"},
	}
	for i, w := range want {
		for k, v := range w {
			if got[i].Opcodes[k] != v {
				t.Errorf("region %d: %s=%q, want %q", i, k, got[i].Opcodes[k], v)
			}
		}
	}
	// No fade anywhere: no curve either, so a set without crossfades
	// writes the mapping it always has.
	buf.Reset()
	if err := mapping.WriteSFZ(&buf, regions[2:], mapping.Options{}); err != nil {
		t.Fatal(err)
	}
	if want := "<group>\n<region> sample=b.wav pitch_keycenter=62 lokey=62 hikey=62 lovel=1 hivel=127 loop_mode=no_loop\n"; buf.String() != want {
		t.Errorf("got %q, want %q", buf.String(), want)
	}
}
