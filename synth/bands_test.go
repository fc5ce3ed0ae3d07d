package synth_test

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"
	"gonum.org/v1/gonum/dsp/window"

	"sinter/patch"
	"sinter/synth"
)

// expandNote parses a patch of one key and returns the plan's notes.
func expandNotes(t testing.TB, src string) []patch.Note {
	t.Helper()
	p, err := patch.Parse("noise.yaml", []byte("name: noise\n"+src))
	if err != nil {
		t.Fatal(err)
	}
	plan, err := p.Expand(patch.ExpandOptions{})
	if err != nil {
		t.Fatal(err)
	}
	return plan.Notes
}

// renderLooped renders n as a build does: with the loop PlanLoop gives it.
func renderLooped(n *patch.Note) ([]float64, synth.Loop) {
	loop, _ := synth.PlanLoop(n)
	buf := make([]float64, synth.Frames(n))
	var r synth.Renderer
	r.RenderLooped(buf, n, loop)
	return buf, loop
}

// bandReading is a steady stretch of noise as gonum's FFT reads it: the
// power in each bin under a Blackman-Harris window, P[k] = 2|X_k|²/(N·Σw²),
// which sums to the stretch's mean square for noise (libraries.md §3; the
// window's power Σw²/N divides out), and the width of a bin in Hz.
type bandReading struct {
	power []float64
	binHz float64
	rms   float64 // from the samples themselves
}

func readBand(x []float64, rate int) bandReading {
	n := len(x)
	w := window.NewValues(window.BlackmanHarris, n)
	seq := make([]float64, n)
	w.TransformTo(seq, x)
	ones := make([]float64, n)
	for i := range ones {
		ones[i] = 1
	}
	w.TransformTo(ones, ones)
	sumW2 := 0.0
	for _, v := range ones {
		sumW2 += v * v
	}
	coef := fourier.NewFFT(n).Coefficients(nil, seq)
	r := bandReading{power: make([]float64, len(coef)), binHz: float64(rate) / float64(n)}
	for k, c := range coef {
		r.power[k] = 2 * (real(c)*real(c) + imag(c)*imag(c)) / (float64(n) * sumW2)
	}
	ms := 0.0
	for _, v := range x {
		ms += v * v
	}
	r.rms = math.Sqrt(ms / float64(n))
	return r
}

// parsevalPower is the mean square of x from its unwindowed transform by
// gonum's FFT: (|X_0|² + 2·Σ|X_k|² + |X_(N/2)|²)/N² for even N
// (Parseval's theorem).
func parsevalPower(x []float64) float64 {
	n := len(x)
	coef := fourier.NewFFT(n).Coefficients(nil, x)
	s := 0.0
	for k, c := range coef {
		p := real(c)*real(c) + imag(c)*imag(c)
		if k != 0 && !(n%2 == 0 && k == n/2) {
			p *= 2
		}
		s += p
	}
	return s / float64(n) / float64(n)
}

// between sums the power of the bins from lo to hi Hz.
func (r bandReading) between(lo, hi float64) float64 {
	s := 0.0
	for k := int(math.Ceil(lo / r.binHz)); k < len(r.power) && float64(k)*r.binHz <= hi; k++ {
		s += r.power[k]
	}
	return s
}

