package patch_test

import (
	"math"
	"math/cmplx"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"

	"sinter/patch"
	"sinter/synth"
)

// renderOnly expands src (one note) and renders it.
func renderOnly(t *testing.T, src string) (patch.Note, []float64) {
	t.Helper()
	n := onlyNote(t, src)
	buf := make([]float64, synth.Frames(&n))
	var r synth.Renderer
	r.Render(buf, &n)
	return n, buf
}

// zeroCrossingFrequencies returns, for each rising zero crossing after the
// first, its time and the frequency 1/(time since the previous one), the
// crossings placed by linear interpolation between samples.
func zeroCrossingFrequencies(buf []float64, rate float64) (times, freqs []float64) {
	last := -1.0
	for i := 1; i < len(buf); i++ {
		if buf[i-1] < 0 && buf[i] >= 0 {
			at := (float64(i-1) + buf[i-1]/(buf[i-1]-buf[i])) / rate
			if last >= 0 {
				times, freqs = append(times, at), append(freqs, 1/(at-last))
			}
			last = at
		}
	}
	return times, freqs
}

// TestVibrato: a 5 Hz vibrato of 50 cents on A4 swings the frequency
// measured between zero crossings to 440·2^(±50/1200) Hz, its crests come
// 1/5 s apart, nothing moves before the delay, and no step between samples
// exceeds a sine's largest, 2π·f_max/fs, so the phase never jumps.
func TestVibrato(t *testing.T) {
	_, buf := renderOnly(t, `name: t
keys: [A4]
hold: 2
tail: 0
envelope: {attack: 0, release: 0.001}
normalize: off
partials:
  - {ratio: 1, amplitude: 0.5, vibrato: {rate: 5, depth: 50, delay: 0.4}}
`)
	times, freqs := zeroCrossingFrequencies(buf, 48000)
	hi, lo := 440*math.Exp2(50.0/1200), 440*math.Exp2(-50.0/1200)
	var top, bottom float64 = 0, 1e9
	var crests []float64
	for i, f := range freqs {
		if times[i] < 0.39 && math.Abs(f-440) > 0.05 {
			t.Fatalf("%.3f Hz at %.3f s, before the vibrato starts", f, times[i])
		}
		top, bottom = max(top, f), min(bottom, f)
		if i > 0 && i+1 < len(freqs) && f > freqs[i-1] && f >= freqs[i+1] && f > 450 {
			crests = append(crests, times[i])
		}
	}
	// One period averages the frequency over 2.3 ms, 1 % of the vibrato's
	// period, which shaves its crests by under 0.01 %.
	if math.Abs(top-hi) > 0.2 || math.Abs(bottom-lo) > 0.2 {
		t.Errorf("frequency swings %.3f..%.3f Hz; want %.3f..%.3f", bottom, top, lo, hi)
	}
	if len(crests) < 6 {
		t.Fatalf("%d crests; want 8", len(crests))
	}
	if period := (crests[len(crests)-1] - crests[0]) / float64(len(crests)-1); math.Abs(period-0.2) > 0.002 {
		t.Errorf("crests %.4f s apart; want 0.2", period)
	}
	limit := 0.5 * 2 * math.Pi * hi / 48000 * 1.0001
	for i := 1; i < len(buf); i++ {
		if d := math.Abs(buf[i] - buf[i-1]); d > limit {
			t.Fatalf("step of %.5f at sample %d, more than a sine of %.1f Hz can make (%.5f)", d, i, hi, limit)
		}
	}
}

