package synth_test

import (
	"math"
	"math/big"
	"math/bits"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"
	"gonum.org/v1/gonum/dsp/window"

	"sinter/patch"
	"sinter/synth"
	"sinter/synth/kernel"
)

// flat is a constant envelope: no attack, no decay, full sustain, and a
// release far beyond the end of any note below.
var flat = patch.Envelope{Attack: 0, Decay: 0, Sustain: 1, Release: 1000}

// monoNote is a mono note of frames samples, released at its last sample.
func monoNote(rate, frames int, partials ...patch.Partial) *patch.Note {
	return &patch.Note{SampleRate: rate, Channels: 1, Frames: frames, NoteOff: frames, Partials: partials}
}

// sine is a partial with the flat envelope.
func sine(hz, amp, phase float64) patch.Partial {
	return patch.Partial{Hz: hz, Amplitude: amp, Phase: phase, Envelope: flat}
}

func render(n *patch.Note) []float64 {
	var r synth.Renderer
	buf := make([]float64, synth.Frames(n))
	r.Render(buf, n)
	return buf
}

// cycleRef is an exact reference for the phase of a sine: frac(n·hz/rate)
// cycles. hz/rate is reduced with math/big to a fraction p/q of integers
// and n·p is taken modulo q in 128-bit integer arithmetic, so the only
// rounding is the final division, below 2^-53 of a cycle at any n. This
// keeps math.Sin, the reference, fed with an argument below 2π+|phase|
// where it is accurate to an ulp; math.Sin(2π·f·n/fs) with n in the
// millions would itself be off by ~1e-10.
type cycleRef struct{ p, q uint64 }

func newCycleRef(tb testing.TB, hz float64, rate int) cycleRef {
	tb.Helper()
	r := new(big.Rat).SetFloat64(hz)
	r.Quo(r, new(big.Rat).SetInt64(int64(rate)))
	den := r.Denom()
	if !den.IsUint64() || den.Uint64() >= 1<<63 {
		tb.Fatalf("%g Hz / %d Hz has a denominator too large for the reference (%v); pick another test frequency", hz, rate, den)
	}
	p := new(big.Int).Mod(r.Num(), den)
	return cycleRef{p: p.Uint64(), q: den.Uint64()}
}

// at returns frac(n·hz/rate) in [0, 1).
func (c cycleRef) at(n int) float64 {
	hi, lo := bits.Mul64(uint64(n), c.p)
	return float64(bits.Rem64(hi, lo, c.q)) / float64(c.q)
}

// sin is the reference partial value sin(2π·hz·n/rate + phase) at sample n.
func (c cycleRef) sin(n int, phase float64) float64 {
	return math.Sin(2*math.Pi*c.at(n) + phase)
}

type accuracyCase struct {
	name     string
	rate     int
	seconds  int
	partials []patch.Partial
}

// still gives p a motion that never moves it, so it takes the moving
// partials' path (knots, chirp rotation) with the exact phase known.
func still(p patch.Partial) patch.Partial {
	p.Motion = &patch.Motion{Vibrato: patch.Vibrato{Rate: 5, Depth: 0}}
	return p
}

// accuracyCases are single partials at 55, 440, 3520 and 9871.3 Hz, a spread
// of phases and amplitudes, plus a bank of seven partials so the renderer's
// four-at-a-time path is checked as well as its single-partial path. 3000
// and 6000 Hz (times 1 + 1e-6) put eight samples' worth of phase next to π
// and 2π, the worst case for the vector kernel's stride-8 resonator, whose
// coefficient 2·cos 8ω is then ill-conditioned. The moving-path cases run
// a partial through the path for partials with motion.
func accuracyCases(seconds int) []accuracyCase {
	return []accuracyCase{
		{"55Hz", 48000, seconds, []patch.Partial{sine(55, 1, 0)}},
		{"55Hz-phase", 48000, seconds, []patch.Partial{sine(55, -0.7, math.Pi/3)}},
		{"440Hz", 48000, seconds, []patch.Partial{sine(440, 1, -2.5)}},
		{"3520Hz", 48000, seconds, []patch.Partial{sine(3520, 0.5, 4.0)}},
		{"9871.3Hz", 48000, seconds, []patch.Partial{sine(9871.3, 1, 100)}},
		{"9871.3Hz-phase0", 48000, seconds, []patch.Partial{sine(9871.3, 1, 0)}},
		{"3000Hz-stride", 48000, seconds, []patch.Partial{sine(3000*(1+1e-6), 1, 0.3)}},
		{"6000Hz-stride", 48000, seconds, []patch.Partial{sine(6000*(1+1e-6), 1, 0.3)}},
		{"440Hz-moving-path", 48000, seconds, []patch.Partial{still(sine(440, 1, -2.5))}},
		{"9871.3Hz-moving-path", 48000, seconds, []patch.Partial{still(sine(9871.3, 0.5, 1))}},
		{"bank-moving-path", 48000, seconds, []patch.Partial{
			still(sine(55, 0.3, 0)), still(sine(440, -0.2, 1)), still(sine(3520, 0.25, 2)), still(sine(9871.3, 0.1, 3)),
		}},
		{"bank", 48000, seconds, []patch.Partial{
			sine(55, 0.3, 0), sine(440, -0.2, 1), sine(3520, 0.25, 2), sine(9871.3, 0.1, 3),
			sine(1000, 0.05, -1), sine(12345, 0.05, 0.5), sine(220, 0.05, 6),
		}},
	}
}