// bandProblems holds a reading to what the README promises of a band at
// amplitude a (after its envelope's steady level) from low to high Hz
// with slope dB per octave: an RMS of a/√2 within 0.3 dB, at least 99 %
// of the power between low and high, and the power density averaged over
// each whole octave inside the band within 1 dB of the density
// C·f^γ, γ = slope/(10·log10 2), whose integral over the band is a²/2.
// It returns the problems, and the octave furthest from the slope with
// how far, in dB.
func bandProblems(r bandReading, a, low, high, slope float64) (problems []string, worst float64) {
	if d := 20 * math.Log10(r.rms/(a/math.Sqrt2)); math.Abs(d) > 0.3 {
		problems = append(problems, fmt.Sprintf("RMS %.5f is %+.2f dB from a sine's %.5f", r.rms, d, a/math.Sqrt2))
	}
	total := r.between(0, math.Inf(1))
	if in := r.between(low, high) / total; in < 0.99 {
		problems = append(problems, fmt.Sprintf("%.2f %% of the power lies between %g and %g Hz", 100*in, low, high))
	}
	gamma := slope / (10 * math.Log10(2))
	integral := func(f0, f1 float64) float64 { // ∫ f^γ df
		if math.Abs(gamma+1) < 1e-12 {
			return math.Log(f1 / f0)
		}
		return (math.Pow(f1, gamma+1) - math.Pow(f0, gamma+1)) / (gamma + 1)
	}
	c := a * a / 2 / integral(low, high)
	for f := low; 2*f <= high; f *= 2 {
		want := c * integral(f, 2*f) / f
		got := r.between(f, 2*f) / f // power per Hz over the octave
		d := 10 * math.Log10(got/want)
		if math.Abs(d) > 1 {
			problems = append(problems, fmt.Sprintf("octave %g–%g Hz: density %+.2f dB from the slope's", f, 2*f, d))
		}
		if math.Abs(d) > math.Abs(worst) {
			worst = d
		}
	}
	return problems, worst
}

// TestNoiseBand renders notes with one band each, of several slopes and
// widths, edges as ratios and in Hz, looped and not, and reads the steady
// part with gonum's FFT (bandProblems); the level is the sine's over the
// steady part, which holds tens of thousands of the period's bins. Two
// signals that are not such a band, white noise and a band whose slope is
// not the one asked for, fail the same reading.
func TestNoiseBand(t *testing.T) {
	cases := []struct {
		name, group string
		low, high   float64 // Hz, at A3 (220 Hz)
		slope       float64
		loop        bool
	}{
		{"white, 1.5–6 × f0", "noise: {low: 1.5, high: 6}", 330, 1320, 0, false},
		{"equal power per octave, 100 Hz–12.8 kHz", "noise: {low: 100 Hz, high: 12800 Hz, slope: -3}", 100, 12800, -3, false},
		{"brighter, 2–16 × f0", "noise: {low: 2, high: 16, slope: 4.5}", 440, 3520, 4.5, false},
		{"steep, 4 octaves", "noise: {low: 400 Hz, high: 6400 Hz, slope: -12}", 400, 6400, -12, false},
		{"looped, its period the loop's", "noise: {low: 1, high: 8, slope: -3}", 220, 1760, -3, true},
	}
	const rate, amplitude, sustain = 48000, 0.3, 0.5
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			loop := ""
			if c.loop {
				loop = "loop: {length: 2.8}\n"
			}
			notes := expandNotes(t, fmt.Sprintf("keys: [A3]\nhold: 3.2\ntail: 0.3\n%spartials:\n  - %s\n    amplitude: %g\n    envelope: {attack: 0.05, decay: 0.2, sustain: %g, release: 0.2}\n",
				loop, c.group, amplitude, sustain))
			buf, l := renderLooped(&notes[0])
			if c.loop != (l != synth.Loop{}) || c.loop && synth.NoisePeriod(&notes[0], l) != l.Frames() {
				t.Fatalf("loop %+v; the noise repeats after %d frames", l, synth.NoisePeriod(&notes[0], l))
			}
			start := int(0.3 * rate)
			steady := buf[start : start+1<<17]
			r := readBand(steady, rate)
			// Parseval's theorem: the unwindowed transform's bins hold the
			// samples' power, which is the level read.
			if ms := parsevalPower(steady); math.Abs(ms-r.rms*r.rms) > 1e-9*ms {
				t.Errorf("the FFT's bins hold a mean square of %.12g, the samples %.12g", ms, r.rms*r.rms)
			}
			problems, worst := bandProblems(r, amplitude*sustain, c.low, c.high, c.slope)
			for _, p := range problems {
				t.Error(p)
			}
			t.Logf("level %+.3f dB, %.3f %% in band, octaves within %.2f dB of the slope", 20*math.Log10(r.rms/(amplitude*sustain/math.Sqrt2)),
				100*r.between(c.low, c.high)/r.between(0, math.Inf(1)), math.Abs(worst))
		})
	}
	rng := rand.New(rand.NewPCG(1, 18))
	white := make([]float64, 1<<17)
	for i := range white {
		white[i] = (rng.Float64()*2 - 1) * 0.15 * math.Sqrt(3) // an RMS of 0.15
	}
	if problems, _ := bandProblems(readBand(white, rate), 0.15, 330, 1320, 0); !strings.Contains(strings.Join(problems, "\n"), "of the power lies between") {
		t.Errorf("white noise passes for a band: %v", problems)
	}
	notes := expandNotes(t, "keys: [A3]\nhold: 3.2\npartials: [{noise: {low: 100 Hz, high: 12800 Hz}, amplitude: 0.3}]\n")
	buf, _ := renderLooped(&notes[0])
	if problems, _ := bandProblems(readBand(buf[14400:14400+1<<17], rate), 0.3, 100, 12800, -3); len(problems) == 0 {
		t.Error("a white band passes for one of −3 dB per octave")
	}
}

