package loudness_test

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"sinter/synth/kernel"
	"sinter/synth/loudness"
)

// segment is a stretch of tone at a peak level in dBFS.
type segment struct {
	dBFS, seconds float64
}

// tone returns interleaved frames of a sine at hz, the same in every
// channel, through the segments in order with continuous phase.
func tone(channels, rate int, hz float64, segments ...segment) []float64 {
	frames := 0
	for _, s := range segments {
		frames += int(math.Round(s.seconds * float64(rate)))
	}
	x := make([]float64, 0, frames*channels)
	n := 0
	for _, s := range segments {
		amplitude := math.Pow(10, s.dBFS/20)
		for end := n + int(math.Round(s.seconds*float64(rate))); n < end; n++ {
			v := amplitude * math.Sin(2*math.Pi*hz*float64(n)/float64(rate))
			for range channels {
				x = append(x, v)
			}
		}
	}
	return x
}

func TestIntegratedEBUTech3341(t *testing.T) {
	// Source: EBU Tech 3341 Table 1, cases 1–5 (standards sheet §5.4):
	// stereo 1 kHz sines, levels as per-channel peak dBFS, I within ±0.1 LU.
	cases := []struct {
		name     string
		segments []segment
		want     float64
	}{
		{"case 1", []segment{{-23, 20}}, -23},
		{"case 2", []segment{{-33, 20}}, -33},
		{"case 3 (relative gate)", []segment{{-36, 10}, {-23, 60}, {-36, 10}}, -23},
		{"case 4 (absolute gate)", []segment{{-72, 10}, {-36, 10}, {-23, 60}, {-36, 10}, {-72, 10}}, -23},
		{"case 5", []segment{{-26, 20}, {-20, 20.1}, {-26, 20}}, -23},
	}
	m := loudness.NewMeter(2, 48000)
	for _, c := range cases {
		got := m.Integrated(tone(2, 48000, 1000, c.segments...))
		t.Logf("%s: %.3f LUFS", c.name, got)
		if math.Abs(got-c.want) > 0.1 {
			t.Errorf("%s: %.3f LUFS, want %.1f ±0.1", c.name, got, c.want)
		}
	}
}

func TestIntegratedAnchorsAndRates(t *testing.T) {
	cases := []struct {
		name      string
		channels  int
		rate      int
		hz        float64
		level     segment
		want, tol float64
	}{
		// Source: BS.1770 Annex 1 via the standards sheet §5.1: a 0 dBFS
		// 997 Hz sine on one front channel reads −3.01 LKFS.
		{"0 dBFS 997 Hz mono", 1, 48000, 997, segment{0, 10}, -3.01, 0.01},
		// Source: EBU Tech 3341 case 1 (sheet §5.4) at other rates; BS.1770
		// asks for the same response at every rate.
		{"−23 dBFS 1 kHz stereo, 44.1 kHz", 2, 44100, 1000, segment{-23, 20}, -23, 0.1},
		{"−23 dBFS 1 kHz stereo, 96 kHz", 2, 96000, 1000, segment{-23, 20}, -23, 0.1},
		// Source: our package doc: a buffer shorter than one 400 ms block
		// is measured as one block over the whole buffer.
		{"−23 dBFS stereo, 200 ms", 2, 48000, 1000, segment{-23, 0.2}, -23, 0.1},
		{"−23 dBFS stereo, 399 ms", 2, 48000, 1000, segment{-23, 0.399}, -23, 0.1},
		// Source: BS.1770-4 gating (sheet §5.2): a block 1 LU above the
		// −70 LUFS absolute gate counts.
		{"−69 dBFS stereo", 2, 48000, 1000, segment{-69, 5}, -69, 0.1},
	}
	for _, c := range cases {
		got := loudness.NewMeter(c.channels, c.rate).Integrated(tone(c.channels, c.rate, c.hz, c.level))
		t.Logf("%s: %.4f LUFS", c.name, got)
		if math.Abs(got-c.want) > c.tol {
			t.Errorf("%s: %.4f LUFS, want %.2f ±%g", c.name, got, c.want, c.tol)
		}
	}
}

func TestIntegratedGatesOutSilence(t *testing.T) {
	// Source: BS.1770-4 gating (sheet §5.2): only blocks above −70 LUFS
	// count, so with none left the loudness is −∞.
	cases := []struct {
		name    string
		samples []float64
	}{
		{"empty", nil},
		{"digital silence, 5 s", make([]float64, 2*5*48000)},
		{"digital silence, 100 ms", make([]float64, 2*4800)},
		{"−75 dBFS stereo tone, 5 s", tone(2, 48000, 1000, segment{-75, 5})},
		{"−75 dBFS stereo tone, 100 ms", tone(2, 48000, 1000, segment{-75, 0.1})},
	}
	m := loudness.NewMeter(2, 48000)
	for _, c := range cases {
		if got := m.Integrated(c.samples); !math.IsInf(got, -1) {
			t.Errorf("%s: %g LUFS, want −Inf", c.name, got)
		}
	}
}