// checkAccuracy renders c and compares every sample with the sum of
// Amplitude·sin(2π·Hz·n/fs + Phase) (reference: Go's math.Sin on an exactly
// reduced argument) within tol, scaled by Σ|Amplitude| where that exceeds 1.
func checkAccuracy(t *testing.T, c accuracyCase, tol float64) {
	frames := c.seconds * c.rate
	n := monoNote(c.rate, frames, c.partials...)
	buf := render(n)
	refs := make([]cycleRef, len(c.partials))
	scale := 0.0
	for i, p := range c.partials {
		refs[i] = newCycleRef(t, p.Hz, c.rate)
		scale += math.Abs(p.Amplitude)
	}
	scale = max(1, scale)
	worst, at := 0.0, 0
	for i, got := range buf {
		want := 0.0
		for j, p := range c.partials {
			want += p.Amplitude * refs[j].sin(i, p.Phase)
		}
		if e := math.Abs(got - want); e > worst {
			worst, at = e, i
		}
	}
	t.Logf("worst error %.3g at sample %d (%.3f s)", worst, at, float64(at)/float64(c.rate))
	if worst > tol*scale {
		t.Errorf("sample %d is %.3g away from Σ a·sin(2π·f·n/fs + φ); allowed %.3g", at, worst, tol*scale)
	}
}

// TestOscillatorAccuracy: 60 s of each partial, every sample within 1e-12 of
// Amplitude·math.Sin(2π·f·n/fs + phase) (reference: Go's math.Sin). A
// frequency quantised to 2^-64 cycles/sample, as the package doc's 64-bit
// phase accumulator allows, would add at most n·2^-65 cycles (< 5e-13 rad
// at 60 s), which the 1e-12 budget absorbs. Every set of kernels the
// processor runs is checked.
func TestOscillatorAccuracy(t *testing.T) {
	for _, isa := range kernel.Supported() {
		previous := kernel.Use(isa)
		for _, c := range accuracyCases(60) {
			t.Run(isa.String()+"/"+c.name, func(t *testing.T) { checkAccuracy(t, c, 1e-12) })
		}
		kernel.Use(previous)
	}
}

// analyser measures sinusoids with gonum's real FFT and a window from
// gonum's dsp/window, following the recipe of libraries.md §3:
// P[k] = 2|X[k]|²/(N·Σw²), so a sine of amplitude A has ΣP = A²/2 over its
// main lobe and A = sqrt(2·ΣP). halfWidth is the main lobe's half width in
// bins.
type analyser struct {
	rate      int
	halfWidth float64
	fft       *fourier.FFT
	win       window.Values
	sumW2     float64
	tmp       []float64
	coef      []complex128
}

// newAnalyser uses gonum's Blackman-Harris window, whose main lobe is ±4
// bins (gonum's doc: ΔF_0 = 8), the "±4 bins" of libraries.md §3.
func newAnalyser(n, rate int) *analyser {
	return newWindowAnalyser(n, rate, window.BlackmanHarris, 4)
}

// squaredBlackmanHarris is gonum's Blackman-Harris window applied twice.
// One Blackman-Harris window leaks −86 to −89 dB of a pure tone's power
// outside its ±4-bin lobe (measured on math.Sin tones at these sizes; its
// sidelobes peak at −92 dB, gonum's doc, and fall slowly because the window
// does not quite reach 0 at its ends), which is too close to a −100 dB
// criterion to test it. The square's spectrum is the self-convolution of
// the Blackman-Harris spectrum, so its main lobe is ±8 bins, and it leaks
// about −141 dB.
func squaredBlackmanHarris(seq []float64) []float64 {
	seq = window.BlackmanHarris(seq)
	for i, w := range seq {
		seq[i] = w * w
	}
	return seq
}

func newWindowAnalyser(n, rate int, win func([]float64) []float64, halfWidth float64) *analyser {
	a := &analyser{rate: rate, halfWidth: halfWidth, fft: fourier.NewFFT(n), win: window.NewValues(win, n), tmp: make([]float64, n)}
	for _, w := range a.win {
		a.sumW2 += w * w
	}
	return a
}

// power returns the one-sided power spectrum of x, whose length is the
// analyser's.
func (a *analyser) power(x []float64) []float64 {
	a.win.TransformTo(a.tmp, x)
	a.coef = a.fft.Coefficients(a.coef, a.tmp)
	n := float64(len(x))
	p := make([]float64, len(a.coef))
	for k, c := range a.coef {
		p[k] = 2 * (real(c)*real(c) + imag(c)*imag(c)) / (n * a.sumW2)
	}
	return p
}

// lobe returns the range of bins within the main lobe's half width of hz.
func (a *analyser) lobe(hz float64) (lo, hi int) {
	k0 := hz / float64(a.rate) * float64(len(a.tmp))
	return int(math.Ceil(k0 - a.halfWidth)), int(math.Floor(k0 + a.halfWidth))
}

// amplitude returns the amplitude of the sinusoid at hz in power spectrum p.
func (a *analyser) amplitude(p []float64, hz float64) float64 {
	lo, hi := a.lobe(hz)
	sum := 0.0
	for k := max(lo, 0); k <= min(hi, len(p)-1); k++ {
		sum += p[k]
	}
	return math.Sqrt(2 * sum)
}

