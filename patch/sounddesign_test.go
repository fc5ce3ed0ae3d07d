package patch_test

import (
	"math"
	"strings"
	"testing"

	"sinter/patch"
	"sinter/synth"
)

// onlyNote expands src, which must give one note, and returns it.
func onlyNote(t *testing.T, src string) patch.Note {
	t.Helper()
	plan := mustExpand(t, src, patch.ExpandOptions{})
	if len(plan.Notes) != 1 {
		t.Fatalf("%d notes; want 1", len(plan.Notes))
	}
	return plan.Notes[0]
}

// TestStiffString: f_n = n·f0·sqrt(1 + B·n²) (H. Fletcher, "Normal
// vibration frequencies of a stiff piano string", JASA 36, 1964). The
// expected values were worked by hand for f0 = 110 Hz and B = 0.001:
// 110·√1.001, 550·√1.025 and 1100·√1.1.
func TestStiffString(t *testing.T) {
	n := onlyNote(t, `name: t
keys: [A2]
partials:
  - {harmonics: 10, stiffness: 0.001}
`)
	for _, c := range []struct {
		index int
		hz    float64
	}{{0, 110.05498628}, {4, 556.83256011}, {9, 1153.68973299}} {
		if got := n.Partials[c.index].Hz; math.Abs(got-c.hz) > 1e-6 {
			t.Errorf("partial %d at %.8f Hz; want %.8f", c.index+1, got, c.hz)
		}
	}
	// B may follow the key: doubling per octave up the keyboard.
	plan := mustExpand(t, `name: t
keys: [C3, C4]
partials:
  - {harmonics: 4, stiffness: "0.0004 * 2^((key-60)/12)"}
`, patch.ExpandOptions{})
	for _, note := range plan.Notes {
		b := 0.0004 * math.Exp2(float64(note.Key-60)/12)
		want := 4 * note.F0 * math.Sqrt(1+b*16)
		if got := note.Partials[3].Hz; math.Abs(got-want) > 1e-9*want {
			t.Errorf("key %d: partial 4 at %v Hz; want %v", note.Key, got, want)
		}
	}
}

// TestModeTables checks every ratio of the two mode tables against the
// equation it comes from (N. H. Fletcher and T. D. Rossing, The Physics of
// Musical Instruments, 2nd ed., chapters 2 and 3): a free-free bar's
// modes go as x² with cos(x)·cosh(x) = 1, an ideal membrane's as the
// zeros j_mn of the Bessel functions J_m, evaluated with Go's math.Jn.
func TestModeTables(t *testing.T) {
	root := func(f func(float64) float64, a, b float64) float64 {
		for range 200 {
			m := (a + b) / 2
			if (f(a) < 0) == (f(m) < 0) {
				a = m
			} else {
				b = m
			}
		}
		return a
	}
	bar := onlyNote(t, "name: t\nkeys: [A4]\npartials:\n  - {modes: bar}\n")
	x1 := root(func(x float64) float64 { return math.Cos(x)*math.Cosh(x) - 1 }, 4, 5)
	if len(bar.Partials) != 10 {
		t.Fatalf("bar table has %d modes; want 10", len(bar.Partials))
	}
	for i, p := range bar.Partials {
		x := x1 * math.Sqrt(p.Hz/440)
		// cos x = 1/cosh x; compared this way the residual stays O(1).
		if r := math.Cos(x) - 1/math.Cosh(x); math.Abs(r) > 1e-5 {
			t.Errorf("bar mode %d (ratio %v): cos x − 1/cosh x = %.2g", i+1, p.Hz/440, r)
		}
	}
	drum := onlyNote(t, "name: t\nkeys: [A4]\npartials:\n  - {modes: drumhead}\n")
	j01 := root(math.J0, 2, 3)
	orders := []int{0, 1, 2, 0, 3, 1, 4, 2, 0, 5, 3, 6, 1, 4, 7, 2} // m of each (m,n) in modes.yaml
	if len(drum.Partials) != len(orders) {
		t.Fatalf("drumhead table has %d modes; want %d", len(drum.Partials), len(orders))
	}
	for i, p := range drum.Partials {
		if j := math.Jn(orders[i], p.Hz/440*j01); math.Abs(j) > 2e-6 {
			t.Errorf("drumhead mode %d (ratio %v): J_%d = %.2g, want 0", i+1, p.Hz/440, orders[i], j)
		}
	}
	// The handbook's tables, to the figures they print (from memory:
	// Fletcher & Rossing, Table 2.2 for the free bar, Table 3.2 for the
	// ideal membrane).
	for i, want := range []float64{1, 2.76, 5.40, 8.93, 13.34, 18.64} {
		if got := bar.Partials[i].Hz / 440; math.Abs(got-want) > 0.006 {
			t.Errorf("bar mode %d: ratio %.4f; the handbook prints %.2f", i+1, got, want)
		}
	}
	for i, want := range []float64{1, 1.59, 2.14, 2.30, 2.65, 2.92, 3.16, 3.50, 3.60, 3.65} {
		if got := drum.Partials[i].Hz / 440; math.Abs(got-want) > 0.006 {
			t.Errorf("drumhead mode %d: ratio %.4f; the handbook prints %.2f", i+1, got, want)
		}
	}
	few := onlyNote(t, "name: t\nkeys: [A4]\npartials:\n  - {modes: drumhead, count: 3}\n")
	if len(few.Partials) != 3 {
		t.Errorf("count 3 kept %d modes", len(few.Partials))
	}
}