// TestNoiseBandLimit: a band reaching past the band limit is cut there
// and faded below it as the partials are (README, "Band limit"): at 48
// kHz with the default limit of 0.45 and fade of 0.1, nothing above
// 21.6 kHz, and between 19.44 and 21.6 kHz a power density that follows
// the raised cosine's square, which over that stretch averages 3/8 of the
// density below the fade.
func TestNoiseBandLimit(t *testing.T) {
	notes := expandNotes(t, "keys: [A3]\nhold: 3\npartials: [{noise: {low: 15000 Hz, high: 30000 Hz}, amplitude: 0.3}]\n")
	n := &notes[0]
	if len(n.Noise) != 1 || !n.Noise[0].Clipped() {
		t.Fatalf("bands %+v; want one, clipped", n.Noise)
	}
	buf, _ := renderLooped(n)
	r := readBand(buf[4800:4800+1<<17], 48000)
	total := r.between(0, math.Inf(1))
	if above := r.between(21600+20, math.Inf(1)) / total; above > 1e-9 {
		t.Errorf("%.3g of the power lies above the band limit", above)
	}
	below := r.between(15000, 19440) / (19440 - 15000)
	fade := r.between(19440, 21600) / (21600 - 19440)
	if d := 10 * math.Log10(fade/below/(3.0/8)); math.Abs(d) > 0.5 {
		t.Errorf("the fade's density is %+.2f dB from 3/8 of the band's below it", d)
	}
}

// TestNoiseChannelsAndRoundRobins: in stereo a band's channels are
// independent noise (correlation under 0.05) at width 1, the same at
// width 0 and correlated by 1 − width between; two round robins are
// independent too. Correlations are read over the steady part.
func TestNoiseChannelsAndRoundRobins(t *testing.T) {
	cases := []struct {
		width, pan float64
		want, tol  float64
	}{
		{1, 0, 0, 0.05},
		{1, -0.5, 0, 0.05},
		{0.5, 0, 0.5, 0.05},
		{0, 0.3, 1, 1e-12},
	}
	for _, c := range cases {
		t.Run(fmt.Sprintf("width %g, pan %g", c.width, c.pan), func(t *testing.T) {
			notes := expandNotes(t, fmt.Sprintf("keys: [A3]\nchannels: 2\nround_robin: 2\nhold: 2\npartials:\n  - {noise: {low: 1.5, high: 6, slope: -3, width: %g}, pan: %g, amplitude: 0.3}\n", c.width, c.pan))
			var channels [2][2][]float64 // variation, channel
			for v := range notes {
				buf, _ := renderLooped(&notes[v])
				for ch := range 2 {
					for i := 4800; i < 2*48000; i++ {
						channels[v][ch] = append(channels[v][ch], buf[2*i+ch])
					}
				}
			}
			for v := range 2 {
				got := correlation(channels[v][0], channels[v][1])
				if math.Abs(got-c.want) > c.tol {
					t.Errorf("variation %d: left and right correlate by %.4f, want %g ± %g", v+1, got, c.want, c.tol)
				}
				t.Logf("variation %d: left and right correlate by %+.4f", v+1, got)
			}
			for ch := range 2 {
				got := correlation(channels[0][ch], channels[1][ch])
				if math.Abs(got) > 0.05 {
					t.Errorf("channel %d: the two round robins correlate by %.4f", ch, got)
				}
				t.Logf("channel %d: the round robins correlate by %+.4f", ch, got)
			}
		})
	}
}