// residual returns the power outside the lobes of tones relative to the
// power inside them, in dB, and the part of that outside power at or above
// limitHz, relative to the same, in dB.
func (a *analyser) residual(p []float64, tones []float64, limitHz float64) (otherDB, aboveDB float64) {
	in := make([]bool, len(p))
	for _, hz := range tones {
		lo, hi := a.lobe(hz)
		for k := max(lo, 0); k <= min(hi, len(p)-1); k++ {
			in[k] = true
		}
	}
	var tone, other, above float64
	for k, v := range p {
		if in[k] {
			tone += v
			continue
		}
		other += v
		if a.fft.Freq(k)*float64(a.rate) >= limitHz {
			above += v
		}
	}
	return 10 * math.Log10(other/tone), 10 * math.Log10(above/tone)
}

func dB(ratio float64) float64 { return 20 * math.Log10(ratio) }

// TestFourierSeries renders the classic waveforms from their published
// Fourier series and checks, with gonum's FFT, that every harmonic comes out
// at its series coefficient. Partials stop below 0.45·fs so nothing aliases.
func TestFourierSeries(t *testing.T) {
	const (
		rate   = 48000
		f0     = 441.7 // fs/f0 is not an integer (libraries.md §3)
		frames = 65536
		checks = 10 // harmonics checked, counting only those present
	)
	type series struct {
		name string
		// coef is the coefficient of sin(n·x); 0 for an absent harmonic.
		coef func(n int) float64
		// source names where the series is published.
		source string
	}
	odd := func(n int) bool { return n%2 == 1 }
	cases := []series{
		{"square", func(n int) float64 {
			if !odd(n) {
				return 0
			}
			return 4 / math.Pi / float64(n)
		}, "MathWorld 'Fourier Series--Square Wave': (4/π) Σ_{n odd} sin(nx)/n"},
		{"sawtooth", func(n int) float64 {
			return 2 / math.Pi * math.Pow(-1, float64(n+1)) / float64(n)
		}, "ProofWiki 'Fourier Series/Sawtooth Wave/Special Cases': (2/π) Σ (−1)^(n+1) sin(nπx)/n"},
		{"triangle", func(n int) float64 {
			if !odd(n) {
				return 0
			}
			return 8 / (math.Pi * math.Pi) * math.Pow(-1, float64((n-1)/2)) / float64(n*n)
		}, "MathWorld 'Fourier Series--Triangle Wave': (8/π²) Σ_{n odd} (−1)^((n−1)/2) sin(nx)/n²"},
	}
	an := newAnalyser(frames, rate)
	top := int(math.Floor(0.45 * rate / f0)) // highest harmonic rendered
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var partials []patch.Partial
			for n := 1; n <= top; n++ {
				if a := c.coef(n); a != 0 {
					partials = append(partials, sine(float64(n)*f0, a, 0))
				}
			}
			buf := render(monoNote(rate, frames, partials...))
			p := an.power(buf)
			a1 := an.amplitude(p, f0)
			checked, worst := 0, 0.0
			for n := 1; checked < checks; n++ {
				got := an.amplitude(p, float64(n)*f0)
				want := math.Abs(c.coef(n))
				if want == 0 {
					// An absent harmonic: nothing but window leakage.
					if level := dB(got / a1); level > -120 {
						t.Errorf("harmonic %d should be absent, measured %.1f dB re the fundamental", n, level)
					}
					continue
				}
				checked++
				d := dB(got / want)
				worst = max(worst, math.Abs(d))
				if math.Abs(d) > 0.01 {
					t.Errorf("harmonic %d: measured amplitude %.6g, series coefficient %.6g (%+.4f dB; allowed ±0.01 dB; series from %s)", n, got, want, d, c.source)
				}
			}
			t.Logf("largest deviation over the first %d harmonics: %.5f dB", checks, worst)
		})
	}

	// The triangle series converges uniformly, so the rendered wave can be
	// held to its closed form sample by sample. The MathWorld triangle of
	// peak 1 is (2/π)·asin(sin x); truncating the series after harmonic
	// `top` leaves at most the tail (8/π²)·Σ_{n odd > top} 1/n², which,
	// since Σ_{n odd} 1/n² = π²/8 (MathWorld 'Dirichlet Lambda Function',
	// λ(2)), is 1 − (8/π²)·Σ_{n odd ≤ top} 1/n².
	t.Run("triangle-shape", func(t *testing.T) {
		var partials []patch.Partial
		head := 0.0
		for n := 1; n <= top; n += 2 {
			partials = append(partials, sine(float64(n)*f0, 8/(math.Pi*math.Pi)*math.Pow(-1, float64((n-1)/2))/float64(n*n), 0))
			head += 1 / float64(n*n)
		}
		bound := 1 - 8/(math.Pi*math.Pi)*head
		buf := render(monoNote(rate, frames, partials...))
		ref := newCycleRef(t, f0, rate)
		worst := 0.0
		for i, v := range buf {
			tri := 2 / math.Pi * math.Asin(math.Sin(2*math.Pi*ref.at(i)))
			worst = max(worst, math.Abs(v-tri))
		}
		if worst > bound+1e-9 {
			t.Errorf("rendered triangle is %.6g from (2/π)·asin(sin x); the series tail bounds it by %.6g", worst, bound)
		}
		// The deficit is attained at the peaks, where every term adds, so a
		// wave that is too smooth (lost harmonics) would also be caught.
		if worst < 0.5*bound {
			t.Errorf("rendered triangle is only %.6g from its closed form; %d harmonics should leave about %.6g", worst, len(partials), bound)
		}
	})
}