// TestRatiosAndSpectra: a ratio list with its own amplitudes, and the
// named spectra weighted as their Fourier series (sawtooth ProofWiki,
// square and triangle MathWorld), the fundamental at 1.
func TestRatiosAndSpectra(t *testing.T) {
	n := onlyNote(t, `name: t
keys: [A4]
partials:
  - {ratios: [1, 2.756, 5.404], amplitudes: [1, -6 dB, "0.5 * n"]}
`)
	wantAmp := []float64{1, math.Pow(10, -6.0/20), 1.5}
	for i, r := range []float64{1, 2.756, 5.404} {
		if p := n.Partials[i]; !near(p.Hz, 440*r, 1e-12) || !near(p.Amplitude, wantAmp[i], 1e-12) {
			t.Errorf("ratio partial %d: %v Hz amp %v; want %v Hz amp %v", i, p.Hz, p.Amplitude, 440*r, wantAmp[i])
		}
	}
	for _, c := range []struct {
		spectrum string
		n        []float64
		amp      []float64
	}{
		{"sawtooth", []float64{1, 2, 3, 4}, []float64{1, -1.0 / 2, 1.0 / 3, -1.0 / 4}},
		{"square", []float64{1, 3, 5, 7}, []float64{1, 1.0 / 3, 1.0 / 5, 1.0 / 7}},
		{"triangle", []float64{1, 3, 5, 7}, []float64{1, -1.0 / 9, 1.0 / 25, -1.0 / 49}},
	} {
		n := onlyNote(t, "name: t\nkeys: [A2]\npartials:\n  - {spectrum: "+c.spectrum+", count: 4}\n")
		for i, p := range n.Partials {
			if !near(p.Hz, 110*c.n[i], 1e-12) || !near(p.Amplitude, c.amp[i], 1e-12) {
				t.Errorf("%s partial %d: %v Hz amp %v; want %v Hz amp %v", c.spectrum, i, p.Hz, p.Amplitude, 110*c.n[i], c.amp[i])
			}
		}
	}
}

