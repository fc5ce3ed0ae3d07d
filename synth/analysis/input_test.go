package analysis_test

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"sinter/synth/analysis"
)

// TestRefusesWhatCannotBeMeasured gives the analysis one bad recording per
// case and expects the error that says what is wrong, never a result: a
// silent or noisy one says no stable partial was found.
func TestRefusesWhatCannotBeMeasured(t *testing.T) {
	noise := make([]float64, testRate)
	r := rand.New(rand.NewPCG(7, 8))
	for i := range noise {
		noise[i] = 0.1 * r.NormFloat64()
	}
	clipped := tone(1, 10, []sine{{hz: 220, amp: 3, attack: 0.01, t60: 5}}, 0)
	for i, v := range clipped {
		clipped[i] = max(-1, min(1, v))
	}
	// A 20 ms click: a burst of a decaying 1 kHz tone in a second of
	// silence.
	click := make([]float64, testRate)
	for i := range testRate / 50 {
		click[testRate/2+i] = math.Exp(-float64(i)/200) * math.Sin(2*math.Pi*1000*float64(i)/testRate)
	}
	nan := tone(0.5, 10, []sine{{hz: 220, amp: 0.5, attack: 0.01, t60: 5}}, 0)
	nan[100] = math.NaN()
	for _, c := range []struct {
		name      string
		x         []float64
		rate      int
		want      string
		noPartial bool
	}{
		{"empty", nil, testRate, "it holds no samples", false},
		{"too short", make([]float64, testRate/20), testRate, "it lasts 50 ms; a tone needs at least 100 ms", false},
		{"rate too low", make([]float64, 4000), 4000, "sample rate of 4000 Hz is outside", false},
		{"silence", make([]float64, testRate), testRate, "no stable partial was found: the recording is silent", true},
		{"white noise", noise, testRate, "no stable partial was found", true},
		{"clipped", clipped, testRate, "it is clipped:", false},
		{"a 20 ms click", click, testRate, "no stable partial was found", true},
		{"not a number", nan, testRate, "samples that are not numbers", false},
	} {
		t.Run(c.name, func(t *testing.T) {
			res, err := analysis.Analyze(c.x, c.rate, analysis.Options{})
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("got %v (result %v), want an error saying %q", err, res != nil, c.want)
			}
			if errors.Is(err, analysis.ErrNoPartial) != c.noPartial {
				t.Errorf("%v: is ErrNoPartial %v, want %v", err, !c.noPartial, c.noPartial)
			}
		})
	}
}

// TestMix picks channels: the one of a mono recording, left, right or
// their average of a stereo one, and refuses more than two.
func TestMix(t *testing.T) {
	l, r := []float64{1, 0.5}, []float64{0, -0.5}
	for _, c := range []struct {
		channels [][]float64
		which    string
		want     []float64
		err      string
	}{
		{[][]float64{l}, "right", l, ""},
		{[][]float64{l, r}, "left", l, ""},
		{[][]float64{l, r}, "right", r, ""},
		{[][]float64{l, r}, "sum", []float64{0.5, 0}, ""},
		{[][]float64{l, r}, "middle", nil, `--channel "middle"`},
		{make([][]float64, 8), "sum", nil, "it has 8 channels; analyze reads mono or stereo"},
	} {
		got, _, err := analysis.Mix(c.channels, c.which)
		if c.err != "" {
			if err == nil || !strings.Contains(err.Error(), c.err) {
				t.Errorf("%d channels, %s: error %v, want %q", len(c.channels), c.which, err, c.err)
			}
			continue
		}
		if err != nil || len(got) != len(c.want) || got[0] != c.want[0] || got[1] != c.want[1] {
			t.Errorf("%d channels, %s: %v, %v; want %v", len(c.channels), c.which, got, err, c.want)
		}
	}
}