// TestGibbs renders a square wave from its first N odd harmonics and checks
// its peak against the Gibbs overshoot. Source: MathWorld
// "Wilbraham-Gibbs Constant"; the partial sum (4/π)·Σ sin(kx)/k over N odd k
// peaks at x = π/(2N) (standards §7), tending to 2·Si(π)/π = 1.178979744.
func TestGibbs(t *testing.T) {
	const (
		rate = 192000
		f0   = 20.0 // 199th harmonic at 3980 Hz; 9600 samples a period
		N    = 100
	)
	var partials []patch.Partial
	sMax := 0.0 // the partial sum at its first maximum, x = π/(2N)
	for j := range N {
		k := float64(2*j + 1)
		partials = append(partials, sine(k*f0, 4/math.Pi/k, 0))
		sMax += 4 / math.Pi * math.Sin(k*math.Pi/(2*N)) / k
	}
	// Standards §7 (computed): 1.178988 for N = 100.
	if math.Abs(sMax-1.178988) > 1e-6 {
		t.Fatalf("partial-sum maximum %.7f disagrees with the standards sheet's 1.178988", sMax)
	}
	buf := render(monoNote(rate, 2*rate/int(f0), partials...))
	peak := 0.0
	for _, v := range buf {
		peak = max(peak, v)
	}
	// Sampling finds the peak to within ½·|S″|·(Δx/2)² with S″ ≈ −8N²/π²
	// and Δx = 2π·f0/fs: 4.4e-4 here.
	t.Logf("peak %.7f; partial-sum maximum %.7f", peak, sMax)
	if peak > sMax+1e-9 || peak < sMax-1e-3 {
		t.Errorf("square-wave peak %.7f; the %d-harmonic partial sum peaks at %.7f (allowed −1e-3)", peak, N, sMax)
	}
	// Si(π) = 1.851937052 (standards §7, computed).
	if gibbs := 2 * 1.851937052 / math.Pi; math.Abs(peak-gibbs) > 1e-3 {
		t.Errorf("square-wave peak %.7f is not near the Gibbs limit 2·Si(π)/π = %.9f", peak, gibbs)
	}
}

// TestPitch checks MIDI key frequencies against the standards sheet and then
// measures the frequency of a rendered partial from its zero crossings.
func TestPitch(t *testing.T) {
	const rate = 48000
	cases := []struct {
		key int
		hz  float64 // standards §4 check frequencies (computed from f = 440·2^((m−69)/12), ISO 16 A4 = 440 Hz)
	}{
		{21, 27.5},
		{60, 261.625565},
		{69, 440},
		{108, 4186.009045},
	}
	for _, c := range cases {
		f := patch.KeyFrequency(c.key, 440)
		if math.Abs(f-c.hz) > 1e-6 {
			t.Errorf("KeyFrequency(%d, 440) = %.6f Hz, want %.6f (12-TET, standards §4)", c.key, f, c.hz)
		}
		frames := 2 * rate
		buf := render(monoNote(rate, frames, sine(f, 1, 0)))
		// Rising zero crossings, placed by linear interpolation between the
		// samples either side (common practice); the frequency is the number
		// of whole periods between the first and the last over their span.
		first, last, count := 0.0, 0.0, 0
		for i := 1; i < len(buf); i++ {
			if buf[i-1] < 0 && buf[i] >= 0 {
				x := float64(i-1) + buf[i-1]/(buf[i-1]-buf[i])
				if count == 0 {
					first = x
				}
				last = x
				count++
			}
		}
		if count < 10 {
			t.Fatalf("key %d: only %d zero crossings in %d samples", c.key, count, frames)
		}
		measured := float64(count-1) * rate / (last - first)
		// Cents: c = 1200·log2(f2/f1) (standards §4).
		cents := 1200 * math.Log2(measured/c.hz)
		t.Logf("key %d: %.6f Hz measured, %+.5f cents", c.key, measured, cents)
		if math.Abs(cents) > 0.05 {
			t.Errorf("key %d: rendered %.6f Hz, %+.4f cents from %.6f Hz (allowed ±0.05)", c.key, measured, cents, c.hz)
		}
	}
}

// TestBeats: two equal partials 1 Hz apart beat once per second (common
// practice; sin a + sin b = 2·sin((a+b)/2)·cos((a−b)/2), the sum-to-product
// identity, so with both phases 0 the nulls fall at t = k + ½ s).
func TestBeats(t *testing.T) {
	const (
		rate   = 48000
		frames = rate * 9 / 2
		win    = rate / 100 // 10 ms RMS window
	)
	buf := render(monoNote(rate, frames, sine(440, 0.5, 0), sine(441, 0.5, 0)))
	sq := make([]float64, len(buf)+1) // prefix sums of squares
	for i, v := range buf {
		sq[i+1] = sq[i] + v*v
	}
	rms := func(c int) float64 { // window centred on sample c
		return math.Sqrt((sq[c+win/2] - sq[c-win/2]) / win)
	}
	var minima, depths []float64
	loudest := 0.0
	for s := range 4 {
		best, at := math.Inf(1), 0
		for c := max(s*rate, win/2); c < (s+1)*rate; c++ {
			r := rms(c)
			loudest = max(loudest, r)
			if r < best {
				best, at = r, c
			}
		}
		minima = append(minima, float64(at)/rate)
		depths = append(depths, best)
	}
	t.Logf("beat nulls at %.4f s", minima)
	for i, d := range depths {
		if d > 0.05*loudest {
			t.Errorf("beat null near %.3f s has RMS %.4f, not far below the loudest %.4f", minima[i], d, loudest)
		}
	}
	for i, m := range minima {
		if want := float64(i) + 0.5; math.Abs(m-want) > 0.01 {
			t.Errorf("beat null %d at %.4f s, want %.1f s", i, m, want)
		}
		if i > 0 {
			if gap := m - minima[i-1]; math.Abs(gap-1) > 0.01 {
				t.Errorf("beat nulls %.4f s and %.4f s are %.4f s apart, want 1.0 ± 0.01 s", minima[i-1], m, gap)
			}
		}
	}
}