// TestCluster: seeded ratios inside the range, the same on every key and
// layer (the cluster is part of the instrument), and another seed gives
// another cluster.
func TestCluster(t *testing.T) {
	src := `name: t
seed: %d
keys: [C3, C5]
velocities: [60, 120]
partials:
  - {cluster: {count: 12, from: 1.5, to: 6}}
`
	ratios := func(seed string) [][]float64 {
		plan := mustExpand(t, strings.Replace(src, "%d", seed, 1), patch.ExpandOptions{})
		var all [][]float64
		for _, n := range plan.Notes {
			var r []float64
			for _, p := range n.Partials {
				r = append(r, p.Hz/n.F0)
			}
			all = append(all, r)
		}
		return all
	}
	a, b := ratios("1"), ratios("2")
	for i, r := range a[0] {
		if r < 1.5 || r > 6 {
			t.Errorf("ratio %v outside 1.5..6", r)
		}
		for _, other := range a[1:] {
			if !near(other[i], r, 1e-12) {
				t.Errorf("ratio %d differs between notes: %v and %v", i, r, other[i])
			}
		}
	}
	if near(a[0][0], b[0][0], 1e-12) && near(a[0][1], b[0][1], 1e-12) {
		t.Errorf("seeds 1 and 2 gave the same cluster %v", a[0])
	}
}

// TestTiltAndBody: a tilt of −6 dB per octave puts harmonic 2 6 dB and
// harmonic 4 12 dB below the fundamental; a body fixed in hertz gives a
// partial the dB interpolated in log frequency between its points, on any
// key.
func TestTiltAndBody(t *testing.T) {
	n := onlyNote(t, "name: t\nkeys: [A2]\npartials:\n  - {harmonics: 4, tilt: -6}\n")
	for i, wantDB := range []float64{0, -6, -6 * math.Log2(3), -12} {
		if got := 20 * math.Log10(n.Partials[i].Amplitude); math.Abs(got-wantDB) > 1e-9 {
			t.Errorf("harmonic %d at %.4f dB; want %.4f", i+1, got, wantDB)
		}
	}
	plan := mustExpand(t, `name: t
keys: [C4, C5]
body: [[500, 0], [2000, 12], [4000, -6]]
partials:
  - {ratio: 1}
  - {ratio: 2}
`, patch.ExpandOptions{})
	for _, note := range plan.Notes {
		for _, p := range note.Partials {
			var want float64
			switch {
			case p.Hz <= 500:
				want = 0
			case p.Hz <= 2000:
				want = 12 * math.Log(p.Hz/500) / math.Log(4)
			default:
				want = 12 - 18*math.Log(p.Hz/2000)/math.Log(2)
			}
			if got := 20 * math.Log10(p.Amplitude); math.Abs(got-want) > 1e-9 {
				t.Errorf("key %d, %.1f Hz: %.4f dB; want %.4f", note.Key, p.Hz, got, want)
			}
		}
	}
}

// TestDetuneAndUnison: detune moves a partial by its cents; unison makes
// evenly spread copies at 1/√voices each, fanned across the field.
func TestDetuneAndUnison(t *testing.T) {
	n := onlyNote(t, `name: t
channels: 2
keys: [A4]
partials:
  - {ratio: 1, detune: 5, unison: {voices: 3, spread: 20}}
`)
	if len(n.Partials) != 3 {
		t.Fatalf("%d partials; want 3", len(n.Partials))
	}
	for i, cents := range []float64{-5, 5, 15} {
		p := n.Partials[i]
		if want := 440 * math.Exp2(cents/1200); !near(p.Hz, want, 1e-12) {
			t.Errorf("copy %d at %v Hz; want %v", i, p.Hz, want)
		}
		if !near(p.Amplitude, 1/math.Sqrt(3), 1e-12) || p.Pan != float64(i-1) {
			t.Errorf("copy %d: amplitude %v pan %v; want %v and %d", i, p.Amplitude, p.Pan, 1/math.Sqrt(3), i-1)
		}
	}
}

