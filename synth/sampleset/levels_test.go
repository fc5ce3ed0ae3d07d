package sampleset

import (
	"math"
	"strings"
	"testing"

	"sinter/patch"
)

func db(x float64) float64 { return math.Pow(10, x/20) }

// TestLevelGains checks the levelling rules the README states: within each
// scope the loudest file lands on the target, and a file that would pass
// the ceiling lowers its scope's gain (or fails when strict).
func TestLevelGains(t *testing.T) {
	notes := []patch.Note{{Key: 60, File: "a"}, {Key: 60, File: "b"}, {Key: 64, File: "c"}}
	lv := []levels{
		{peak: db(-6), truePeak: db(-5), loudness: -20},
		{peak: db(-12), truePeak: db(-11), loudness: -26},
		{peak: db(-3), truePeak: db(-1), loudness: -30},
	}
	cases := []struct {
		name     string
		norm     patch.Normalize
		wantDB   []float64
		warnings int
		err      string
	}{
		{"off", patch.Normalize{Measure: patch.MeasureOff}, []float64{0, 0, 0}, 0, ""},
		{"peak set", patch.Normalize{Measure: patch.MeasurePeak, Target: -1}, []float64{2, 2, 2}, 0, ""},
		{"peak key", patch.Normalize{Measure: patch.MeasurePeak, Target: -1, Scope: patch.ScopeKey}, []float64{5, 5, 2}, 0, ""},
		{"peak file", patch.Normalize{Measure: patch.MeasurePeak, Target: -1, Scope: patch.ScopeFile}, []float64{5, 11, 2}, 0, ""},
		{"true peak set", patch.Normalize{Measure: patch.MeasureTruePeak, Target: -2}, []float64{-1, -1, -1}, 0, ""},
		// Loudness per file: c needs +10 dB, which takes its peak to +7 dBFS,
		// over the 0 dBFS ceiling, so its gain is lowered to +3 dB.
		{"loudness file", patch.Normalize{Measure: patch.MeasureLoudness, Target: -20, Scope: patch.ScopeFile}, []float64{0, 6, 3}, 1, ""},
		{"loudness file, true-peak ceiling", patch.Normalize{Measure: patch.MeasureLoudness, Target: -20, Scope: patch.ScopeFile, Ceiling: -1, CeilingTruePeak: true}, []float64{0, 6, 0}, 1, ""},
		{"loudness file, strict", patch.Normalize{Measure: patch.MeasureLoudness, Target: -20, Scope: patch.ScopeFile, Strict: true}, nil, 0, "over the ceiling"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			gains, warnings, err := levelGains(c.norm, notes, lv)
			if c.err != "" {
				if err == nil || !strings.Contains(err.Error(), c.err) {
					t.Fatalf("err %v, want %q", err, c.err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			for i, g := range gains {
				if math.Abs(decibels(g)-c.wantDB[i]) > 1e-9 {
					t.Errorf("file %s: gain %.6f dB, want %g", notes[i].File, decibels(g), c.wantDB[i])
				}
			}
			if len(warnings) != c.warnings {
				t.Errorf("warnings %q, want %d", warnings, c.warnings)
			}
		})
	}
}
