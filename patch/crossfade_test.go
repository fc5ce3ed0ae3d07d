package patch_test

import (
	"encoding/json"
	"math"
	"strconv"
	"strings"
	"testing"

	"sinter/patch"
)

// powerGain is a region's gain at velocity v under SFZ's xf_velcurve=power
// (sfzformat.com, xf_velcurve: "power", an equal-power crossfade; the
// curve, from memory of that page and the format's open players: with x
// the position of v in the range, 0 at its low end and 1 at its high end,
// a fade in has gain √x and a fade out √(1 − x); below a fade in's range
// the gain is 0, above it 1, and the other way round for a fade out).
func powerGain(v int, fade patch.VelocityFade) float64 {
	g := 1.0
	if in := fade.In; in != [2]int{} {
		switch {
		case v <= in[0]:
			g = 0
		case v < in[1]:
			g *= math.Sqrt(float64(v-in[0]) / float64(in[1]-in[0]))
		}
	}
	if out := fade.Out; out != [2]int{} {
		switch {
		case v >= out[1]:
			g = 0
		case v > out[0]:
			g *= math.Sqrt(1 - float64(v-out[0])/float64(out[1]-out[0]))
		}
	}
	return g
}

// TestExpandCrossfade: neighbouring layers overlap by layer_crossfade
// velocities centred on today's boundary (for an odd count, the odd one
// below it), every velocity 1..127 is served, and at every velocity the
// layers that sound keep constant power, g1² + g2² = 1 within 0.1 dB, by
// SFZ's power curve.
func TestExpandCrossfade(t *testing.T) {
	cases := []struct {
		vels string
		fade int
		want [][2]int // each layer's velocity range
	}{
		{"[40, 90, 127]", 16, [][2]int{{1, 48}, {33, 98}, {83, 127}}},
		{"[40, 90]", 5, [][2]int{{1, 42}, {38, 127}}},
		{"[40, 90]", 1, [][2]int{{1, 40}, {40, 127}}},
		{"[40, 90]", 2, [][2]int{{1, 41}, {40, 127}}},
		{"[1, 127]", 1, [][2]int{{1, 1}, {1, 127}}},
		{"[126, 127]", 1, [][2]int{{1, 126}, {126, 127}}},
		{"[20, 40, 60, 127]", 20, [][2]int{{1, 30}, {11, 50}, {31, 70}, {51, 127}}},
		{"[64, 127]", 63, [][2]int{{1, 95}, {33, 127}}},
	}
	for _, c := range cases {
		plan := mustExpand(t, "name: x\nvelocities: "+c.vels+"\nlayer_crossfade: "+strconv.Itoa(c.fade)+"\npartials: [{ratio: 1}]\n", patch.ExpandOptions{})
		if len(plan.Notes) != len(c.want) {
			t.Fatalf("%s: %d notes", c.vels, len(plan.Notes))
		}
		for i, n := range plan.Notes {
			if [2]int{n.VelLow, n.VelHigh} != c.want[i] {
				t.Errorf("%s fading over %d: layer %d serves %d..%d, want %v", c.vels, c.fade, n.Velocity, n.VelLow, n.VelHigh, c.want[i])
			}
			if i > 0 {
				below := plan.Notes[i-1]
				overlap := below.VelHigh - n.VelLow + 1
				centre := float64(below.VelHigh+n.VelLow) / 2
				boundary := float64(below.Velocity) + 0.5
				if overlap != c.fade || centre != boundary && centre != boundary-0.5 || c.fade%2 == 0 && centre != boundary {
					t.Errorf("%s fading over %d: layers %d and %d overlap on %d..%d", c.vels, c.fade, below.Velocity, n.Velocity, n.VelLow, below.VelHigh)
				}
				if n.VelocityFade.In != below.VelocityFade.Out {
					t.Errorf("%s: layer %d fades in over %v, the one below fades out over %v", c.vels, n.Velocity, n.VelocityFade.In, below.VelocityFade.Out)
				}
			}
		}
		for v := 1; v <= 127; v++ {
			power := 0.0
			for _, n := range plan.Notes {
				if v >= n.VelLow && v <= n.VelHigh {
					power += math.Pow(powerGain(v, *n.VelocityFade), 2)
				}
			}
			if db := 10 * math.Log10(power); math.Abs(db) > 0.1 {
				t.Errorf("%s fading over %d: velocity %d sounds at %.3f dB", c.vels, c.fade, v, db)
			}
		}
	}
}

// TestCrossfadePowerCheckFails runs the constant-power check on layers
// whose fade ranges do not match: the lower fading out over its own
// overlap but the upper fading in over a wider one, as a mapping written
// by hand might. It must fail, so the test above can.
func TestCrossfadePowerCheckFails(t *testing.T) {
	lower := patch.VelocityFade{Out: [2]int{32, 49}}
	upper := patch.VelocityFade{In: [2]int{28, 53}}
	worst := 0.0
	for v := 33; v <= 48; v++ {
		power := math.Pow(powerGain(v, lower), 2) + math.Pow(powerGain(v, upper), 2)
		worst = max(worst, math.Abs(10*math.Log10(power)))
	}
	if worst <= 0.1 {
		t.Errorf("mismatched fades stay within %.3f dB of constant power; the check cannot tell", worst)
	}
}

// TestCrossfadeKeepsRenderKeys: a note without a crossfade encodes as it
// did before crossfades existed, so the render keys of sets rendered then
// still match and their files are kept.
func TestCrossfadeKeepsRenderKeys(t *testing.T) {
	plan := mustExpand(t, "name: x\nvelocities: [40, 100]\npartials: [{ratio: 1}]\n", patch.ExpandOptions{})
	data, err := json.Marshal(plan.Notes[0])
	if err != nil {
		t.Fatal(err)
	}
	if strings.Contains(string(data), "VelocityFade") {
		t.Errorf("a note without a crossfade encodes its fade: %s", data)
	}
	one := mustExpand(t, "name: x\nvelocities: 100\nlayer_crossfade: 12\npartials: [{ratio: 1}]\n", patch.ExpandOptions{})
	if n := one.Notes[0]; n.VelocityFade != nil || n.VelLow != 1 || n.VelHigh != 127 {
		t.Errorf("one layer, nothing to fade into: %d..%d, fade %v", n.VelLow, n.VelHigh, n.VelocityFade)
	}
}
