package analysis_test

import (
	"math"
	"math/rand/v2"
	"testing"

	"sinter/synth/analysis"
)

// sine is one partial of a test tone, built here with math.Sin and exact
// exponentials, a route of its own, never sinter's renderer: a straight
// attack to amp, then an exponential decay toward sustain (falling 60 dB
// of its range in t60 seconds, amp·(s + (1−s)·e^{−(t−attack)/τ}) with
// τ = t60/ln 1000), released at off into an exponential falling 60 dB in
// release seconds.
type sine struct {
	hz, amp, attack, t60, sustain, release float64
}

const testRate = 48000

// tone sums the partials over seconds of time, released at off, with
// white Gaussian noise at snr dB below the signal's power where snr > 0.
func tone(seconds, off float64, parts []sine, snr float64) []float64 {
	x := make([]float64, int(seconds*testRate))
	for _, p := range parts {
		tau, tauR := p.t60/math.Log(1000), p.release/math.Log(1000)
		omega := 2 * math.Pi * p.hz / testRate
		level := func(t float64) float64 {
			if t < p.attack {
				return t / p.attack
			}
			return p.sustain + (1-p.sustain)*math.Exp(-(t-p.attack)/tau)
		}
		atOff := level(off)
		for i := range x {
			t := float64(i) / testRate
			env := level(t)
			if t > off {
				env = atOff * math.Exp(-(t-off)/tauR)
			}
			x[i] += p.amp * env * math.Sin(omega*float64(i))
		}
	}
	if snr > 0 {
		power := 0.0
		for _, v := range x {
			power += v * v / float64(len(x))
		}
		sigma := math.Sqrt(power) * math.Pow(10, -snr/20)
		r := rand.New(rand.NewPCG(1, 2))
		for i := range x {
			x[i] += sigma * r.NormFloat64()
		}
	}
	return x
}

// found is the measured partial nearest hz.
func found(t *testing.T, res *analysis.Result, hz float64) *analysis.Partial {
	t.Helper()
	var best *analysis.Partial
	for i := range res.Partials {
		if p := &res.Partials[i]; best == nil || math.Abs(p.Hz-hz) < math.Abs(best.Hz-hz) {
			best = p
		}
	}
	if best == nil || math.Abs(cents(best.Hz, hz)) > 10 {
		t.Fatalf("no partial found near %.3f Hz", hz)
	}
	return best
}

// targets are the issue's: frequency within 0.1 cent (0.5 cent in noise),
// peak level within 0.2 dB, T60 within 5 %, attack within 5 ms, sustain
// within 0.5 dB.
type targets struct{ cents, db, t60, attack, sustain float64 }

var issueTargets = targets{cents: 0.1, db: 0.2, t60: 0.05, attack: 0.005, sustain: 0.5}

// hold checks each partial above −60 dB of the loudest that lasts half a
// second against the targets, and returns the worst of each.
func hold(t *testing.T, res *analysis.Result, parts []sine, tg targets, released bool) targets {
	t.Helper()
	loudest := 0.0
	for _, p := range parts {
		loudest = max(loudest, p.amp)
	}
	var worst targets
	for _, want := range parts {
		if want.amp < loudest*1e-3 || want.t60*math.Log10(want.amp/loudest/1e-3)/3 < 0.5 && want.sustain == 0 {
			continue
		}
		got := found(t, res, want.hz)
		e := got.Envelope
		worst.cents = max(worst.cents, math.Abs(cents(got.Hz, want.hz)))
		worst.db = max(worst.db, math.Abs(got.LevelDB()-20*math.Log10(want.amp)))
		worst.t60 = max(worst.t60, math.Abs(e.Decay/want.t60-1))
		worst.attack = max(worst.attack, math.Abs(e.Attack-want.attack))
		if want.sustain > 0 {
			worst.sustain = max(worst.sustain, math.Abs(20*math.Log10(e.Sustain/want.sustain)))
		}
		if released {
			worst.t60 = max(worst.t60, math.Abs(e.Release/want.release-1))
		}
		if len(e.Points) > 0 {
			t.Errorf("%.2f Hz was written as breakpoints, its envelope being attack, decay, sustain and release", want.hz)
		}
	}
	t.Logf("worst: %.4f cents, %.3f dB, T60 %.2f %%, attack %.2f ms, sustain %.3f dB", worst.cents, worst.db, 100*worst.t60, 1000*worst.attack, worst.sustain)
	if worst.cents > tg.cents || worst.db > tg.db || worst.t60 > tg.t60 || worst.attack > tg.attack || worst.sustain > tg.sustain {
		t.Errorf("past the targets: %.2f cents, %.2f dB, T60 %.0f %%, attack %.0f ms, sustain %.2f dB", tg.cents, tg.db, 100*tg.t60, 1000*tg.attack, tg.sustain)
	}
	return worst
}