func TestMeterReuseKeepsNoState(t *testing.T) {
	// A meter reused on a shorter, quieter buffer must read what a fresh
	// meter reads: the filters restart from rest and no scratch from the
	// longer call leaks in.
	loud := tone(2, 48000, 3000, segment{0, 3})
	quiet := tone(2, 48000, 1000, segment{-30, 1})
	reused := loudness.NewMeter(2, 48000)
	reused.Integrated(loud)
	reused.TruePeak(loud)
	fresh := loudness.NewMeter(2, 48000)
	if got, want := reused.Integrated(quiet), fresh.Integrated(quiet); got != want {
		t.Errorf("Integrated after a longer buffer: %v, fresh meter: %v", got, want)
	}
	if got, want := reused.TruePeak(quiet), fresh.TruePeak(quiet); got != want {
		t.Errorf("TruePeak after a longer buffer: %v, fresh meter: %v", got, want)
	}
}

func TestNewMeterRejectsBadFormats(t *testing.T) {
	cases := []struct{ channels, rate int }{
		{0, 48000}, {3, 48000}, {1, 7999}, {2, 384001},
	}
	for _, c := range cases {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("NewMeter(%d, %d) did not panic", c.channels, c.rate)
				}
			}()
			loudness.NewMeter(c.channels, c.rate)
		}()
	}
}

func TestMeasuresDoNotAllocate(t *testing.T) {
	cases := []struct{ channels, rate int }{
		{1, 48000}, {2, 44100}, {2, 96000}, {2, 192000},
	}
	for _, c := range cases {
		m := loudness.NewMeter(c.channels, c.rate)
		x := tone(c.channels, c.rate, 1000, segment{-20, 1})
		shorter := x[:len(x)/2]
		m.Integrated(x)
		m.TruePeak(x)
		for name, measure := range map[string]func([]float64) float64{"Integrated": m.Integrated, "TruePeak": m.TruePeak} {
			allocs := testing.AllocsPerRun(5, func() {
				measure(x)
				measure(shorter)
			})
			if allocs != 0 {
				t.Errorf("%d ch %d Hz: %s allocates %v times per call after warm-up", c.channels, c.rate, name, allocs)
			}
		}
	}
}

// benchmarkSignals are the buffers the meters are timed on, at 48 kHz:
// steady full scale, and the two tails that once cost the most on some
// processors, a minute of exact zeros and a minute at −100 dBFS, each
// after a second of tone so that the filters have something to decay.
func benchmarkSignals(channels int) []struct {
	name    string
	samples []float64
} {
	return []struct {
		name    string
		samples []float64
	}{
		{"4s-full-scale", tone(channels, 48000, 997, segment{0, 4})},
		{"silent-minute", tone(channels, 48000, 997, segment{0, 1}, segment{math.Inf(-1), 60})},
		{"minus100dBFS-minute", tone(channels, 48000, 997, segment{0, 1}, segment{-100, 60})},
	}
}

// benchmarkMeter times measure on every signal, mono and stereo, with
// every set of kernels this processor runs, in nanoseconds per sample
// (a stereo frame is two samples).
func benchmarkMeter(b *testing.B, measure func(*loudness.Meter, []float64) float64) {
	for _, channels := range []int{1, 2} {
		for _, signal := range benchmarkSignals(channels) {
			for _, isa := range kernel.Supported() {
				b.Run(fmt.Sprintf("%s/%dch/%s", signal.name, channels, isa), func(b *testing.B) {
					previous := kernel.Use(isa)
					defer kernel.Use(previous)
					m := loudness.NewMeter(channels, 48000)
					measure(m, signal.samples) // warm-up: the first call may grow scratch memory
					for b.Loop() {
						measure(m, signal.samples)
					}
					b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*len(signal.samples)), "ns/sample")
				})
			}
		}
	}
}

func BenchmarkIntegrated(b *testing.B) {
	benchmarkMeter(b, (*loudness.Meter).Integrated)
}

func BenchmarkTruePeak(b *testing.B) {
	benchmarkMeter(b, (*loudness.Meter).TruePeak)
}

// TestIntegratedSameBitsEverySet measures the same buffers with every set
// of kernels this processor has and requires the plain form's reading bit
// for bit, mono and stereo, at several rates and lengths, with a silent
// stretch in the middle that the meter skips.
func TestIntegratedSameBitsEverySet(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, c := range []struct{ channels, rate int }{{1, 48000}, {2, 44100}, {2, 96000}} {
		m := loudness.NewMeter(c.channels, c.rate)
		for _, seconds := range []float64{0.05, 0.4, 1.3, 5} {
			frames := int(seconds * float64(c.rate))
			x := make([]float64, c.channels*frames)
			for i := range x {
				if n := i / c.channels; n < frames/3 || n > frames/2 {
					x[i] = 0.5*(rng.Float64()*2-1) + 0.3*math.Sin(0.01*float64(n))
				}
			}
			previous := kernel.Use(kernel.Plain)
			want := m.Integrated(x)
			for _, isa := range kernel.Supported() {
				kernel.Use(isa)
				if got := m.Integrated(x); math.Float64bits(got) != math.Float64bits(want) {
					t.Errorf("%d ch, %d Hz, %g s, %s: %.17g LUFS, the plain form reads %.17g", c.channels, c.rate, seconds, isa, got, want)
				}
			}
			kernel.Use(previous)
		}
	}
}