// TestGlideAndDrift: a pitch envelope from an octave below glides to the
// key; a drift stays within its depth and differs from partial to
// partial.
func TestGlideAndDrift(t *testing.T) {
	_, buf := renderOnly(t, `name: t
keys: [A4]
hold: 1
tail: 0
envelope: {attack: 0, release: 0.001}
normalize: off
partials:
  - {ratio: 1, pitch: [[0, -1200], [0.5, 0]]}
`)
	times, freqs := zeroCrossingFrequencies(buf, 48000)
	for i, f := range freqs {
		want := 440 * math.Exp2(max(-1, (times[i]-0.5)/0.5)*1) // the expected glide, at the crossing
		if times[i] >= 0.5 {
			want = 440
		}
		if math.Abs(f-want) > 0.01*want {
			t.Fatalf("%.2f Hz at %.3f s; want %.2f", f, times[i], want)
		}
	}
	_, buf = renderOnly(t, `name: t
keys: [A4]
hold: 3
tail: 0
envelope: {attack: 0, release: 0.001}
normalize: off
partials:
  - {ratio: 1, drift: {depth: 15, rate: 2}}
`)
	_, freqs = zeroCrossingFrequencies(buf, 48000)
	moved := 0.0
	for _, f := range freqs {
		cents := 1200 * math.Log2(f/440)
		if math.Abs(cents) > 15.05 {
			t.Fatalf("drift reached %.2f cents; depth is 15", cents)
		}
		moved = max(moved, math.Abs(cents))
	}
	if moved < 3 {
		t.Errorf("drift moved at most %.2f cents in 3 s; want a few", moved)
	}
	two := onlyNote(t, "name: t\nkeys: [A4]\npartials:\n  - {ratios: [1, 1], drift: {depth: 15, rate: 2}}\n")
	if a, b := two.Partials[0].Motion.Cents(1), two.Partials[1].Motion.Cents(1); a == b {
		t.Errorf("two partials drift together (%v cents at 1 s)", a)
	}
}

// TestBandLimitWithVibrato: the band limit checks the highest frequency a
// partial reaches. A partial at 0.44·fs with a 100-cent vibrato would
// reach 0.466·fs, past the limit, so it is dropped though its centre is
// below the limit; one whose vibrato stays below the limit renders with
// no energy above it (gonum's FFT), where a partial that crossed Nyquist
// would leave its alias.
func TestBandLimitWithVibrato(t *testing.T) {
	dropped := onlyNote(t, `name: t
sample_rate: 48000
keys: [A4]
partials:
  - {ratio: 48, vibrato: {rate: 6, depth: 100}}
`)
	if len(dropped.Partials) != 0 || dropped.Dropped != 1 {
		t.Errorf("a vibrato reaching %.0f Hz was kept (%d partials, %d dropped); the limit is 21600 Hz",
			440*48*math.Exp2(100.0/1200), len(dropped.Partials), dropped.Dropped)
	}
	n, buf := renderOnly(t, `name: t
sample_rate: 48000
keys: [A4]
hold: 1.5
tail: 0
band_fade: 0
envelope: {attack: 0.05, release: 0.05}
normalize: off
partials:
  - {ratio: 46, amplitude: 0.5, vibrato: {rate: 6, depth: 60}}
`)
	top := 440 * 46 * math.Exp2(60.0/1200)
	if len(n.Partials) != 1 {
		t.Fatalf("the partial peaking at %.0f Hz was dropped", top)
	}
	const size = 1 << 16
	seg := make([]float64, size)
	for i := range seg {
		w := 0.5 - 0.5*math.Cos(2*math.Pi*float64(i)/size) // Hann window
		seg[i] = w * buf[4800+i]
	}
	coeffs := fourier.NewFFT(size).Coefficients(nil, seg)
	peak, above := 0.0, 0.0
	for k, c := range coeffs {
		hz := float64(k) * 48000 / size
		mag := cmplx.Abs(c)
		peak = max(peak, mag)
		if hz > 21600+200 { // past the limit and the vibrato's own sidebands
			above = max(above, mag)
		}
	}
	db := 20 * math.Log10(above/peak)
	t.Logf("largest component above the limit: %.1f dB of the partial", db)
	if db > -100 {
		t.Errorf("energy above the band limit at %.1f dB of the partial; want below -100", db)
	}
}

// TestLoopWaitsForMotion: a loop starts only once the pitch envelope has
// reached its last point and the vibrato its full depth.
func TestLoopWaitsForMotion(t *testing.T) {
	n := onlyNote(t, `name: t
keys: [A3]
hold: 3
loop: {crossfade: 0.05}
envelope: {attack: 0.01, decay: 0.1, sustain: 0.8}
partials:
  - {harmonics: 4, pitch: [[0, -20], [0.3, 0]], vibrato: {rate: 5, depth: 10, delay: 0.6, fade: 0.5}}
`)
	if want := int(1.1*48000) + int(0.05*48000); n.Loop.Start < want {
		t.Errorf("the loop may start at frame %d; the vibrato is at full depth only at 1.1 s, so not before %d", n.Loop.Start, want)
	}
}