// TestBeatRate: two equal partials a few cents apart beat at |f1 − f2|
// (common practice). The envelope of the rendered sum, as RMS over 2 ms
// windows, has its minima 1/|f1 − f2| apart.
func TestBeatRate(t *testing.T) {
	_, buf := renderOnly(t, `name: t
sample_rate: 48000
keys: [A4]
hold: 3
tail: 0
envelope: {attack: 0, release: 0.001}
normalize: off
partials:
  - {ratio: 1, amplitude: 0.4}
  - {ratio: 1, amplitude: 0.4, detune: 20}
`)
	beat := 440 * (math.Exp2(20.0/1200) - 1) // 5.1189 Hz
	const window = 96
	var rms []float64
	for i := 0; i+window <= len(buf); i += window {
		s := 0.0
		for _, v := range buf[i : i+window] {
			s += v * v
		}
		rms = append(rms, math.Sqrt(s/window))
	}
	var minima []float64
	for i := 1; i+1 < len(rms); i++ {
		if rms[i] < rms[i-1] && rms[i] <= rms[i+1] && rms[i] < 0.1 {
			minima = append(minima, (float64(i)+0.5)*window/48000)
		}
	}
	if len(minima) < 10 {
		t.Fatalf("%d envelope minima in 3 s; want about %.0f", len(minima), 3*beat)
	}
	period := (minima[len(minima)-1] - minima[0]) / float64(len(minima)-1)
	if got := 1 / period; math.Abs(got-beat) > 0.01*beat {
		t.Errorf("beats at %.4f Hz; want |f1 − f2| = %.4f Hz", got, beat)
	}
}

// TestPanRules: alternate, random and ratio rules place partials inside
// ±width, the same way on every key.
func TestPanRules(t *testing.T) {
	pans := func(rule string) []float64 {
		n := onlyNote(t, "name: t\nchannels: 2\nkeys: [C3]\npartials:\n  - {harmonics: 8, pan: {rule: "+rule+", width: 0.5}}\n")
		var out []float64
		for _, p := range n.Partials {
			out = append(out, p.Pan)
		}
		return out
	}
	for i, p := range pans("alternate") {
		if want := []float64{-0.5, 0.5}[i%2]; p != want {
			t.Errorf("alternate: partial %d at %v; want %v", i, p, want)
		}
	}
	ratio := pans("ratio")
	if ratio[0] != -0.5 || math.Abs(ratio[7]-0.5) > 1e-15 || !near(ratio[1], -0.5+math.Log(2)/math.Log(8), 1e-12) {
		t.Errorf("ratio: %v; want −0.5 … 0.5 in log ratio", ratio)
	}
	random := pans("random")
	for _, p := range random {
		if math.Abs(p) > 0.5 {
			t.Errorf("random: %v outside ±0.5", p)
		}
	}
	if again := pans("random"); again[3] != random[3] {
		t.Errorf("random pans are not reproducible: %v then %v", random[3], again[3])
	}
}

// TestSchroederCrestFactor: 64 equal harmonics all starting at a crest
// (cosine phase) have a crest factor of √(2·64) = 21.07 dB, since the peak
// is 64·a and the RMS a·√32; Schroeder's phases (Schroeder 1970) bring it
// down to a few dB, about that of a lone sine plus 1 to 2 dB (from
// memory), so the test asks for under 6 dB. Round robins shift the
// Schroeder waveform in time and keep its crest factor.
func TestSchroederCrestFactor(t *testing.T) {
	crest := func(phase string, rr int) []float64 {
		plan := mustExpand(t, "name: t\nkeys: [A1]\nround_robin: "+string(rune('0'+rr))+"\npartials:\n  - {harmonics: 64, phase: "+phase+"}\n", patch.ExpandOptions{})
		var out []float64
		for i := range plan.Notes {
			out = append(out, synth.TimbreCrestFactor(&plan.Notes[i]))
		}
		return out
	}
	// The quarter second holds 13.75 periods of A1, so the RMS is taken
	// over a part period too; 0.1 dB allows for that.
	if in := crest("90", 1)[0]; math.Abs(in-20*math.Log10(math.Sqrt(128))) > 0.1 {
		t.Errorf("cosine phases: crest %.2f dB; want %.2f", in, 20*math.Log10(math.Sqrt(128)))
	}
	for i, c := range crest("schroeder", 3) {
		t.Logf("Schroeder phases, variation %d: crest %.2f dB", i+1, c)
		if c > 6 {
			t.Errorf("Schroeder phases, variation %d: crest %.2f dB; want under 6", i+1, c)
		}
	}
	if c := crest("random", 1)[0]; c < 6 || c > 18 {
		t.Errorf("random phases: crest %.2f dB; want between the two", c)
	}
}