// TestBandLimit goes through the patch so the band limit in patch.Expand is
// exercised: C8 at 44.1 kHz with 64 harmonics of 1/n and band_limit 0.45
// keeps only harmonics below 0.45·fs = 19845 Hz. The check is the alias
// residual of libraries.md §3: power outside the harmonic lobes, relative
// to the tone, measured with the squared Blackman-Harris window so that the
// window's own leakage (about −141 dB) sits well below the −100 dB limit. A naive sum of all 64 harmonics folds harmonics above
// Nyquist back into the band (Stilson & Smith, ICMC 1996, standards §9) and
// must fail the same criterion.
func TestBandLimit(t *testing.T) {
	const src = `
name: bandlimit
sample_rate: 44100
keys: [108]
hold: 2
tail: 0.2
band_limit: 0.45
partials:
  - harmonics: 64
    amplitude: "1/n"
`
	p, err := patch.Parse("bandlimit.yaml", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	plan, err := p.Expand(patch.ExpandOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(plan.Notes) != 1 {
		t.Fatalf("%d notes, want 1", len(plan.Notes))
	}
	n := &plan.Notes[0]
	const rate = 44100
	limit := 0.45 * rate
	f0 := 440 * math.Exp2(float64(108-69)/12) // 12-TET, standards §4
	// Harmonics n·f0 < 19845 Hz: n ≤ 4, so 60 of the 64 go.
	if n.Dropped != 60 {
		t.Errorf("Dropped = %d, want 60", n.Dropped)
	}
	if len(n.Partials) != 4 {
		t.Errorf("%d partials kept, want 4", len(n.Partials))
	}
	for _, part := range n.Partials {
		if part.Hz >= limit {
			t.Errorf("kept partial at %.2f Hz is at or above the band limit %.2f Hz", part.Hz, limit)
		}
	}

	const frames, start = 65536, rate / 10 // an analysis span inside the sustain
	if start+frames > n.NoteOff {
		t.Fatalf("analysis span runs past note-off at %d", n.NoteOff)
	}
	buf := render(n)[start : start+frames]
	an := newWindowAnalyser(frames, rate, squaredBlackmanHarris, 8)
	var tones []float64
	for h := 1; float64(h)*f0 < limit; h++ {
		tones = append(tones, float64(h)*f0)
	}
	other, above := an.residual(an.power(buf), tones, limit)
	t.Logf("band-limited: residual %.1f dB, above the limit %.1f dB", other, above)
	if other > -100 {
		t.Errorf("power outside the harmonic lobes is %.1f dB re the tone; want at most −100 dB", other)
	}
	if above > -100 {
		t.Errorf("power above the band limit is %.1f dB re the tone; want at most −100 dB", above)
	}

	// Contrast: the naive sum aliases and must fail the same criterion.
	naive := make([]float64, frames)
	for i := range naive {
		tt := float64(start+i) / rate
		for h := 1; h <= 64; h++ {
			naive[i] += math.Sin(2*math.Pi*float64(h)*f0*tt) / float64(h)
		}
	}
	nOther, nAbove := an.residual(an.power(naive), tones, limit)
	t.Logf("naive: residual %.1f dB, above the limit %.1f dB", nOther, nAbove)
	if nOther <= -100 {
		t.Errorf("the aliasing naive sum passes the residual check (%.1f dB), so the check cannot fail", nOther)
	}
}

// envCase is a note whose partials are all DC: Hz 0 and phase π/2, so
// each partial is Amplitude·env(t)·sin(π/2) = Amplitude·env(t) and the
// rendered buffer is the envelope itself.
type envCase struct {
	name    string
	rate    int
	frames  int
	noteOff int
	envs    []patch.Envelope
	amps    []float64
}

func (c envCase) note(hz, phase float64) *patch.Note {
	n := &patch.Note{SampleRate: c.rate, Channels: 1, Frames: c.frames, NoteOff: c.noteOff}
	for i, e := range c.envs {
		n.Partials = append(n.Partials, patch.Partial{Hz: hz, Amplitude: c.amps[i], Phase: phase, Envelope: e})
	}
	return n
}

// corners returns the envelope's corners in samples: end of attack, end of
// decay, note-off, end of release.
func corners(e patch.Envelope, rate, noteOff int) (attack, decayEnd, off, releaseEnd float64) {
	fs := float64(rate)
	attack = e.Attack * fs
	decayEnd = attack + e.Decay*fs
	off = float64(noteOff)
	return attack, decayEnd, off, off + e.Release*fs
}

// curveK is the depth of the decay and release curve documented in
// envelope.go: (e^(−k·u) − e^(−k))/(1 − e^(−k)) with k = ln 1000.
var curveK = math.Log(1000)

// envTolerance bounds how far the rendered envelope may stray from
// synth.At at sample n. Between control points at most ControlFrames = h
// apart the renderer follows a straight line, and linear interpolation of
// f errs by at most h²/8·max|f″| (the Lagrange remainder of the linear
// interpolant; from memory). The attack and sustain are straight lines
// already, so only rounding remains there. For the curve above,
// |f″| ≤ range·k²/(T²·(1 − e^(−k))) with T the segment's length in samples.
func envTolerance(e patch.Envelope, rate, noteOff, n int) float64 {
	const rounding = 1e-12
	attack, decayEnd, off, releaseEnd := corners(e, rate, noteOff)
	h := float64(synth.ControlFrames)
	bend := func(rangeLevel, samples float64) float64 {
		return h * h / 8 * rangeLevel * curveK * curveK / (samples * samples * (1 - 1/1000.0))
	}
	x := float64(n)
	switch {
	case x >= off && x < releaseEnd:
		offLevel := synth.At(e, float64(noteOff)/float64(rate), float64(noteOff)/float64(rate))
		return rounding + bend(offLevel, releaseEnd-off)
	case x >= attack && x < decayEnd && x < off:
		return rounding + bend(1-e.Sustain, decayEnd-attack)
	}
	return rounding
}

func envCases() []envCase {
	const rate = 48000
	adsr := patch.Envelope{Attack: 512.0 / rate, Decay: 0.05, Sustain: 0.4, Release: 0.2}
	return []envCase{
		// Half the attack, sample 256, is a block start and so a control point.
		{"adsr", rate, 28800, 14400, []patch.Envelope{adsr}, []float64{1}},
		{"zero-attack", rate, 20000, 9000, []patch.Envelope{{Attack: 0, Decay: 0.05, Sustain: 0.5, Release: 0.1}}, []float64{1}},
		{"zero-release", rate, 20000, 9000, []patch.Envelope{{Attack: 0.01, Decay: 0.02, Sustain: 0.6, Release: 0}}, []float64{1}},
		{"off-during-attack", rate, 20000, 2400, []patch.Envelope{{Attack: 0.1, Decay: 0.1, Sustain: 0.7, Release: 0.1}}, []float64{1}},
		{"off-during-decay", rate, 20000, 4800, []patch.Envelope{{Attack: 0.005, Decay: 0.2, Sustain: 0.3, Release: 0.05}}, []float64{1}},
		// Corners that fall between samples.
		{"fractional-corners", rate, 30000, 15001, []patch.Envelope{{Attack: 0.0123457, Decay: 0.0333331, Sustain: 0.25, Release: 0.1111119}}, []float64{1}},
		// Five partials with different envelopes run through the renderer's
		// four-at-a-time path, whose spans break at every partial's corners.
		{"bank", rate, 30000, 12345, []patch.Envelope{
			adsr,
			{Attack: 0, Decay: 0.03, Sustain: 0.2, Release: 0.05},
			{Attack: 0.02, Decay: 0, Sustain: 0.9, Release: 0},
			{Attack: 0.3, Decay: 0.1, Sustain: 0.5, Release: 0.15},
			{Attack: 0.00731, Decay: 0.0917, Sustain: 0, Release: 0.3},
		}, []float64{0.3, -0.2, 0.25, 0.15, 0.1}},
	}
}

// TestEnvelope checks the rendered envelope against synth.At (itself held to
// the documented curve in envelope_test.go): exactly at control points, and
// within the linear-interpolation bound between them.
func TestEnvelope(t *testing.T) {
	for _, c := range envCases() {
		t.Run(c.name, func(t *testing.T) {
			fs := float64(c.rate)
			off := float64(c.noteOff) / fs
			want := func(n int) (level, tol float64) {
				for i, e := range c.envs {
					level += c.amps[i] * synth.At(e, float64(n)/fs, off)
					tol += math.Abs(c.amps[i]) * envTolerance(e, c.rate, c.noteOff, n)
				}
				return level, tol
			}
			buf := render(c.note(0, math.Pi/2))

			// Every sample, within the interpolation bound.
			for n, got := range buf {
				level, tol := want(n)
				if math.Abs(got-level) > tol {
					t.Fatalf("sample %d: rendered level %.15g, synth.At %.15g (off by %.3g, allowed %.3g)", n, got, level, got-level, tol)
				}
			}

			// Control points: every block start, and for a single partial
			// every corner of its envelope (with several partials, one
			// partial's corner need not be a control point of another).
			points := map[int]bool{}
			for n := 0; n < c.frames; n += synth.BlockFrames {
				points[n] = true
			}
			if len(c.envs) == 1 {
				a, d, o, r := corners(c.envs[0], c.rate, c.noteOff)
				for _, x := range []float64{a, d, o, r} {
					if n := int(math.Ceil(x)); n < c.frames {
						points[n] = true
					}
				}
			}
			for n := range points {
				if level, _ := want(n); math.Abs(buf[n]-level) > 1e-12 {
					t.Errorf("control point %d: rendered level %.15g, synth.At %.15g", n, buf[n], level)
				}
			}

			// The same envelope on a real oscillator.
			ref := newCycleRef(t, 1000, c.rate)
			tone := render(c.note(1000, 0.3))
			for n, got := range tone {
				level, tol := want(n)
				if w := level * ref.sin(n, 0.3); math.Abs(got-w) > tol+1e-10 {
					t.Fatalf("1 kHz partial, sample %d: %.15g, want At·sin = %.15g (allowed %.3g)", n, got, w, tol+1e-10)
				}
			}

			if len(c.envs) != 1 {
				return
			}
			// Single-partial landmarks.
			e := c.envs[0]
			a, d, o, r := corners(e, c.rate, c.noteOff)
			if c.name == "adsr" {
				// Linear attack: half way up at half the attack time.
				if math.Abs(buf[256]-0.5) > 1e-9 {
					t.Errorf("level at half the attack (sample 256) is %.12g, want 0.5", buf[256])
				}
			}
			if e.Attack == 0 && math.Abs(buf[0]-1) > 1e-12 {
				t.Errorf("zero attack: first sample is %.15g, want full level 1", buf[0])
			}
			for n := range c.noteOff {
				x := float64(n)
				switch {
				case x < a:
					// Linear from 0 to 1.
					if math.Abs(buf[n]-x/a) > 1e-12 {
						t.Fatalf("attack sample %d: %.15g, want %.15g", n, buf[n], x/a)
					}
				case x >= d:
					// The decay has reached the sustain level and stays there.
					if math.Abs(buf[n]-e.Sustain) > 1e-12 {
						t.Fatalf("sample %d, after attack+decay: %.15g, want sustain %g", n, buf[n], e.Sustain)
					}
				}
			}
			// Release starts from the level reached at note-off, even if the
			// attack or decay had not finished, and never rises.
			var held float64
			switch {
			case o < a:
				held = o / a
			case o >= d:
				held = e.Sustain
			default:
				held = synth.At(e, o/fs, o/fs) // mid-decay; At is checked in envelope_test.go
			}
			if e.Release > 0 && math.Abs(buf[c.noteOff]-held) > 1e-12 {
				t.Errorf("level at note-off is %.15g, want the held level %.15g", buf[c.noteOff], held)
			}
			for n := c.noteOff + 1; n < c.frames; n++ {
				if buf[n] > buf[n-1] {
					t.Fatalf("release rises at sample %d: %.15g after %.15g", n, buf[n], buf[n-1])
				}
			}
			// Zero at the end of the release, and exactly zero after it.
			end := int(math.Ceil(r))
			for n := end; n < c.frames; n++ {
				if buf[n] != 0 || tone[n] != 0 {
					t.Fatalf("sample %d, after the release ended at %.2f: level %g, 1 kHz partial %g; want exactly 0", n, r, buf[n], tone[n])
				}
			}
			if e.Release > 0 {
				if _, tol := want(end - 1); buf[end-1] > tol {
					t.Errorf("last release sample %d is %.3g, want near 0", end-1, buf[end-1])
				}
			}
		})
	}
}

// TestDeterministic: the same note renders to the same bits on a fresh
// Renderer and on one that has rendered a different note before (the
// package doc: "a note renders to the same bits on every run"), and a
// warmed-up Renderer allocates nothing.
func TestDeterministic(t *testing.T) {
	env := patch.Envelope{Attack: 0.01, Decay: 0.1, Sustain: 0.5, Release: 0.2}
	a := &patch.Note{SampleRate: 48000, Channels: 1, Frames: 24000, NoteOff: 12000}
	for h := 1; h <= 9; h++ {
		a.Partials = append(a.Partials, patch.Partial{Hz: 220 * float64(h), Amplitude: 1 / float64(h), Phase: float64(h), Envelope: env})
	}
	b := &patch.Note{SampleRate: 44100, Channels: 2, Frames: 30000, NoteOff: 5000}
	for h := 1; h <= 23; h++ {
		b.Partials = append(b.Partials, patch.Partial{Hz: 97.3 * float64(h), Amplitude: 0.1, Envelope: patch.Envelope{Attack: 0.3, Decay: 0.1, Sustain: 0.2, Release: 0.05}})
	}
	for i, width := range []float64{1, 0.3, 1} {
		b.Noise = append(b.Noise, patch.NoiseBand{Low: 500, High: 3000 * float64(i+1), Amplitude: 0.05, Envelope: patch.Envelope{Attack: 0.1, Sustain: 1, Release: 0.05},
			Pan: 0.2 * float64(i), Width: width, Seed: uint64(i), Limit: 19845, FadeFrom: 17860})
	}

	first := render(a)
	second := render(a)
	var reused synth.Renderer
	reused.Render(make([]float64, synth.Frames(b)), b)
	third := make([]float64, synth.Frames(a))
	reused.Render(third, a)
	for i := range first {
		if math.Float64bits(first[i]) != math.Float64bits(second[i]) || math.Float64bits(first[i]) != math.Float64bits(third[i]) {
			t.Fatalf("sample %d differs between renders: %v, %v, reused renderer %v", i, first[i], second[i], third[i])
		}
	}

	for _, n := range []*patch.Note{a, b} {
		dst := make([]float64, synth.Frames(n))
		var r synth.Renderer
		r.Render(dst, n)
		if allocs := testing.AllocsPerRun(5, func() { r.Render(dst, n) }); allocs != 0 {
			t.Errorf("%d-channel note: a warmed-up Render allocates %v times per call, want 0", n.Channels, allocs)
		}
	}
}

// TestStereo: a stereo note carries the same signal in both channels (the
// renderer's documented behaviour while partials have no position),
// interleaved frame by frame as WAV frames are (RIFF 1.0, standards §1),
// each channel matching the math.Sin reference.
func TestStereo(t *testing.T) {
	const rate, frames = 48000, 4800
	// Constant-power pan law (common practice): left = cos((p+1)·π/4),
	// right = sin((p+1)·π/4), so the centre is √½ (−3.01 dB) in each
	// channel and the extremes put everything in one channel.
	half := math.Sqrt2 / 2
	cases := []struct {
		pan         float64
		left, right float64
	}{
		{0, half, half},
		{-1, 1, 0},
		{1, 0, 1},
		{0.5, math.Cos(3 * math.Pi / 8), math.Sin(3 * math.Pi / 8)},
	}
	for _, c := range cases {
		l, r := synth.PanGains(c.pan)
		if math.Abs(l-c.left) > 1e-15 || math.Abs(r-c.right) > 1e-15 || math.Abs(l*l+r*r-1) > 1e-15 {
			t.Errorf("PanGains(%g) = %v, %v; want %v, %v with power 1", c.pan, l, r, c.left, c.right)
		}
	}
	// Partials at every position of the table, rendered together: each
	// channel must be the sum of each partial times its channel gain.
	var partials []patch.Partial
	for i, hz := range []float64{440, 1000, 3000, 5000, 7000, 9000} {
		p := sine(hz, 0.3/float64(i+1), float64(i))
		p.Pan = cases[i%len(cases)].pan
		partials = append(partials, p)
	}
	st := &patch.Note{SampleRate: rate, Channels: 2, Frames: frames, NoteOff: frames, Partials: partials}
	buf := render(st)
	if len(buf) != 2*frames {
		t.Fatalf("stereo buffer holds %d samples, want %d", len(buf), 2*frames)
	}
	refs := make([]cycleRef, len(partials))
	for i, p := range partials {
		refs[i] = newCycleRef(t, p.Hz, rate)
	}
	for i := range frames {
		var wantL, wantR float64
		for j, p := range partials {
			g := cases[j%len(cases)]
			v := p.Amplitude * refs[j].sin(i, p.Phase)
			wantL += g.left * v
			wantR += g.right * v
		}
		if math.Abs(buf[2*i]-wantL) > 1e-12 || math.Abs(buf[2*i+1]-wantR) > 1e-12 {
			t.Fatalf("frame %d: left %v right %v, reference %v %v", i, buf[2*i], buf[2*i+1], wantL, wantR)
		}
	}
	if w, s := synth.Work(st), (&synth.Renderer{}).Render(make([]float64, 2*frames), st); w != s {
		t.Errorf("Work %+v, Render %+v", w, s)
	}
}

// benchNote is 64 harmonics of 110 Hz for 4 s at 48 kHz, every partial
// sounding to the end.
func benchNote() *patch.Note {
	const rate = 48000
	n := &patch.Note{SampleRate: rate, Channels: 1, Frames: 4 * rate, NoteOff: 3 * rate}
	for h := 1; h <= 64; h++ {
		n.Partials = append(n.Partials, patch.Partial{
			Hz: 110 * float64(h), Amplitude: 1 / float64(h), Phase: 0.1 * float64(h),
			Envelope: patch.Envelope{Attack: 0.01, Decay: 0.5, Sustain: 0.5, Release: 1.5},
		})
	}
	return n
}

// BenchmarkRender measures the renderer on benchNote with each set of
// kernels the processor runs.
func BenchmarkRender(b *testing.B) { benchmarkRender(b, benchNote()) }

func benchmarkRender(b *testing.B, n *patch.Note) {
	for _, isa := range kernel.Supported() {
		b.Run(isa.String(), func(b *testing.B) {
			previous := kernel.Use(isa)
			defer kernel.Use(previous)
			dst := make([]float64, synth.Frames(n))
			var r synth.Renderer
			r.Render(dst, n)
			b.ResetTimer()
			for b.Loop() {
				r.Render(dst, n)
			}
			b.ReportMetric(float64(len(n.Partials)*n.Frames)*float64(b.N)/b.Elapsed().Seconds(), "partial-samples/s")
		})
	}
}

// BenchmarkNaiveSine is the same workload as BenchmarkRender done the
// obvious way: a·env(t)·math.Sin(2π·f·t + φ) per partial per sample.
func BenchmarkNaiveSine(b *testing.B) {
	n := benchNote()
	dst := make([]float64, n.Frames)
	rate := float64(n.SampleRate)
	off := float64(n.NoteOff) / rate
	for b.Loop() {
		clear(dst)
		for _, p := range n.Partials {
			for i := range dst {
				t := float64(i) / rate
				dst[i] += p.Amplitude * synth.At(p.Envelope, t, off) * math.Sin(2*math.Pi*p.Hz*t+p.Phase)
			}
		}
	}
	b.ReportMetric(float64(len(n.Partials)*n.Frames)*float64(b.N)/b.Elapsed().Seconds(), "partial-samples/s")
}

// BenchmarkRenderVibrato is BenchmarkRender's note with a vibrato on every
// partial, which takes the moving partials' path.
func BenchmarkRenderVibrato(b *testing.B) {
	n := benchNote()
	for i := range n.Partials {
		n.Partials[i].Motion = &patch.Motion{Vibrato: patch.Vibrato{Rate: 5.5, Depth: 20, Delay: 0.3, Fade: 0.5}, MaxCents: 20}
	}
	benchmarkRender(b, n)
}
