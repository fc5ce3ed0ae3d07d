package analysis

import (
	"math"
	"testing"

	"sinter/patch"
)

// TestRules finds the rules the patch writes for a group's times and
// levels, and refuses them where the values follow none within the
// tolerances; each written rule is evaluated by the language's own
// expression compiler (through a patch) and held to the values it stands
// for.
func TestRules(t *testing.T) {
	n := []float64{1, 2, 3, 4, 5, 6}
	apply := func(f func(float64) float64) []float64 {
		v := make([]float64, len(n))
		for k, x := range n {
			v[k] = f(x)
		}
		return v
	}
	for _, c := range []struct {
		name string
		t    []float64
		want string // "" for no rule
	}{
		{"constant", apply(func(float64) float64 { return 0.25 }), "0.25"},
		{"a harp's decay", apply(func(x float64) float64 { return 1.2 / math.Sqrt(x) }), "1.2/sqrt(n)"},
		{"a pad's attack", apply(func(x float64) float64 { return 0.25 + 0.02*x }), "0.25 + 0.02*n"},
		{"a bell's decay", apply(func(x float64) float64 { return 3.5 / math.Pow(x, 1.3) }), "3.5/n^1.3"},
		{"falling with an offset", apply(func(x float64) float64 { return 0.6 - 0.1*math.Sqrt(x) }), "0.6 - 0.1*n^0.5"},
		{"no rule", []float64{0.3, 0.9, 0.2, 0.7, 0.1, 0.5}, ""},
	} {
		got, ok := timeLaw(n, c.t, nil)
		if got != c.want || ok != (c.want != "") {
			t.Errorf("%s: %q, %v; want %q", c.name, got, ok, c.want)
			continue
		}
		if !ok {
			continue
		}
		src := "name: x\npartials: [{harmonics: 6, envelope: {attack: 0, decay: \"" + got + "\", sustain: 0, release: 0.1}}]\n"
		p, err := patch.Parse("x.yaml", []byte(src))
		if err != nil {
			t.Fatalf("%s: %q does not read: %v", c.name, got, err)
		}
		plan, err := p.Expand(patch.ExpandOptions{})
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		for k, part := range plan.Notes[0].Partials {
			if d := part.Envelope.Decay; math.Abs(d-c.t[k]) > max(timeLawShare*c.t[k], timeLawFloor) {
				t.Errorf("%s: harmonic %d decays in %v by the rule %q, measured %v", c.name, k+1, d, got, c.t[k])
			}
		}
	}
	// Releases no frame shows (the partials had died away by the
	// note-off, written as the median heard) hold the rule to nothing;
	// counted as measured, they break it.
	heard := apply(func(x float64) float64 { return 1.5 / x })
	heard[4], heard[5] = 0.75, 0.75
	unheard := []bool{false, false, false, false, true, true}
	if got, ok := timeLaw(n, heard, unheard); got != "1.5/n" || !ok {
		t.Errorf("releases, two unheard: %q, %v; want \"1.5/n\"", got, ok)
	}
	if got, ok := timeLaw(n, heard, nil); ok {
		t.Errorf("releases, the unheard counted: %q; want no rule", got)
	}
	if got, ok := dbLaw(n, apply(func(x float64) float64 { return -6 - 6.0206*math.Log2(x) }), levelLawDB); got != "-6 - 6.021*log2(n) dB" || !ok {
		t.Errorf("1/n levels: %q, %v", got, ok)
	}
	if _, ok := dbLaw(n, []float64{0, -3, -9, -2, -12, -1}, levelLawDB); ok {
		t.Error("scattered levels got a rule")
	}
}

// TestSeriesAndKeys: a series is found only where it is complete; keys
// span two octaves by minor thirds through the recording's key, within
// MIDI's range.
func TestSeriesAndKeys(t *testing.T) {
	for _, c := range []struct {
		ns   []int
		want patch.Series
		ok   bool
	}{
		{[]int{1, 2, 3, 4}, patch.Series{Count: 4, First: 1, Step: 1}, true},
		{[]int{43, 45, 47}, patch.Series{Count: 3, First: 43, Step: 2}, true},
		{[]int{1, 3, 4}, patch.Series{}, false},
	} {
		got, ok := seriesOf(c.ns)
		if ok != c.ok || ok && got != c.want {
			t.Errorf("%v: %+v, %v", c.ns, got, ok)
		}
	}
	for key, want := range map[int]patch.KeyRange{60: {From: 48, To: 72, Step: 3}, 5: {From: 2, To: 17, Step: 3}, 125: {From: 113, To: 125, Step: 3}} {
		if got := keyRange(key); got != want {
			t.Errorf("key %d: %+v, want %+v", key, got, want)
		}
	}
}