// correlation is the normalised correlation of x and y at lag 0 (the
// Pearson coefficient of two zero-mean signals; common practice).
func correlation(x, y []float64) float64 {
	var xy, xx, yy float64
	for i := range x {
		xy += x[i] * y[i]
		xx += x[i] * x[i]
		yy += y[i] * y[i]
	}
	return xy / math.Sqrt(xx*yy)
}

// TestNoiseLoops plays looped notes with noise as a sampler does, from the
// loop's end into its start. Their noise repeats exactly over the loop:
// the frames after the loop (which a sampler leaving the loop at note-off
// plays) repeat its first ones, as do, for a loop of whole cycles, the
// frames a loop before it. The seam steps no further than the loop's
// inside does, and across it the level is the one inside. A noise that
// repeats with the note's length instead of the loop's fails the repeat.
func TestNoiseLoops(t *testing.T) {
	cases := []struct {
		name, partials string
		crossfade      bool
	}{
		{"noise alone, whole cycles", "  - {noise: {low: 2, high: 12, slope: -3}, amplitude: 0.3}\n", false},
		{"with harmonics, whole cycles, retuned", "  - {harmonics: 6, amplitude: \"0.2/n\"}\n  - {noise: {low: 3, high: 9}, amplitude: 0.2}\n", false},
		{"with an inharmonic partial, crossfade", "  - {ratio: 2.41, amplitude: -40 dB}\n  - {noise: {low: 1000 Hz, high: 4000 Hz}, amplitude: 0.3}\n", true},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			notes := expandNotes(t, "keys: [A3]\nhold: 2.5\ntail: 0.5\nenvelope: {attack: 0.2}\nloop: {length: 1, crossfade: 0.05, exact: on}\npartials:\n"+c.partials)
			n := &notes[0]
			buf, loop := renderLooped(n)
			if (loop.Crossfade > 0) != c.crossfade {
				t.Fatalf("loop %+v; want crossfade %v", loop, c.crossfade)
			}
			L := loop.Frames()
			// Partials are periodic only to their loop's pitch error, or
			// exactly once retuned; the crossfade case's partial is 40 dB
			// down and its crossfade moves it.
			tol := 1e-9
			if c.crossfade {
				tol = 0.03
			}
			repeats := func(buf []float64, from int) (worst float64) {
				for j := range 4800 {
					worst = max(worst, math.Abs(buf[loop.End+1+j]-buf[from+j]))
				}
				return worst
			}
			if d := repeats(buf, loop.Start); d > tol {
				t.Errorf("the frames after the loop differ from its first by up to %.3g", d)
			}
			if !c.crossfade {
				// The envelopes have settled 2400 frames before the loop.
				for j := range 2000 {
					if d := math.Abs(buf[loop.Start-2000+j] - buf[loop.End+1-2000+j]); d > tol {
						t.Fatalf("frame %d differs from the one a loop later by %.3g", loop.Start-2000+j, d)
					}
				}
			}
			seam, inside := synth.SeamStep(buf, 1, loop)
			if seam > inside {
				t.Errorf("seam step %.4g, the largest inside %.4g", seam, inside)
			}
			// What a sampler plays across the seam, against the same length
			// just inside the loop's start.
			const w = 9600
			across := append(append([]float64{}, buf[loop.End+1-w:loop.End+1]...), buf[loop.Start:loop.Start+w]...)
			inner := buf[loop.Start : loop.Start+2*w]
			if d := 20 * math.Log10(rms(across)/rms(inner)); math.Abs(d) > 0.5 {
				t.Errorf("the level across the seam is %+.2f dB from the loop's", d)
			}
			t.Logf("loop of %d frames; seam step %.4g, inside %.4g; across the seam %+.3f dB", L, seam, inside, 20*math.Log10(rms(across)/rms(inner)))
			unlooped := make([]float64, synth.Frames(n))
			var r synth.Renderer
			r.Render(unlooped, n)
			if d := repeats(unlooped, loop.Start); d < 1e-3 {
				t.Errorf("noise with the note's own period repeats over the loop too (%.3g): the check cannot fail", d)
			}
		})
	}
}

