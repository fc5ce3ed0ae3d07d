package chart_test

import (
	"math"
	"slices"
	"testing"

	"sinter/synth/chart"
)

// TestFrequencyTicks: the labels of a frequency axis for several spans,
// as people read frequency (1, 2 and 5 of each decade, k for thousands;
// common practice on audio analysers), at least three on every span, and
// minor ticks between them; every tick inside the span.
func TestFrequencyTicks(t *testing.T) {
	cases := []struct {
		name   string
		lo, hi float64
		labels []string
		minors []float64 // some of the minor ticks expected
	}{
		{"the audible band", 20, 20000, []string{"20", "50", "100", "200", "500", "1k", "2k", "5k", "10k", "20k"}, []float64{30, 90, 300, 3000, 9000}},
		{"four octaves from C4", 261.63, 4186.01, []string{"500", "1k", "2k"}, []float64{300, 400, 600, 900, 3000, 4000}},
		{"four octaves up to A3", 27.5, 220, []string{"50", "100", "200"}, []float64{30, 40, 60, 90}},
		{"one octave from A4", 440, 880, []string{"500", "600", "700", "800"}, []float64{460, 480, 520, 860}},
		{"one partial at 1 kHz, as plotted", 1000 / 1.2, 1000 * 1.2, []string{"900", "1k", "1.1k", "1.2k"}, []float64{840, 1020, 1180}},
		{"a semitone", 440, 466.16, []string{"440", "450", "460"}, []float64{442, 458}},
		// 6k–23k holds only two of 1, 2 and 5: even steps of 5k.
		{"high partials", 6000, 23000, []string{"10k", "15k", "20k"}, []float64{7000, 11000, 22000}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			ticks := chart.FrequencyTicks{}.Ticks(c.lo, c.hi)
			var labels []string
			var minors []float64
			for _, tk := range ticks {
				if tk.Value < c.lo*(1-1e-9) || tk.Value > c.hi*(1+1e-9) {
					t.Errorf("tick %g outside the span", tk.Value)
				}
				if tk.IsMinor() {
					minors = append(minors, tk.Value)
				} else {
					labels = append(labels, tk.Label)
				}
			}
			if !slices.Equal(labels, c.labels) {
				t.Errorf("labels %q, want %q", labels, c.labels)
			}
			for _, m := range c.minors {
				if !slices.ContainsFunc(minors, func(v float64) bool { return math.Abs(v-m) < 1e-6*m }) {
					t.Errorf("no minor tick at %g among %v", m, minors)
				}
			}
		})
	}
}