// TestAccuracy holds the analysis to the issue's targets on tones built
// with math.Sin: a struck harmonic tone with levels down to −55 dB and
// decays that shorten up the series; a held tone with a decay to a
// sustain and a release; the same struck tone with white noise at 40 dB
// SNR, where the frequencies must stay within 0.5 cent.
func TestAccuracy(t *testing.T) {
	var struck, held []sine
	for n := 1; n <= 12; n++ {
		nn := float64(n)
		struck = append(struck, sine{hz: 220.5 * nn, amp: 0.5 * math.Pow(10, -5*(nn-1)/20), attack: 0.012, t60: 2.4 / math.Sqrt(nn), release: 1})
	}
	for n := 1; n <= 8; n++ {
		nn := float64(n)
		held = append(held, sine{hz: 196.3 * nn, amp: 0.4 / nn, attack: 0.06, t60: 0.7, sustain: 0.5 / math.Sqrt(nn), release: 0.35 + 0.05*nn})
	}
	// In noise the issue holds frequencies alone, to 0.5 cent; the rest is
	// logged.
	inf := math.Inf(1)
	noisy := targets{cents: 0.5, db: inf, t60: inf, attack: inf, sustain: inf}
	for _, c := range []struct {
		name           string
		x              []float64
		parts          []sine
		tg             targets
		released       bool
		harmonicWanted bool
	}{
		{"struck", tone(3, 10, struck, 0), struck, issueTargets, false, true},
		{"held and released", tone(2.5, 1.5, held, 0), held, issueTargets, true, true},
		{"struck in noise at 40 dB SNR", tone(3, 10, struck, 40), struck, noisy, false, true},
	} {
		t.Run(c.name, func(t *testing.T) {
			res, err := analysis.Analyze(c.x, testRate, analysis.Options{})
			if err != nil {
				t.Fatal(err)
			}
			hold(t, res, c.parts, c.tg, c.released)
			if c.released && math.Abs(res.NoteOff-1.5) > 0.002 {
				t.Errorf("note-off at %.4f s, want 1.5", res.NoteOff)
			}
			if res.Law.Kind != analysis.Harmonic || !res.Pitched {
				t.Errorf("law %v, pitched %v: want a harmonic series", res.Law.Kind, res.Pitched)
			}
		})
	}
}

// TestStiffString holds the fitted inharmonicity of tones built on
// H. Fletcher's stiff string, f_n = n·f0·√(1 + B·n²) (JASA 36(1), 1964;
// standards sheet §8), to 2 % of B for B from 1e-4 to 1e-3, and the law
// chosen to the stiff string, with its fundamental within 0.1 cent.
func TestStiffString(t *testing.T) {
	for _, b := range []float64{1e-4, 3e-4, 1e-3} {
		var parts []sine
		for n := 1; n <= 16; n++ {
			nn := float64(n)
			parts = append(parts, sine{hz: 110 * nn * math.Sqrt(1+b*nn*nn), amp: 0.3 / nn, attack: 0.003, t60: 3 / math.Sqrt(nn)})
		}
		res, err := analysis.Analyze(tone(3, 10, parts, 0), testRate, analysis.Options{})
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("B %.0e: fitted %.5e (%+.3f %%), f0 %.5f Hz, law %v", b, res.Law.B, 100*(res.Law.B/b-1), res.Law.F0, res.Law.Kind)
		if res.Law.Kind != analysis.Stiff || math.Abs(res.Law.B/b-1) > 0.02 || math.Abs(cents(res.Law.F0, 110)) > 0.1 {
			t.Errorf("B %.0e: law %v with B %.4e and f0 %.4f Hz", b, res.Law.Kind, res.Law.B, res.Law.F0)
		}
		hold(t, res, parts, issueTargets, false)
	}
}

// TestFreeBar recovers the modes of a bar free at both ends, struck: the
// handbook ratios 1 : 2.756539 : 5.403918 : 8.932950 : 13.344287 (the
// squared roots of cos x·cosh x = 1, as patch/modes.yaml holds them from
// N. H. Fletcher and T. D. Rossing, The Physics of Musical Instruments,
// ch. 2; standards sheet §8), each within 0.1 cent; no harmonic series
// explains them, so the sound is unpitched and its ratios are to the
// lowest partial.
func TestFreeBar(t *testing.T) {
	modes := []float64{1, 2.756539, 5.403918, 8.932950, 13.344287}
	var parts []sine
	for i, r := range modes {
		parts = append(parts, sine{hz: 523.1 * r, amp: 0.3 / float64(i+1), attack: 0.001, t60: 2.5 / float64(i+1)})
	}
	res, err := analysis.Analyze(tone(3, 10, parts, 0), testRate, analysis.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if res.Pitched || res.Law.Kind != analysis.Free || math.Abs(cents(res.Reference, 523.1)) > 0.1 {
		t.Errorf("pitched %v, law %v, reference %.4f Hz: want unpitched free ratios to 523.1 Hz", res.Pitched, res.Law.Kind, res.Reference)
	}
	for i, r := range modes {
		got := found(t, res, 523.1*r)
		if d := cents(got.Ratio, r); math.Abs(d) > 0.1 {
			t.Errorf("mode %d: ratio %.7f, %+.4f cents from %g", i+1, got.Ratio, d, r)
		}
	}
	hold(t, res, parts, issueTargets, false)
}

// TestLawCatchesADetunedHarmonic shows the law's check can fail: the
// struck tone with its fifth harmonic 0.5 cent sharp keeps the harmonic
// law for the others and leaves that one out of the series, where the
// same tone in tune holds all twelve.
func TestLawCatchesADetunedHarmonic(t *testing.T) {
	var parts []sine
	for n := 1; n <= 12; n++ {
		parts = append(parts, sine{hz: 220.5 * float64(n), amp: 0.5 / float64(n), attack: 0.01, t60: 2})
	}
	for _, sharp := range []float64{0, 0.5} {
		p := append([]sine(nil), parts...)
		p[4].hz *= math.Exp2(sharp / 1200)
		res, err := analysis.Analyze(tone(2, 10, p, 0), testRate, analysis.Options{})
		if err != nil {
			t.Fatal(err)
		}
		fifth := found(t, res, p[4].hz)
		inSeries := fifth.Harmonic == 5
		t.Logf("fifth %.2f cents sharp: measured %+.4f cents, in the series %v", sharp, cents(fifth.Hz, 220.5*5), inSeries)
		if inSeries != (sharp == 0) || res.Law.Kind != analysis.Harmonic {
			t.Errorf("fifth %.2f cents sharp: in the series %v, law %v", sharp, inSeries, res.Law.Kind)
		}
	}
}