func rms(x []float64) float64 {
	s := 0.0
	for _, v := range x {
		s += v * v
	}
	return math.Sqrt(s / float64(len(x)))
}

// BenchmarkNoise renders notes holding one noise band and nothing else,
// and reports the cost per second of audio (ms/audio-s): for bands a
// third of an octave and eight octaves wide, for notes of 1, 4 and 16 s
// (whose noise periods are their lengths), and for looped notes whose
// loop length the FFT takes only through Bluestein's algorithm. The cost
// grows with the note's length (as P log P), not with the band's width.
func BenchmarkNoise(b *testing.B) {
	const rate = 48000
	widths := []struct {
		name      string
		low, high float64
	}{{"third-octave", 891, 1122}, {"8-octaves", 80, 20480}}
	for _, w := range widths {
		for _, seconds := range []int{1, 4, 16} {
			b.Run(fmt.Sprintf("%s/%ds", w.name, seconds), func(b *testing.B) {
				n := &patch.Note{SampleRate: rate, Channels: 1, Frames: seconds * rate, NoteOff: seconds * rate,
					Noise: []patch.NoiseBand{{Low: w.low, High: w.high, Slope: -3, Amplitude: 0.3, Envelope: patch.Envelope{Attack: 0.01, Sustain: 1, Release: 0.1},
						Width: 1, Seed: 1, Limit: 21600, FadeFrom: 19440}}}
				benchmarkNoise(b, n, synth.Loop{}, float64(seconds))
			})
		}
		b.Run(w.name+"/4s-loop-of-47999", func(b *testing.B) {
			// 47999 = 7·6857: a length gonum's FFT takes only slowly.
			n := &patch.Note{SampleRate: rate, Channels: 1, Frames: 4 * rate, NoteOff: 3 * rate,
				Noise: []patch.NoiseBand{{Low: w.low, High: w.high, Slope: -3, Amplitude: 0.3, Envelope: patch.Envelope{Attack: 0.01, Sustain: 1, Release: 0.1},
					Width: 1, Seed: 1, Limit: 21600, FadeFrom: 19440}}}
			benchmarkNoise(b, n, synth.Loop{Start: 48000, End: 48000 + 47999 - 1}, 4)
		})
	}
}

func benchmarkNoise(b *testing.B, n *patch.Note, loop synth.Loop, seconds float64) {
	buf := make([]float64, synth.Frames(n))
	var r synth.Renderer
	r.RenderLooped(buf, n, loop) // warm: the transform's tables are made once a length
	b.ResetTimer()
	for b.Loop() {
		r.RenderLooped(buf, n, loop)
	}
	b.ReportMetric(b.Elapsed().Seconds()*1000/float64(b.N)/seconds, "ms/audio-s")
}
